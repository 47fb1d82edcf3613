"""Property tests over generated cases: random sums of up to three wells (atomic units).

Each property is a fact of the physics, checked on derandomized examples
(the same cases on every run):

* the solver returns a result or raises CaseError, nothing else;
* translation invariance of the spectrum;
* mirror symmetry: parities alternate +1, -1, ... from the ground state
  (and a potential without mirror symmetry reports parity 0);
* scaling: x -> s x with V -> V / s^2 scales every energy by 1 / s^2
  (the Schroedinger equation -1/2 psi'' + V psi = E psi is invariant);
* monotonicity: deepening an attractive component lowers no energy and loses
  no state (min-max principle, Reed & Simon, Methods of Modern Mathematical
  Physics IV, sec. XIII.1);
* Hellmann-Feynman: dE/dlambda = <psi| dV/dlambda |psi>
  (R. P. Feynman, Phys. Rev. 56, 340 (1939)), against a central difference
  of energies;
* states are orthonormal in the grid's weights and state n has n nodes
  (Sturm oscillation theorem, Courant & Hilbert, Methods of Mathematical
  Physics I, ch. VI);
* the reported energy_error bounds the difference to a run at twice the
  resolution;
* sums of square wells agree with exact levels (tests/test_accuracy_guard.py,
  square_sum_levels) within the error bars.

Comparisons allow each run's error bar plus a round-off allowance of 1e-12
relative (common practice, no source).
"""

from __future__ import annotations

import dataclasses
import math
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis.control import currently_in_test_context
from hypothesis import HealthCheck, Phase, assume, event, example, given, settings
from hypothesis import strategies as st

import fdsolver

sys.path.insert(0, str(Path(__file__).resolve().parent))  # the exact references live in test_accuracy_guard
from test_accuracy_guard import griffiths_square_well, square_sum_levels  # noqa: E402

PROPS = settings(
    max_examples=25,
    phases=(Phase.explicit, Phase.generate),  # no shrinking: a failure is reported as found, and fast
    deadline=None,
    derandomize=settings.default.derandomize,  # the profile tests/conftest.py loads (FDSOLVER_HYPOTHESIS)
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)
ROUND = 1e-12  # relative round-off allowance on top of the error bars
TOL = 1e-8
BOX_CHECK_BUG = ("core bug: the box check extends the grid to a box that differs from the old one by one ulp "
                 "(open_box recomputes a symmetric box), so base_grid gets an empty interval and assemble "
                 "raises ValueError('grid nodes must be strictly increasing')")

SHAPES = ("square", "gaussian", "sech2", "smooth_square")
SIZE_KEY = {"square": "width", "gaussian": "sigma", "sech2": "width", "smooth_square": "width"}



def dyadic(lo: float, hi: float):
    """Multiples of 2**-6 in [lo, hi]: sums, differences and halves of them are exact in floating point.

    Inputs whose rounding matters (a mirror centre that is not exactly representable) are tested on
    their own below (test_rounding_*), so that the physics properties do not hinge on them.
    """
    return st.integers(math.ceil(lo * 64), math.floor(hi * 64)).map(lambda k: k / 64)


depths = dyadic(0.5, 20.0)
sizes = dyadic(0.3, 3.0)
centers = dyadic(-3.0, 3.0)


@st.composite
def wells(draw, shapes=SHAPES, center=centers):
    shape = draw(st.sampled_from(shapes))
    comp = {"shape": shape, "center": draw(center), "depth": draw(depths), SIZE_KEY[shape]: draw(sizes)}
    if shape == "smooth_square":
        comp["edge"] = draw(dyadic(0.05, 0.5)) * comp["width"]
    return comp


well_sums = st.lists(wells(), min_size=1, max_size=3)


def case_of(comps, **solve):
    data = {"units": "atomic", "title": "generated wells (invented)", "potential": comps,
            "solve": {"tolerance": TOL, "max_states": 4, **solve}}
    return fdsolver.case_from_dict(data)


def run(comps, **solve):
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)  # numpy warnings would reach the user's terminal
        return fdsolver.solve(case_of(comps, **solve))


