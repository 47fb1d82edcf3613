"""The not-a-knot cubic spline of tabulated profiles (fdsolver/model/shapes/spline.py) against outside references.

References: scipy.interpolate.CubicSpline (its default end condition is not-a-knot; SciPy documentation), the same
system solved in 40-digit arithmetic with mpmath, and the closed-form fact that a not-a-knot spline reproduces any
cubic polynomial exactly (de Boor, A Practical Guide to Splines, chapter IV; quoted from memory).
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
from scipy.interpolate import CubicSpline

from fdsolver.model.shapes.spline import _solve_tridiagonal, not_a_knot, table_values


def _evaluate_numpy(spline, at):
    """The spline's cubics evaluated with numpy (the end cubics continue beyond the rows): the form
    ``table_values`` compiles, kept here as its reference."""
    x, c = spline
    at = np.asarray(at, dtype=float)
    i = np.clip(np.searchsorted(x, at, side="right") - 1, 0, x.size - 2)
    t = at - x[i]
    return ((c[0, i] * t + c[1, i]) * t + c[2, i]) * t + c[3, i]


def _values(x, y, at):
    """A tabulated profile's values through its spline, as the table shape computes them."""
    return table_values(not_a_knot(x, y), at, y[0], y[-1])


def _table(rng, n, spread):
    dx = 1.0 + spread * rng.random(n - 1)
    x = np.concatenate([[0.0], np.cumsum(dx)]) * rng.choice([1e-3, 1.0, 1e3]) - 7.0
    y = rng.normal(size=n) * rng.choice([1.0, 1e3]) + rng.choice([0.0, 1e4])
    return x, y


@pytest.mark.parametrize("seed", range(40))
def test_matches_scipy_cubic_spline(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.choice([4, 5, 6, 9, 40, 700]))
    x, y = _table(rng, n, spread=float(rng.choice([0.0, 3.0, 30.0])))
    at = np.concatenate([x, rng.uniform(x[0], x[-1], 400), [x[0], x[-1]]])
    ours = _values(x, y, at)
    ref = CubicSpline(x, y)(at)
    scale = np.max(np.abs(y))
    assert np.max(np.abs(ours - ref)) <= 1e-12 * scale
    assert np.array_equal(_values(x, y, x), _values(x, y, x))  # deterministic
    assert np.max(np.abs(_values(x, y, x) - y)) <= 1e-13 * scale  # it interpolates


def _mp_spline(x, y, at):
    """The not-a-knot spline's values from the same linear system, solved densely in 40 digits (mpmath)."""
    with mpmath.workdps(40):
        n = len(x)
        xs = [mpmath.mpf(float(v)) for v in x]
        ys = [mpmath.mpf(float(v)) for v in y]
        dx = [xs[i + 1] - xs[i] for i in range(n - 1)]
        m = [(ys[i + 1] - ys[i]) / dx[i] for i in range(n - 1)]
        a = mpmath.zeros(n, n)
        b = mpmath.zeros(n, 1)
        for i in range(1, n - 1):
            a[i, i - 1], a[i, i], a[i, i + 1] = dx[i], 2 * (dx[i - 1] + dx[i]), dx[i - 1]
            b[i] = 3 * (dx[i] * m[i - 1] + dx[i - 1] * m[i])
        d = xs[2] - xs[0]
        a[0, 0], a[0, 1] = dx[1], d
        b[0] = ((dx[0] + 2 * d) * dx[1] * m[0] + dx[0] ** 2 * m[1]) / d
        d = xs[-1] - xs[-3]
        a[n - 1, n - 1], a[n - 1, n - 2] = dx[-2], d
        b[n - 1] = (dx[-1] ** 2 * m[-2] + (2 * d + dx[-1]) * dx[-2] * m[-1]) / d
        s = mpmath.lu_solve(a, b)
        out = []
        for t in at:
            i = min(max(int(np.searchsorted(x, t, side="right")) - 1, 0), n - 2)
            u = mpmath.mpf(float(t)) - xs[i]
            tt = (s[i] + s[i + 1] - 2 * m[i]) / dx[i]
            out.append(float(((tt / dx[i] * u + (m[i] - s[i]) / dx[i] - tt) * u + s[i]) * u + ys[i]))
        return np.array(out)


