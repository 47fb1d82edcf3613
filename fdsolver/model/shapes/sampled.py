"""Sampled and formula potentials: a tabulated profile and a safe expression in x.  Case units throughout."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.model.shapes.base import COUNT, INF, TEXT, Shape, register

INTERPOLATIONS = ("linear", "cubic")


@register("table", keys={"file": TEXT}, optional={"interpolation": TEXT, "x_column": COUNT, "v_column": COUNT},
          hints={"file": "a string (the name of a CSV file of x, V)"})
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
    _spline: object = field(default=None, compare=False, repr=False)

    @classmethod
    def build(cls, name, values, ctx):
        interp = values.get("interpolation", "linear")
        if interp not in INTERPOLATIONS:
            raise CaseError(f"'{interp}' is not one of {', '.join(repr(c) for c in INTERPOLATIONS)}"
                            f"{did_you_mean(interp, INTERPOLATIONS)}", key="interpolation")
        fname = values["file"]
        xs, vs = ctx.read_table(fname, values.get("x_column", 0), values.get("v_column", 1), "file")
        if interp == "cubic" and len(xs) < 4:
            raise CaseError("cubic interpolation needs at least 4 table rows", key="interpolation")
        return cls(name, tuple(np.asarray(xs).tolist()), tuple(np.asarray(vs).tolist()), interp, fname)

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


@register("expression", keys={"V": TEXT}, hints={"V": "a string expression in x and the params"})
@dataclass(frozen=True)
class ExpressionShape(Shape):
    """V(x) from a safe arithmetic expression in x and the case params.

    Its asymptotes are estimated by evaluating far out (|x| = 1e6 length
    units); an expression that still changes there is treated as unbounded.
    """

    expression: Any = None  # a compiled safe expression (fdsolver.input) with .evaluate(env)
    params: tuple = ()
    text: str = ""
    _cache: dict = field(default_factory=dict, compare=False, repr=False)

    @classmethod
    def build(cls, name, values, ctx):
        text = values["V"]
        return cls(name, ctx.compile(text, "V"), tuple(sorted(ctx.params.items())), text)

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
