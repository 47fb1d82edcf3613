"""Localised wells and barriers: square, graded square, Gaussian and sech^2 profiles.

Each has a centre and a signed peak value ``amplitude`` (-depth for a well,
+height for a barrier; case energy unit).  All four can stand in for a point
interaction of the same integrated strength alpha = int |V| dx
(:meth:`replacement`), and know the mean distance l = E|x - x'| of two points
drawn from their profile, which sets the first-order finite-width correction
of the zero-range model.  l from E|X - X'| = 2 int F (1 - F) dx with F the
cumulative profile: square w/3, Gaussian 2 sigma / sqrt(pi), sech^2((x-c)/w):
F (1 - F) = sech^2 / 4, so l = w; graded square by quadrature.
Lengths in the case length unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from itertools import accumulate
from typing import ClassVar

import numpy as np

from fdsolver.model.shapes.base import LENGTH, Shape, register

_WELL_KEYS = {"center": LENGTH}


@dataclass(frozen=True)
class Localised(Shape):
    """A well or barrier with a centre and a signed peak value ``amplitude``."""

    center: float = 0.0
    amplitude: float = -1.0
    replaces_points: ClassVar[bool] = True

    def centroid(self) -> float:
        return self.center

    @property
    def width_parameter(self) -> float:
        """The width parameter of the profile (square/smooth_square/sech2: width; gaussian: sigma)."""
        return float(getattr(self, "width"))

    def mean_distance(self) -> float:
        """l = mean |x - x'| of two points drawn from the profile |V| (length unit); each well gives its closed form."""
        raise NotImplementedError(f"{type(self).__name__} gives no mean distance")


@register("square", keys={**_WELL_KEYS, "width": LENGTH}, positive=("width",), signed=True)
@dataclass(frozen=True)
class Square(Localised):
    """V = amplitude for |x - center| < width/2, else 0 (piecewise constant)."""

    width: float = 1.0
    piecewise_constant: ClassVar[bool] = True

    @classmethod
    def replacement(cls, name, center, alpha, width):
        """The square well of integrated strength ``alpha`` and width ``width``."""
        return cls(name, center, -alpha / width, width)

    def value(self, x):
        x = np.asarray(x, dtype=float)
        return np.where(np.abs(x - self.center) < 0.5 * self.width, self.amplitude, 0.0)

    @classmethod
    def summer(cls, shapes):
        """Sum of K square wells in O((N + K) log K): amplitudes switched on after each left edge and off at each
        right edge (open intervals, as :meth:`value`), with the sorted edges prepared once."""
        if len(shapes) == 1:
            return shapes[0].value
        # prepared as floats (a stable sort, sums in order as numpy's cumsum): for the few wells of most structures
        # quicker than a dozen small array steps, and O(K log K) for a long superlattice
        lo = [s.center - 0.5 * s.width for s in shapes]
        hi = [s.center + 0.5 * s.width for s in shapes]
        ol = sorted(range(len(shapes)), key=lo.__getitem__)
        oh = sorted(range(len(shapes)), key=hi.__getitem__)
        lo_s, hi_s = np.array([lo[i] for i in ol]), np.array([hi[i] for i in oh])
        on = np.array([0.0, *accumulate(shapes[i].amplitude for i in ol)])
        off = np.array([0.0, *accumulate(shapes[i].amplitude for i in oh)])

        def total(x):
            # wells to the left of x (lo < x) minus those already closed (hi <= x); for separated wells the two
            # prefix sums run in the same order, so V is exactly 0 between them
            x = np.asarray(x, dtype=float)
            return on[np.searchsorted(lo_s, x, side="left")] - off[np.searchsorted(hi_s, x, side="right")]

        return total

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


@register("smooth_square", keys={**_WELL_KEYS, "width": LENGTH, "edge": LENGTH}, positive=("width", "edge"), signed=True)
@dataclass(frozen=True)
class SmoothSquare(Localised):
    """V = amplitude/2 [tanh((x-c+w/2)/edge) - tanh((x-c-w/2)/edge)]: a square well with graded edges."""

    width: float = 1.0
    edge: float = 0.1

    @classmethod
    def replacement(cls, name, center, alpha, width):
        """The graded well of integrated strength ``alpha``, width ``width`` and edges 0.1 width."""
        return cls(name, center, -alpha / width, width, 0.1 * width)

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

    def mean_distance(self) -> float:
        """Mean |x - x'| over the profile: 2 int F (1 - F) dx by scipy quad (relative accuracy ~1e-12)."""
        return _smooth_square_distance(float(self.width), float(self.edge))


@lru_cache(maxsize=256)
def _smooth_square_distance(width: float, edge: float) -> float:
    from scipy.integrate import quad

    h = 0.5 * width

    def lncosh(a):
        a = abs(a)
        return a + math.log1p(math.exp(-2.0 * a)) - math.log(2.0)

    def f1mf(x):
        cdf = 0.5 + edge / (2.0 * width) * (lncosh((x + h) / edge) - lncosh((x - h) / edge))
        return cdf * (1.0 - cdf)

    reach = h + 40.0 * edge
    pts = sorted({p for p in (-h - edge, -h, -h + edge, h - edge, h, h + edge) if -reach < p < reach})
    total, _ = quad(f1mf, -reach, reach, points=pts, limit=400, epsabs=0.0, epsrel=1e-13)
    return 2.0 * total


@register("gaussian", keys={**_WELL_KEYS, "sigma": LENGTH}, positive=("sigma",), signed=True)
@dataclass(frozen=True)
class Gaussian(Localised):
    """V = amplitude * exp(-(x - c)^2 / (2 sigma^2))."""

    sigma: float = 1.0

    @classmethod
    def replacement(cls, name, center, alpha, width):
        """The Gaussian well of integrated strength ``alpha`` and sigma ``width``."""
        return cls(name, center, -alpha / (width * math.sqrt(2 * math.pi)), width)

    @property
    def width_parameter(self) -> float:
        return float(self.sigma)

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


@register("sech2", keys={**_WELL_KEYS, "width": LENGTH}, positive=("width",), signed=True)
@dataclass(frozen=True)
class Sech2(Localised):
    """V = amplitude * sech^2((x - c)/width) (Poeschl-Teller profile)."""

    width: float = 1.0

    @classmethod
    def replacement(cls, name, center, alpha, width):
        """The sech^2 well of integrated strength ``alpha`` and width ``width``."""
        return cls(name, center, -alpha / (2.0 * width), width)

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

    def mean_distance(self) -> float:
        """Mean |x - x'| of two points drawn from the profile: width (F (1 - F) = sech^2 / 4)."""
        return float(self.width)
