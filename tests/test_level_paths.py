"""A grid level solved from predicted energies in one compiled call gives exactly the states of the general path.

Why: on every finer level the energies predicted from the coarser ones are proved by Sturm counts and
polished by inverse iteration in one compiled call (fdsolver.numerics.kernels.predicted_grid); where it
cannot decide (a cluster, a failed proof, a guess that does not fit) the general Python path starts again.
Both must give the same states, bit for bit, so that the results never depend on which path ran.  The
general path itself is checked against closed forms and transfer-matrix references elsewhere
(tests/test_closed_forms.py, tests/test_multiwell.py).  The structures are invented: random square-well
pairs and triples, mirror-symmetric or not, in nm and meV.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, example, given, settings
from hypothesis import strategies as st

import fdsolver
from fdsolver.boundstates import eigen
from fdsolver.boundstates.driver import _grid, _provisional
from fdsolver.boundstates.levels import _prediction, solve_nodes
from fdsolver.boundstates.problem import plan
from fdsolver.numerics.grid import refine

COMPILED = eigen._predicted_grid
PROPS = settings(deadline=None, derandomize=True, max_examples=20, phases=(Phase.explicit, Phase.generate),
                 suppress_health_check=[HealthCheck.too_slow])


def levels_both_ways(case, monkeypatch):
    """(fast, general, fell back): the GridStates of levels 1 and 2 of the case's final base grid, each level given the
    prediction of the two before it, solved by the compiled path and by the general path."""
    problem = plan(case.potential, case.domain, case.settings)
    prov = _provisional(problem)
    base = _grid(problem, prov.box, prov.e_lo, prov.e_hi, problem.settings.grid, prov.center)
    _, s0 = solve_nodes(problem, base, prov.center)
    _, s1 = solve_nodes(problem, refine(base, 1), prov.center, _prediction([s0.energy], s0.sector))
    guess = _prediction([s0.energy, s1.energy], s1.sector)
    taken = []
    with monkeypatch.context() as m:
        m.setattr(eigen, "_predicted_grid", lambda *args: taken.append(COMPILED(*args)) or taken[-1])
        fast = solve_nodes(problem, refine(base, 2), prov.center, guess)[1]
    with monkeypatch.context() as m:
        m.setattr(eigen, "_predicted_grid", lambda *args: None)
        general = solve_nodes(problem, refine(base, 2), prov.center, guess)[1]
    return fast, general, taken == [None]


@PROPS
@given(st.lists(st.tuples(st.floats(1.0, 8.0), st.floats(20.0, 400.0)), min_size=2, max_size=3),
       st.floats(0.5, 12.0), st.booleans(), st.integers(1, 10), st.sampled_from([None, 0.3, 0.7]))
@example(wells=[(2.5, 49.47237680523668)] * 3, gap=1.5, mirrored=True, max_states=3, window=0.3)  # an empty window
def test_compiled_level_equals_general_path(wells, gap, mirrored, max_states, window):
    """Also with an energy window that starts above the lowest states (``window``: its lower end as a fraction
    of the deepest well, so the Sturm counts at the window's foot number the states from above zero)."""
    if mirrored:
        wells = [wells[0]] * len(wells)
    comps, x = [], 0.0
    for width, depth in wells:
        comps.append({"shape": "square", "center": x + 0.5 * width, "width": width, "depth": depth})
        x += width + gap
    solve = {"max_states": max_states}
    if window is not None:
        solve["energy_window"] = [-window * max(d for _, d in wells), 0.0]
    case = fdsolver.case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": comps, "solve": solve})
    with pytest.MonkeyPatch.context() as mp:
        fast, general, fell_back = levels_both_ways(case, mp)
    assert fast.size == general.size
    if fast.size == 0:  # no state in the window: the general path answers that (by design)
        return
    # the compiled path decides unless two states of one sector form a cluster (unequal wells far apart)
    assert not fell_back or not mirrored
    assert fast.first_index == general.first_index and fast.count_below == general.count_below
    for name in ("energy", "index", "sector", "parity", "roundoff"):
        assert np.array_equal(getattr(fast, name), getattr(general, name)), name
    for u, v in zip(fast.vectors, general.vectors):
        assert np.array_equal(u, v)


@pytest.mark.parametrize("name", ["double_square", "coupled_wells", "sheet_in_well", "impurity_pair_finite"])
def test_energies_only_solve_is_the_full_solve_without_wavefunctions(name):
    """A study that needs energies only (the zero-range comparison) skips the wavefunctions and observables:
    its energies, errors, indices, parities, splittings and flags are those of the full solve, bit for bit."""
    from pathlib import Path

    from fdsolver.boundstates.driver import solve_potential

    case = fdsolver.load_case(Path(__file__).resolve().parent.parent / "cases" / f"{name}.toml")
    full = solve_potential(case.potential, case.domain, case.settings)
    light = solve_potential(case.potential, case.domain, case.settings, wavefunctions=False)
    for key in ("energy", "energy_error", "index", "parity", "converged", "splitting", "splitting_error",
                "level_energies", "level_sizes", "box_error"):
        assert np.array_equal(getattr(full, key), getattr(light, key), equal_nan=True), key
    assert full.energy.size and light.psi.shape == (full.energy.size, 0) and np.isnan(light.mean_x).all()
    assert (light.bound_count, light.resolved_count, light.box) == (full.bound_count, full.resolved_count, full.box)
