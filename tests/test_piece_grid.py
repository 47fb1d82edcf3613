"""Base grids of potentials constant between their features, built in one compiled call, against the general
path.

Why: where V and m are constant between the features (square wells, point terms, layer stacks),
:func:`fdsolver.numerics.grid.base_grid` reads V and m from tables (:attr:`Potential.piece_table`,
:func:`fdsolver.numerics.kernels.piece_values`) inside one compiled call
(:func:`fdsolver.numerics.kernels.piece_grid`) instead of evaluating the potential from Python at every
sampling pass.  The tables hold values of the potential's own evaluation, and the call performs the general
path's floating-point operations in the same order (IEEE 754: +, -, *, / and sqrt are correctly rounded;
common practice, no source needed beyond the standard), so the nodes, and every result, must be the same to
the last bit.  The structures are invented (nm, meV, m_e), drawn at random with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest
from same_results import fields_of, same

import fdsolver
from fdsolver.errors import BudgetError
from fdsolver.model.potential import Potential
from fdsolver.numerics import kernels
from fdsolver.numerics.grid import GridSettings, Spacing, base_grid, spacing_function
from fdsolver.runs import solve_case


def _structure(seed: int) -> dict:
    """A random piecewise-constant structure: square wells and barriers (some overlapping), point terms, or a
    layer stack with its own masses; some mirror-symmetric, some between hard walls."""
    rng = np.random.default_rng(seed)
    kind = seed % 4
    case: dict = {"units": "nm-meV", "mass": float(rng.uniform(0.04, 0.2))}
    if kind == 3:
        layers = [{"band_edge": float(rng.uniform(150, 400)), "mass": float(rng.uniform(0.06, 0.12))}]
        for _ in range(int(rng.integers(1, 5))):
            layers.append({"thickness": float(rng.uniform(0.5, 8.0)), "band_edge": float(rng.uniform(-20, 60)),
                           "mass": float(rng.uniform(0.05, 0.1))})
            layers.append({"thickness": float(rng.uniform(0.5, 4.0)), "band_edge": float(rng.uniform(100, 300)),
                           "mass": float(rng.uniform(0.07, 0.12))})
        layers[-1] = {"band_edge": layers[0]["band_edge"], "mass": layers[0]["mass"]}
        case.pop("mass")
        case["layer"] = layers
        return case
    shapes = []
    for _ in range(int(rng.integers(1, 4))):
        shapes.append({"shape": "square", "center": float(rng.uniform(-8, 8)), "width": float(rng.uniform(0.3, 6)),
                       "depth": float(rng.uniform(-40, 250))})
    if kind == 1:
        shapes.append({"shape": "point", "center": float(rng.uniform(-5, 5)), "strength": float(rng.uniform(50, 400))})
    if kind == 2:  # a mirror pair
        c, w, d = float(rng.uniform(1, 7)), float(rng.uniform(0.5, 5)), float(rng.uniform(20, 300))
        shapes = [{"shape": "square", "center": s * c, "width": w, "depth": d} for s in (-1, 1)]
    case["potential"] = shapes
    if seed % 5 == 0:
        case["domain"] = {"boundary": "hard", "left": -30.0, "right": 25.0}
    return case


SEEDS = list(range(24))


@pytest.mark.parametrize("seed", SEEDS)
def test_tables_give_the_potentials_own_values(seed):
    """piece_values = Potential.value and mass_at at the features themselves and at random positions inside
    the pieces and beyond the outer features."""
    pot = fdsolver.case_from_dict(_structure(seed)).potential
    table = pot.piece_table
    assert table is not None
    feats = table[0]
    rng = np.random.default_rng(1000 + seed)
    x = np.concatenate([feats, rng.uniform(feats[0] - 50.0, feats[-1] + 50.0, 400)])
    v, m = kernels.piece_values(x, *table)
    assert np.array_equal(v, pot.value(x))
    assert np.array_equal(m, pot.mass_at(x))


@pytest.mark.parametrize("seed", SEEDS)
def test_one_call_base_grid_is_the_general_path_bit_for_bit(seed):
    """The same nodes from the compiled call and from sampling through a Python callback, over energy windows,
    boxes and mirror centres drawn at random, and the same budget refusal."""
    case = fdsolver.case_from_dict(_structure(seed))
    pot = case.potential
    rng = np.random.default_rng(2000 + seed)
    lo_s, hi_s = pot.support()
    for _ in range(3):
        e_lo = float(rng.uniform(-300, -10))
        e_hi = float(rng.uniform(e_lo + 1, 300))
        gs = GridSettings(wave_fraction=float(rng.choice([0.25, 0.5, 1.0])))
        spacing = spacing_function(pot, e_lo, e_hi, gs, float(rng.uniform(5, 50)) if rng.random() < 0.5 else None)
        assert isinstance(spacing, Spacing) and spacing.table is not None

        def plain(x, s=spacing):  # the same spacing function, as a plain callable: the general path
            return s(x)

        pad = float(rng.uniform(5, 40))
        box = (lo_s - pad, hi_s + pad)
        mirror = pot.mirror_center(*box)
        centers = [None]
        if mirror is not None:
            half = max(mirror - box[0], box[1] - mirror)
            box = (mirror - half, mirror + half)
            centers.append(mirror)
        for center in centers:
            fast = base_grid(spacing, pot.features(), box[0], box[1], gs, center, 10**7)
            slow = base_grid(plain, pot.features(), box[0], box[1], gs, center, 10**7)
            assert np.array_equal(fast, slow)
            with pytest.raises(BudgetError):
                base_grid(spacing, pot.features(), box[0], box[1], gs, center, 20)


@pytest.mark.parametrize("seed", SEEDS[:12])
def test_solutions_are_the_same_with_and_without_the_tables(seed, monkeypatch):
    """Every field of the solution, with the compiled grid and with the tables switched off."""
    d = _structure(seed)
    fast = fields_of(solve_case(fdsolver.case_from_dict(d)))
    monkeypatch.setattr(Potential, "piece_table", property(lambda self: None))
    general = fields_of(solve_case(fdsolver.case_from_dict(d)))
    differ = [k for k in fast if not same(fast[k], general[k])]
    assert not differ, f"fields differ: {differ}"


def test_no_tables_where_the_potential_varies_between_features():
    """A graded well is not piecewise constant: no tables, and the grid is sampled through the potential."""
    pot = fdsolver.case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": [
        {"shape": "smooth_square", "center": 0.0, "width": 6.0, "edge": 0.5, "depth": 120.0}]}).potential
    assert pot.piece_table is None
    assert spacing_function(pot, -120.0, 0.0, GridSettings()).table is None


def _coarse_both_ways(case):
    """(compiled, general) coarse-grid states of a case: the coarse solve of its first box, one call and the
    general path (:func:`fdsolver.boundstates.levels.solve_nodes` without vectors)."""
    from dataclasses import replace

    from fdsolver.boundstates.driver import _center_for, _grid
    from fdsolver.boundstates.levels import coarse_states, solve_nodes
    from fdsolver.boundstates.problem import plan

    problem = plan(case.potential, case.domain, case.settings)
    gs = replace(problem.settings.grid, wave_fraction=2.0 * problem.settings.grid.wave_fraction)
    e_hi = problem.threshold if np.isfinite(problem.threshold) else problem.reference + problem.v_range[1]
    center = _center_for(problem, problem.box)
    nodes = _grid(problem, problem.box, problem.reference + problem.deepest, e_hi, gs, center)
    return coarse_states(problem, nodes, center), solve_nodes(problem, nodes, center, vectors=False)[1]


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("solve", [{}, {"max_states": 2}, {"energy_window": [-60.0, 0.0]}])
def test_one_call_coarse_solve_is_the_general_path(seed, solve, monkeypatch):
    """The coarse solve's energies, indices, sectors, parities and counts: the same from the compiled call and
    from the general path, with the default window, a state limit and a window whose foot lies among the states
    (between hard walls the window has no top: the upper bracket is searched)."""
    from fdsolver.boundstates import eigen

    d = {**_structure(seed), "solve": solve}
    calls = []
    real = eigen.constant_coarse
    monkeypatch.setattr("fdsolver.boundstates.levels.constant_coarse",
                        lambda *a, **k: calls.append(real(*a, **k)) or calls[-1])
    fast, general = _coarse_both_ways(fdsolver.case_from_dict(d))
    assert calls and calls[-1] is not None, "the compiled coarse solve did not decide"
    for name in ("energy", "index", "sector", "parity", "roundoff"):
        assert np.array_equal(getattr(fast, name), getattr(general, name)), name
    assert (fast.count_below, fast.first_index, len(fast.vectors)) == \
        (general.count_below, general.first_index, len(general.vectors))


def _thin(seed: int) -> dict:
    """A structure with one piece far thinner than the rest: two wells 40 nm apart with a 0.01 nm barrier of 300 to
    900 meV inside one of them (invented)."""
    rng = np.random.default_rng(500 + seed)
    return {"units": "nm-meV", "mass": 0.067, "potential": [
        {"shape": "square", "center": -20.0, "width": 6.0, "depth": float(rng.uniform(50, 200))},
        {"shape": "square", "center": 20.0, "width": 6.0, "depth": float(rng.uniform(50, 200))},
        {"shape": "square", "center": float(rng.uniform(18.0, 22.0)), "width": 0.01,
         "depth": -float(rng.uniform(300, 900))}]}


STRUCTURES = [_structure(s) for s in SEEDS] + [_thin(s) for s in range(4)]


@pytest.mark.parametrize("d", STRUCTURES)
def test_enclosure_from_tables_is_the_sampled_one(d, monkeypatch):
    """The leak test's enclosure top (fdsolver.continuum.confinement.confined_top) read from the piece tables
    equals the one from V sampled at both sides of every feature and the middle of every piece, bit for bit:
    the samples fall inside the pieces, in order, every piece at least once (the module's argument)."""
    from fdsolver.continuum import confinement

    case = fdsolver.case_from_dict(d)
    pot = case.potential
    assert confinement._pieces_in_order(pot, *pot.support()) is not None  # the tables are read
    from_tables = confinement.confined_top(pot)
    monkeypatch.setattr(confinement, "_pieces_in_order", lambda *a: None)
    sampled = confinement.confined_top(fdsolver.case_from_dict(d).potential)
    assert (from_tables is None and sampled is None) or from_tables == sampled


@pytest.mark.parametrize("d", STRUCTURES)
def test_zero_energy_march_reads_the_potentials_own_values(d):
    """The compact cells of the zero-energy march (fdsolver.boundstates.counting) get V and m from the piece
    tables: the same numbers as the potential's own evaluation at the cells' midpoints."""
    from fdsolver.boundstates import counting
    from fdsolver.numerics.cells import cells

    pot = fdsolver.case_from_dict(d).potential
    vt = min(pot.asymptote(-1), pot.asymptote(1))
    assert np.isfinite(vt)  # every structure here levels off at both ends
    layout = counting.layout_for([pot])
    _, mid, _ = cells(pot, layout, 0, vt)
    v, m = counting._values_at(pot, layout, mid)
    with np.errstate(all="ignore"):
        assert np.array_equal(v, pot.value(mid))
    assert np.array_equal(m, pot.mass_at(mid))


@pytest.mark.parametrize("d", STRUCTURES)
def test_box_samples_from_tables_are_the_potentials_own_values(d):
    """The provisional box's V and m (its range and binding floor, fdsolver.boundstates.problem) read from the
    piece tables: the potential's own values at the middle of every piece of the box."""
    from fdsolver.boundstates import problem

    case = fdsolver.case_from_dict(d)
    pot = case.potential
    box = problem.plan(pot, case.domain, case.settings).box
    vs, ms, dx = problem._box_samples(pot, box)
    xs, widths = pot.pieces(box[0], box[1])
    assert vs is pot.piece_table[1]  # the tables are read
    assert np.array_equal(vs, pot.value(xs)) and np.array_equal(ms, pot.mass_at(xs))
    assert np.array_equal(dx, widths)


def _mirrored_stack(seed: int) -> dict:
    """A layer stack that mirrors itself about its middle: random layers, then the same in reverse (invented)."""
    rng = np.random.default_rng(700 + seed)
    half = [{"thickness": float(rng.uniform(0.5, 6.0)), "band_edge": float(rng.uniform(-20, 300)),
             "mass": float(rng.uniform(0.05, 0.12))} for _ in range(int(rng.integers(1, 4)))]
    middle = [{"thickness": float(rng.uniform(0.5, 6.0)), "band_edge": float(rng.uniform(-20, 300)),
               "mass": float(rng.uniform(0.05, 0.12))}]
    if seed % 2:  # one layer off its mirror value: not symmetric
        middle = middle + [dict(middle[0], band_edge=middle[0]["band_edge"] + 1.0)]
    outer = {"band_edge": 300.0, "mass": 0.09}
    return {"units": "nm-meV", "layer": [outer, *half, *middle, *half[::-1], outer]}


MIRROR_CASES = STRUCTURES + [_mirrored_stack(s) for s in range(6)]


def test_mirror_test_from_tables_is_the_sampled_one(monkeypatch):
    """The mirror centre of a potential constant between its features, from the piece tables where its features
    mirror exactly, against the samples in the middle of every piece of the right half (the tables switched
    off), for the provisional box and for a box that ends right at the outer features; the symmetric structures
    among them (mirror pairs, mirrored stacks) do have a centre, so the table path is taken."""
    from fdsolver.boundstates import problem

    boxes = []
    for d in MIRROR_CASES:
        case = fdsolver.case_from_dict(d)
        feats = case.potential.features()
        boxes.append((d, problem.plan(case.potential, case.domain, case.settings).box))
        boxes.append((d, (float(feats[0]), float(feats[-1]))))
    from_tables = [fdsolver.case_from_dict(d).potential.mirror_center(*box) for d, box in boxes]
    monkeypatch.setattr(Potential, "piece_table", property(lambda self: None))
    sampled = [fdsolver.case_from_dict(d).potential.mirror_center(*box) for d, box in boxes]
    assert from_tables == sampled
    assert sum(c is not None for c in from_tables) >= 10


@pytest.mark.parametrize("d", STRUCTURES)
def test_zero_energy_margin_in_one_call_is_the_stepwise_one(d):
    """The open-line count's phase margin of a potential constant between its features, in one compiled call from
    its piece tables (fdsolver.boundstates.counting._tabled_margin: the flux scale from V and m read at the
    layout's 513 samples, the compact cells, the point terms on their edges, the march), against the stepwise
    path (the layout from V evaluated at the samples, then the march of phase_margin): the same number to the
    last bit, and so the same count."""
    from fdsolver.boundstates import counting

    pot = fdsolver.case_from_dict(d).potential
    stepwise = counting.phase_margin(pot, counting.layout_for([pot]), 0)
    fresh = fdsolver.case_from_dict(d).potential
    one_call = counting._tabled_margin(fresh)
    assert one_call is not None  # no sample of these structures lies next to a feature
    assert one_call == stepwise
    assert counting.bound_count(fdsolver.case_from_dict(d).potential) == counting.count_from_margin(
        stepwise - counting.MARGIN_ULPS * counting.EPS * (pot.features().size + 1 + abs(stepwise) + 1.0))


@pytest.mark.parametrize("offset", [1e-11, -1e-11])
def test_zero_energy_margin_next_to_a_feature_is_worked_out_stepwise(offset):
    """A layout sample within round-off reach of a feature (not on it): the tables' value there might not be the
    potential's own, so the one-call margin declines and the count comes from the stepwise path.  Wells on [0, 1]
    and [10, 12] (nm, meV, invented) put the samples at multiples of 12/512 nm; a third well starts 1e-11 nm
    right or left of the sample at 43 * 12/512 nm."""
    from fdsolver.boundstates import counting

    start = 43 * 12.0 / 512
    d = {"units": "nm-meV", "mass": 0.067, "potential": [
        {"shape": "square", "center": 0.5, "width": 1.0, "depth": 80.0},
        {"shape": "square", "center": 11.0, "width": 2.0, "depth": 120.0},
        {"shape": "square", "center": 0.5 * (start + offset + 3.0), "width": 3.0 - (start + offset), "depth": 40.0}]}
    pot = fdsolver.case_from_dict(d).potential
    assert np.linspace(pot.features()[0], pot.features()[-1], 513)[43] == start
    assert 0 < np.min(np.abs(pot.features() - start)) < 1e-9
    assert counting._tabled_margin(pot) is None
    stepwise = counting.phase_margin(pot, counting.layout_for([pot]), 0)
    assert counting.bound_count(fdsolver.case_from_dict(d).potential) == counting.count_from_margin(
        stepwise - counting.MARGIN_ULPS * counting.EPS * (pot.features().size + 1 + abs(stepwise) + 1.0))
    # an attractive 1D well binds (B. Simon, Ann. Phys. 97, 279 (1976); quoted from memory)
    assert counting.bound_count(pot) >= 1


@pytest.mark.parametrize("d", STRUCTURES)
def test_decay_walks_from_tables_are_the_potentials_own_values(d):
    """The open box's decay walks (fdsolver.boundstates.box._decay_walks: out of the support, from 1e-3 of the
    largest length to 1e9 of it) read V and m from the piece tables: the potential's own values there."""
    from fdsolver.boundstates import box
    from fdsolver.numerics.tables import table_values

    pot = fdsolver.case_from_dict(d).potential
    x, v, m = box._decay_walks(pot)
    assert table_values(pot, x) is not None  # the tables are read
    with np.errstate(all="ignore"):
        assert np.array_equal(v, pot.value(x))
    assert np.array_equal(m, pot.mass_at(x))


def test_table_values_decline_next_to_a_feature_and_read_on_it():
    """fdsolver.numerics.tables.table_values: positions on a feature and inside pieces are read (the potential's
    own values), a position 1e-10 nm beside a feature is not (a square well from -1 to 2 nm, 50 meV deep, and a
    point term at 5 nm; invented)."""
    from fdsolver.numerics.tables import apart_tolerance, table_values

    pot = fdsolver.case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": [
        {"shape": "square", "center": 0.5, "width": 3.0, "depth": 50.0},
        {"shape": "point", "center": 5.0, "strength": 30.0}]}).potential
    x = np.array([-7.0, -1.0, 0.3, 2.0, 3.5, 5.0, 1e6])
    v, m = table_values(pot, x)
    assert np.array_equal(v, pot.value(x)) and np.array_equal(m, pot.mass_at(x))
    assert v[2] == -50.0 and v[1] == v[3] == 0.0  # on the edges: outside the open well, as the shape says
    assert apart_tolerance(pot.features()) == pytest.approx(6e-9, rel=1e-12)  # 1e-9 of the 6 nm span
    for near in (-1.0 - 1e-10, -1.0 + 1e-10, 5.0 + 1e-10):
        assert table_values(pot, np.array([0.3, near])) is None
    assert table_values(pot, np.array([-1.0 - 1e-8])) is not None  # beyond the tolerance


