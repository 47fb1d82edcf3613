"""The compiled steps of grid building and mirror sectors against the numpy forms they replace, bit for bit.

Why: the base grid and the mirror sectors were built with numpy before these loops were compiled; the same
floating-point operations in the same order give the same nodes and operators, hence results identical to
the last bit (IEEE 754: +, -, *, / and sqrt are correctly rounded, so the same operations on the same
operands give the same values; common practice, no source needed beyond the standard).
"""

from __future__ import annotations

import numba
import numpy as np
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from fdsolver.numerics import kernels
from fdsolver.numerics.grid import refine
from fdsolver.numerics.operator import NEUMANN, assemble, cell_constants, mirror_halves


@numba.njit(cache=False)
def _numba_sorted(values):
    """numba's own sort of a copy (the sort kernels.grid_samples used for all its samples before its merge)."""
    out = values.copy()
    out.sort()
    return out


PROPS = settings(deadline=None, derandomize=True, phases=(Phase.explicit, Phase.generate),
                 suppress_health_check=[HealthCheck.too_slow])


@PROPS
@given(st.integers(0, 10**6), st.integers(0, 300), st.integers(0, 300))
def test_merged_samples_are_the_sorted_union(seed, n, k):
    """merge_samples(x, f(x), y, f(y)) = numpy.unique of the union, with f at every position, for sorted x and y
    that share some positions."""
    rng = np.random.default_rng(seed)
    x = np.unique(rng.uniform(-5.0, 5.0, n))
    y = np.unique(np.concatenate([rng.uniform(-5.0, 5.0, k), x[: n // 3]]))  # some positions in both

    def f(z):
        return np.cos(3.0 * z) + z**2

    xo, ho = kernels.merge_samples(x, f(x), y, f(y))
    union = np.unique(np.concatenate([x, y]))
    assert np.array_equal(xo, union)
    assert np.array_equal(ho, f(union))


def _inner_bounds_numpy(points, lo, hi, tiny):
    """The numpy form the kernel replaces (fdsolver.numerics.grid.base_grid before it was compiled)."""
    bps = np.unique(np.asarray(points, dtype=float))
    bps = bps[(bps > lo + tiny) & (bps < hi - tiny)]
    if bps.size > 1 and np.any(np.diff(bps) <= tiny):
        kept = [bps[0]]
        for b in bps[1:]:
            if b - kept[-1] > tiny:
                kept.append(b)
        bps = np.asarray(kept)
    return bps


@PROPS
@given(st.integers(0, 10**6), st.integers(0, 60), st.floats(1e-12, 0.5))
def test_inner_bounds_are_the_numpy_form(seed, n, tiny):
    """Distinct points strictly inside, near-duplicates (closer than tiny) merged, repeated and edge points
    included in the draw."""
    rng = np.random.default_rng(seed)
    pts = rng.uniform(-12.0, 12.0, n)
    pts = np.concatenate([pts, pts[: n // 4], pts[: n // 5] + 0.3 * tiny, [-10.0, 10.0, -10.0 + 0.5 * tiny]])
    got = kernels.inner_bounds(pts, -10.0, 10.0, tiny)
    assert np.array_equal(got, _inner_bounds_numpy(pts, -10.0, 10.0, tiny))


def _even_half_numpy(a, w, vw, c):
    """The numpy form the kernel replaces (fdsolver.numerics.operator.mirror_halves before it was compiled)."""
    a_even = np.concatenate([[0.0], a[c + 1:]])
    w_even = np.concatenate([[0.5 * w[c]], w[c + 1:]])
    vw_even = np.concatenate([[0.5 * vw[c]], vw[c + 1:]])
    d_even = (a_even[:-1] + a_even[1:] + vw_even) / w_even
    e_even = -a_even[1:-1] / np.sqrt(w_even[:-1] * w_even[1:])
    return a_even, w_even, vw_even, d_even, e_even


@PROPS
@given(st.integers(0, 10**6), st.integers(2, 200))
def test_even_sector_is_the_numpy_form(seed, n):
    """Random graded cells, masses and potential values: every array of the even sector bit for bit (its d and
    e past the centre taken from the whole operator's, which symmetric_form makes)."""
    rng = np.random.default_rng(seed)
    a = 10.0 ** rng.uniform(-2.0, 3.0, n + 1)
    w = 10.0 ** rng.uniform(-3.0, 0.0, n)
    vw = rng.normal(0.0, 5.0, n)
    d, e = kernels.symmetric_form(a, w, vw)
    for c in (0, n // 2, n - 1):
        for got, want in zip(kernels.even_half(a, w, vw, d, e, c), _even_half_numpy(a, w, vw, c)):
            assert np.array_equal(got, want)


def test_mirror_halves_are_the_assembly_on_the_right_half():
    """mirror_halves of the whole grid's operator = the operator assembled on the right half (Neumann centre for
    the even sector, Dirichlet for the odd): the halves of a symmetric double well (invented), to round-off."""
    from fdsolver.input.case import case_from_text

    pot = case_from_text('title = "two square wells (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
                         '[[potential]]\nshape = "square"\ncenter = -2.5\nwidth = 3\ndepth = 100\n'
                         '[[potential]]\nshape = "square"\ncenter = 2.5\nwidth = 3\ndepth = 100\n').potential
    half = np.concatenate([[0.0], np.cumsum(np.linspace(0.05, 0.4, 60))])
    nodes = np.concatenate([-half[:0:-1], half])
    c = half.size - 1
    even, odd = mirror_halves(assemble(pot, nodes[c - 1:]), 1)
    ref_even = assemble(pot, half, left=NEUMANN)
    ref_odd = assemble(pot, half)
    for got, want in ((even, ref_even), (odd, ref_odd)):
        for name in ("a", "w", "d", "e"):
            assert np.allclose(getattr(got, name), getattr(want, name), rtol=1e-13, atol=0), name
        assert np.allclose(got.vw, want.vw, rtol=1e-13, atol=1e-13 * np.abs(want.vw).max()), "vw"


_STACK_CASE = ('title = "three-layer stack with a sheet (invented)"\nunits = "nm-meV"\n'
               '[[layer]]\nband_edge = 230\nmass = 0.09\n[[layer]]\nthickness = 4.3\nband_edge = 0\nmass = 0.067\n'
               '[[layer]]\nthickness = 1.7\nband_edge = 120\nmass = 0.08\n[[layer]]\nthickness = 5.1\nband_edge = 10\n'
               'mass = 0.07\n[[layer]]\nband_edge = 230\nmass = 0.09\n'
               '[[potential]]\nshape = "square"\ncenter = 2.0\nwidth = 0.9\ndepth = 35\n'
               '[[potential]]\nshape = "point"\ncenter = 8.0\nstrength = 40\n')


@PROPS
@given(st.integers(0, 10**6), st.integers(3, 40), st.floats(-50.0, 50.0))
def test_constant_cells_give_the_evaluated_operator_on_every_refinement(seed, extra, shift):
    """For a piecewise-constant V and m (a layer stack with a square well and a point term, invented) on a grid
    whose nodes include every feature, the operator assembled from V and m read once per base cell
    (cell_constants) equals the one assembled by evaluating the potential, bit for bit, on refinements 0-5 and
    with any shift: V is one value inside each cell, so every point of a sub-cell reads it (IEEE 754: the same
    operations on the same operands; common practice, no source)."""
    from fdsolver.input.case import case_from_text

    pot = case_from_text(_STACK_CASE).potential
    rng = np.random.default_rng(seed)
    lo, hi = -6.0, 20.0
    feats = pot.features()
    base = np.unique(np.concatenate([[lo, hi], feats[(feats > lo) & (feats < hi)], rng.uniform(lo, hi, extra)]))
    cells = cell_constants(pot, base)
    assert cells is not None
    for level in range(6):
        nodes = refine(base, level)
        sub = (np.repeat(cells[0], 2**level), np.repeat(cells[1], 2**level))
        want, got = assemble(pot, nodes, shift), assemble(pot, nodes, shift, cells=sub)
        for name in ("a", "w", "vw", "v", "mass", "d", "e"):
            assert np.array_equal(getattr(got, name), getattr(want, name)), (level, name)


def test_constant_cells_refused_where_a_cell_sees_two_values():
    """cell_constants is None where V varies inside a cell: a feature (a layer interface) off the nodes, or a
    smooth well (a Gaussian, invented)."""
    from fdsolver.input.case import case_from_text

    pot = case_from_text(_STACK_CASE).potential
    feats = pot.features()
    base = np.unique(np.concatenate([[-6.0, 20.0], feats[(feats > -6.0) & (feats < 20.0)]]))
    assert cell_constants(pot, base) is not None
    assert cell_constants(pot, np.delete(base, 2)) is None  # one interface inside a cell
    smooth = case_from_text('title = "Gaussian trap (invented)"\nunits = "nm-meV"\nmass = 0.067\n[[potential]]\n'
                            'shape = "gaussian"\ncenter = 0\nsigma = 2\ndepth = 50\n').potential
    assert cell_constants(smooth, np.linspace(-10.0, 10.0, 41)) is None


@PROPS
@given(st.integers(0, 10**6), st.integers(2, 300), st.integers(0, 100))
def test_a_sampling_pass_is_the_numpy_sequence(seed, n, k):
    """sample_pass = merge (numpy.unique of the union), then lipschitz_limit of numpy.minimum(raw, cap), then
    the midpoints of the gaps too wide for it: the steps of a base grid's sampling before they were one kernel."""
    rng = np.random.default_rng(seed)
    x = np.unique(rng.uniform(0.0, 10.0, n))
    xm = np.unique(rng.uniform(0.0, 10.0, k))

    def f(z):
        return 0.05 + 0.5 * np.abs(np.sin(z))

    cap, growth = 1.2, 0.25
    got = kernels.sample_pass(x, f(x), xm, f(xm), cap, growth)
    xs = np.unique(np.concatenate([x, xm]))
    hs = kernels.lipschitz_limit(xs, np.minimum(f(xs), cap), growth)
    for a, b in zip(got, (xs, f(xs), hs, kernels.coarse_midpoints(xs, hs))):
        assert np.array_equal(a, b)


def _observable_columns_numpy(x_all, intervals, x_ref):
    """The numpy forms the kernel replaces (fdsolver.boundstates.result before it was compiled): node weights,
    the first and second moment columns and each node's dual-cell overlap with each interval."""
    h = np.diff(x_all)
    w_all = np.concatenate([[0.0], 0.5 * (h[:-1] + h[1:]), [0.0]])
    bounds = np.asarray(intervals, dtype=float).reshape(-1, 2)
    columns = np.zeros((x_all.size, 2 + bounds.shape[0]))
    columns[:, 0] = w_all * x_all
    columns[:, 1] = w_all * (x_all - x_ref) ** 2
    lo_cell = np.concatenate([[x_all[0]], x_all[1:] - 0.5 * h])
    hi_cell = np.concatenate([x_all[:-1] + 0.5 * h, [x_all[-1]]])
    first = np.searchsorted(hi_cell, bounds[:, 0], side="right")
    stop = np.searchsorted(lo_cell, bounds[:, 1], side="left")
    for j, (i0, i1) in enumerate(zip(first.tolist(), stop.tolist())):
        if i1 > i0:
            columns[i0:i1, 2 + j] = np.minimum(hi_cell[i0:i1], bounds[j, 1]) - np.maximum(lo_cell[i0:i1], bounds[j, 0])
    return w_all, columns


def _sign_changes_numpy(psi, fraction):
    size = np.abs(psi)
    big = size > fraction * np.max(size, axis=1, keepdims=True)
    s = np.sign(psi)
    return np.count_nonzero(big[:, 1:] & big[:, :-1] & (s[:, 1:] != s[:, :-1]), axis=1)


@PROPS
@given(st.integers(0, 10**6), st.integers(3, 400), st.integers(0, 6), st.integers(0, 5))
def test_observable_columns_are_the_numpy_forms(seed, n, k, states):
    """wave_columns: weights, moment columns, dual-cell overlaps (intervals inside, across the ends, beyond them,
    empty and on nodes), sign changes (rows with zeros, tiny unresolved tails and a NaN) and, for half the seeds,
    V at the nodes from V on the cells (given per base cell of one, two or four cells), bit for bit; the sums
    of psi^2 times each column against numpy's matrix product, to round-off (the order of a sum differs)."""
    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.uniform(0.01, 1.0, n)) - 3.0
    ends = rng.uniform(x[0] - 2.0, x[-1] + 2.0, (k, 2))
    if k:
        ends[0] = [x[n // 3], x[n // 2]]  # both ends on nodes
    intervals = np.sort(ends, axis=1)
    x_ref = float(rng.uniform(-2.0, 2.0))
    psi = rng.normal(size=(states, n)) * np.exp(-np.abs(rng.normal(size=(states, 1))) * np.abs(x))
    if states:
        psi[0, : n // 4] = 1e-12 * rng.normal(size=n // 4)  # an unresolved tail that changes sign
        psi[-1, n // 2] = 0.0
    if states > 2:
        psi[1, n // 2] = np.nan
    reps = int(rng.choice([1, 2, 4]))  # V given on base cells of ``reps`` cells each (as the levels refine them)
    reps = reps if (n - 1) % reps == 0 else 1
    v_base = rng.uniform(-300.0, 300.0, (n - 1) // reps) if seed % 2 else np.zeros(0)
    v_cells = np.repeat(v_base, reps)
    w, cols, changes, v_nodes, sums = kernels.wave_columns(x, np.ascontiguousarray(psi),
                                                           np.ascontiguousarray(intervals), x_ref, 1e-6, v_base, reps,
                                                           True)
    w_ref, cols_ref = _observable_columns_numpy(x, intervals, x_ref)
    assert np.array_equal(w, w_ref) and np.array_equal(cols, cols_ref)
    # the sums: the product of psi^2 with the columns, each column summed in node order (so to round-off of the
    # product's own order); without the columns asked for, the same sums and weights, and no N x (2 + K) array
    with np.errstate(invalid="ignore"):
        product = (psi**2) @ cols_ref
    scale = (psi**2) @ np.abs(cols_ref)
    assert sums.shape == (states, 2 + k)
    assert np.array_equal(np.isnan(sums), np.isnan(product))
    finite = ~np.isnan(product)
    assert np.all(np.abs(sums - product)[finite] <= 1e-13 * scale[finite])
    w2, cols2, changes2, v2, sums2 = kernels.wave_columns(x, np.ascontiguousarray(psi),
                                                          np.ascontiguousarray(intervals), x_ref, 1e-6, v_base, reps,
                                                          False)
    assert cols2.shape == (0, 2 + k) and np.array_equal(w2, w) and np.array_equal(changes2, changes)
    assert np.array_equal(sums2, sums, equal_nan=True) and np.array_equal(v2, v_nodes, equal_nan=True)
    if v_base.size:  # V on too few or too many cells for the nodes: not read past its end, no V at the nodes
        for wrong in (v_base[:-1], np.concatenate([v_base, v_base])):
            got = kernels.wave_columns(x, np.ascontiguousarray(psi), np.ascontiguousarray(intervals), x_ref, 1e-6,
                                       np.ascontiguousarray(wrong), reps, False)[3]
            assert got.size == 0
    if v_cells.size:  # the dual-cell averages of V, as the numpy form of the observables made them
        half = 0.5 * (x[1:] - x[:-1]) * v_cells
        h = np.diff(x)
        assert np.array_equal(v_nodes[1:-1], (half[:-1] + half[1:]) / (0.5 * (h[:-1] + h[1:])))
        assert np.isnan(v_nodes[0]) and np.isnan(v_nodes[-1])
    else:
        assert v_nodes.size == 0
    with np.errstate(invalid="ignore"):
        assert np.array_equal(changes, _sign_changes_numpy(psi, 1e-6))


def _sorted_with_ties(rng, n):
    """Sorted floats with repeated values, and at times a NaN or an infinity at the ends (numpy's order)."""
    a = np.sort(np.round(rng.uniform(-3.0, 3.0, n), 1))
    if n and rng.random() < 0.3:
        a[-1] = np.nan
    if n > 1 and rng.random() < 0.3:
        a[0] = -np.inf
    return a


@PROPS
@given(st.integers(0, 10**6), st.integers(0, 40))
def test_search_sorted_is_numpys(seed, n):
    """kernels.search_sorted gives numpy.searchsorted's index on both sides, with ties, infinities and NaN
    (ordered last, as numpy sorts it) in the array and as the key (NumPy reference manual, searchsorted)."""
    rng = np.random.default_rng(seed)
    a = _sorted_with_ties(rng, n)
    keys = np.concatenate([rng.uniform(-4.0, 4.0, 20), a[: min(n, 8)], [np.nan, np.inf, -np.inf, 0.0, -0.0]])
    for key in keys:
        for right, side in ((False, "left"), (True, "right")):
            assert kernels.search_sorted(a, float(key), right) == np.searchsorted(a, key, side=side)


@PROPS
@given(st.integers(0, 10**6), st.integers(1, 40))
def test_interp_sorted_is_numpys_to_the_bit(seed, n):
    """kernels.interp_sorted gives numpy.interp's values bit for bit: inside, at the samples themselves, beyond
    both ends, at NaN, and across repeated positions and infinite values (NumPy reference manual, interp)."""
    rng = np.random.default_rng(seed)
    xp = np.sort(np.round(rng.uniform(-3.0, 3.0, n), 1))
    fp = rng.normal(size=n)
    if n > 2 and rng.random() < 0.3:
        fp[rng.integers(n)] = np.inf
    x = np.concatenate([rng.uniform(-4.0, 4.0, 50), xp, [np.nan, np.inf, -np.inf]])
    got, want = kernels.interp_sorted(x, xp, fp), np.interp(x, xp, fp)
    nan = np.isnan(want)
    assert np.array_equal(np.isnan(got), nan)
    assert np.array_equal(got[~nan].view(np.int64), want[~nan].view(np.int64))  # every bit, the sign of 0 too


def _settle_numpy(energy, error, splitting, splitting_error, r):
    """The numpy form of a level run's last steps (as fdsolver.boundstates.levels had them)."""
    energy = energy.copy()
    pair_round = r[:-1] + r[1:]
    splitting_error = splitting_error + pair_round
    bound = splitting <= pair_round
    if np.any(bound):
        splitting = np.where(bound, pair_round, splitting)
    for k in np.flatnonzero(np.diff(energy) < 0):
        if energy[k] - energy[k + 1] <= error[k] + error[k + 1]:
            energy[k] = energy[k + 1] = 0.5 * (energy[k] + energy[k + 1])
    order = np.argsort(energy, kind="stable")
    off = np.abs(energy - energy[order])
    return energy, error, splitting, splitting_error, bound, np.where(off > error + error[order], off, 0.0)


@PROPS
@given(st.integers(0, 10**6), st.integers(0, 9))
def test_settled_levels_are_the_numpy_forms(seed, n):
    """settle_levels: splittings bounded by the round-off floors, doublets inverted within their bars made one
    mean (also two inversions in a row and ties), and extrapolations out of order beyond their bars, bit for bit
    against the numpy form."""
    rng = np.random.default_rng(seed)
    energy = np.sort(rng.uniform(-50.0, 10.0, n))
    error = 10.0 ** rng.uniform(-12.0, -6.0, n)
    for k in range(n - 1):  # some neighbours swapped by less or more than their errors, some equal
        pick = rng.integers(0, 4)
        if pick == 0:
            energy[k + 1] = energy[k] - rng.uniform(0.0, 2.0) * (error[k] + error[k + 1])
        elif pick == 1:
            energy[k + 1] = energy[k]
    r = 10.0 ** rng.uniform(-14.0, -8.0, n)
    splitting = np.diff(energy) * rng.choice([1.0, 1e-9], max(n - 1, 0))
    splitting_error = 10.0 ** rng.uniform(-12.0, -6.0, max(n - 1, 0))
    if n > 2 and seed % 3 == 0:
        splitting[0] = np.nan
    args = (energy, error, splitting, splitting_error, r)
    before = [a.copy() for a in args]
    got = kernels.settle_levels(*args)
    want = _settle_numpy(*args)
    for g, w in zip(got, want):
        assert g.shape == w.shape and np.array_equal(g, w, equal_nan=True)
    assert all(np.array_equal(a, b, equal_nan=True) for a, b in zip(args, before))  # inputs unchanged


def test_settled_levels_at_exact_ties():
    """settle_levels where a splitting equals its round-off floors and an inversion equals its two errors (both
    at the bound: bounded, and made one mean), against the numpy form, bit for bit."""
    energy = np.array([0.0, 1.0, 0.5, 2.0])
    error = np.array([0.125, 0.25, 0.25, 0.125])
    r = np.array([0.125, 0.25, 0.25, 0.125])
    splitting = np.array([0.375, 0.5, 1.0])  # the first exactly r[0] + r[1]
    splitting_error = np.array([0.0, 0.0, 0.0])
    got = kernels.settle_levels(energy, error, splitting, splitting_error, r)
    want = _settle_numpy(energy, error, splitting, splitting_error, r)
    assert got[4][0] and got[1][0] == 0.125 and got[0][1] == got[0][2] == 0.75
    for g, w in zip(got, want):
        assert np.array_equal(g, w)


def _cone_tables_numpy(p, c, slope):
    """The numpy form of the cone tables (as fdsolver.numerics.grid had it)."""
    order = np.argsort(p)
    p, c = p[order], c[order]
    left = np.concatenate([[np.inf], np.minimum.accumulate(c - slope * p)])
    right = np.concatenate([np.minimum.accumulate((c + slope * p)[::-1])[::-1], [np.inf]])
    return p, left, right


@PROPS
@given(st.integers(0, 10**6), st.integers(0, 12))
def test_cone_tables_read_as_the_numpy_form(seed, k):
    """cone_tables: the sorted apexes, and the prefix and suffix minima wherever target_spacing reads them (at
    the ends of every group of equal apexes: many apexes share a position here), bit for bit against the numpy
    form; a NaN cone spreads as numpy's minimum spreads it."""
    rng = np.random.default_rng(seed)
    p = np.round(rng.uniform(-3.0, 3.0, k), 0 if seed % 2 else 3)  # rounding to whole numbers makes ties
    c = rng.uniform(0.01, 2.0, k)
    if k > 3 and seed % 5 == 0:
        c[k // 2] = np.nan
    slope = float(rng.uniform(0.05, 0.5))
    apex, left, right = kernels.cone_tables(p, c, slope)
    p_ref, left_ref, right_ref = _cone_tables_numpy(p, c, slope)
    assert np.array_equal(apex, p_ref)
    for x in np.concatenate([p, rng.uniform(-4.0, 4.0, 20)]):
        lo, hi = np.searchsorted(apex, x, "right"), np.searchsorted(apex, x, "left")  # as target_spacing reads
        assert np.array_equal(left[lo], left_ref[lo], equal_nan=True)
        assert np.array_equal(right[hi], right_ref[hi], equal_nan=True)


@PROPS
@given(st.integers(0, 10**6), st.integers(1, 9), st.integers(0, 8), st.booleans())
def test_table_spacing_is_the_lookup_and_target_spacing(seed, k, cones, ascending):
    """The spacing of a base grid read from piece tables (kernels._piece_spacing, which walks its indices along
    ascending samples) against the table lookup (kernels.piece_values) followed by kernels.target_spacing, which
    searches them, bit for bit: samples on features, on cone apexes, between them and beyond both ends, sorted
    or shuffled (the searching form then)."""
    rng = np.random.default_rng(seed)
    feats = np.unique(np.round(rng.uniform(-5.0, 5.0, k), 1))
    v_piece, m_piece = rng.uniform(-2.0, 2.0, feats.size + 1), rng.uniform(0.05, 1.0, feats.size + 1)
    v_feat, m_feat = rng.uniform(-2.0, 2.0, feats.size), rng.uniform(0.05, 1.0, feats.size)
    p = np.round(rng.uniform(-6.0, 6.0, cones), 1)
    apex, left, right = kernels.cone_tables(p, rng.uniform(0.01, 1.0, cones), 0.25)
    x = np.concatenate([feats, p, np.round(rng.uniform(-8.0, 8.0, 40), 1), rng.uniform(-8.0, 8.0, 40)])
    x = np.sort(x) if ascending else rng.permutation(x)
    args = (-1.5, float(rng.uniform(-0.5, 3.0)), 0.0381, float(rng.choice([0.5, 3.0, np.inf])), -4.0, 4.0,
            float(rng.choice([50.0, np.inf])), 0.5, apex, left, right, 0.25)
    got = kernels._piece_spacing(x, feats, v_piece, m_piece, v_feat, m_feat, *args)
    v, m = kernels.piece_values(x, feats, v_piece, m_piece, v_feat, m_feat)
    assert np.array_equal(got, kernels.target_spacing(x, v, m, *args))


@PROPS
@given(st.integers(0, 10**6), st.integers(1, 9), st.booleans(), st.booleans())
def test_values_apart_from_features_are_the_searched_lookup(seed, k, ascending, near):
    """kernels.piece_values_apart, which walks its feature index along ascending positions, against the same
    lookup searched position by position (kernels.piece_values, and the refusal of a position within ``tol`` of a
    feature without being on it, written out here), bit for bit: positions on features, between them, beyond
    both ends, and (``near``) one just beside a feature, which must be refused."""
    rng = np.random.default_rng(seed)
    feats = np.unique(np.round(rng.uniform(-5.0, 5.0, k), 1))
    v_piece, m_piece = rng.uniform(-2.0, 2.0, feats.size + 1), rng.uniform(0.05, 1.0, feats.size + 1)
    v_feat, m_feat = rng.uniform(-2.0, 2.0, feats.size), rng.uniform(0.05, 1.0, feats.size)
    tol = 1e-9
    x = np.concatenate([feats, np.round(rng.uniform(-8.0, 8.0, 30), 2) + 0.005, [-9.0, 9.0]])
    if near:
        x = np.concatenate([x, [feats[int(rng.integers(feats.size))] + 0.5 * tol]])
    x = np.sort(x) if ascending else rng.permutation(x)
    done, v, m = kernels.piece_values_apart(x, feats, v_piece, m_piece, v_feat, m_feat, tol)
    k_of = np.searchsorted(feats, x, "left")
    on = (k_of < feats.size) & (feats[np.minimum(k_of, feats.size - 1)] == x)
    gap_up = np.where(k_of < feats.size, feats[np.minimum(k_of, feats.size - 1)] - x, np.inf)
    gap_down = np.where(k_of > 0, x - feats[np.maximum(k_of - 1, 0)], np.inf)
    refused = bool(np.any((~on & (gap_up <= tol)) | (gap_down <= tol)))
    assert done == (not refused)
    assert refused == near
    if done:
        v_ref, m_ref = kernels.piece_values(x, feats, v_piece, m_piece, v_feat, m_feat)
        assert np.array_equal(v, v_ref) and np.array_equal(m, m_ref)


@PROPS
@given(st.integers(0, 10**6), st.integers(0, 6), st.sampled_from([0.0, -0.0, 1.5]))
def test_grid_samples_are_the_sorted_distinct_samples(seed, k, lo):
    """kernels.grid_samples (the bounds' samples sorted and merged with the background's, or all sorted where a
    -0.0 or a NaN could make the two ways keep different zeros) against numpy: every background sample, bound and
    offset, clipped to [lo, hi], through numpy.unique, bit for bit; bounds on the ends, ties between offsets and
    background samples, a bound at -0.0, a spacing of NaN and one below zero."""
    rng = np.random.default_rng(seed)
    hi = lo + float(rng.choice([1.0, 7.5, 40.0]))
    inner = np.sort(np.round(rng.uniform(lo, hi, k), 1))
    bounds = np.unique(np.concatenate([[lo], inner, [hi]]))  # lo = -0.0: a bound at -0.0
    local = rng.uniform(0.01, 0.5, bounds.size)
    if seed % 11 == 0:
        local[0] = np.nan
    if seed % 13 == 0:
        local[-1] = -0.1  # every offset then lies inside the reach (none in practice; the loops must not stop early)
    offs = kernels.sample_offsets(0.25)
    background = int(rng.choice([2, 17, 257]))
    got = kernels.grid_samples(lo, hi, bounds, local, offs, background)
    width = hi - lo
    parts = [lo + np.arange(background) * ((hi - lo) / (background - 1)), [hi], bounds]
    parts[0][-1] = hi
    for i, b in enumerate(bounds):
        left = b - bounds[i - 1] if i > 0 else 0.0
        right = bounds[i + 1] - b if i < bounds.size - 1 else 0.0
        reach = min(max(max(left, right), 0.0), width)
        s = local[i] * offs
        s = s[s < reach]
        parts += [b + s, b - s]
    every = np.minimum(np.maximum(np.concatenate(parts), lo), hi)
    assert np.array_equal(got, np.unique(every))  # the values (-0.0 equal to 0.0)
    # the same samples before ordering (kernels.grid_raw_samples), and the bits against the form that sorts them
    # all together, each position once (numba's sort decides which of two zeros is kept)
    raw = kernels.grid_raw_samples(lo, hi, bounds, local, offs, background)
    assert np.array_equal(np.unique(raw), np.unique(every))
    ordered = _numba_sorted(raw)
    assert got.tobytes() == ordered[np.concatenate([[True], ordered[1:] != ordered[:-1]])].tobytes()


@PROPS
@given(st.floats(-1e6, 1e6), st.floats(-1e6, 1e6), st.integers(2, 2000))
def test_even_samples_are_numpys_linspace(lo, hi, num):
    """The layout's even samples (kernels.even_samples) against numpy.linspace, bit for bit: spans of any sign
    and size, equal ends, and spans so small that the step underflows (numpy's other formula)."""
    assert np.array_equal(kernels.even_samples(lo, hi, num), np.linspace(lo, hi, num))
    assert np.array_equal(kernels.even_samples(lo, lo, num), np.linspace(lo, lo, num))
    tiny = 5e-324 * (1 + num % 3)  # a subnormal span: its step is 0 in floating point
    assert np.array_equal(kernels.even_samples(0.0, tiny, num), np.linspace(0.0, tiny, num))


@PROPS
@given(st.floats(-1e4, 1e4), st.floats(0.0, 1e4), st.floats(1e-6, 1e6))
def test_walk_pair_is_the_numpy_form(lo, width, scale):
    """Both decay walks of a box in one array (kernels.walk_pair) against the numpy form they replace
    (fdsolver.boundstates.box: the offsets of _walk subtracted from the support's left end, then added to its
    right end), bit for bit."""
    from fdsolver.boundstates import box

    hi = lo + width
    t = box._walk(scale)
    want = np.concatenate([lo - t, hi + t])
    assert np.array_equal(kernels.walk_pair(lo, hi, scale * 1e-3, scale * 1e9, box._LADDER), want)


@PROPS
@given(st.integers(0, 10**6), st.integers(1, 3000), st.floats(-50.0, 50.0))
def test_floor_sums_are_numpys_reductions(seed, n, level):
    """The box samples' reductions in one pass (kernels.floor_sums) against numpy's min, max and pairwise sum,
    bit for bit, on values spread over ten decades (the sum's order decides its last bits), and a NaN or an
    infinite V flagged as not finite."""
    rng = np.random.default_rng(seed)
    v = rng.normal(0.0, 1.0, n) * 10.0 ** rng.uniform(-5.0, 5.0, n)
    m = rng.uniform(0.01, 2.0, n)
    dx = 10.0 ** rng.uniform(-3.0, 1.0, n)
    finite, lowest, highest, heaviest, area = kernels.floor_sums(v, m, dx, level)
    assert finite
    assert (lowest, highest, heaviest) == (np.min(v), np.max(v), np.max(m))
    assert area == np.sum(np.maximum(level - v, 0.0) * dx)
    assert kernels.floor_sums(v, m, dx, np.inf)[4] == 0.0  # no finite level: no area
    for bad in (np.nan, np.inf):
        w = v.copy()
        w[rng.integers(n)] = bad
        assert not kernels.floor_sums(w, m, dx, level)[0]
