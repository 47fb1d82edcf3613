"""One compiled call per grid level for potentials constant on every base cell, against the general path.

Why: :func:`fdsolver.boundstates.eigen.constant_level` refines the base grid, assembles the operators (point terms
and mirror halves included) and solves the level from its predicted energies in one compiled call.  It must
give the very numbers of the general path (refine, :func:`fdsolver.numerics.operator.assemble`,
:func:`fdsolver.numerics.operator.mirror_halves`, :func:`fdsolver.boundstates.eigen.solve_grid`), because it
performs the same floating-point operations in the same order (IEEE 754: +, -, *, / and sqrt are correctly
rounded; common practice, no source needed beyond the standard).  Each structure below is solved twice, with
the one-call pass and with it switched off, and every field of the two solutions is compared bit for bit.
The structures are invented (nm, meV, m_e).
"""

from __future__ import annotations

import numpy as np
import pytest
from same_results import fields_of, same

import fdsolver
from fdsolver.boundstates import eigen, levels
from fdsolver.numerics import kernels
from fdsolver.runs import solve_case

STRUCTURES = {
    "mirror pair of square wells": {
        "units": "nm-meV", "mass": 0.067,
        "potential": [{"shape": "square", "center": -2.5, "width": 3.0, "depth": 100.0},
                      {"shape": "square", "center": 2.5, "width": 3.0, "depth": 100.0}]},
    "unlike square wells": {
        "units": "nm-meV", "mass": 0.067,
        "potential": [{"shape": "square", "center": -3.0, "width": 4.0, "depth": 150.0},
                      {"shape": "square", "center": 2.0, "width": 2.5, "depth": 220.0}]},
    "layer stack with its own masses": {
        "units": "nm-meV",
        "layer": [{"band_edge": 250.0, "mass": 0.09}, {"thickness": 6.0, "band_edge": 0.0, "mass": 0.067},
                  {"thickness": 1.5, "band_edge": 250.0, "mass": 0.09},
                  {"thickness": 4.0, "band_edge": 10.0, "mass": 0.07}, {"band_edge": 250.0, "mass": 0.09}]},
    "point terms, mirror pair": {
        "units": "nm-meV", "mass": 0.067,
        "potential": [{"shape": "point", "center": -1.5, "strength": 300.0},
                      {"shape": "point", "center": 1.5, "strength": 300.0}]},
    "point term on the mirror centre of a well": {
        "units": "nm-meV", "mass": 0.067,
        "potential": [{"shape": "square", "center": 0.0, "width": 8.0, "depth": 80.0},
                      {"shape": "point", "center": 0.0, "strength": -120.0}]},
    "point terms, no mirror": {
        "units": "nm-meV", "mass": 0.067,
        "potential": [{"shape": "point", "center": 0.0, "strength": 250.0},
                      {"shape": "point", "center": 2.2, "strength": 400.0}]},
    "square well between hard walls, off centre": {
        "units": "nm-meV", "mass": 0.067, "domain": {"boundary": "hard", "left": -20.0, "right": 35.0},
        "potential": [{"shape": "square", "center": 1.0, "width": 5.0, "depth": 60.0}]},
    "thick-barrier doublet (clustered states)": {
        "units": "nm-meV", "mass": 0.067,
        "potential": [{"shape": "square", "center": -9.0, "width": 5.0, "depth": 200.0},
                      {"shape": "square", "center": 9.0, "width": 5.0, "depth": 200.0}]},
    "a state leaving through the energy window's foot": {  # the states of a finer level change
        "units": "nm-meV", "mass": 0.067, "solve": {"max_states": 5, "energy_window": [-50.52265662616652, 0.0]},
        "potential": [{"shape": "square", "center": k * 8.455799151984564 + 1.2900070332497717,
                       "width": 2.5800140664995435, "depth": 168.40885542055508} for k in range(3)]},
    "levels stopped by the memory budget": {
        "units": "nm-meV", "mass": 0.067, "solve": {"memory_mb": 0.2, "tolerance": 1e-13},
        "potential": [{"shape": "square", "center": 0.0, "width": 6.0, "depth": 150.0}]},
}