@pytest.mark.parametrize("seed", range(8))
def test_as_accurate_as_scipy_against_40_digits(seed):
    """Also on badly graded tables (spacings 1000 times apart), where both round-off errors grow."""
    rng = np.random.default_rng(100 + seed)
    n = int(rng.choice([4, 5, 8, 12]))
    x, y = _table(rng, n, spread=1000.0)
    at = np.concatenate([x, rng.uniform(x[0], x[-1], 60)])
    exact = _mp_spline(x, y, at)
    ours = np.max(np.abs(_values(x, y, at) - exact))
    ref = np.max(np.abs(CubicSpline(x, y)(at) - exact))
    assert ours <= 4.0 * ref + 1e-14 * np.max(np.abs(y))


def test_reproduces_a_cubic_exactly():
    x = np.array([-1.0, -0.2, 0.3, 1.1, 1.5, 2.9, 3.0])
    cubic = np.polynomial.Polynomial([-3.0, 0.5, -1.0, 2.0])
    t = np.linspace(-2.0, 4.0, 241)  # inside and beyond the rows (the end cubics continue)
    assert np.max(np.abs(_evaluate_numpy(not_a_knot(x, cubic(x)), t) - cubic(t))) <= 1e-12 * np.max(np.abs(cubic(t)))


def test_tridiagonal_solver_pivots_like_a_dense_solve():
    rng = np.random.default_rng(5)
    for n in (1, 2, 3, 4, 9, 30):
        sub, sup = rng.normal(size=max(n - 1, 0)), rng.normal(size=max(n - 1, 0))
        diag = rng.normal(size=n) * 1e-3  # small pivots: the rows must be interchanged
        rhs = rng.normal(size=n)
        a = np.diag(diag) + np.diag(sub, -1) + np.diag(sup, 1)
        z = _solve_tridiagonal(sub, diag, sup, rhs)
        assert np.allclose(a @ z, rhs, rtol=0, atol=1e-10 * np.linalg.norm(rhs) * np.linalg.cond(a))
        assert np.allclose(z, np.linalg.solve(a, rhs), rtol=1e-8, atol=1e-12)


def test_refuses_short_or_unsorted_tables():
    with pytest.raises(ValueError):
        not_a_knot([0.0, 1.0, 2.0], [1.0, 2.0, 0.0])
    with pytest.raises(ValueError):
        not_a_knot([0.0, 2.0, 1.0, 3.0], [1.0, 2.0, 0.0, 1.0])


@pytest.mark.parametrize("seed", range(12))
def test_table_values_are_the_numpy_form_bit_for_bit(seed):
    """The compiled values of a tabulated profile = the numpy form they replaced (constants at and beyond the
    end rows, the spline in between, NaN where the position is NaN), in any array shape; against SciPy's
    CubicSpline inside the table to round-off."""
    rng = np.random.default_rng(100 + seed)
    n = int(rng.choice([4, 5, 9, 161, 700]))
    x, y = _table(rng, n, spread=float(rng.choice([0.0, 3.0, 30.0])))
    spline = not_a_knot(x, y)
    width = x[-1] - x[0]
    at = np.concatenate([x, rng.uniform(x[0] - 0.2 * width, x[-1] + 0.2 * width, 600), [np.nan, -np.inf, np.inf]])
    numpy_form = np.where(at <= x[0], y[0], np.where(at >= x[-1], y[-1], _evaluate_numpy(spline, np.clip(at, x[0], x[-1]))))
    got = table_values(spline, at, y[0], y[-1])
    assert np.array_equal(got, numpy_form, equal_nan=True)
    assert np.array_equal(table_values(spline, at[:600].reshape(20, 30), y[0], y[-1]), numpy_form[:600].reshape(20, 30))
    assert table_values(spline, np.float64(at[5]), y[0], y[-1]).shape == ()
    inside = (at > x[0]) & (at < x[-1])
    assert np.max(np.abs(got[inside] - CubicSpline(x, y)(at[inside]))) <= 1e-12 * np.max(np.abs(y))

