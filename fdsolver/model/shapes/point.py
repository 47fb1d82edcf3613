"""The ideal zero-range interaction -alpha delta(x - c).  Case units throughout."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

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
        return cls(name, values["center"], values["strength"])

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