def weights(x: np.ndarray) -> np.ndarray:
    """Lumped node weights (h_{i-1} + h_i)/2; the end nodes, where psi = 0, get 0."""
    h = np.diff(x)
    w = np.zeros_like(x)
    w[1:-1] = 0.5 * (h[:-1] + h[1:])
    return w


def converged(ds) -> np.ndarray:
    return ds.converged.values.astype(bool)


def assert_same_levels(a, b, scale_b=1.0):
    """Converged levels of ``a`` equal those of ``b`` times ``scale_b``, within both error bars."""
    n = min(a.sizes["state"], b.sizes["state"])
    ea, eb = a.energy.values[:n], b.energy.values[:n] * scale_b
    bar = a.energy_error.values[:n] + b.energy_error.values[:n] * abs(scale_b) + ROUND * np.abs(ea)
    both = converged(a)[:n] & converged(b)[:n]
    # an example where no state converged in both runs proves nothing here (convergence itself is
    # checked in test_accuracy_guard.py); hypothesis fails the test if that happens to every example
    if currently_in_test_context():
        assume(n >= 1 and both.any())
    else:  # a plain test: the examples are fixed, so the states must converge
        assert n >= 1 and both.any(), "no state converged in both runs"
    assert np.all(np.abs(ea - eb)[both] <= bar[both]), (ea, eb, bar)


# ------------------------------------------------------------ (1) clean outcome
any_wells = st.lists(
    st.one_of(
        wells(),
        st.builds(lambda c, s: {"shape": "point", "center": c, "strength": s}, centers, dyadic(0.2, 5.0)),
        st.builds(lambda c, w, h: {"shape": "square", "center": c, "width": w, "height": h}, centers, sizes, depths),
    ),
    min_size=1,
    max_size=3,
)


@pytest.mark.slow
@settings(PROPS, max_examples=40)
@given(any_wells, st.sampled_from([1e-6, 1e-8]), st.sampled_from(["open", "hard"]))
def test_solver_returns_or_raises_clean_error(comps, tol, boundary):
    data = {"units": "atomic", "potential": comps, "solve": {"tolerance": tol, "max_states": 5}}
    if boundary == "hard":
        data["domain"] = {"boundary": "hard", "left": -6.0, "right": 6.5}
    try:
        case = fdsolver.case_from_dict(data)
        with warnings.catch_warnings():
            warnings.simplefilter("error", RuntimeWarning)  # a numpy warning would reach the user's terminal
            ds = fdsolver.solve(case)
    except fdsolver.CaseError as err:
        assert "\n" not in str(err)
        event(f"CaseError at {err.key}")
        return
    event(f"{ds.sizes['state']} states")
    e, err = ds.energy.values, ds.energy_error.values
    assert e.size <= 5
    assert np.all(np.isfinite(e)) and np.all(np.diff(e) > 0)
    assert np.all(err >= 0)
    if boundary == "open":
        assert np.all(e < 0.0)  # every bound state lies below the continuum threshold V(+-inf) = 0
    assert set(ds.converged.values.tolist()) <= {0, 1}
    assert np.all(np.isfinite(ds.psi.values))


# ------------------------------------------------------------ (2) translation
@pytest.mark.slow
@PROPS
@given(well_sums, dyadic(-5.0, 5.0))
def test_translation_leaves_energies_unchanged(comps, shift):
    moved = [{**c, "center": c["center"] + shift} for c in comps]
    a, b = run(comps, tolerance=1e-7), run(moved, tolerance=1e-7)
    assert a.sizes["state"] == b.sizes["state"]
    assert_same_levels(a, b)
    np.testing.assert_allclose(b.mean_x.values, a.mean_x.values + shift, atol=1e-6 * (1 + abs(shift)))


# ------------------------------------------------------------ (3) mirror symmetry
@st.composite
def mirror_sums(draw):
    x0 = draw(dyadic(-2.0, 2.0))
    comps = []
    if draw(st.booleans()):
        comps.append({**draw(wells()), "center": x0})
    if not comps or draw(st.booleans()):
        w = draw(wells())
        d = draw(dyadic(0.2, 3.0))
        comps += [{**w, "center": x0 - d}, {**w, "center": x0 + d}]
    return comps


