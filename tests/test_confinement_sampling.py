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
