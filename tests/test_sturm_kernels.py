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
@given(st.integers(0, 10**6), st.integers(2, 400), st.floats(0.0, 6.0), st.integers(1, 11))
def test_counts_at_many_shifts_are_the_single_counts_and_lapacks(seed, n, spread, m):
    """sturm_counts_at (four recurrences per pass, any number of shifts) against one count at a time, and the
    counts against the number of LAPACK eigenvalues below each shift where no eigenvalue lies within 1e-9 of
    the spectrum's width of it (closer than that the count of a matrix a few ulps away may differ)."""
    d, e = matrix(seed, n, spread)
    values = eigvalsh_tridiagonal(d, e)
    rng = np.random.default_rng(seed + 2)
    shifts = np.concatenate([rng.uniform(values[0] - 1.0, values[-1] + 1.0, m), values[[0, -1]]])
    got = kernels.sturm_counts_at(d, e, shifts)
    assert got.tolist() == [kernels.sturm_count(d, e, x) for x in shifts]
    width = max(values[-1] - values[0], 1.0)
    for x, count in zip(shifts, got):
        if np.min(np.abs(values - x)) > 1e-9 * width:
            assert count == int(np.sum(values < x))


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


@PROPS
@given(st.integers(0, 10**6), st.integers(8, 300), st.floats(0.0, 4.0), st.integers(0, 3))
def test_predictions_separate_exactly_when_each_is_nearest_its_own_eigenvalue(seed, n, spread, lo):
    """Predictions of eigenvalues lo .. lo + k - 1 (against LAPACK's): the exact values pass; moving one value
    nearer the next eigenvalue than its own fails; so does a set that starts one index off."""
    d, e = matrix(seed, n, spread)
    values = eigvalsh_tridiagonal(d, e)
    k = min(6, n - lo - 1)
    exact = values[lo : lo + k].copy()
    first = np.arange(k)  # no clusters
    gaps_in = np.diff(exact)
    outside_far = (lo == 0 or exact[0] - values[lo - 1] > 0.25 * gaps_in[0] * 1.000001) and \
        values[lo + k] - exact[-1] > 0.25 * gaps_in[-1] * 1.000001
    if outside_far:  # (an eigenvalue just outside the predicted set makes the check refuse: documented)
        assert kernels.predictions_separate(d, e, exact, first, lo)
    gaps = np.diff(values[lo : lo + k + 1])
    if np.all(gaps > 1e-9 * np.max(np.abs(values))):
        wrong = exact.copy()
        wrong[k // 2] = values[lo + k // 2 + 1] - 0.1 * gaps[k // 2]  # nearer the next eigenvalue than its own
        wrong.sort()
        assert not kernels.predictions_separate(d, e, wrong, first, lo)
        assert not kernels.predictions_separate(d, e, values[lo + 1 : lo + k + 1].copy(), first, lo)


def test_predictions_of_one_cluster_are_not_probed():
    d, e = matrix(7, 50, 1.0)
    values = eigvalsh_tridiagonal(d, e)[:3]
    assert kernels.predictions_separate(d, e, values + 1e3, np.zeros(3, dtype=np.int64), 0)


def test_sign_convention_makes_the_first_significant_entry_positive():
    """Common practice, no source: the first lobe above 1e-3 of the peak is positive."""
    rows = np.array([[1e-5, -0.2, 1.0, 0.5], [-1e-5, 0.3, -1.0, 0.0], [0.0, -2e-3, 1.0, -1.0]])
    kernels.sign_convention(rows)
    assert rows.tolist() == [[-1e-5, 0.2, -1.0, -0.5], [-1e-5, 0.3, -1.0, 0.0], [0.0, 2e-3, -1.0, 1.0]]


@PROPS
@given(st.integers(0, 10**6), st.integers(2, 300), st.floats(0.0, 4.0), st.floats(-0.5, 1.5))
def test_pivoted_solve_matches_lapack_banded_solve(seed, n, spread, where):
    """(T - sigma I) y = b by the compiled factorisation (reciprocal pivots) against LAPACK's banded solver
    (scipy.linalg.solve_banded, gbsv), sigma anywhere in or beside the spectrum: the same y to the accuracy
    the system's condition allows (backward error of partial pivoting, Golub & Van Loan sec. 4.3)."""
    from scipy.linalg import solve_banded

    d, e = matrix(seed, n, spread)
    values = eigvalsh_tridiagonal(d, e)
    sigma = values[0] + where * (values[-1] - values[0]) + 1e-3 * (values[-1] - values[0] + 1.0)
    b = np.random.default_rng(seed + 2).normal(size=n)
    y = kernels.tridiag_solve(d, e, sigma, b)
    bands = np.zeros((3, n))
    bands[0, 1:], bands[1], bands[2, :-1] = e, d - sigma, e
    ref = solve_banded((1, 1), bands, b)
    cond = np.max(np.abs(values - sigma)) / np.min(np.abs(values - sigma))
    assert np.linalg.norm(y - ref) <= 1e-12 * max(cond, 1.0) * np.linalg.norm(ref)


@PROPS
@given(st.integers(0, 10**6), st.integers(3, 300), st.floats(0.0, 4.0))
def test_inverse_iteration_finds_lapacks_eigenvectors(seed, n, spread):
    """From shifts a little off the eigenvalues (as a prediction is), each vector is LAPACK's
    (scipy.linalg.eigh_tridiagonal) up to sign, for eigenvalues well apart from their neighbours."""
    from scipy.linalg import eigh_tridiagonal

    d, e = matrix(seed, n, spread)
    values, vectors = eigh_tridiagonal(d, e)
    scale = values[-1] - values[0]
    gaps = np.minimum(np.diff(values, prepend=-np.inf), np.diff(values, append=np.inf))
    picks = [j for j in (0, n // 2, n - 1) if gaps[j] > 1e-3 * scale]
    shifts = np.array([values[j] + 1e-6 * gaps[j] for j in picks])
    out = np.empty((len(picks), n))
    assert kernels.inverse_iteration(d, e, shifts, np.arange(len(picks)), 3, out)
    for row, j in zip(out, picks):
        assert abs(abs(float(row @ vectors[:, j])) - 1.0) <= 1e-10


def test_factor_keeps_the_reciprocal_of_a_subnormal_pivot_finite():
    """A pivot below 1e-300 in size is taken as 1e-300 of its sign, like an exact zero: its reciprocal stays
    finite (1/1e-310 would overflow a double)."""
    r0 = kernels.tridiag_factor(np.array([1e-310, 2.0]), np.array([1e-320]), 0.0)[0]
    assert np.all(np.isfinite(r0)) and r0[0] == 1.0 / 1e-300