@pytest.mark.slow
@PROPS
@given(mirror_sums())
def test_mirror_symmetric_parities_alternate(comps):
    ds = run(comps, tolerance=1e-6)
    n = ds.sizes["state"]
    assert n >= 1
    assert ds.parity.values.tolist() == [(-1) ** k for k in range(n)]


def mirror_symmetric(comps) -> bool:
    """Our own test: V(x0 + u) == V(x0 - u) on a fine sampling, x0 the middle of the outermost edges."""
    case = case_of(comps)
    lo = min(c["center"] - 3 * c[SIZE_KEY[c["shape"]]] for c in comps)
    hi = max(c["center"] + 3 * c[SIZE_KEY[c["shape"]]] for c in comps)
    x0 = 0.5 * (lo + hi)
    u = np.linspace(0.0, 0.5 * (hi - lo) + 5.0, 20001) + 1e-7
    vl, vr = case.potential.value(x0 - u), case.potential.value(x0 + u)
    return bool(np.max(np.abs(vl - vr)) <= 1e-9 * np.max(np.abs(vl)))


@pytest.mark.slow
@PROPS
@given(well_sums)
def test_parity_is_zero_without_mirror_symmetry(comps):
    ds = run(comps, tolerance=1e-6)
    n = ds.sizes["state"]
    if mirror_symmetric(comps):
        assert ds.parity.values.tolist() == [(-1) ** k for k in range(n)]
    else:
        assert ds.parity.values.tolist() == [0] * n


# ------------------------------------------------------------ (4) scaling
def scaled(comp, s):
    out = dict(comp)
    out["center"] = comp["center"] * s
    out[SIZE_KEY[comp["shape"]]] = comp[SIZE_KEY[comp["shape"]]] * s
    if "edge" in comp:
        out["edge"] = comp["edge"] * s
    out["depth"] = comp["depth"] / s**2
    return out


@pytest.mark.slow
@PROPS
@given(well_sums, st.sampled_from([0.5, 0.625, 0.75, 1.25, 1.5, 2.0]))
def test_scaling_x_and_v_scales_energies(comps, s):
    a = run(comps, tolerance=1e-7)
    b = run([scaled(c, s) for c in comps], tolerance=1e-7)
    assert a.sizes["state"] == b.sizes["state"]
    assert_same_levels(a, b, scale_b=s**2)


# ------------------------------------------------------------ (5) monotonicity
@pytest.mark.slow
@PROPS
@given(well_sums, st.data(), dyadic(1.05, 2.0))
def test_deepening_a_well_lowers_energies_and_keeps_states(comps, data, factor):
    i = data.draw(st.integers(0, len(comps) - 1))
    deeper = [dict(c) for c in comps]
    deeper[i]["depth"] = comps[i]["depth"] * factor
    a, b = run(comps, tolerance=1e-6), run(deeper, tolerance=1e-6)
    assert b.attrs["bound_state_count"] >= a.attrs["bound_state_count"]
    assert b.sizes["state"] >= a.sizes["state"]
    n = a.sizes["state"]
    bar = a.energy_error.values + b.energy_error.values[:n] + ROUND * np.abs(a.energy.values)
    assert np.all(b.energy.values[:n] <= a.energy.values + bar)


# ------------------------------------------------------------ (6) Hellmann-Feynman
def unit_profile(comp, x):
    """dV/d(depth) / (-1) of a smooth component: its shape function at unit depth."""
    u = x - comp["center"]
    if comp["shape"] == "gaussian":
        return np.exp(-(u**2) / (2 * comp["sigma"] ** 2))
    t = np.exp(-2.0 * np.abs(u) / comp["width"])
    return 4.0 * t / (1.0 + t) ** 2  # sech^2 without overflow


