"""The potential of a case: a layer stack (:mod:`fdsolver.model.stack`) plus a sum of shapes.

:class:`Potential` sums the stack's band edge and every shape, carries the
position-dependent mass m(x) (the stack's, or the particle mass where there is
no stack) and answers the questions the grid and the solver ask: feature
points, local length scales, asymptotic values, the continuum threshold,
zero-range terms, and mirror symmetry.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import pairwise

import numpy as np

from fdsolver.arrays import short_sorted_distinct, sorted_distinct
from fdsolver.model.shapes import INF, Shape
from fdsolver.model.stack import LayerStack
from fdsolver.model.units import UnitSystem


class _once:
    """A property worked out on its first read and kept in the instance's ``__dict__`` (later reads find it there
    and never call this descriptor): :func:`functools.cached_property` without its lock, which Python 3.11 takes
    on every first read (about 0.5 us each, and a fresh potential has a dozen such reads in a solve).  Two threads
    reading it at once may both work it out; every such property is a pure function of an immutable potential,
    so either value is the same."""

    def __init__(self, func):
        self.func = func
        self.name = func.__name__
        self.__doc__ = func.__doc__

    def __get__(self, instance, owner=None):
        if instance is None:
            return self
        value = instance.__dict__[self.name] = self.func(instance)
        return value


@dataclass(frozen=True)
class Potential:
    """V(x) = band edge of the stack (if any) + sum of shapes; m(x) from the stack or ``mass``.

    Energies are in ``units.energy``, lengths in ``units.length``, masses in m_e.
    """

    shapes: tuple[Shape, ...]
    units: UnitSystem
    mass: float = 1.0
    stack: LayerStack | None = None

    # ------------------------------------------------------------------ values
    @_once
    def _summers(self) -> tuple:
        """One prepared evaluator per shape class, each summing all its instances in one pass."""
        groups: dict[type[Shape], list[Shape]] = {}
        for shape in self.shapes:
            groups.setdefault(type(shape), []).append(shape)
        return tuple(cls.summer(tuple(members)) for cls, members in groups.items())

    def value(self, x) -> np.ndarray:
        """Potential energy at ``x`` (excluding zero-range terms).

        Each shape class sums its instances with a prepared ``summer`` (one pass
        over sorted edges for square wells, nothing for point terms), so K
        components cost O((N + K) log K) where they can, not O(N K).
        """
        x = np.asarray(x, dtype=float)
        v = None if self.stack is None else self.stack.band_edge(x).astype(float)
        for total in self._summers:
            t = total(x)
            if v is not None:
                v = v + t
            elif isinstance(t, np.ndarray) and t.dtype == np.float64 and t.shape == x.shape and t.base is None:
                v = t  # the first term is a fresh float array of x's shape: no zeros to add it to
            else:
                v = np.zeros_like(x) + t
        return np.zeros_like(x) if v is None else v

    def half_cell_integrals(self, nodes: np.ndarray, shift: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
        """Integrals of V - ``shift`` over the left and right half of every cell of ``nodes`` (energy * length).

        The shift is subtracted from the values before they are summed, so
        where V equals it the integrals are exactly zero.

        Shapes that integrate exactly (``integrate``: a piecewise-linear table)
        do; the rest, with the stack, by 3-point Gauss-Legendre on each half cell
        (exact for polynomials up to degree 5 between nodes).
        """
        left, right = nodes[:-1], nodes[1:]
        mid = 0.5 * (left + right)
        if self._piecewise_constant:  # constant on every half cell (features are nodes): its midpoint value
            h = 0.5 * (right - left)
            v = self.value(np.concatenate([0.5 * (left + mid), 0.5 * (mid + right)]))
            if shift:
                v = v - shift
            return h * v[: left.size], h * v[left.size:]
        exact = [m for m in self.shapes if m.exact_integrals]
        rest = self if not exact else Potential(tuple(m for m in self.shapes if not m.exact_integrals), self.units,
                                                self.mass, self.stack)
        out = []
        for a, b in ((left, mid), (mid, right)):
            half = _gauss_integrals((lambda x: rest.value(x) - shift) if shift else rest.value, a, b)
            for shape in exact:
                half = half + shape.integrate(a, b)
            out.append(half)
        return out[0], out[1]

    def mass_at(self, x) -> np.ndarray:
        """Effective mass m(x) in m_e."""
        x = np.asarray(x, dtype=float)
        if self.stack is None:
            return np.full_like(x, self.mass)
        return self.stack.mass(x).astype(float)

    @property
    def hbar2_2me(self) -> float:
        return self.units.hbar2_2me

    def point_terms(self) -> list[tuple[float, float]]:
        """All zero-range terms (position, alpha), -alpha delta(x - position)."""
        return list(self._point_terms)

    @_once
    def _piecewise_constant(self) -> bool:
        """True if V is constant between the features (square wells, point terms, a layer stack)."""
        return all(s.piecewise_constant for s in self.shapes)

    @property
    def piecewise_constant(self) -> bool:
        """True if V (without point terms) is constant between consecutive features."""
        return self._piecewise_constant

    def piece_midpoints(self, lo: float, hi: float) -> np.ndarray:
        """The middle of every piece of [lo, hi] between consecutive features: one sample per piece where V (and
        m) is constant between the features (:attr:`piecewise_constant`) sees every value V takes there."""
        return self.pieces(lo, hi)[0]

    @_once
    def piece_table(self) -> tuple[np.ndarray, ...] | None:
        """V and m as tables, where V is constant between the features (:attr:`piecewise_constant`): (features,
        V on each open piece, m on each, V at each feature, m at each), the pieces numbered from the one left of
        the first feature (features.size + 1 of them).  Every entry is :meth:`value` or :meth:`mass_at` at one
        position (a piece's middle; beyond the outer features by their span, at least one length unit), so a lookup
        (:func:`fdsolver.numerics.kernels.piece_values`) returns the numbers an evaluation there returns, up to
        the rounding of a comparison within a few ulps of a feature.  None where V is not piecewise constant,
        or where features closer than round-off were merged (a piece between them would have no entry)."""
        if not self._piecewise_constant:
            return None
        feats = self._features
        if self._features_merged:
            return None
        k = feats.size + 1  # the probes: one per piece, then the features themselves
        x = np.empty(k + feats.size)
        if feats.size:
            reach = max(1.0, float(feats[-1] - feats[0]))
            x[0], x[k - 1] = feats[0] - reach, feats[-1] + reach
            x[1 : k - 1] = 0.5 * (feats[1:] + feats[:-1])
            x[k:] = feats
        else:
            x[0] = 0.0
        with np.errstate(invalid="ignore", over="ignore"):
            v = np.ascontiguousarray(self.value(x), dtype=float)
        m = np.ascontiguousarray(self.mass_at(x), dtype=float)
        return (np.ascontiguousarray(feats), v[:k], m[:k], v[k:], m[k:])  # contiguous parts of fresh arrays

    def pieces(self, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
        """(middles, lengths) of the pieces of [lo, hi] between consecutive features (length unit)."""
        feats = self.features()
        ends = np.concatenate([[lo], feats[(feats > lo) & (feats < hi)], [hi]])
        return 0.5 * (ends[1:] + ends[:-1]), np.diff(ends)

    @_once
    def _point_terms(self) -> tuple[tuple[float, float], ...]:
        out: list[tuple[float, float]] = []
        for shape in self.shapes:
            out.extend(shape.point_terms())
        return tuple(out)

    # ------------------------------------------------------------ geometry
    def features(self) -> np.ndarray:
        """Sorted unique positions that must be grid nodes."""
        return self._features.copy()

    @_once
    def _features(self) -> np.ndarray:
        return self._feature_points[0]

    @_once
    def _features_merged(self) -> bool:
        """True if distinct feature positions closer than round-off were merged into one."""
        return self._feature_points[1]

    @_once
    def _feature_points(self) -> tuple[np.ndarray, bool]:
        """(the sorted distinct feature positions, positions closer than round-off merged; whether any were)."""
        found: list[float] = []
        for shape in self.shapes:
            found.extend(shape.features())
        if self.stack is not None:
            found.extend(self.stack.interfaces.tolist())
        few = short_sorted_distinct(found)
        if few is not None:  # a few features (most structures): the same steps on Python floats, the same numbers
            tol = 1e-12 * max(1.0, abs(few[0]), abs(few[-1])) if few else 0.0
            if all(b - a > tol for a, b in pairwise(few)):
                return np.array(few, dtype=float), False
        pts = sorted_distinct(np.asarray(found, dtype=float))
        if pts.size > 1:  # merge positions closer than round-off (sorted and finite: the largest |p| is at an end)
            gaps = pts[1:] - pts[:-1]
            tol = 1e-12 * max(1.0, abs(float(pts[0])), abs(float(pts[-1])))
            if not (gaps > tol).all():
                return pts[np.concatenate([[True], gaps > tol])], True
        return pts, False

    def feature_scales(self) -> list[tuple[float, float]]:
        """(position, length scale) pairs: the grid must resolve ``scale`` around ``position``."""
        return list(self._feature_scales)

    @_once
    def _feature_scales(self) -> tuple[tuple[float, float], ...]:
        out = []
        for shape in self.shapes:
            s = shape.scale()
            if s is None:
                continue
            for p in shape.features():
                out.append((p, s))
        if self.stack is not None:
            s = self.stack.scale()
            for p in self.stack.interfaces:
                out.append((float(p), s if s is not None else INF))
        return tuple(out)

    def point_scales(self) -> list[tuple[float, float]]:
        """(position, 1/g) for each attractive point term, g = m alpha / hbar^2: its bound-state decay length."""
        return list(self._point_scales)

    @_once
    def _point_scales(self) -> tuple[tuple[float, float], ...]:
        terms = self.point_terms()
        if not terms:
            return ()
        masses = self.mass_at(np.array([pos for pos, _ in terms], dtype=float))  # one evaluation for all of them
        out = []
        for (pos, alpha), m in zip(terms, masses.tolist()):
            g = m * abs(alpha) / (2.0 * self.hbar2_2me)
            if g > 0:
                out.append((pos, 1.0 / g))
        return tuple(out)

    def asymptote(self, side: int) -> float:
        """Limit of V at side*infinity (+-inf for unbounded shapes)."""
        return self._asymptotes[0 if side < 0 else 1]

    @_once
    def _asymptotes(self) -> tuple[float, float]:
        return self._asymptote(-1), self._asymptote(1)

    def _asymptote(self, side: int) -> float:
        total = 0.0
        if self.stack is not None:
            total += self.stack.layers[0 if side < 0 else -1].band_edge
        for shape in self.shapes:
            total += shape.asymptote(side)
        return total

    def asymptotic_mass(self, side: int) -> float:
        if self.stack is None:
            return self.mass
        return self.stack.layers[0 if side < 0 else -1].mass

    def support(self) -> tuple[float, float]:
        """The interval holding every feature (and region) of the potential."""
        return self._support

    @_once
    def _support(self) -> tuple[float, float]:
        feats = self._features
        lo = float(feats[0]) if feats.size else math.inf
        hi = float(feats[-1]) if feats.size else -math.inf
        for shape in self.shapes:
            r = shape.region()
            if r is not None:
                for v in r:  # the finite ends, one at a time: what min([lo, ...]) and max([hi, ...]) take
                    if math.isfinite(v):
                        lo, hi = min(lo, v), max(hi, v)
        return (lo, hi) if lo <= hi else (0.0, 0.0)

    def regions(self) -> list[tuple[str, float, float]]:
        """Named intervals for the 'probability inside' report: named shapes and named layers."""
        return list(self._regions)

    @_once
    def _regions(self) -> tuple[tuple[str, float, float], ...]:
        out = []
        for shape in self.shapes:
            r = shape.region()
            if shape.name and r is not None:
                out.append((shape.name, r[0], r[1]))
        if self.stack is not None:
            for name, lo, hi in self.stack.regions():
                if name:
                    out.append((name, lo, hi))
        return tuple(out)

    # --------------------------------------------------------------- symmetry
    def mirror_center(self, lo: float, hi: float) -> float | None:
        """The point x0 about which V, m and the point terms are mirror-symmetric, or None.

        Tested on 257 sample points of [lo, hi] (the solver's box), densely
        where the potential varies and across every feature on its own length
        scale, to 1e-10 of the potential's range, and on the asymptotes; a
        potential constant between its features (which must mirror each other)
        is tested exactly, in the middle of every piece.
        Remembered per interval.
        """
        key = (float(lo), float(hi))
        if key not in self._mirror_memo:
            self._mirror_memo[key] = self._mirror_center(lo, hi)
        return self._mirror_memo[key]

    @_once
    def _mirror_memo(self) -> dict:
        return {}

    # ---------------------------------------------------------------- derived
    def remembered(self, key: str, compute):
        """``compute()`` once per potential for ``key``, then its value again: a fact the solver layers derive
        from the potential alone (its open-line bound count, whether it leaks), kept with it as the mirror test
        is, so that a second solve of the same potential does not work it out again.  A potential is immutable,
        so the fact cannot go stale; a new potential (a sweep point, :func:`dataclasses.replace`) starts with
        none."""
        facts = self._facts
        if key not in facts:
            facts[key] = compute()
        return facts[key]

    @_once
    def _facts(self) -> dict:
        return {}

    def _mirror_center(self, lo: float, hi: float) -> float | None:
        if self.asymptote(-1) != self.asymptote(1) or self.asymptotic_mass(-1) != self.asymptotic_mass(1):
            return None
        feats = self.features()
        if feats.size:
            x0 = 0.5 * (feats[0] + feats[-1])
        else:
            x0 = 0.0
        pts = self.point_terms()
        if pts:
            pos = {round((p - x0), 12): a for p, a in pts}
            for p, a in pts:
                b = pos.get(round(-(p - x0), 12))
                if b is None or abs(a - b) > 1e-12 * max(abs(a), abs(b)):
                    return None
        half = min(x0 - lo, hi - x0)
        if half <= 0:
            return None
        exact = False
        if feats.size:  # the features themselves must mirror each other
            close, exact = _features_mirror(feats.tolist(), float(x0))
            if not close:
                return None
        if self._piecewise_constant:
            # V and m are constant between the features, which mirror each other: one sample in the middle of
            # every piece of the right half decides exactly
            table = self.piece_table
            if table is not None and exact and feats[-1] < 0.5 * (feats[-1] + x0 + half) < x0 + half:
                return self._table_mirrors(x0, table)
            return self._mirrors(x0, self.piece_midpoints(x0, x0 + half) - x0)
        # dense samples where the potential varies (the features' extent plus a few length scales), sparse beyond
        scales = [s for _, s in self.feature_scales() if math.isfinite(s)]
        inner = min(half, 0.5 * (float(feats[-1] - feats[0]) if feats.size else 0.0) + 3.0 * max(scales + [0.0]))
        parts = [np.linspace(0.0, half, 257)[1:]]
        if inner > 0:
            parts.append(np.linspace(0.0, inner, 2049)[1:])
        s = np.concatenate(parts)
        # offset samples by an irrational fraction of their spacing so they avoid discontinuities
        s = np.abs(s - 0.3183098861837907 * np.concatenate([np.full(256, half / 256), np.full(s.size - 256, inner / 2048 if inner > 0 else 0.0)]))
        # and across every feature of the right half on its own length scale, however thin it is
        near = [(p - x0, q) for p, q in self.feature_scales() if math.isfinite(q) and p >= x0]
        if near:
            pos, size = (np.array(v, dtype=float) for v in zip(*near))
            s = np.concatenate([s, np.abs((pos[:, None] + size[:, None] * _ACROSS_FEATURE[None, :]).ravel())])
        return self._mirrors(x0, s)

    def _table_mirrors(self, x0: float, table) -> float | None:
        """:meth:`_mirrors` of the middles of the right half's pieces, read from the piece tables, where the
        features mirror each other exactly and the box reaches past the last of them: then the middle of every
        piece of the right half and its mirror image lie inside a piece and its mirror piece (piece k and piece
        K - k of the K + 1), every piece is one of the two, and the test compares V and m of every piece with
        its mirror piece's, as the samples do; the same numbers, so the same answer."""
        v, m = table[1].tolist(), table[2].tolist()  # as floats: quicker than arrays for tens of pieces, linear
        if not all(map(math.isfinite, v)):
            return None
        span = max(max(v) - min(v), 1e-300)
        if max(abs(a - b) for a, b in zip(v, reversed(v))) > 1e-10 * span:
            return None
        if max(abs(a - b) for a, b in zip(m, reversed(m))) > 1e-12:
            return None
        return float(x0)

    def _mirrors(self, x0: float, s: np.ndarray) -> float | None:
        """x0 if V (to 1e-10 of its range over the samples) and m agree at x0 - s and x0 + s, else None."""
        vl, vr = self.value(x0 - s), self.value(x0 + s)
        if not (np.all(np.isfinite(vl)) and np.all(np.isfinite(vr))):
            return None
        span = max(np.ptp(np.concatenate([vl, vr])), 1e-300)
        if np.max(np.abs(vl - vr)) > 1e-10 * span:
            return None
        if np.max(np.abs(self.mass_at(x0 - s) - self.mass_at(x0 + s))) > 1e-12:
            return None
        return float(x0)


#: offsets across a feature, in its length scale, for the mirror test (irrational: they avoid its edges)
_ACROSS_FEATURE = np.array([-2.718281828, -1.159, -0.3183098862, 0.3183098862, 1.159, 2.718281828])

_GL_X = np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)])
_GL_W = np.array([5.0, 8.0, 5.0]) / 9.0