#: why the all-levels call stopped (kernels.LEVELS_*) and after how many levels, where it does not judge every
#: state itself: the state leaving the window fails the one-call pass on level 1 (the prediction no longer fits
#: the window's states), the budget stops the levels before the tolerance is met, and between the hard walls
#: the coarse solve's energies of the higher box states (195 meV where level 0 has 226) are too far off for the
#: proof (the general path decides level 0, then one call per level)
STOPPED = {"a state leaving through the energy window's foot": (kernels.LEVELS_FAILED, 1),
           "levels stopped by the memory budget": (kernels.LEVELS_BUDGET, 3),
           "square well between hard walls, off centre": (kernels.LEVELS_FAILED, 0)}


def _off(*args, **kwargs):
    """constant_levels switched off: no level done, and the level loop starts from level 0."""
    return kernels.LEVELS_CHANGED, [], [], None, None, None


@pytest.mark.parametrize("name", sorted(STRUCTURES))
def test_one_call_levels_are_the_general_path_bit_for_bit(name, monkeypatch):
    """Three ways: every regular level in one call (constant_levels), one call per level (constant_level), and
    the general path (both off).  Every field of the three solutions is the same."""
    case = fdsolver.case_from_dict(STRUCTURES[name])
    calls, reasons = [], []
    real, real_all = eigen.constant_level, eigen.constant_levels

    def counted(*args, **kwargs):
        got = real(*args, **kwargs)
        calls.append(got is not None)
        return got

    def counted_all(*args, **kwargs):
        got = real_all(*args, **kwargs)
        reasons.append((got[0], len(got[1])))
        return got

    monkeypatch.setattr(levels, "constant_levels", counted_all)
    fast = fields_of(solve_case(case))
    assert reasons, "the structure never reached the all-levels call"
    assert reasons[-1][0] == STOPPED.get(name, (kernels.LEVELS_DONE,))[0], reasons
    if name in STOPPED:
        assert reasons[-1][1] == STOPPED[name][1], reasons
    monkeypatch.setattr(levels, "constant_levels", _off)
    monkeypatch.setattr(levels, "constant_level", counted)
    per_level = fields_of(solve_case(case))
    assert calls, "the structure never reached the one-call pass"
    monkeypatch.setattr(levels, "constant_level", lambda *args, **kwargs: None)
    general = fields_of(solve_case(case))
    assert fast.keys() == general.keys() == per_level.keys()
    differ = [k for k in fast if not (same(fast[k], general[k]) and same(per_level[k], general[k]))]
    assert not differ, f"fields differ: {differ}"
    if name.startswith("thick-barrier"):
        return  # its clustered doublets go to the general path (Rayleigh-Ritz within the cluster)
    assert any(calls), "the one-call pass never succeeded on this structure"


class _PointsOnly:
    """A potential of point terms alone (zero elsewhere), as constant_level reads one: its point terms and C."""

    hbar2_2me = 38.0998  # hbar^2 / (2 m_e) in meV nm^2 (CODATA, rounded; only consistency matters here)

    def __init__(self, terms):
        self.terms = terms

    def point_terms(self):
        return list(self.terms)


def test_a_point_term_off_its_node_is_left_to_the_general_path():
    """On a node, the one-call pass gives the general path's state; 0.03 nm off every node it gives None, so
    the general path, which says what is wrong, decides."""
    base = np.linspace(-6.0, 8.0, 141)  # 0.1 nm cells: 2.2 nm is a node, 2.23 nm is not
    cells = (np.zeros(base.size - 1), np.full(base.size - 1, 0.067))
    guess = (np.array([-70.0]), np.array([0]))  # one bound state near -m alpha^2 / (4 C) = -70.3 meV
    on = _PointsOnly([(2.2, 400.0)])
    got = eigen.constant_level(base, cells, 2, None, on, 0.0, None, 0.0, 10, 1e-3, guess)
    assert got is not None and got.size == 1
    from fdsolver.numerics.grid import refine
    from fdsolver.numerics.operator import assemble

    grid = refine(base, 2)
    op = assemble(on, grid, 0.0, cells=(np.repeat(cells[0], 4), np.repeat(cells[1], 4)))
    ref = eigen.solve_grid([eigen.Sector(op, 0)], None, 0.0, 10, 1e-3, guess, tried=True)
    assert np.array_equal(got.energy, ref.energy) and np.array_equal(got.vectors[0], ref.vectors[0])
    assert np.array_equal(got.roundoff, ref.roundoff) and got.count_below == ref.count_below
    off = _PointsOnly([(2.23, 400.0)])
    assert eigen.constant_level(base, cells, 2, None, off, 0.0, None, 0.0, 10, 1e-3, guess) is None