@pytest.mark.slow
@settings(PROPS, max_examples=15)
@given(wells(shapes=("gaussian", "sech2")), st.lists(wells(), max_size=2), dyadic(0.5, 1.5))
def test_hellmann_feynman(v1, rest, lam):
    # V = lam * V1 + V2 with V1 = -depth1 * f(x); dE/dlam = -depth1 <psi| f |psi>
    delta = 1e-3

    def at(lmb):
        return run([{**v1, "depth": lmb * v1["depth"]}] + rest, max_states=3)

    mid, lo, hi = at(lam), at(lam - delta), at(lam + delta)
    n = min(mid.sizes["state"], lo.sizes["state"], hi.sizes["state"])
    assert n >= 1
    x = mid.x.values
    w = weights(x)
    f = unit_profile(v1, x)
    for k in range(n):
        if not (converged(mid)[k] and converged(lo)[k] and converged(hi)[k]):
            continue
        psi = mid.psi.values[k]
        hf = -v1["depth"] * np.sum(w * psi**2 * f)
        fd = (hi.energy.values[k] - lo.energy.values[k]) / (2 * delta)
        noise = (hi.energy_error.values[k] + lo.energy_error.values[k]) / (2 * delta)
        # psi is the finest level's, so <psi|f|psi> carries that grid's O(h^2) error.  Its size is that of
        # the finest level's energy errors relative to the extrapolated energies, taken over all states
        # (one state's own can vanish by cancellation): measured ratio up to 13 on 36 states, allowance
        # 50 (common practice, no source).  The central difference itself is O(delta^2) ~ 1e-6 relative.
        h2 = max(
            abs(lev[np.isfinite(lev)][-1] - e) / abs(e)
            for lev, e in zip(mid.level_energy.values.T, mid.energy.values)
        )
        assert abs(fd - hf) <= (50 * h2 + 2e-6) * abs(hf) + noise, (k, fd, hf, h2)
        assert abs(fd - hf) <= 1e-3 * abs(hf) + noise, (k, fd, hf)  # and never a gross mismatch


# ------------------------------------------------------------ (7) orthonormal, n nodes
@pytest.mark.slow
@settings(PROPS, max_examples=30)
@given(well_sums)
def test_states_orthonormal_and_state_n_has_n_nodes(comps):
    ds = run(comps, max_states=6, tolerance=1e-6)
    psi, x = ds.psi.values, ds.x.values
    gram = (psi * weights(x)) @ psi.T
    np.testing.assert_allclose(gram, np.eye(psi.shape[0]), atol=1e-9)
    assert ds.nodes.values.tolist() == list(range(psi.shape[0]))
    for k, p in enumerate(psi):
        # our own count: sign changes among the values above 1e-6 of the maximum (the far tails are
        # below round-off and carry no sign information)
        big = p[np.abs(p) > 1e-6 * np.max(np.abs(p))]
        assert int(np.count_nonzero(np.diff(np.sign(big)) != 0)) == k


