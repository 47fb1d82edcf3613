"""The ideal zero-range interaction -alpha delta(x - c).  Case units throughout."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.limits import HUGE, TINY
from fdsolver.model.shapes.base import LENGTH, STRENGTH, Shape, register


@register("point", keys={"center": LENGTH, "strength": STRENGTH})
@dataclass(frozen=True)
class Point(Shape):
    """-alpha * delta(x - c): an ideal zero-range interaction (alpha = strength, energy*length).

    ``alpha`` > 0 attracts.  It contributes no value; the operator adds it as a
    jump of the derivative at the grid node x = c.
    """

    center: float = 0.0
    alpha: float = 1.0
    piecewise_constant: ClassVar[bool] = True

    @classmethod
    def build(cls, name, values, ctx):
        alpha = values["strength"]
        if alpha != 0.0:
            # its bound-state energy m alpha^2 / (4 C) must be a number a solve can carry (the magnitude range of
            # fdsolver.input.fields); worked out in logarithms, since the energy itself may overflow
            log_e = math.log10(ctx.mass) + 2.0 * math.log10(abs(alpha)) - math.log10(4.0 * ctx.hbar2_2me)
            if not math.log10(TINY) <= log_e <= math.log10(HUGE):
                raise CaseError(f"a point interaction of strength {alpha:g} binds at an energy of about 1e{log_e:.0f}, "
                                f"outside what double precision can carry through a solve ({TINY:g} to {HUGE:g}); "
                                "choose units in which it is nearer to 1", key="strength")
        return cls(name, values["center"], alpha)

    def value(self, x):
        return np.zeros_like(np.asarray(x, dtype=float))

    @classmethod
    def summer(cls, shapes):
        """Point terms have no value: the operator adds them as derivative jumps."""
        return lambda x: np.zeros_like(np.asarray(x, dtype=float))

    def features(self):
        return [self.center]

    def strength(self):
        return abs(self.alpha)

    def centroid(self):
        return self.center

    def point_terms(self):
        return [(self.center, self.alpha)]
