"""Sampled and formula potentials: a tabulated profile and a safe expression in x.  Case units throughout."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.model.shapes.base import COUNT, INF, TEXT, Shape, register
from fdsolver.model.shapes.spline import not_a_knot, table_values

INTERPOLATIONS = ("linear", "cubic")
#: a linear table with at most this many rows has every row as a grid feature
SHORT_TABLE_ROWS = 200
#: a longer table keeps at most this many of its kinks as features
MAX_TABLE_FEATURES = 2000


@register("table", keys={"file": TEXT}, optional={"interpolation": TEXT, "x_column": COUNT, "v_column": COUNT},
          hints={"file": "a string (the name of a CSV file of x, V)"})
@dataclass(frozen=True)
class Table(Shape):
    """V(x) interpolated from a tabulated profile (x, V), constant beyond its ends.

    ``interpolation`` is ``"linear"`` (the piecewise-linear interpolant, whose
    integrals over grid cells are exact, so its rows need not be grid nodes:
    a long table is a sampled function, and only its kinks become features) or
    ``"cubic"`` (a not-a-knot cubic spline through the table).
    """

    xs: tuple = ()
    vs: tuple = ()
    interpolation: str = "linear"
    source: str = ""
    _spline: object = field(default=None, compare=False, repr=False)
    _arrays: tuple = field(default=(), compare=False, repr=False)
    _cache: dict = field(default_factory=dict, compare=False, repr=False)

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
        xs, vs = np.asarray(self.xs, dtype=float), np.asarray(self.vs, dtype=float)
        object.__setattr__(self, "_arrays", (xs, vs))
        if self.interpolation == "cubic":
            object.__setattr__(self, "_spline", not_a_knot(xs, vs))

    @property
    def exact_integrals(self) -> bool:  # type: ignore[override]
        """The linear interpolant is integrated exactly over any interval (no nodes needed at its rows)."""
        return self.interpolation == "linear"

    def value(self, x):
        x = np.asarray(x, dtype=float)
        xs, vs = self._arrays
        if self._spline is None:
            return np.interp(x, xs, vs)
        return table_values(self._spline, x, vs[0], vs[-1])

    def integrate(self, a, b):
        """Exact integrals of the linear interpolant (constant beyond the ends) over [a_i, b_i], energy * length.

        Within one table segment the trapezoid of the end values (no
        cancellation); across rows the difference of the running integral.
        """
        xs, vs = self._arrays
        a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
        va, vb = np.interp(a, xs, vs), np.interp(b, xs, vs)
        out = 0.5 * (b - a) * (va + vb)
        ia, ib = np.searchsorted(xs, a, side="right"), np.searchsorted(xs, b, side="left")
        across = ib > ia  # a row lies strictly inside (a, b): the trapezoid alone is not exact
        if np.any(across):
            out[across] = self._running(b[across]) - self._running(a[across])
        return out

    def _running(self, t):
        """int_{x_0}^{t} V for the interpolant extended by constants."""
        xs, vs = self._arrays
        if "prefix" not in self._cache:
            self._cache["prefix"] = np.concatenate([[0.0], np.cumsum(0.5 * np.diff(xs) * (vs[1:] + vs[:-1]))])
        prefix = self._cache["prefix"]
        j = np.clip(np.searchsorted(xs, t, side="right") - 1, 0, xs.size - 1)
        inside = prefix[j] + 0.5 * (np.minimum(t, xs[-1]) - xs[j]) * (vs[j] + np.interp(np.minimum(t, xs[-1]), xs, vs))
        return np.where(t < xs[0], vs[0] * (t - xs[0]), np.where(t > xs[-1], prefix[-1] + vs[-1] * (t - xs[-1]), inside))

    def features(self):
        """Rows that must be grid nodes: every row of a short linear table; of a long one (a sampled profile)
        the ends and the kinks that matter (a row more than 1e-3 of the profile's range off the straight
        line through its neighbours), at most :data:`MAX_TABLE_FEATURES`; a cubic table: its ends."""
        xs, vs = self._arrays
        if self.interpolation != "linear":
            return [float(xs[0]), float(xs[-1])]
        if xs.size <= SHORT_TABLE_ROWS:
            return xs.tolist()
        return self._kinks().tolist()

    def _kinks(self) -> np.ndarray:
        if "kinks" not in self._cache:
            xs, vs = self._arrays
            t = (xs[1:-1] - xs[:-2]) / (xs[2:] - xs[:-2])
            off = np.abs(vs[1:-1] - (vs[:-2] + t * (vs[2:] - vs[:-2])))
            span = float(np.ptp(vs)) or 1.0
            big = np.flatnonzero(off > 1e-3 * span)
            if big.size > MAX_TABLE_FEATURES:
                big = np.sort(big[np.argsort(off[big])[-MAX_TABLE_FEATURES:]])
            self._cache["kinks"] = np.concatenate([[xs[0]], xs[1:-1][big], [xs[-1]]])
        return self._cache["kinks"]

    def scale(self):
        feats = np.asarray(self.features())
        dx = np.diff(feats)
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
