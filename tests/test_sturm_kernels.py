"""The compiled Sturm counts and bisection against LAPACK (scipy.linalg.eigvalsh_tridiagonal, driver 'stebz').

Why: every state's global index comes from Sturm counts, and bisection on them gives the shifts that
inverse iteration starts from.  The counts at several shifts in one pass must be exactly the single counts,
and the bisected eigenvalues must lie within their stated relative bracket of LAPACK's
(Golub & Van Loan, Matrix Computations, 4th ed., sec. 8.4.1: the Sturm sequence property of a symmetric
tridiagonal matrix).
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st
from scipy.linalg import eigvalsh_tridiagonal

from fdsolver.numerics import kernels

PROPS = settings(deadline=None, derandomize=True, phases=(Phase.explicit, Phase.generate),
                 suppress_health_check=[HealthCheck.too_slow])


def matrix(seed: int, n: int, spread: float):
    """A random symmetric tridiagonal matrix like a graded-grid operator: positive couplings over many scales."""
    rng = np.random.default_rng(seed)
    e = -(10.0 ** rng.uniform(0.0, spread, n - 1))
    d = np.abs(np.concatenate([e, [0.0]])) + np.abs(np.concatenate([[0.0], e])) + rng.normal(0.0, 1.0, n)
    return d, e


@PROPS
@given(st.integers(0, 10**6), st.integers(2, 400), st.floats(0.0, 6.0))
def test_counts_at_three_shifts_are_the_single_counts(seed, n, spread):
    d, e = matrix(seed, n, spread)
    values = eigvalsh_tridiagonal(d, e)
    rng = np.random.default_rng(seed + 1)
    # shifts at random places, on eigenvalues themselves, and off both ends of the spectrum
    shifts = np.concatenate([rng.uniform(values[0] - 1.0, values[-1] + 1.0, 3), values[[0, n // 2, -1]],
                             [values[0] - 1e3, values[-1] + 1e3, 0.0]])
    for i in range(0, shifts.size, 3):
        got = kernels._sturm_counts3(d, e, *shifts[i:i + 3])
        assert got == tuple(kernels.sturm_count(d, e, s) for s in shifts[i:i + 3])
    off = values[-1] + 1e3
    assert kernels._sturm_counts3(d, e, values[0] - 1e3, off, 0.5 * (values[0] + values[1]))[:2] == (0, n)


@PROPS
@given(st.integers(0, 10**6), st.integers(2, 300), st.floats(0.0, 5.0), st.integers(0, 5))
def test_bisection_brackets_the_lapack_eigenvalues(seed, n, spread, first):
    d, e = matrix(seed, n, spread)
    values = eigvalsh_tridiagonal(d, e)
    lo = min(first, n - 1)
    count = min(4, n - lo)
    below = float(np.min(d - np.abs(np.concatenate([[0.0], e])) - np.abs(np.concatenate([e, [0.0]]))))
    above = float(np.max(d + np.abs(np.concatenate([[0.0], e])) + np.abs(np.concatenate([e, [0.0]]))))
    rtol, floor = 1e-9, 1e-12 * max(abs(below), abs(above))
    got = kernels.bisect_eigenvalues(d, e, lo, count, below, above, rtol, floor)
    want = values[lo:lo + count]
    # LAPACK's own values are accurate to a few eps * ||T|| (Golub & Van Loan, sec. 8.4.1)
    slack = rtol * np.maximum(np.abs(want), floor) + 64 * np.finfo(float).eps * max(abs(below), abs(above))
    assert np.all(np.abs(got - want) <= slack), (got, want, slack)


@PROPS
@given(st.integers(0, 10**6), st.integers(2, 300), st.floats(0.0, 5.0), st.floats(1e-12, 1e3), st.integers(1, 300))
def test_upper_bracket_is_the_first_doubled_step_that_holds_the_values(seed, n, spread, step, count):
    """Against the plain loop it replaces: try below + step, doubling the step, until the Sturm count reaches
    ``count``; the bracket then holds the lowest ``count`` eigenvalues (LAPACK)."""
    d, e = matrix(seed, n, spread)
    count = min(count, n)
    below = float(np.min(d - np.abs(np.concatenate([[0.0], e])) - np.abs(np.concatenate([e, [0.0]]))))
    want, s = below + step, step
    while kernels.sturm_count(d, e, want) < count and np.isfinite(want):
        s *= 2.0
        want = below + s
    got = kernels.upper_bracket(d, e, below, step, count)
    assert got == want
    assert eigvalsh_tridiagonal(d, e)[count - 1] < got
