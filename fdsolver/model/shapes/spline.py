"""The not-a-knot cubic spline through a table (x_i, y_i): its coefficients and its values.

The interpolant is C2 and cubic on each interval [x_i, x_{i+1}]; at each end the first two intervals share one
cubic (the third derivative is continuous at x_1 and x_{n-2}), so a cubic polynomial is reproduced exactly.  It is
the same interpolant as ``scipy.interpolate.CubicSpline(x, y)`` (whose default end condition this is); the tests
compare the two to round-off.  It is built here, in a few lines of numpy, because importing scipy.interpolate
costs a cold start about 0.4 s of CPU (measured, DEVELOPERS.md), more than a whole solve of a tabulated profile.

Construction: the first derivatives s_i at the rows solve a tridiagonal system (de Boor, *A Practical Guide to
Splines*, chapter IV; the rows below are those of the C2 conditions with the not-a-knot end rows), by Gaussian
elimination with partial pivoting as LAPACK's ``dgtsv`` does it.  O(n) work, in Python: about 0.5-0.7 us per row
(10^5 rows in 0.05 s, 10^6 in 0.74 s of CPU, measured), so it outruns scipy's import below about 5 x 10^5 rows;
values to a few ulps of the table's range.  Values: :func:`table_values`, a tabulated profile's values in one
compiled pass (the cubic of each interval inside the table, constants beyond its ends).  Units: those of the
table (x and y as given).
"""

from __future__ import annotations

import math

import numpy as np


