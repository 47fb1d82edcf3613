"""Band edges of a periodic potential, none missed: the band index of an energy, bisection, Newton.

Facts of Floquet theory used (Magnus and Winkler, Hill's Equation (1966), ch. 2; Eastham, The Spectral
Theory of Periodic Differential Equations (1973), ch. 2-3; cited from memory):

1. The bands are where |D(E)| <= 1 (D the Hill discriminant, Tr M / 2).  D is strictly monotone inside
   each band; band n = 0, 1, ... runs from D = (-1)^n at its bottom to D = -(-1)^n at its top, and
   D -> +inf as E -> -inf.  Gap n is the interval below band n (gap 0: everything below band 0); in
   gap n, (-1)^n D > 1.
2. The Dirichlet eigenvalues mu_1 < mu_2 < ... of one period (psi = 0 at both ends, whatever point the
   period starts at) lie one in each closed gap: top_{n-1} <= mu_n <= bottom_n.
3. Oscillation theorem: the number n_D(E) of Dirichlet eigenvalues below E is the number of zeros inside
   the period of the solution with psi = 0 at its start.

So E in (mu_j, mu_{j+1}] with j = n_D(E) lies in band j, in gap j or in gap j + 1, and the sign of D
tells which.  The *band index*

    idx(E) = j + 1/2   if |D(E)| < 1          (inside band j)
             j         if (-1)^j D(E) >= 1    (gap j)
             j + 1     otherwise              (gap j + 1)

is a non-decreasing step function, n in gap n and n + 1/2 inside band n, computed exactly (an integer
count and a sign) on every cell level.  The bottom of band n is where idx first reaches n + 1/2, its
top where idx first reaches n + 1.  :func:`find_edges` brackets each of these transitions by
bisection on idx, from energies where idx is below and at or above it, until the two ends of the
bracket sit in the adjacent gap and band; there (-1)^n D - 1 (bottom) or (-1)^n D + 1 (top) changes
sign exactly once, and the edge is that root (:func:`fdsolver.bloch.roots.solve`, Newton on the exact
dD/dE, with D -+ 1 in the determinant form of :mod:`fdsolver.numerics.period` where that is the more
accurate: the edges of a narrow gap then keep full precision).  A band of any narrowness is found, because the bisection closes in on the transition itself.
A closed gap (two bands touching, idx jumping from n - 1/2 to n + 1/2) is recognised when the bracket
shrinks to round-off without meeting gap n: both edges are then the touching point.  Round-off of D
near such a point can also open a spurious gap of width about sqrt(dD / |D''|); the edges' error
estimates (:func:`fdsolver.bloch.roots.roundoff`) cover it.

Energies in the provider's energy unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.bloch import roots
from fdsolver.numerics.precision import EPS

#: most bisection steps on the band index per transition
MAX_BISECTIONS = 200
#: how far a bound is pushed out (factor on its distance) while searching for the ends of the range
GROWTH = 2.0


def band_index(rows) -> np.ndarray:
    """idx(E) (module docstring) from provider rows: n in gap n, n + 1/2 inside band n.

    The comparisons of D with +-1 use the provider's edge functions D - 1 and D + 1 (determinant form
    where more accurate, :mod:`fdsolver.numerics.period`), so that the inside of a narrow gap is seen.
    """
    rows = np.atleast_2d(rows)
    j, dm1, dp1 = rows[:, 4], rows[:, 5], rows[:, 6]
    inside = (dm1 < 0.0) & (dp1 > 0.0)
    in_gap_j = np.where(np.mod(j, 2) == 0, dm1 >= 0.0, dp1 <= 0.0)
    return np.where(inside, j + 0.5, np.where(in_gap_j, j, j + 1.0))


@dataclass(frozen=True)
class EdgeSet:
    """Edges of bands 0..n-1 on one level: ``bottom`` has n + 1 entries (the last is the bottom of band n).

    ``closed_below[n]``: gap n (below band n) closed within round-off.
    ``*_rows``: provider rows at the edges (D, dD/dE, their errors, Dirichlet count);
    ``*_curvature``: |D''| there.
    """

    bottom: np.ndarray
    top: np.ndarray
    bottom_error: np.ndarray
    top_error: np.ndarray
    bottom_rows: np.ndarray
    top_rows: np.ndarray
    closed_below: np.ndarray
    bottom_curvature: np.ndarray
    top_curvature: np.ndarray
    evaluations: int


class _Samples:
    """Energies where idx is known (numpy arrays, sorted by energy); counts provider evaluations."""

    def __init__(self, evaluate):
        self.evaluate = evaluate
        self.e = np.empty(0)
        self.i = np.empty(0)
        self.count = 0

    def add(self, energies) -> np.ndarray:
        energies = sorted_distinct(np.atleast_1d(np.asarray(energies, dtype=float)))
        idx = band_index(self.evaluate(energies))
        self.count += energies.size
        e, i = np.concatenate([self.e, energies]), np.concatenate([self.i, idx])
        order = np.argsort(e, kind="stable")
        self.e, self.i = e[order], i[order]
        return idx

    def brackets(self, targets: np.ndarray):
        """Per target t: energies (a, b) and indices (idx_a, idx_b) of adjacent samples, idx < t at a, >= t at b."""
        b = np.argmax(self.i[None, :] >= targets[:, None], axis=1)  # the first sample at or above t
        return self.e[b - 1], self.e[b], self.i[b - 1], self.i[b]


def _range(samples: _Samples, e_lo: float, e_hi: float, top_target: float, scale: float) -> None:
    """Push e_lo down until idx = 0 there and e_hi up until idx >= top_target."""
    if not e_hi > e_lo:
        e_hi = e_lo + scale
    known = dict(zip(samples.e.tolist(), samples.i.tolist()))
    while (known.pop(e_lo) if e_lo in known else samples.add(e_lo)[0]) > 0.0:
        e_lo -= GROWTH * max(e_hi - e_lo, scale)
    while (known.pop(e_hi) if e_hi in known else samples.add(e_hi)[0]) < top_target:
        e_hi += GROWTH * max(e_hi - e_lo, scale)
        if not math.isfinite(e_hi):
            raise ArithmeticError("no energy reaches the wanted band index")


def find_edges(evaluate, n_bands: int, e_lo: float, e_hi: float, scale: float, hints=(),
               curvature: bool = True) -> EdgeSet:
    """Edges of bands 0..n_bands-1 and the bottom of band n_bands (module docstring).

    ``e_lo``/``e_hi`` are first guesses of an energy below band 0 and above
    the bottom of band n_bands (both are pushed out as needed), ``scale`` the
    energy scale of the lattice, ``hints`` energies near the edges (e.g.
    bracketing the edges of a coarser level) sampled first; without hints a
    uniform scan of 4 (n_bands + 1) energies starts the search.  Every
    bisection round halves all open brackets at once (one provider call).
    Without ``curvature`` the edge errors are dD/|D'| (D'' only where D' is
    tiny) and the curvatures are left at 0: :func:`with_curvature` completes
    them for the edge set that is kept.
    """
    samples = _Samples(evaluate)
    h = np.asarray(hints, dtype=float)
    h = h[(h > e_lo) & (h < e_hi)]
    if h.size:  # the hints and the two ends in one call
        samples.add(np.concatenate([[e_lo, e_hi], h]))
    _range(samples, e_lo, e_hi, n_bands + 0.5, scale)
    if not h.size:
        samples.add(np.linspace(samples.e[0], samples.e[-1], 4 * (n_bands + 1) + 1)[1:-1])
    targets = np.array([t for n in range(n_bands) for t in (n + 0.5, n + 1.0)] + [n_bands + 0.5])
    brackets, closed = {}, {}
    todo = targets
    for _ in range(MAX_BISECTIONS):
        ea, eb, ia, ib = samples.brackets(todo)
        found = (ia == todo - 0.5) & (ib == todo)
        tiny = ~found & (eb - ea <= 4.0 * EPS * (np.abs(ea) + np.abs(eb) + scale))  # idx jumps over t - 1/2
        for k in np.flatnonzero(found):
            brackets[float(todo[k])] = (float(ea[k]), float(eb[k]))
        for k in np.flatnonzero(tiny):
            closed[float(todo[k])] = 0.5 * float(ea[k] + eb[k])  # a closed gap
        rest = ~(found | tiny)
        if not rest.any():
            break
        todo = todo[rest]
        samples.add(0.5 * (ea[rest] + eb[rest]))
    else:  # pragma: no cover - bisection halves finite brackets
        raise ArithmeticError("band transitions not bracketed")
    ts = sorted(brackets)
    lo = np.array([brackets[t][0] for t in ts])
    hi = np.array([brackets[t][1] for t in ts])
    n_of = np.array([math.floor(t - 0.25) if t % 1 else int(t) - 1 for t in ts])  # band whose edge it is
    is_top = np.array([t % 1 == 0 for t in ts])
    s = np.where(np.mod(n_of, 2) == 0, 1.0, -1.0)
    target = np.where(is_top, -s, s)
    x, rows = roots.solve(evaluate, lo, hi, target, s, scale, edge=True)
    ce = np.array([closed[t] for t in closed])
    ecol = roots.value_columns(target, True, target.size)[1]
    if ce.size:
        x, rows = np.concatenate([x, ce]), np.concatenate([rows, evaluate(ce)])
        ecol = np.concatenate([ecol, np.full(ce.size, 2)])
        ts = ts + list(closed)
    err, d2 = roots.roundoff(evaluate, x, rows, scale, curvature=True, err_col=ecol) if curvature else \
        (roots.roundoff(evaluate, x, rows, scale, err_col=ecol), np.zeros(x.size))
    value = {t: (float(x[k]), float(err[k]), rows[k], float(d2[k])) for k, t in enumerate(ts)}
    count = samples.count + 3 * len(value)

    def pick(ts_):
        return tuple(np.array([value[t][i] for t in ts_]) for i in range(4))

    b_t = [n + 0.5 for n in range(n_bands + 1)]
    t_t = [n + 1.0 for n in range(n_bands)]
    bottom, bottom_err, bottom_rows, bottom_d2 = pick(b_t)
    top, top_err, top_rows, top_d2 = pick(t_t)
    closed_below = np.array([t in closed for t in b_t])
    return EdgeSet(bottom, top, bottom_err, top_err, bottom_rows, top_rows, closed_below, bottom_d2, top_d2, count)


def with_curvature(evaluate, es: EdgeSet, scale: float) -> EdgeSet:
    """The edge set with curvature-aware round-off errors and |D''| at every edge (:func:`roots.roundoff`)."""
    n = es.top.size
    sb = np.where(np.arange(n + 1) % 2 == 0, 1.0, -1.0)
    col_b = np.where(es.closed_below, 2, np.where(sb > 0, 7, 8))
    col_t = np.where(es.closed_below[1:], 2, np.where(-sb[:n] > 0, 7, 8))
    x = np.concatenate([es.bottom, es.top])
    rows = np.concatenate([es.bottom_rows, es.top_rows])
    err, d2 = roots.roundoff(evaluate, x, rows, scale, curvature=True, err_col=np.concatenate([col_b, col_t]))
    return EdgeSet(es.bottom, es.top, err[: n + 1], err[n + 1:], es.bottom_rows, es.top_rows, es.closed_below,
                   d2[: n + 1], d2[n + 1:], es.evaluations + 2 * x.size)