@pytest.mark.parametrize("seed", range(40))
def test_feature_mirror_check_is_the_numpy_form(seed):
    """The features' mirror check of Potential.mirror_center, walked as floats (fdsolver.model.potential.
    _features_mirror), against its numpy form (the images np.sort(2 x0 - p), their largest distance from the
    features within 1e-9 of the span, and np.array_equal for the exact case): random feature sets that mirror
    exactly, within round-off, at about the 1e-9 threshold, or not at all, with repeated positions."""
    from fdsolver.model.potential import _features_mirror

    rng = np.random.default_rng(1200 + seed)
    half = np.sort(rng.uniform(0.1, 10.0, int(rng.integers(1, 6))))
    c = float(rng.uniform(-20, 20))
    kind = seed % 4
    f = np.sort(np.concatenate([c - half, c + half] + ([np.array([c])] if seed % 3 == 0 else [])))
    if kind == 1:
        f[-1] += float(rng.choice([0.5, 1.0, 2.0])) * 1e-9 * (f[-1] - f[0])  # about the threshold
    elif kind == 2:
        f[0] -= float(rng.uniform(0.01, 1.0))  # not mirrored
    elif kind == 3:
        f = np.sort(np.concatenate([f, f[:1]]))  # a repeated position: the images are still in order
    x0 = 0.5 * (f[0] + f[-1])
    span = max(float(f[-1] - f[0]), 1e-300)
    mirrored = np.sort(2.0 * x0 - f)
    close = not np.max(np.abs(mirrored - f)) > 1e-9 * span
    assert _features_mirror(f.tolist(), float(x0)) == (close, close and bool(np.array_equal(mirrored, f)))


