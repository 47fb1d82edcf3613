"""Potential components: the registry of shapes a case may sum.

Every shape is a small frozen dataclass that knows

* ``value(x)``: its potential energy at positions ``x`` (case energy unit),
  vectorised over numpy arrays;
* ``features()``: positions that must be grid nodes (discontinuities, edges,
  centres), so that the finite-difference scheme keeps its order;
* ``scale()``: the length over which it varies near its features (sets the
  finest grid spacing there), or ``None``;
* ``asymptote(side)``: its limit at ``side * infinity`` (``side`` = -1 or +1),
  ``+inf``/``-inf`` for shapes that grow without bound;
* ``strength()``: the integrated strength  int |V| dx  (energy * length) of a
  localised well or barrier, ``nan`` for extended shapes;
* ``region()``: the interval counted as "inside" the component when the
  probability inside each named component is reported (the region where
  |V| exceeds half its peak; the nominal width for square-like wells).

Wells take ``depth`` (> 0 attracts, V = -depth inside); barriers take
``height`` (V = +height); internally both are stored as ``amplitude`` =
-depth or +height, the signed peak value.

Adding a shape: write one dataclass here with the methods above, register it
in :data:`SHAPES` with its required and optional keys, and add a test against a
closed form (see DEVELOPERS.md).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, ClassVar

import numpy as np

from fdsolver.errors import CaseError

INF = math.inf


@dataclass(frozen=True)
class Shape:
    """Common interface of all potential components (see module docstring)."""

    name: str | None

    kind: ClassVar[str] = "shape"
    #: True if V is constant between the features (marched exactly, one cell per segment)
    piecewise_constant: ClassVar[bool] = False

    def value(self, x: np.ndarray) -> np.ndarray:  # pragma: no cover - interface
        raise NotImplementedError

    def features(self) -> list[float]:
        return []

    def scale(self) -> float | None:
        return None

    def asymptote(self, side: int) -> float:
        return 0.0

    def strength(self) -> float:
        return math.nan

    def centroid(self) -> float:
        return math.nan

    def region(self) -> tuple[float, float] | None:
        return None

    def point_terms(self) -> list[tuple[float, float]]:
        """Zero-range terms ``(position, alpha)`` meaning ``-alpha * delta(x - position)``."""
        return []


@dataclass(frozen=True)
class _Localised(Shape):
    """A well or barrier with a centre and a signed peak value ``amplitude``."""

    center: float = 0.0
    amplitude: float = -1.0

    def centroid(self) -> float:
        return self.center


@dataclass(frozen=True)
class Square(_Localised):
    """V = amplitude for |x - center| < width/2, else 0 (piecewise constant)."""

    width: float = 1.0
    kind: ClassVar[str] = "square"
    piecewise_constant: ClassVar[bool] = True

    def value(self, x):
        x = np.asarray(x, dtype=float)
        return np.where(np.abs(x - self.center) < 0.5 * self.width, self.amplitude, 0.0)

    def features(self):
        return [self.center - 0.5 * self.width, self.center + 0.5 * self.width]

    def scale(self):
        return self.width

    def strength(self):
        return abs(self.amplitude) * self.width

    def region(self):
        return (self.center - 0.5 * self.width, self.center + 0.5 * self.width)

    def mean_distance(self) -> float:
        """Mean |x - x'| of two points drawn from the profile: width/3."""
        return self.width / 3.0


@dataclass(frozen=True)
class SmoothSquare(_Localised):
    """V = amplitude/2 [tanh((x-c+w/2)/edge) - tanh((x-c-w/2)/edge)]: a square well with graded edges."""

    width: float = 1.0
    edge: float = 0.1
    kind: ClassVar[str] = "smooth_square"

    def value(self, x):
        x = np.asarray(x, dtype=float) - self.center
        hw = 0.5 * self.width
        return 0.5 * self.amplitude * (np.tanh((x + hw) / self.edge) - np.tanh((x - hw) / self.edge))

    def features(self):
        return [self.center - 0.5 * self.width, self.center, self.center + 0.5 * self.width]

    def scale(self):
        return min(self.edge, self.width)

    def strength(self):
        # int of the tanh difference is exactly 2*hw for any edge: int = |A| * width
        return abs(self.amplitude) * self.width

    def region(self):
        return (self.center - 0.5 * self.width, self.center + 0.5 * self.width)


@dataclass(frozen=True)
class Gaussian(_Localised):
    """V = amplitude * exp(-(x - c)^2 / (2 sigma^2))."""

    sigma: float = 1.0
    kind: ClassVar[str] = "gaussian"

    def value(self, x):
        x = np.asarray(x, dtype=float)
        return self.amplitude * np.exp(-0.5 * ((x - self.center) / self.sigma) ** 2)

    def features(self):
        return [self.center]

    def scale(self):
        return self.sigma

    def strength(self):
        return abs(self.amplitude) * self.sigma * math.sqrt(2.0 * math.pi)

    def region(self):
        half = self.sigma * math.sqrt(2.0 * math.log(2.0))
        return (self.center - half, self.center + half)

    def mean_distance(self) -> float:
        """Mean |x - x'| of two points drawn from the profile: 2 sigma / sqrt(pi)."""
        return 2.0 * self.sigma / math.sqrt(math.pi)