# ------------------------------------------------------------ (8) error bars vs finer runs
@pytest.mark.slow
@PROPS
@given(well_sums)
def test_energy_error_bounds_difference_to_twice_the_resolution(comps):
    case = case_of(comps, tolerance=1e-7)
    g = case.settings.grid
    finer = dataclasses.replace(
        case,
        settings=dataclasses.replace(
            case.settings, grid=dataclasses.replace(g, feature_fraction=g.feature_fraction / 2, wave_fraction=g.wave_fraction / 2)
        ),
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        a, b = fdsolver.solve(case), fdsolver.solve(finer)
    assert a.sizes["state"] == b.sizes["state"]
    assert_same_levels(a, b)


# ------------------------------------------------------------ (9) exact levels of square sums
@pytest.mark.slow
@settings(PROPS, max_examples=30)
@given(st.lists(wells(shapes=("square",)), min_size=1, max_size=3))
def test_square_sums_match_exact_levels(comps):
    exact = square_sum_levels([(c["center"], c["width"], c["depth"]) for c in comps])
    ds = run(comps, max_states=len(exact))
    assert ds.sizes["state"] == len(exact)
    e, bar = ds.energy.values, ds.energy_error.values + ROUND * np.abs(exact)
    conv = converged(ds)
    assert np.all(np.abs(e - exact)[conv] <= bar[conv]), (e - exact, bar)
    assert np.all(np.abs(e - exact)[conv] <= TOL * np.abs(exact)[conv])


# ------------------------------------------------------------ known core bugs
ASYMMETRIC = {
    # a well with a narrow notch off centre, in boxes much wider than the well
    "notch_box50": ([(0.0, 1.0, 2.0), (0.2, 0.1, 2.0)], {"left": -50.0, "right": 50.0}),
    "notch_box200": ([(0.0, 1.0, 2.0), (0.2, 0.1, 2.0)], {"left": -200.0, "right": 200.0}),
    # two overlapping wells of unequal depth, default settings (found by a random search): the grid is
    # mirrored about x = -0.161, the left edges of the wells are not nodes and no state converges
    "overlapping_pair": ([(0.29439567570708514, 1.3161866140514675, 4.478858765056375),
                          (-0.2830664792629882, 1.9840251839085348, 7.223703438183182)], {}),
}


@pytest.mark.parametrize("name", sorted(ASYMMETRIC))
def test_asymmetric_potential_in_a_wide_box_has_no_parity(name):
    wells_, domain = ASYMMETRIC[name]
    comps = [{"shape": "square", "center": c, "width": w, "depth": d} for c, w, d in wells_]
    data = {"units": "atomic", "potential": comps, "domain": domain}
    ds = fdsolver.solve(fdsolver.case_from_dict(data))
    assert ds.parity.values.tolist() == [0] * ds.sizes["state"]
    assert ds.converged.values.all()
    np.testing.assert_allclose(ds.energy.values, square_sum_levels(wells_), rtol=1e-8)


EXPRESSION_EQUIVALENTS = [
    ({"shape": "gaussian", "center": 0.5, "sigma": 0.8, "depth": 4.0}, "-4*exp(-(x - 0.5)**2/(2*0.8**2))"),
    ({"shape": "sech2", "center": 0.0, "width": 1.0, "depth": 1.0}, "-sech(x)**2"),
]


@pytest.mark.parametrize("shape, text", EXPRESSION_EQUIVALENTS)
def test_expression_potential_equals_its_builtin_shape(shape, text):
    a = run([shape])
    b = run([{"shape": "expression", "V": text}])
    assert a.sizes["state"] == b.sizes["state"] >= 1
    assert_same_levels(a, b)
    if shape["shape"] == "sech2":
        # Poeschl-Teller: -sech^2(x) (hbar = m = 1) binds one state at E = -1/2 (Landau & Lifshitz, sec. 23)
        assert b.energy.values[0] == pytest.approx(-0.5, rel=1e-8)


def test_sech2_far_tail_is_silent():
    # sech^2 far from its centre must not overflow cosh and print a RuntimeWarning on the user's terminal
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fdsolver.solve(case_of([{"shape": "sech2", "center": 0.0, "width": 0.3, "depth": 2.0}]))


# Rounding: a mirror centre or a box end that is not exactly representable.  Minimal cases found by the
# properties above when they drew arbitrary floats.
def test_rounding_smooth_square_centre_keeps_its_state():
    at_zero = run([{"shape": "smooth_square", "center": 0.0, "width": 1.0, "edge": 0.5, "depth": 1.0}])
    moved = run([{"shape": "smooth_square", "center": 1e-14, "width": 1.0, "edge": 0.5, "depth": 1.0}])
    assert moved.sizes["state"] == at_zero.sizes["state"] == 1
    assert_same_levels(at_zero, moved)


def test_rounding_tiny_centre_does_not_crash():
    ds = run([{"shape": "smooth_square", "center": 6.077454858145381e-90, "width": 1.0, "edge": 0.5, "depth": 1.0}])
    assert ds.sizes["state"] == 1


@pytest.mark.parametrize(
    "comps",
    [
        [{"shape": "square", "center": 1.0, "depth": 2.0, "width": 1.4852474894623062}],
        [{"shape": "gaussian", "center": -1.3115866777329441, "depth": 1.0, "sigma": 1.0},
         {"shape": "gaussian", "center": 2.688413322267056, "depth": 1.0, "sigma": 1.0}],
        [{"shape": "gaussian", "center": -2.5, "depth": 1035 / 64 * 71 / 64, "sigma": 2.5625}],
    ],
    ids=["square", "gaussian_pair", "gaussian"],
)
def test_rounding_box_check_does_not_crash(comps):
    ds = run(comps)
    assert ds.sizes["state"] >= 1
    if comps[0]["shape"] == "square":
        np.testing.assert_allclose(ds.energy.values, griffiths_square_well(2.0, 1.4852474894623062), rtol=1e-8)


@pytest.mark.slow
@settings(PROPS, max_examples=15)
@given(st.lists(st.builds(lambda c, w, d: {"shape": "smooth_square", "center": c, "width": w, "edge": 0.2 * w, "depth": d},
                          st.floats(-3, 3), st.floats(0.3, 3), st.floats(0.5, 20)), min_size=1, max_size=2),
       st.floats(-5, 5))
@example([{"shape": "smooth_square", "center": 0.0, "width": 1.0, "edge": 0.5, "depth": 1.0}], 1e-14)
def test_translation_over_arbitrary_floats(comps, shift):
    moved = [{**c, "center": c["center"] + shift} for c in comps]
    a, b = run(comps, tolerance=1e-7), run(moved, tolerance=1e-7)
    assert a.sizes["state"] == b.sizes["state"]
    assert_same_levels(a, b)


def test_near_threshold_state_does_not_stop_the_others():
    ds = run([{"shape": "smooth_square", "center": 21 / 64, "depth": 149 / 64, "width": 149 / 64, "edge": 0.836669921875}],
             tolerance=1e-7)
    assert ds.sizes["state"] >= 2
    assert ds.converged.values[0] == 1 and ds.converged.values[1] == 1


def test_home_region_of_equal_shares_is_the_first_in_the_case_order():
    """Shares equal to within 1e-6 (mirror images apart by round-off) go to the first region in the case's
    order; a clear majority wins; no share at all is -1.  Our own rule (HOME_TIE), no source."""
    from fdsolver.boundstates.result import home_regions

    inside = np.array([[0.5 - 3e-13, 0.5], [0.5, 0.5 - 3e-13], [0.3, 0.7], [0.0, 0.0], [0.4999, 0.5001]])
    assert home_regions(inside).tolist() == [0, 0, 1, -1, 1]
    assert home_regions(np.zeros((2, 0))).tolist() == [-1, -1]


def test_home_region_kernel_follows_numpy_max_argmax_where():
    """The compiled rule (kernels.home_of) against the numpy form it replaced: max per row (NaN propagating),
    the first column within HOME_TIE of it, -1 where the maximum is not above zero.  Reference: numpy's own
    max / argmax / where on 20000 random small tables with ties, zeros, signed zeros and NaN."""
    from fdsolver.boundstates.result import HOME_TIE, home_regions

    rng = np.random.default_rng(3)
    values = [0.0, -0.0, 1e-7, 0.3, 0.5, 0.5 - 5e-7, 0.5 - 2e-6, 1.0, np.nan, -1e-300]
    for _ in range(20000):
        inside = rng.choice(values, size=(int(rng.integers(1, 5)), int(rng.integers(1, 5))))
        best = inside.max(axis=1)
        expected = np.where(best > 0, np.argmax(inside >= (best - HOME_TIE)[:, None], axis=1), -1)
        assert home_regions(inside).tolist() == expected.tolist(), inside


@pytest.mark.parametrize("apart", [0.5, 2.0, 6.0])
def test_mirror_pair_states_share_both_wells_equally(apart):
    """Mirror symmetry: |psi(x0 + u)| = |psi(x0 - u)|, so every state of two equal wells holds equal shares of
    them (fact of the physics); the reported home is then the first well, whatever the last bits of psi."""
    comps = [{"shape": "square", "name": name, "center": side * (apart + 1.0) / 2, "width": 1.0, "depth": 8.0}
             for name, side in (("left well", -1), ("right well", 1))]
    ds = run(comps, tolerance=1e-9)
    names = [str(v) for v in ds.region_name.values]
    left, right = names.index("left well"), names.index("right well")
    share = ds.probability_inside.values
    assert ds.sizes["state"] >= 2
    np.testing.assert_allclose(share[:, left], share[:, right], rtol=0, atol=1e-9)
    assert ds.lives_in.values.tolist() == [min(left, right)] * ds.sizes["state"]