def test_mirror_test_from_tables_compares_the_masses():
    """A layer stack whose band edges mirror but one barrier's mass differs from its mirror layer's has no mirror
    centre; with equal masses it has one, in the middle (nm, meV, m_e; invented)."""
    outer = {"band_edge": 250.0, "mass": 0.09}

    def stack(m_right):
        return {"units": "nm-meV", "layer": [outer, {"thickness": 2.0, "band_edge": 250.0, "mass": 0.09},
                                             {"thickness": 6.0, "band_edge": 0.0, "mass": 0.067},
                                             {"thickness": 2.0, "band_edge": 250.0, "mass": m_right}, outer]}

    for m_right, has_centre in ((0.09, True), (0.1, False)):
        pot = fdsolver.case_from_dict(stack(m_right)).potential
        feats = pot.features()
        box = (float(feats[0]) - 20.0, float(feats[-1]) + 20.0)
        assert pot.piece_table is not None
        centre = pot.mirror_center(*box)
        assert (centre is not None) == has_centre
        if has_centre:
            assert centre == pytest.approx(0.5 * (feats[0] + feats[-1]), abs=1e-12)


@pytest.mark.parametrize("d", STRUCTURES)
def test_potential_at_box_ends_is_the_potentials_own_value(d):
    """fdsolver.numerics.tables.potential_at (V at a box's ends for the box check and the result's end nodes):
    the potential's own values bit for bit, whether read from the tables (far out, in a piece) or evaluated (next
    to a feature, or a potential that keeps no tables: a Gaussian well, invented)."""
    from fdsolver.numerics.tables import potential_at, table_values

    pot = fdsolver.case_from_dict(d).potential
    feats = pot.features()
    far = np.array([feats[0] - 37.5, feats[-1] + 1e5])
    assert table_values(pot, far) is not None
    near = np.array([feats[0] + 1e-13, feats[-1]])
    for x in (far, near, np.array([feats[0]])):
        with np.errstate(all="ignore"):
            assert np.array_equal(potential_at(pot, x), pot.value(x))
    smooth = fdsolver.case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": [
        {"shape": "gaussian", "center": 0.0, "sigma": 2.0, "depth": 80.0}]}).potential
    x = np.array([-40.0, 0.3, 55.0])
    assert table_values(smooth, x) is None and np.array_equal(potential_at(smooth, x), smooth.value(x))