@dataclass(frozen=True)
class Sech2(_Localised):
    """V = amplitude * sech^2((x - c)/width) (Poeschl-Teller profile)."""

    width: float = 1.0
    kind: ClassVar[str] = "sech2"

    def value(self, x):
        x = np.asarray(x, dtype=float)
        with np.errstate(over="ignore"):
            return self.amplitude / np.cosh((x - self.center) / self.width) ** 2

    def features(self):
        return [self.center]

    def scale(self):
        return self.width

    def strength(self):
        return 2.0 * abs(self.amplitude) * self.width

    def region(self):
        half = self.width * math.acosh(math.sqrt(2.0))
        return (self.center - half, self.center + half)


@dataclass(frozen=True)
class Harmonic(Shape):
    """V = m omega^2 (x - c)^2 / 2, with ``hbar_omega`` the quantum in the case energy unit.

    ``stiffness`` = m omega^2 / 2 is precomputed by the case reader from the
    particle mass and hbar^2/(2 m_e): stiffness = m (hbar omega)^2 / (4 C).
    """

    center: float = 0.0
    hbar_omega: float = 1.0
    stiffness: float = 0.5
    kind: ClassVar[str] = "harmonic"

    def value(self, x):
        x = np.asarray(x, dtype=float)
        return self.stiffness * (x - self.center) ** 2

    def features(self):
        return [self.center]

    def scale(self):
        # oscillator length sqrt(hbar/(m omega)) = sqrt(hbar_omega / (2 stiffness))
        return math.sqrt(self.hbar_omega / (2.0 * self.stiffness))

    def asymptote(self, side):
        return INF

    def centroid(self):
        return self.center


@dataclass(frozen=True)
class Morse(Shape):
    """V = D [(1 - exp(-a (x - c)))^2 - 1]: minimum -D at c, zero at +inf, +inf at -inf."""

    center: float = 0.0
    depth: float = 1.0
    a: float = 1.0
    kind: ClassVar[str] = "morse"

    def value(self, x):
        x = np.asarray(x, dtype=float)
        with np.errstate(over="ignore"):
            t = np.exp(-self.a * (x - self.center))
            return self.depth * ((1.0 - t) ** 2 - 1.0)

    def features(self):
        return [self.center]

    def scale(self):
        return 1.0 / self.a

    def asymptote(self, side):
        return 0.0 if side > 0 else INF

    def centroid(self):
        return self.center

    def region(self):
        # where V < -D/2: 1 - t in (1 - 1/sqrt2, 1 + 1/sqrt2)
        lo = self.center - math.log(1.0 + 1.0 / math.sqrt(2.0)) / self.a
        hi = self.center - math.log(1.0 - 1.0 / math.sqrt(2.0)) / self.a
        return (lo, hi)


@dataclass(frozen=True)
class Linear(Shape):
    """V = field * x (a uniform force; field in energy per length)."""

    field: float = 0.0
    kind: ClassVar[str] = "linear"

    def value(self, x):
        return self.field * np.asarray(x, dtype=float)

    def asymptote(self, side):
        if self.field == 0.0:
            return 0.0
        return INF if side * self.field > 0 else -INF


@dataclass(frozen=True)
class Table(Shape):
    """V(x) interpolated from a tabulated profile (x, V), constant beyond its ends.

    ``interpolation`` is ``"linear"`` (exact piecewise linear; table points are
    grid features) or ``"cubic"`` (a not-a-knot cubic spline through the table).
    """

    xs: tuple = ()
    vs: tuple = ()
    interpolation: str = "linear"
    source: str = ""
    kind: ClassVar[str] = "table"
    _spline: object = field(default=None, compare=False, repr=False)

    def __post_init__(self):
        if self.interpolation == "cubic":
            from scipy.interpolate import CubicSpline

            object.__setattr__(self, "_spline", CubicSpline(np.asarray(self.xs), np.asarray(self.vs)))

    def value(self, x):
        x = np.asarray(x, dtype=float)
        xs = np.asarray(self.xs)
        vs = np.asarray(self.vs)
        if self._spline is None:
            return np.interp(x, xs, vs)
        inside = self._spline(np.clip(x, xs[0], xs[-1]))
        return np.where(x <= xs[0], vs[0], np.where(x >= xs[-1], vs[-1], inside))

    def features(self):
        xs = list(self.xs)
        return xs if self.interpolation == "linear" else [xs[0], xs[-1]]

    def scale(self):
        dx = np.diff(np.asarray(self.xs))
        return float(np.min(dx)) if dx.size else None

    def asymptote(self, side):
        return float(self.vs[0] if side < 0 else self.vs[-1])

    def region(self):
        return (float(self.xs[0]), float(self.xs[-1]))


