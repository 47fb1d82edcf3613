"""A periodic potential given by one period: the lattice, its one-period potential and its finite stacks.

:func:`lattice` reads a :class:`~fdsolver.model.potential.Potential` as one period of length ``period``
starting at ``start`` (the window [start, start + L)):

* *localised* components (every shape with a finite integrated strength: square, smooth_square,
  gaussian and sech2 wells or barriers, point terms) repeat with the period.  A component reaching
  outside the window wraps around: V_per(x) = sum_j V(x - j L), its images summed out to where its
  tail is below 1e-17 of its peak.  A component wider than the period (half-maximum region longer
  than L), components spanning more than one period, and point terms at one place modulo L are
  refused (:func:`fdsolver.model.periodic.period_window`);
* *profile* components (expression, table) give V on the window itself, repeated: they are
  evaluated at start + ((x - start) mod L) and never summed, so ``V0*cos(2*pi*x/L)`` is the cosine
  lattice and any profile on the window becomes a lattice;
* a layer stack: its inner layers are one period (their thicknesses must add up to L; the period
  starts at the stack's origin) and its two outer layers are the cladding of finite stacks;
* harmonic, morse and linear components do not repeat (a field across a lattice breaks the Bloch
  picture) and are refused.

The one-period potential (:meth:`Lattice.cell`) is an ordinary Potential whose values are periodic,
whose features are the period's ends and the wrapped features (plus geometric grading points around
narrow smooth components, so that cell layouts sized per segment are graded), and whose point terms
are wrapped into the window; with ``copies = N`` it lists them over N periods (a finite stack between
hard walls at the period ends).  Lengths in the case length unit, energies in its energy unit,
masses in m_e.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import ClassVar

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.model import shapes as S
from fdsolver.model.domain import Domain
from fdsolver.model.periodic import is_localised, period_window
from fdsolver.model.potential import Potential
from fdsolver.model.stack import LayerStack

#: relative tail level beyond which images of a localised component are not summed
TAIL_LEVEL = 1e-17
#: terminations of a finite stack
TERMINATIONS = ("open", "hard")


def _wrap(x, start: float, period: float):
    """Positions reduced into the window [start, start + period)."""
    r = start + np.mod(np.asarray(x, dtype=float) - start, period)
    return np.where(r >= start + period, start, r)


def reach_of(shape) -> float:
    """Largest distance from the component's centre at which |V| exceeds TAIL_LEVEL of its peak (length)."""
    c = shape.centroid()
    feats = np.asarray(shape.features(), dtype=float)
    near = float(np.max(np.abs(feats - c))) if feats.size else 0.0
    if shape.piecewise_constant:
        return near
    scale = shape.scale() or 1.0
    t = scale * np.geomspace(1e-3, 1e5, 801)
    peak = abs(getattr(shape, "amplitude", 1.0))
    with np.errstate(all="ignore"):
        big = np.maximum(np.abs(shape.value(c + t)), np.abs(shape.value(c - t))) > TAIL_LEVEL * peak
    idx = np.flatnonzero(big)
    far = float(t[min(idx[-1] + 1, t.size - 1)]) if idx.size else 0.0
    return max(near, far)


@dataclass(frozen=True)
class Periodic(S.Shape):
    """A component repeated with ``period``: images summed (localised) or its window profile repeated.

    ``images`` = (j_lo, j_hi): the images base(x - j L) summed for a point of
    the window (``None`` for a profile).  ``copies`` periods list features and
    point terms, from ``start``.
    """

    base: S.Shape = None
    period: float = 1.0
    start: float = 0.0
    copies: int = 1
    images: tuple | None = None
    kind: ClassVar[str] = "periodic"

    @property
    def piecewise_constant(self) -> bool:  # type: ignore[override]
        return bool(self.base.piecewise_constant)

    def value(self, x):
        xr = _wrap(x, self.start, self.period)
        if self.images is None:
            return np.asarray(self.base.value(xr), dtype=float)
        out = np.zeros_like(xr)
        for j in range(self.images[0], self.images[1] + 1):
            out = out + self.base.value(xr - j * self.period)
        return out

    def _in_window(self) -> list[float]:
        lo, hi = self.start, self.start + self.period
        if self.images is None:
            return [f for f in self.base.features() if lo <= f < hi]
        pts = list(self.base.features())
        s = self.base.scale()
        if not self.base.piecewise_constant and s:
            c = self.base.centroid()
            t = 2.0 * s
            while t < 0.5 * self.period:  # geometric grading points around a narrow smooth component
                pts += [c - t, c + t]
                t *= 2.0
        return [float(p) for p in _wrap(pts, lo, self.period)] if pts else []

    def features(self):
        one = self._in_window()
        return [p + k * self.period for k in range(self.copies) for p in one]

    def scale(self):
        return self.base.scale()

    def asymptote(self, side):
        return math.nan  # a periodic potential has no limit at infinity

    def point_terms(self):
        out = []
        for pos, alpha in self.base.point_terms():
            p = float(_wrap(pos, self.start, self.period))
            out += [(p + k * self.period, alpha) for k in range(self.copies)]
        return out


