"""The enclosure test of a potential constant between its features samples each piece once, and answers exactly as
the dense sampling does (fdsolver.continuum.confinement; the dense answer is the reference, common practice, no
source): random layouts of square wells and barriers, with and without a step between the two sides."""

from __future__ import annotations

import numpy as np
import pytest

from fdsolver.continuum import confinement
from fdsolver.input.case import case_from_dict


def _random_case(seed: int):
    rng = np.random.default_rng(seed)
    comps, x = [], 0.0
    for k in range(int(rng.integers(1, 7))):
        width = float(rng.uniform(0.5, 6.0))
        depth = float(rng.choice([-1.0, 1.0]) * rng.uniform(5.0, 300.0))
        comps.append({"shape": "square", "center": x + 0.5 * width, "width": width, "depth": depth})
        x += width + float(rng.choice([0.0, rng.uniform(0.1, 4.0)]))
    return case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": comps})


class _Dense:
    """The same potential, sampled as if it were not piecewise constant."""

    def __init__(self, pot):
        self._pot = pot

    piecewise_constant = False

    def __getattr__(self, name):
        return getattr(self._pot, name)


@pytest.mark.parametrize("seed", range(40))
def test_sparse_and_dense_sampling_agree(seed):
    pot = _random_case(seed).potential
    assert pot.piecewise_constant
    assert confinement.confined_top(pot) == confinement.confined_top(_Dense(pot))
    assert confinement.leaks(pot) == confinement.leaks(_Dense(pot))


def test_a_barrier_pair_encloses_its_well_up_to_the_lower_barrier():
    """Two barriers of 200 and 300 meV around a well: enclosed up to 200 meV, which is above the threshold (0)."""
    case = case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": [
        {"shape": "square", "center": -4.0, "width": 2.0, "depth": -200.0},
        {"shape": "square", "center": 4.0, "width": 2.0, "depth": -300.0}]})
    assert confinement.confined_top(case.potential) == pytest.approx(200.0)
    assert confinement.leaks(case.potential)


def _numpy_top(v: np.ndarray):
    """The enclosure top in numpy steps (running maxima from both sides, their minimum, the samples below it by
    more than 1e-9 of the largest |V|): the reference form of fdsolver.numerics.kernels.enclosure_top."""
    if not np.all(np.isfinite(v)):
        return None
    enclosing = np.minimum(np.maximum.accumulate(v), np.maximum.accumulate(v[::-1])[::-1])
    inside = enclosing - v > 1e-9 * (float(np.max(np.abs(v))) or 1.0)
    return float(np.max(enclosing[inside])) if inside.any() else None


@pytest.mark.parametrize("seed", range(30))
def test_compiled_enclosure_is_the_numpy_form(seed):
    """The one-pass enclosure (fdsolver.numerics.kernels.enclosure_top) against the numpy form on random samples:
    plateaus and repeated values (rounded draws), a dip at the 1e-9 threshold, all zeros, monotone runs,
    and a sample that is not finite."""
    from fdsolver.numerics.kernels import enclosure_top

    rng = np.random.default_rng(900 + seed)
    n = int(rng.integers(1, 60))
    v = np.round(rng.normal(0.0, 100.0, n), int(rng.integers(-2, 3)))
    if seed % 5 == 1:
        v = np.sort(v)
    if seed % 5 == 2 and n > 2:  # a dip of about 1e-9 of the largest |V|, or of 1.5 times that
        big = float(np.max(np.abs(v))) or 1.0
        v[n // 2] = min(v[n // 2 - 1], v[n // 2 + 1]) - 1e-9 * big * (1.0 if seed % 2 else 1.5)
    if seed % 5 == 3:
        v = np.zeros(n)
    if seed % 10 == 4:
        v[int(rng.integers(0, n))] = rng.choice([np.inf, -np.inf, np.nan])
    enclosed, top = enclosure_top(np.ascontiguousarray(v))
    assert (float(top) if enclosed else None) == _numpy_top(v)


def test_compiled_enclosure_finds_the_well_between_two_barriers():
    """A well between barriers of 50 and 80 (energy units) is enclosed up to the lower barrier; a single step is not
    (common practice, no source)."""
    from fdsolver.numerics.kernels import enclosure_top

    assert enclosure_top(np.array([0.0, 50.0, -10.0, 80.0, 0.0])) == (True, 50.0)
    assert enclosure_top(np.array([0.0, 0.0, 30.0, 30.0]))[0] is False


def test_compiled_enclosure_edges():
    """The edges of the numpy form, one by one: a dip of exactly 1e-9 of the largest |V| is not enclosed, the
    largest |V| may be a negative value, and an infinite value (not only NaN) means no answer."""
    from fdsolver.numerics.kernels import enclosure_top

    s = 2.0**30
    while (s - (s - 1e-9 * s)) != 1e-9 * s:  # a level whose dip of 1e-9 of it is exact in floating point
        s += 1.0
    exact = np.array([s, s - 1e-9 * s, s])
    assert _numpy_top(exact) is None and enclosure_top(exact)[0] is False
    deep_end = np.array([-1000.0, 1.0, 1.0 - 5e-8, 1.0])  # the dip is below 1e-9 of 1000, above 1e-9 of 1
    assert _numpy_top(deep_end) is None and enclosure_top(deep_end)[0] is False
    for bad in (np.inf, -np.inf, np.nan):
        v = np.array([0.0, 50.0, bad, 80.0, 0.0])
        assert _numpy_top(v) is None and enclosure_top(v)[0] is False
