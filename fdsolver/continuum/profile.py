"""A potential as a scattering profile: cells between two outer edges, and a channel beyond each.

:func:`ladder` turns a :class:`~fdsolver.model.potential.Potential` into a
:class:`Ladder` of :class:`Profile` s, one per nested cell level:

* **exact** (one level): potentials that are linear between their features
  (square wells and barriers, layer stacks, point terms, uniform fields,
  linear tables; :func:`fdsolver.numerics.cells.is_piecewise_linear`).  Each
  segment between features is one cell with its exact V = v0 + slope (x - a)
  (sampled inside the segment, never on a discontinuity); point terms are
  jumps at their features.  The march of :mod:`fdsolver.numerics.waves` is
  exact there, so transmission and poles are exact to round-off.
* **smooth** (levels 0, 1, 2, ...): any other potential.  The cells of
  :mod:`fdsolver.numerics.cells` (nested, features on edges, base cells a
  quarter of the local wavelength or decay length at the range's ends, a tenth
  of the finest feature scale; tails to where V has reached its asymptote to
  1e-15 of its range), each with its midpoint value: the second-order Magnus
  propagator, whose error expands in even powers of the cell size, so results
  of successive levels are Richardson-extrapolated
  (:class:`fdsolver.numerics.richardson.Romberg`).  A uniform field in a
  smooth potential is kept out of the tails and put back in every cell and in
  Airy channels.

Beyond the outer edges: plane-wave channels at the asymptotes (band edges and
masses of the outer layers), Airy channels where a field makes V unbounded,
wall channels where a shape does (see :mod:`fdsolver.continuum.channels`).
Hard-wall domains are refused: scattering needs open ends.  Lengths and
energies in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdsolver.continuum.channels import Channel
from fdsolver.errors import CaseError
from fdsolver.model.potential import Potential
from fdsolver.model.shapes import Linear
from fdsolver.numerics.cells import cells as nested_cells
from fdsolver.numerics.cells import is_piecewise_linear, make_layout, scale_of
from fdsolver.numerics.waves import WaveCells


@dataclass(frozen=True, eq=False)
class Profile:
    """Cells and the two channels of one level; ``exact`` if no finer level can change anything."""

    cells: WaveCells
    left: Channel
    right: Channel
    exact: bool
    level: int

    @property
    def c(self) -> float:
        return self.cells.c

    @property
    def n_edges(self) -> int:
        return self.cells.edges.size

    def thresholds(self) -> tuple[float, float]:
        return self.left.threshold, self.right.threshold


@dataclass(eq=False)
class Ladder:
    """Profiles of one potential on nested levels (a single level when ``exact``); built lazily, cached."""

    potential: Potential
    exact: bool
    e_range: tuple[float, float]
    _build: object = field(repr=False)
    _cache: dict = field(default_factory=dict, repr=False)
    notes: tuple[str, ...] = ()

    def at(self, level: int) -> Profile:
        level = 0 if self.exact else int(level)
        if level not in self._cache:
            self._cache[level] = self._build(level)
        return self._cache[level]


def _field(pot: Potential) -> float:
    return float(sum(s.field for s in pot.shapes if isinstance(s, Linear)))


def _kscale(c, masses, values, e_range, scale) -> float:
    m = float(np.max(masses)) if np.size(masses) else 1.0
    span = float(np.max(np.abs(np.concatenate([np.ravel(values) - e for e in e_range])))) if np.size(values) else 0.0
    return c * math.sqrt(m * span / c + scale**-2) / m


def _without_field(pot: Potential) -> Potential:
    return Potential(tuple(s for s in pot.shapes if not isinstance(s, Linear)), pot.units, pot.mass, pot.stack)


def _channel(pot: Potential, side: int, edge: float, c: float) -> Channel:
    """The channel beyond ``edge`` on ``side``: plane wave, Airy (a field) or wall."""
    f = _field(pot)
    mass = float(pot.asymptotic_mass(side))
    va = pot.asymptote(side)
    if math.isfinite(va):
        return Channel(side, "plane", float(edge), float(va), mass, c)
    rest = _without_field(pot).asymptote(side)
    if f != 0.0 and math.isfinite(rest):
        # beyond the outer feature V = (asymptote of the other parts) + f x exactly
        return Channel(side, "airy", float(edge), float(rest + f * edge), mass, c, f)
    v_edge = float(pot.value(np.array([edge]))[0])
    if not math.isfinite(v_edge):
        raise CaseError(f"the potential is not finite at the end of its tail ({edge:g}); cannot scatter from it",
                        key="potential")
    return Channel(side, "wall", float(edge), v_edge, float(pot.mass_at(np.array([edge]))[0]), c)


def _exact_profile(pot: Potential, e_range) -> Profile:
    c = pot.hbar2_2me
    edges = np.asarray(pot.features(), dtype=float)
    if edges.size == 0:
        lo, hi = pot.support()
        edges = np.array([lo, hi]) if hi > lo else np.array([0.0])
    a, b = edges[:-1], edges[1:]
    x1, x2 = a + (b - a) / 3.0, a + 2.0 * (b - a) / 3.0
    v1, v2 = pot.value(x1), pot.value(x2)
    slope = (v2 - v1) / (x2 - x1) if a.size else np.zeros(0)
    mid = 0.5 * (a + b)
    vmid = pot.value(mid)
    vscale = max(float(np.max(np.abs(np.concatenate([v1, v2, [1e-300]])))), 1e-300)
    flat = np.abs(slope * (b - a)) <= 1e-13 * vscale
    slope = np.where(flat, 0.0, slope)
    v0 = np.where(flat, vmid, v1 - slope * (x1 - a))
    mass = pot.mass_at(mid)
    jump = np.zeros(edges.size)
    for pos, alpha in pot.point_terms():
        jump[int(np.argmin(np.abs(edges - pos)))] += alpha
    left = _channel(pot, -1, edges[0], c)
    right = _channel(pot, 1, edges[-1], c)
    scale = scale_of(pot)
    ks = _kscale(c, np.concatenate([mass, [left.mass, right.mass]]), np.concatenate([v1, v2, [left.v, right.v]]),
                 e_range, scale)
    return Profile(WaveCells(edges, v0, slope, mass, jump, c, ks), left, right, True, 0)


def ladder(potential: Potential, e_lo: float, e_hi: float, domain=None) -> Ladder:
    """The profiles of ``potential`` for energies in [e_lo, e_hi] (the range sizes cells and tails of smooth potentials)."""
    if domain is not None and getattr(domain, "hard", False):
        raise CaseError('scattering needs open ends; hard walls reflect everything (use boundary = "open")',
                        key="domain.boundary")
    e_range = (float(e_lo), float(e_hi))
    if is_piecewise_linear(potential):
        prof = _exact_profile(potential, e_range)
        return Ladder(potential, True, e_range, lambda level: prof)
    f = _field(potential)
    rest = _without_field(potential)
    lo_f, hi_f = rest.support()
    span = abs(f) * (hi_f - lo_f + 20.0 * scale_of(rest))
    layout = make_layout([rest, rest], [e_range[0] - span, e_range[1] + span])
    c = potential.hbar2_2me

    def build(level: int) -> Profile:
        edges, mid, jump = nested_cells(rest, layout, level, e_range[1])
        keep = np.concatenate([[True], np.diff(edges) > 0])
        if not np.all(keep):  # merge zero-length cells, keeping their jumps
            idx = np.cumsum(keep) - 1
            jump = np.bincount(idx, weights=jump, minlength=int(idx[-1]) + 1)
            edges = edges[keep]
            mid = 0.5 * (edges[:-1] + edges[1:])
        with np.errstate(all="ignore"):
            v = potential.value(mid)
        if not np.all(np.isfinite(v)):
            raise CaseError("the potential is not finite on the scattering cells", key="potential")
        mass = potential.mass_at(mid)
        left = _channel(potential, -1, edges[0], c)
        right = _channel(potential, 1, edges[-1], c)
        return Profile(WaveCells(edges, v, np.zeros_like(v), mass, jump, c, layout.kscale), left, right, False, level)

    return Ladder(potential, False, e_range, build, notes=layout.notes)
