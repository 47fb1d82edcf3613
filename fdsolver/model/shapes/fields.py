"""Extended shapes: the harmonic trap, the Morse potential and a uniform field.  Case units throughout."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError

from fdsolver.model.shapes.base import ENERGY, FIELD, INF, INVERSE_LENGTH, LENGTH, Shape, register


@register("harmonic", keys={"omega": ENERGY}, optional={"center": LENGTH}, positive=("omega",))
@dataclass(frozen=True)
class Harmonic(Shape):
    """V = m omega^2 (x - c)^2 / 2, with ``hbar_omega`` the quantum in the case energy unit.

    ``stiffness`` = m omega^2 / 2 = m (hbar omega)^2 / (4 C) follows from the
    particle mass m (m_e) and C = hbar^2/(2 m_e) when the shape is built from a case.
    """

    center: float = 0.0
    hbar_omega: float = 1.0
    stiffness: float = 0.5

    @classmethod
    def build(cls, name, values, ctx):
        hw = values["omega"]
        stiffness = ctx.mass * hw**2 / (4.0 * ctx.hbar2_2me)
        if not (math.isfinite(stiffness) and stiffness > 1e-290):
            raise CaseError(f"hbar*omega = {hw:g} gives a curvature m omega^2/2 = {stiffness:g} outside double precision; "
                            "use a value nearer to the case's energy unit", key="omega")
        return cls(name, values.get("center", 0.0), hw, stiffness)

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


@register("morse", keys={"depth": ENERGY, "a": INVERSE_LENGTH}, optional={"center": LENGTH}, positive=("depth", "a"))
@dataclass(frozen=True)
class Morse(Shape):
    """V = D [(1 - exp(-a (x - c)))^2 - 1]: minimum -D at c, zero at +inf, +inf at -inf."""

    center: float = 0.0
    depth: float = 1.0
    a: float = 1.0

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


@register("linear", keys={"field": FIELD})
@dataclass(frozen=True)
class Linear(Shape):
    """V = field * x (a uniform force; field in energy per length)."""

    field: float = 0.0

    def value(self, x):
        return self.field * np.asarray(x, dtype=float)

    def asymptote(self, side):
        if self.field == 0.0:
            return 0.0
        return INF if side * self.field > 0 else -INF