def _gauss_integrals(value, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """3-point Gauss-Legendre integrals of ``value`` over the intervals [a, b] (exact to degree 5)."""
    centre, half = 0.5 * (a + b), 0.5 * (b - a)
    pts = centre[:, None] + half[:, None] * _GL_X[None, :]
    vals = value(pts.ravel()).reshape(pts.shape)
    return half * (vals[:, 0] * _GL_W[0] + vals[:, 1] * _GL_W[1] + vals[:, 2] * _GL_W[2])


def _features_mirror(f: list[float], x0: float) -> tuple[bool, bool]:
    """(close, exact) for the sorted features ``f`` and a centre ``x0``: their images 2 x0 - p, in increasing
    order (the features' own order reversed: subtraction is monotone), each lie within 1e-9 of the features'
    span from the feature in the same place (close), or are the features themselves (exact).  Compared as
    floats: for the tens of features of most structures a list is quicker to walk than arrays are to set up, and
    for a long superlattice the walk stays linear, once per potential."""
    mirrored = [2.0 * x0 - p for p in reversed(f)]
    close = not max(abs(a - b) for a, b in zip(mirrored, f)) > 1e-9 * max(f[-1] - f[0], 1e-300)
    return close, close and mirrored == f


def remembered(potential, key, compute):
    """``potential.remembered(key, compute)`` (:meth:`Potential.remembered`): a fact worked out once per
    potential; ``compute()`` every time for an object that keeps no facts."""
    keep = getattr(potential, "remembered", None)
    return compute() if keep is None else keep(key, compute)
