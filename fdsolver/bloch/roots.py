"""Roots of D(E) = target inside brackets, many at once, and their round-off error.

``evaluate(energies, count=True)`` is any Hill discriminant provider (rows
D, dD/dE, error of D, error of dD/dE, Dirichlet count (-1 when ``count`` is
false); :mod:`fdsolver.bloch.cellgrid`, :mod:`fdsolver.zerorange.comb`).  :func:`solve` finds, for every i, the root
of f_i(E) = D(E) - target_i in [lo_i, hi_i] where f_i changes sign once
(f_i has the sign ``sign_lo_i`` on the left of the root): safeguarded Newton,
vectorised over all roots (one provider call per iteration), with a bisection
step whenever Newton leaves the bracket or fails to halve |f|.  Quadratic
convergence for simple roots; a bisection fallback guarantees convergence to
the bracket's round-off width.  Iteration stops when the step is below the
root's round-off error (or 4 eps of |E| + the energy scale).

Round-off error of a root: the set of energies where |D - target| is within
the error dD of D, from the local expansion |D'| dE + |D''| dE^2 / 2 = dD:

    dE = 2 dD / (|D'| + sqrt(D'^2 + 2 |D''| dD)),

which is dD / |D'| at a simple root and sqrt(2 dD / |D''|) where D' vanishes
(a closed gap, where two bands touch).  D'' is a central difference of D'.
Energies in the provider's energy unit.
"""

from __future__ import annotations

import numpy as np

from fdsolver.numerics.period import COLUMNS
from fdsolver.numerics.precision import EPS

MAX_ITERATIONS = 200
#: columns of a provider row
NCOL = len(COLUMNS)


def value_columns(target, edge: bool, size: int):
    """(value column, error column) per root: D and its error, or the edge function D -+ 1 of numerics.period."""
    if not edge:
        return np.zeros(size, dtype=int), np.full(size, 2)
    plus = np.broadcast_to(np.asarray(target, dtype=float), (size,)) > 0
    return np.where(plus, 5, 6), np.where(plus, 7, 8)


def roundoff(evaluate, energy, rows, scale: float, curvature: bool = False, err_col=None):
    """Round-off error of roots at ``energy`` with provider rows ``rows`` there (module docstring).

    dD / |D'| bounds the estimate; D'' is computed only where that bound
    exceeds 1e-9 of |E| + ``scale`` (D' nearly zero), or everywhere with
    ``curvature``, which also returns |D''| (1 / energy^2, 0 where not computed).
    ``err_col`` (per root) picks the error column of the function whose root it is (default: that of D).
    """
    energy = np.asarray(energy, dtype=float)
    d2 = np.zeros(energy.size)
    if energy.size == 0:
        return (np.zeros(0), d2) if curvature else np.zeros(0)
    ec = np.full(energy.size, 2) if err_col is None else np.asarray(err_col)
    dd, d1 = rows[np.arange(energy.size), ec], np.abs(rows[:, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        de = dd / d1
    h = 1e-6 * (np.abs(energy) + scale)
    need = np.ones(energy.size, dtype=bool) if curvature else ~(de <= 1e-9 * (np.abs(energy) + scale))
    if need.any():
        e = energy[need]
        up, down = evaluate(e + h[need], False), evaluate(e - h[need], False)
        d2[need] = np.abs(up[:, 1] - down[:, 1]) / (2.0 * h[need])
        with np.errstate(divide="ignore", invalid="ignore"):
            dn = 2.0 * dd[need] / (d1[need] + np.sqrt(d1[need] ** 2 + 2.0 * d2[need] * dd[need]))
        de[need] = np.where(np.isfinite(dn), dn, h[need])
    de = de + 2.0 * EPS * np.abs(energy)
    return (de, d2) if curvature else de


def solve(evaluate, lo, hi, target, sign_lo, scale: float, guess=None, width=None, edge: bool = False):
    """Roots of D(E) = target in [lo, hi] (module docstring); returns (energies, provider rows at them).

    With ``edge`` (targets +-1 only) the root is sought of the provider's edge function D -+ 1
    (:mod:`fdsolver.numerics.period`), which keeps the edges of almost closed gaps to full precision.

    Stops for a root when |D - target| is within the round-off of D, when the
    Newton step is below the root's round-off, or when the bracket is that
    narrow.  With ``width`` (per root, e.g. the band width) a Newton step
    shorter than sqrt(eps) * width is taken and accepted without another
    evaluation: the error it leaves, about step^2 |D''| / (2 |D'|) with
    |D''/D'| ~ 1/width inside a band, is below eps * width.  The returned
    rows are those of the last evaluation (before such a final step).
    """
    lo = np.array(lo, dtype=float)
    hi = np.array(hi, dtype=float)
    target = np.broadcast_to(np.asarray(target, dtype=float), lo.shape).copy()
    sign_lo = np.broadcast_to(np.asarray(sign_lo, dtype=float), lo.shape).copy()
    small = np.zeros(lo.shape) if width is None else np.sqrt(EPS) * np.broadcast_to(np.abs(width), lo.shape)
    x = 0.5 * (lo + hi) if guess is None else np.clip(np.array(guess, dtype=float), lo, hi)
    fcol, ecol = value_columns(target, edge, lo.size)
    if edge:
        target = np.zeros(lo.size)
    rows = np.empty((lo.size, NCOL))
    if lo.size == 0:
        return x, rows
    active = np.arange(lo.size)
    fprev = np.full(lo.size, np.inf)
    for _ in range(MAX_ITERATIONS):
        r = evaluate(x[active], False)
        rows[active] = r
        pick = np.arange(active.size)
        f = r[pick, fcol[active]] - target[active]
        fe = r[pick, ecol[active]]
        df = r[:, 1]
        a, b = lo[active], hi[active]
        xa = x[active]
        left = np.sign(f) == sign_lo[active]
        a = np.where(left, xa, a)
        b = np.where(left, b, xa)
        lo[active], hi[active] = a, b
        with np.errstate(divide="ignore", invalid="ignore"):
            step = -f / df
            floor = np.maximum(4.0 * EPS * (np.abs(xa) + scale), 0.25 * fe / np.abs(df))
        newton = xa + step
        good = np.isfinite(newton) & (newton >= a) & (newton <= b) & (np.abs(f) <= 0.5 * fprev[active])
        fprev[active] = np.abs(f)
        exact = (f == 0.0) | (np.abs(f) <= fe)
        final = good & (np.abs(step) <= np.maximum(floor, small[active]))
        done = exact | final | (b - a <= floor)
        x[active] = np.where(exact, xa, np.where(good, newton, 0.5 * (a + b)))
        active = active[~done]
        if active.size == 0:
            break
    if active.size:
        rows[active] = evaluate(x[active], False)
    return x, rows