@dataclass(frozen=True)
class PeriodEnds(S.Shape):
    """No potential; features at start + k period, k = 0..copies (the period ends must be cell edges and nodes)."""

    period: float = 1.0
    start: float = 0.0
    copies: int = 1
    kind: ClassVar[str] = "period_ends"
    piecewise_constant: ClassVar[bool] = True

    def value(self, x):
        return np.zeros_like(np.asarray(x, dtype=float))

    def features(self):
        return [self.start + k * self.period for k in range(self.copies + 1)]


@dataclass(frozen=True)
class Lattice:
    """One period [start, start + period) of a periodic potential (see module docstring)."""

    source: Potential
    period: float
    start: float

    @property
    def units(self):
        return self.source.units

    @property
    def hbar2_2me(self) -> float:
        return self.source.hbar2_2me

    @property
    def compact(self) -> bool:
        """True if V is constant between features (every period quantity is then exact to round-off)."""
        return all(s.piecewise_constant for s in self.source.shapes)

    def cell(self, copies: int = 1) -> Potential:
        """The periodic potential with features and point terms over ``copies`` periods from ``start``."""
        shapes = [PeriodEnds(None, self.period, self.start, copies)]
        for s in self.source.shapes:
            images = None
            if is_localised(s):
                reach = reach_of(s)
                c = s.centroid()
                images = (math.floor((self.start - c - reach) / self.period) - 1,
                          math.ceil((self.start + self.period - c + reach) / self.period) + 1)
            shapes.append(Periodic(s.name, s, self.period, self.start, copies, images))
        stack = None
        if self.source.stack is not None:  # the layers repeated from the stack's origin, covering the copies
            inner = self.source.stack.layers[1:-1]
            first = math.floor((self.start - self.source.stack.origin) / self.period + 1e-12)
            origin = self.source.stack.origin + first * self.period
            outer_l = replace(inner[-1], thickness=math.inf)
            outer_r = replace(inner[0], thickness=math.inf)
            stack = LayerStack((outer_l,) + tuple(inner) * (copies + 1) + (outer_r,), origin)
        return Potential(tuple(shapes), self.source.units, self.source.mass, stack)

    def finite(self, n_periods: int, termination: str = "hard") -> tuple[Potential, Domain]:
        """A stack of ``n_periods`` periods from ``start``: between hard walls at its ends, or open in its cladding.

        ``"hard"``: the periodic potential on [start, start + N L] with psi = 0
        at both ends.  ``"open"``: N translated copies of the localised
        components (and of the stack's inner layers between its outer layers),
        on the open line.
        """
        if termination not in TERMINATIONS:
            raise CaseError(f"termination must be one of {', '.join(TERMINATIONS)}, got {termination!r}",
                            key="termination")
        n = int(n_periods)
        if n < 1:
            raise CaseError(f"the number of periods must be at least 1, got {n_periods!r}", key="n_periods")
        if termination == "hard":
            return self.cell(n), Domain("hard", self.start, self.start + n * self.period)
        shapes = []
        for i, s in enumerate(self.source.shapes, start=1):
            if not is_localised(s):
                raise CaseError(f"a '{s.kind}' profile has no outside to open into; use termination 'hard'",
                                key=f"potential[{i}].shape")
            shapes += [replace(s, center=s.center + k * self.period) for k in range(n)]
        stack = None
        if self.source.stack is not None:
            lay = self.source.stack.layers
            stack = LayerStack((lay[0],) + tuple(lay[1:-1]) * n + (lay[-1],), self.source.stack.origin)
        elif not shapes:
            raise CaseError("a lattice without components has nothing to stack; use termination 'hard'",
                            key="termination")
        return Potential(tuple(shapes), self.source.units, self.source.mass, stack), Domain("open")


def lattice(potential: Potential, period: float | None = None, start: float | None = None) -> Lattice:
    """Read ``potential`` as one period of length ``period`` (module docstring); CaseError on bad input.

    The checks and defaults are :func:`fdsolver.model.periodic.period_window`'s: ``period`` defaults to
    the thickness of the stack's inner layers; ``start`` to the stack's origin, else to the point that
    centres the components' support in the window.
    """
    period, start = period_window(potential, period, start)
    return Lattice(potential, period, start)


def one_period(potential: Potential, period: float | None = None, start: float | None = None) -> Potential:
    """The one-period potential of ``potential`` with period ``period`` (see :func:`lattice`)."""
    return lattice(potential, period, start).cell()


def free_mass(lat: Lattice) -> float:
    """The smallest mass in the period (m_e): sets the largest kinetic energy scale."""
    if lat.source.stack is None:
        return float(lat.source.mass)
    return float(min(layer.mass for layer in lat.source.stack.layers[1:-1]))


__all__ = [
    "TERMINATIONS",
    "Lattice",
    "PeriodEnds",
    "Periodic",
    "free_mass",
    "is_localised",
    "lattice",
    "one_period",
]
