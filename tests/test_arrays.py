"""fdsolver.arrays.sorted_distinct against numpy.unique (the reference: numpy 2's own function), bit for bit.

Why: the solver takes the distinct sorted positions of a potential's features and of sample points with
``sorted_distinct``, which avoids numpy.unique's import of numpy.ma; the positions, and every result built on
them, must stay exactly numpy's, signed zeros and NaNs included.  Random arrays with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest

from fdsolver.arrays import sorted_distinct


def _same_bits(a: np.ndarray, b: np.ndarray) -> bool:
    return a.shape == b.shape and a.dtype == b.dtype and a.tobytes() == b.tobytes()


@pytest.mark.parametrize("seed", range(40))
def test_sorted_distinct_is_numpys_unique(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(0, 60))
    pool = np.array([0.0, -0.0, 1.0, -1.0, 1e-300, -1e-300, np.inf, -np.inf, np.nan, 2.5, 2.5 + 4e-16])
    values = np.where(rng.random(n) < 0.5, rng.choice(pool, n), rng.normal(size=n).round(int(rng.integers(0, 3))))
    shaped = values.reshape(-1, 1) if seed % 3 == 0 else values
    assert _same_bits(sorted_distinct(shaped), np.unique(shaped))
    assert _same_bits(sorted_distinct(values.tolist()), np.unique(np.asarray(values.tolist(), dtype=float)))


def test_signed_zeros_nans_and_the_empty_array():
    for values in ([], [np.nan, np.nan], [-0.0, 0.0], [0.0, -0.0], [0.0, np.nan, -0.0, np.nan, 3.0], [1.0]):
        a = np.asarray(values, dtype=float)
        assert _same_bits(sorted_distinct(a), np.unique(a)), values
    a = np.array([3.0, 1.0, 2.0])
    out = sorted_distinct(a)
    out[0] = 9.0
    assert a.tolist() == [3.0, 1.0, 2.0]  # a new array: the argument is left as it was


@pytest.mark.parametrize("seed", range(40))
def test_short_sorted_distinct_is_numpys_unique_or_declines(seed):
    """short_sorted_distinct (a potential's few features as Python floats) gives numpy.unique's values bit for bit,
    or None where it cannot promise that (a zero of either sign, a NaN, a long list); duplicates, infinities and
    values a few ulps apart are kept as numpy keeps them."""
    from fdsolver.arrays import SHORT, short_sorted_distinct

    rng = np.random.default_rng(seed)
    n = int(rng.integers(0, SHORT + 8))
    pool = np.array([1.0, -1.0, 1e-300, -1e-300, np.inf, -np.inf, 2.5, 2.5 + 4e-16, 7.0])
    if seed % 4 == 0:
        pool = np.concatenate([pool, [0.0, -0.0, np.nan]])
    values = np.where(rng.random(n) < 0.5, rng.choice(pool, n), rng.normal(size=n).round(int(rng.integers(0, 3))))
    got = short_sorted_distinct(values.tolist())
    reference = np.unique(values)
    declines = n > SHORT or bool(np.any(values == 0.0)) or bool(np.any(np.isnan(values)))
    if declines:
        assert got is None
    else:
        assert got is not None
        assert _same_bits(np.array(got, dtype=float), reference)