def _solve_tridiagonal(sub: np.ndarray, diag: np.ndarray, sup: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve A z = rhs, A tridiagonal with A[i+1, i] = sub[i], A[i, i] = diag[i], A[i, i+1] = sup[i].

    Gaussian elimination with partial pivoting (row interchanges fill a second superdiagonal), then back
    substitution: the scheme of LAPACK ``dgtsv``.  The inputs are not changed.  Raises ZeroDivisionError for a
    singular matrix (not reached for the spline's system, whose rows have distinct increasing x).
    """
    # Python floats (IEEE doubles, as numpy's): element access on lists is several times faster than on arrays
    dl, d, du, b = (np.asarray(a, dtype=float).tolist() for a in (sub, diag, sup, rhs))
    n = len(d)
    du2 = [0.0] * max(n - 2, 0)
    for i in range(n - 1):
        if abs(d[i]) >= abs(dl[i]):  # no interchange
            if d[i] == 0.0:
                raise ZeroDivisionError("singular tridiagonal system")
            fact = dl[i] / d[i]
            d[i + 1] -= fact * du[i]
            b[i + 1] -= fact * b[i]
        else:  # interchange rows i and i + 1
            fact = d[i] / dl[i]
            d[i] = dl[i]
            temp = d[i + 1]
            d[i + 1] = du[i] - fact * temp
            if i < n - 2:
                du2[i] = du[i + 1]
                du[i + 1] = -fact * du2[i]
            du[i] = temp
            b[i], b[i + 1] = b[i + 1], b[i] - fact * b[i + 1]
    if d[n - 1] == 0.0:
        raise ZeroDivisionError("singular tridiagonal system")
    b[n - 1] /= d[n - 1]
    if n > 1:
        b[n - 2] = (b[n - 2] - du[n - 2] * b[n - 1]) / d[n - 2]
    for i in range(n - 3, -1, -1):
        b[i] = (b[i] - du[i] * b[i + 1] - du2[i] * b[i + 2]) / d[i]
    return np.asarray(b)


def not_a_knot(x, y) -> tuple[np.ndarray, np.ndarray]:
    """(x, c): the rows and the 4 x (n - 1) coefficients of the not-a-knot cubic spline through (x, y).

    On [x_i, x_{i+1}] the spline is c[0, i] t^3 + c[1, i] t^2 + c[2, i] t + c[3, i], t = x - x_i.  ``x`` must
    increase strictly and hold at least 4 rows.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.size
    if n < 4 or y.shape != x.shape:
        raise ValueError("the not-a-knot cubic spline needs at least 4 rows of (x, y)")
    dx = np.diff(x)
    if not np.all(dx > 0):
        raise ValueError("the table's x must increase strictly")
    slope = np.diff(y) / dx
    # row i (1 .. n-2): dx_i s_{i-1} + 2 (dx_{i-1} + dx_i) s_i + dx_{i-1} s_{i+1} = 3 (dx_i m_{i-1} + dx_{i-1} m_i)
    diag = np.empty(n)
    sub = np.empty(n - 1)  # sub[i] = A[i+1, i]
    sup = np.empty(n - 1)  # sup[i] = A[i, i+1]
    rhs = np.empty(n)
    diag[1:-1] = 2.0 * (dx[:-1] + dx[1:])
    sub[:-1] = dx[1:]
    sup[1:] = dx[:-1]
    rhs[1:-1] = 3.0 * (dx[1:] * slope[:-1] + dx[:-1] * slope[1:])
    # not-a-knot ends: the third derivative is continuous at x_1 and at x_{n-2}
    d0 = x[2] - x[0]
    diag[0], sup[0] = dx[1], d0
    rhs[0] = ((dx[0] + 2.0 * d0) * dx[1] * slope[0] + dx[0] ** 2 * slope[1]) / d0
    d1 = x[-1] - x[-3]
    diag[-1], sub[-1] = dx[-2], d1
    rhs[-1] = (dx[-1] ** 2 * slope[-2] + (2.0 * d1 + dx[-1]) * dx[-2] * slope[-1]) / d1
    s = _solve_tridiagonal(sub, diag, sup, rhs)
    # the cubic Hermite form of each interval from its end values and slopes
    t = (s[:-1] + s[1:] - 2.0 * slope) / dx
    c = np.empty((4, n - 1))
    c[0] = t / dx
    c[1] = (slope - s[:-1]) / dx - t
    c[2] = s[:-1]
    c[3] = y[:-1]
    return x, c


def _table_values(x, c, at, below, above):
    """The loop of :func:`table_values` (compiled on first use)."""
    out = np.empty(at.shape[0])
    last = x.shape[0] - 2
    for k in range(at.shape[0]):
        a = at[k]
        if a <= x[0]:
            out[k] = below
        elif a >= x[-1]:
            out[k] = above
        else:  # NaN lands here too (in the last interval), and stays NaN
            # the interval holding a: the last row at or below it (numpy.searchsorted(x, a, "right") - 1), by
            # bisection written out, since numba's searchsorted would import its numpy array-math module when
            # this loop loads from the cache (about 0.08 s of a cold start; DEVELOPERS.md, session 15)
            lo, hi = 0, x.shape[0]
            while lo < hi:
                mid = lo + ((hi - lo) >> 1)
                if math.isnan(a) or x[mid] <= a:
                    lo = mid + 1
                else:
                    hi = mid
            i = min(max(lo - 1, 0), last)
            t = a - x[i]
            out[k] = ((c[0, i] * t + c[1, i]) * t + c[2, i]) * t + c[3, i]
    return out


_COMPILED: list = []


def table_values(spline: tuple[np.ndarray, np.ndarray], at, below: float, above: float) -> np.ndarray:
    """Values of a tabulated profile through its spline (x, c) from :func:`not_a_knot`: ``below`` at and before
    the first row, ``above`` at and after the last, in between c[0, i] t^3 + c[1, i] t^2 + c[2, i] t + c[3, i]
    (Horner) with t = at - x_i on the interval [x_i, x_{i+1}] holding ``at``; the shape of ``at``.

    One compiled pass (numba, loaded when first called: a table's profile is evaluated a few dozen times per
    solve, on up to six points per cell); ``tests/test_spline.py`` holds it to the numpy form of the same
    operations bit for bit.  O(N log n) for N points and n rows.
    """
    if not _COMPILED:
        from fdsolver.compiled import njit

        _COMPILED.append(njit(_table_values))
    x, c = spline
    pts = np.asarray(at, dtype=float)
    flat = np.ascontiguousarray(pts.reshape(-1))
    return _COMPILED[0](x, c, flat, float(below), float(above)).reshape(pts.shape)