@dataclass(frozen=True)
class ExpressionShape(Shape):
    """V(x) from a safe arithmetic expression in x and the case params.

    Its asymptotes are estimated by evaluating far out (|x| = 1e6 length
    units); an expression that still changes there is treated as unbounded.
    """

    expression: object = None  # fdsolver.expressions.Expression
    params: tuple = ()
    text: str = ""
    kind: ClassVar[str] = "expression"
    _cache: dict = field(default_factory=dict, compare=False, repr=False)

    def value(self, x):
        env = dict(self.params)
        x = np.asarray(x, dtype=float)
        env["x"] = x
        out = self.expression.evaluate(env)
        return np.broadcast_to(np.asarray(out, dtype=float), x.shape).copy()

    def _profile(self) -> tuple[float, float] | None:
        """Where V differs from its far-field values by more than 1e-3 of its largest such difference.

        Probed on +-(1e-4 .. 1e6) length units, logarithmically; None if V is flat or unbounded.
        """
        if "profile" not in self._cache:
            self._cache["profile"] = self._probe()
        return self._cache["profile"]

    def _probe(self) -> tuple[float, float] | None:
        t = np.geomspace(1e-4, 1e6, 801)
        x = np.concatenate([-t[::-1], [0.0], t])
        try:
            with np.errstate(all="ignore"):
                v = self.value(x)
        except CaseError:
            return None
        lo_v, hi_v = self.asymptote(-1), self.asymptote(1)
        if not (np.all(np.isfinite(v)) and math.isfinite(lo_v) and math.isfinite(hi_v)):
            return None
        ref = np.where(x < 0, lo_v, hi_v)
        dev = np.abs(v - ref)
        if dev.max() <= 0:
            return None
        big = np.flatnonzero(dev > 1e-3 * dev.max())
        return float(x[big[0]]), float(x[big[-1]])

    def scale(self):
        prof = self._profile()
        if prof is None:
            return None
        return max((prof[1] - prof[0]) / 20.0, 1e-6)

    def region(self):
        return self._profile()

    def features(self):
        prof = self._profile()
        return [] if prof is None else [0.5 * (prof[0] + prof[1])]

    def asymptote(self, side):
        far = np.array([1e5, 1e6]) * side
        with np.errstate(all="ignore"):
            env = dict(self.params)
            env["x"] = far
            try:
                v = np.asarray(self.expression.evaluate(env), dtype=float) * np.ones(2)
            except CaseError:
                return INF
        if not np.all(np.isfinite(v)):
            return INF
        if abs(v[1] - v[0]) <= 1e-9 * max(1.0, abs(v[1])):
            return float(v[1])
        return INF if v[1] > v[0] else -INF


@dataclass(frozen=True)
class Point(Shape):
    """-alpha * delta(x - c): an ideal zero-range interaction (alpha = strength, energy*length).

    ``alpha`` > 0 attracts.  It contributes no value; the operator adds it as a
    jump of the derivative at the grid node x = c.
    """

    center: float = 0.0
    alpha: float = 1.0
    kind: ClassVar[str] = "point"
    piecewise_constant: ClassVar[bool] = True

    def value(self, x):
        return np.zeros_like(np.asarray(x, dtype=float))

    def features(self):
        return [self.center]

    def strength(self):
        return abs(self.alpha)

    def centroid(self):
        return self.center

    def point_terms(self):
        return [(self.center, self.alpha)]


@dataclass(frozen=True)
class ShapeSpec:
    """What a case file may say for one shape: required and optional keys."""

    cls: type
    required: tuple[str, ...]
    optional: tuple[str, ...] = ()
    signed: bool = True  # takes exactly one of depth/height
    positive: tuple[str, ...] = ()  # keys that must be > 0


SHAPES: dict[str, ShapeSpec] = {
    "square": ShapeSpec(Square, ("center", "width"), positive=("width",)),
    "smooth_square": ShapeSpec(SmoothSquare, ("center", "width", "edge"), positive=("width", "edge")),
    "gaussian": ShapeSpec(Gaussian, ("center", "sigma"), positive=("sigma",)),
    "sech2": ShapeSpec(Sech2, ("center", "width"), positive=("width",)),
    "harmonic": ShapeSpec(Harmonic, ("omega",), ("center",), signed=False, positive=("omega",)),
    "morse": ShapeSpec(Morse, ("depth", "a"), ("center",), signed=False, positive=("depth", "a")),
    "linear": ShapeSpec(Linear, ("field",), signed=False),
    "table": ShapeSpec(Table, ("file",), ("interpolation", "x_column", "v_column"), signed=False),
    "expression": ShapeSpec(ExpressionShape, ("V",), signed=False),
    "point": ShapeSpec(Point, ("center", "strength"), signed=False),
}

#: shapes that can stand in for a point interaction of the same integrated strength
FINITE_REPLACEMENTS: dict[str, Callable[..., Shape]] = {
    "square": lambda name, c, alpha, w: Square(name, c, -alpha / w, w),
    "smooth_square": lambda name, c, alpha, w: SmoothSquare(name, c, -alpha / w, w, 0.1 * w),
    "gaussian": lambda name, c, alpha, w: Gaussian(name, c, -alpha / (w * math.sqrt(2 * math.pi)), w),
    "sech2": lambda name, c, alpha, w: Sech2(name, c, -alpha / (2.0 * w), w),
}
