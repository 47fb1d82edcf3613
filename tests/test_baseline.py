"""Property tests: baselines, flat profiles and mirror symmetry, on generated layer stacks and wells.

Each property is a fact of the physics, checked on derandomized hypothesis examples (the same cases on
every run, no shrinking; the style of tests/test_properties.py):

* adding a constant c to every band edge, or a constant offset component, shifts every energy by c
  (the Hamiltonian changes by c times the identity) and changes nothing else: counts, indices,
  parities, converged flags, wall flags, homes; splittings agree within their bars;
* a flat profile binds nothing, at any baseline and mass (the spectrum of -d/dx (C/m) d/dx + c is
  [c, infinity) with no eigenvalue; Reed & Simon, Methods of Modern Mathematical Physics IV, XIII.1),
  and between hard walls it is the infinite square well, E_n = c + n^2 pi^2 C / (m L^2)
  (Griffiths, Introduction to Quantum Mechanics, sec. 2.2);
* mirror-symmetric structures have parities +1, -1, +1, ... by Sturm index (the n-th state has n nodes,
  Courant & Hilbert, Methods of Mathematical Physics I, ch. VI, and a symmetric state of a symmetric
  problem is even or odd), with energies non-decreasing in the index, even for doublets split far below
  double precision (the even member is the lower one: it has no node between the wells), checked against
  the extended-precision transfer-matrix reference (tests/references/transfer.py).

Numbers are dyadic (multiples of 2^-6 or 2^-3), so that shifted band edges are exact in floating point
and a shifted case is exactly the same physics.  Comparisons allow both error bars plus 4 ulps of the
largest energy involved (common practice, no source).
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

from hypothesis import HealthCheck, Phase, example, given, settings
from hypothesis import strategies as st

import fdsolver

sys.path.insert(0, str(Path(__file__).resolve().parent))
from references.checks import (
    assert_energies,
    assert_notes_agree,
    assert_ordered,
    assert_splittings,
    round_allowance,
)
from references.constants import hbar2_2me
from references.transfer import Layer, Stack

PROPS = settings(
    max_examples=12,
    phases=(Phase.explicit, Phase.generate),  # no shrinking: a failure is reported as found, and fast
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)
TOL = 1e-8


def dyadic(lo: float, hi: float, bits: int = 6):
    k = 2**bits
    return st.integers(math.ceil(lo * k), math.floor(hi * k)).map(lambda i: i / k)


masses = st.integers(40, 150).map(lambda i: i / 1024)  # 0.039 .. 0.146 m_e, exact binary fractions


@st.composite
def stacks(draw, symmetric=False, min_inner=1, max_inner=5):
    """Layer dicts (nm-meV): claddings at v_c (the right one possibly lower), inner wells and barriers."""
    v_c = draw(dyadic(80.0, 320.0))
    m_c = draw(masses)
    n = draw(st.integers(min_inner, max_inner))
    inner = [{"thickness": draw(dyadic(1.0, 20.0, 3)), "band_edge": draw(dyadic(0.0, v_c + 40.0)),
              "mass": draw(masses)} for _ in range(n)]
    if symmetric:
        inner = inner + inner[-2::-1] if draw(st.booleans()) else inner + inner[::-1]
        v_r = v_c
    else:
        v_r = v_c - draw(dyadic(0.0, 60.0))
    inner[0]["band_edge"] = draw(dyadic(0.0, v_c / 2))  # at least one well
    if symmetric:
        inner[-1]["band_edge"] = inner[0]["band_edge"]
    layers = [{"name": "left cladding", "band_edge": v_c, "mass": m_c}]
    layers += [{"name": f"layer {i}", **l} for i, l in enumerate(inner)]
    layers.append({"name": "right cladding", "band_edge": v_r, "mass": m_c})
    return layers


def solve(data, **solve_opts):
    data = {"title": "generated (invented)", "units": "nm-meV", "mass": 0.067, **data,
            "solve": {"tolerance": TOL, "max_states": 12, **solve_opts}}
    return fdsolver.solve_case(fdsolver.case_from_dict(data))


def shifted_layers(layers, c):
    return [{**l, "band_edge": l["band_edge"] + c} for l in layers]


def assert_shifted(a, b, c, what):
    """b is a with every energy raised by c, and nothing else changed."""
    assert len(b.energy) == len(a.energy), f"{what}: {len(a.energy)} states, shifted {len(b.energy)}"
    assert b.bound_count == a.bound_count, f"{what}: bound_count {a.bound_count} -> {b.bound_count}"
    for name in ("index", "parity", "converged", "wall", "home"):
        assert list(getattr(b, name)) == list(getattr(a, name)), \
            f"{what}: {name} {list(getattr(a, name))} -> {list(getattr(b, name))}"
    for k in range(len(a.energy)):
        ea, eb = float(a.energy[k]), float(b.energy[k])
        allow = a.energy_error[k] + b.energy_error[k] + round_allowance(ea, eb, c)
        assert abs(eb - (ea + c)) <= allow, (
            f"{what}: state {a.index[k]}: {ea!r} + {c} = {ea + c!r}, shifted gives {eb!r} "
            f"(difference {eb - ea - c:.3e}, bars {a.energy_error[k]:.2e} + {b.energy_error[k]:.2e})")
    for k in range(len(a.splitting)):
        if a.splitting_bound[k] or b.splitting_bound[k]:
            continue  # an upper bound depends on the round-off of |E|, which a shift changes
        allow = a.splitting_error[k] + b.splitting_error[k] + round_allowance(a.energy[k + 1], b.energy[k + 1], c)
        assert abs(a.splitting[k] - b.splitting[k]) <= allow, (
            f"{what}: splitting {k}: {a.splitting[k]!r} -> {b.splitting[k]!r}, bars {a.splitting_error[k]:.2e}, "
            f"{b.splitting_error[k]:.2e}")
    assert_notes_agree(a, what)
    assert_notes_agree(b, what + " (shifted)")
    assert_ordered(a, what)
    assert_ordered(b, what + " (shifted)")


# ------------------------------------------------------------------ baseline shifts
@PROPS
@given(stacks(), dyadic(-1000.0, 1000.0, 3))
def test_shifting_every_band_edge_shifts_every_energy(layers, c):
    a = solve({"layer": layers})
    b = solve({"layer": shifted_layers(layers, c)})
    assert_shifted(a, b, c, f"stack {layers}, shift {c}")


@PROPS
@given(stacks(max_inner=3), dyadic(-600.0, 600.0, 3), st.sampled_from([-2.0, -0.5, 0.75, 1.5]),
       dyadic(60.0, 150.0, 3), dyadic(60.0, 150.0, 3))
def test_shift_between_hard_walls_in_a_field(layers, c, field, left, right):
    """A stack in a field between hard walls: the wall states keep their wall flags under a shift."""
    total = sum(l["thickness"] for l in layers[1:-1])
    data = {"layer": layers, "potential": [{"shape": "linear", "field": field}],
            "domain": {"boundary": "hard", "left": -left, "right": total + right}}
    a = solve(data)
    b = solve({**data, "layer": shifted_layers(layers, c)})
    assert_shifted(a, b, c, f"stack {layers} in {field} meV/nm, walls -{left}/{total + right}, shift {c}")


SIZE = {"square": "width", "gaussian": "sigma", "sech2": "width"}


@st.composite
def wells(draw):
    shape = draw(st.sampled_from(sorted(SIZE)))
    return {"shape": shape, "center": draw(dyadic(-4.0, 4.0)), SIZE[shape]: draw(dyadic(0.3, 3.0)),
            "depth": draw(dyadic(0.5, 12.0))}


@PROPS
@given(st.lists(wells(), min_size=1, max_size=3), dyadic(-50.0, 50.0, 3), st.sampled_from(["expression", "layer"]))
def test_constant_offset_component_shifts_every_energy(comps, c, how):
    """Atomic units: wells plus a constant offset, given as an expression V = c or as one flat layer."""
    base = {"units": "atomic", "mass": 1.0, "potential": comps}
    if how == "expression":
        offset = {**base, "potential": comps + [{"shape": "expression", "V": repr(c)}]}
    else:
        offset = {**base, "layer": [{"band_edge": c}]}
    a, b = solve(base), solve(offset)
    assert_shifted(a, b, c, f"wells {comps}, offset {c} as {how}")


# ------------------------------------------------------------------ flat profiles
@PROPS
@given(dyadic(-1e4, 1e4, 2), masses, st.sampled_from(["layer", "layers", "expression"]))
def test_flat_profile_binds_nothing(c, mass, how):
    if how == "layer":
        data = {"layer": [{"band_edge": c, "mass": mass}]}
    elif how == "layers":  # the same material three times: still flat
        data = {"layer": [{"band_edge": c, "mass": mass}, {"thickness": 5.0, "band_edge": c, "mass": mass},
                          {"band_edge": c, "mass": mass}]}
    else:
        data = {"mass": mass, "potential": [{"shape": "expression", "V": repr(c)}]}
    sol = solve(data)
    what = f"flat profile at {c} meV, mass {mass}, as {how}"
    assert len(sol.energy) == 0 and sol.bound_count == 0, (what, sol.energy, sol.bound_count, sol.messages)
    for msg in sol.messages:
        assert "exist" not in msg and "not resolved" not in msg, (what, msg)


@PROPS
@given(dyadic(-1e4, 1e4, 2), masses, dyadic(5.0, 80.0, 3))
def test_flat_profile_between_walls_is_the_square_well(c, mass, length):
    sol = solve({"layer": [{"band_edge": c, "mass": mass}], "domain": {"boundary": "hard", "left": 0.0, "right": length}},
                max_states=5)
    cc = float(hbar2_2me("nm-meV"))
    exact = [c + (n * math.pi / length) ** 2 * cc / mass for n in range(1, 6)]
    what = f"flat {c} meV, mass {mass}, box {length} nm"
    assert list(sol.index) == list(range(5)), what
    assert all(sol.converged), (what, sol.messages)
    for k, e in enumerate(exact):
        assert abs(sol.energy[k] - e) <= sol.energy_error[k] + round_allowance(e, c), (what, k, sol.energy[k], e)
        assert abs(sol.energy[k] - e) <= TOL * abs(e - c) + round_allowance(e, c), (what, k, sol.energy[k], e)
    assert_notes_agree(sol, what)


# ------------------------------------------------------------------ mirror symmetry
@PROPS
@given(stacks(symmetric=True, max_inner=4), dyadic(-300.0, 300.0, 3))
def test_mirror_stacks_alternate_parity(layers, c):
    sol = solve({"layer": shifted_layers(layers, c)})
    n = len(sol.energy)
    assert n >= 1
    assert list(sol.index) == list(range(n))
    assert list(sol.parity) == [(-1) ** k for k in range(n)], (layers, list(sol.parity))
    assert_ordered(sol, f"mirror stack {layers}")
    assert_notes_agree(sol, f"mirror stack {layers}")


@PROPS
@given(st.lists(wells(), min_size=1, max_size=2), dyadic(0.5, 6.0), dyadic(-5.0, 5.0), dyadic(-20.0, 20.0, 3))
# found by this property: the ground doublet (split far below double precision) came out with E0 > E1
@example(half=[{"shape": "sech2", "center": -249 / 64, "width": 1.5, "depth": 285 / 64}], gap=5.9375, x0=-178 / 64, c=0.0)
def test_mirror_wells_alternate_parity(half, gap, x0, c):
    """Wells mirrored about x0 (plus a constant baseline c): parities alternate by index."""
    comps = []
    for w in half:
        d = gap + abs(w["center"])
        comps += [{**w, "center": x0 - d}, {**w, "center": x0 + d}]
    comps.append({"shape": "expression", "V": repr(c)})
    sol = solve({"units": "atomic", "mass": 1.0, "potential": comps})
    n = len(sol.energy)
    assert n >= 1  # every attractive 1D potential binds (Simon, Ann. Phys. 97, 279 (1976))
    assert list(sol.parity) == [(-1) ** k for k in range(n)], (comps, list(sol.parity))
    assert_ordered(sol, f"mirror wells {comps}")


@settings(PROPS, max_examples=80)  # no solve: about 10 ms each
@given(st.lists(st.tuples(dyadic(0.5, 20.0), dyadic(-4.0, 4.0, 3), dyadic(1.0, 80.0)), min_size=1, max_size=4),
       dyadic(-10.0, 10.0), st.sampled_from(["equal", "deeper", "wider"]), st.sampled_from(["square", "gaussian"]))
def test_mirror_decision_on_thin_wells(pairs, x0, change, shape):
    """Mirror symmetry is decided however thin a well is: pairs of wells mirrored about x0, one of them of size
    1e-4 nm (well under the spacing of any even sampling of the box), are symmetric when the pair is equal and
    not when its right member is 1e-6 deeper in relative terms, or twice as wide (the definition,
    V(x0 + u) = V(x0 - u) for all u; no source needed).  Square wells are constant between their edges and are
    tested exactly; Gaussians across each centre on their own width.  A wrong 'symmetric' would solve the
    structure as symmetric halves and give every state a parity it does not have."""
    size = "width" if shape == "square" else "sigma"
    comps = []
    for k, (d, log_w, depth) in enumerate(pairs):
        w = 10.0 ** log_w if k else 1e-4
        right = {"shape": shape, "center": x0 + d + w, size: w, "depth": depth}
        if k == 0 and change == "deeper":
            right["depth"] = depth * (1.0 + 1e-6)
        if k == 0 and change == "wider":
            right[size] = 2.0 * w
        comps += [{"shape": shape, "center": x0 - d - w, size: w, "depth": depth}, right]
    case = fdsolver.case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": comps})
    lo, hi = x0 - 200.0, x0 + 200.0
    got = case.potential.mirror_center(lo, hi)
    reach = max(abs(c["center"] - x0) + c[size] for c in comps)  # the centre is a midpoint of edges this far out
    if change == "equal":
        assert got is not None and abs(got - x0) <= 1e-12 * (abs(x0) + reach), (comps, got)
    else:
        assert got is None, (comps, got)


@settings(PROPS, max_examples=40)  # no solve
@given(st.lists(st.tuples(dyadic(-90.0, 90.0), dyadic(-4.0, -2.0, 3), dyadic(1.0, 8000.0)), min_size=1, max_size=3),
       st.sampled_from(["square", "layer"]))
def test_lowest_potential_between_walls_on_thin_pieces(wells, kind):
    """Between hard walls energies are measured from the lowest V in the box, and each state's tolerance is
    relative to its distance from it (DEVELOPERS.md, "Tolerance"; the definition of the reference, no source
    needed).  The lowest V is found however thin the piece that holds it: square wells or layers 1e-4 to
    1e-2 nm thin, far below the spacing of any even sampling of the 200 nm box."""
    from fdsolver.boundstates.problem import plan

    pieces = []
    for c, log_w, depth in wells:  # disjoint thin pieces: centres on a 10 nm lattice
        pieces.append((10.0 * round(c / 10.0), 10.0 ** log_w, depth))
    pieces = sorted({p[0]: p for p in pieces}.values())
    walls = {"boundary": "hard", "left": -100.0, "right": 100.0}
    if kind == "square":
        data = {"potential": [{"shape": "square", "center": c, "width": w, "depth": d} for c, w, d in pieces]}
    else:
        layers, x = [], -100.0
        for c, w, d in pieces:
            layers += [{"thickness": c - 0.5 * w - x, "band_edge": 0.0}, {"thickness": w, "band_edge": -d}]
            x = c + 0.5 * w
        data = {"layer": layers + [{"thickness": 100.0 - x, "band_edge": 0.0}], "stack_origin": -100.0}
    case = fdsolver.case_from_dict({"units": "nm-meV", "mass": 0.067, **data, "domain": walls})
    problem = plan(case.potential, case.domain, case.settings)
    assert problem.reference == -max(d for _, _, d in pieces), (pieces, problem.reference)


@settings(PROPS, max_examples=8)
@given(dyadic(3.0, 12.0, 3), dyadic(40.0, 90.0, 3), dyadic(150.0, 400.0), masses, masses, dyadic(-500.0, 500.0, 3))
# found by this property: E0 > E1 by one ulp-scale step, and a negative 'upper bound' of the splitting
@example(well=3.875, barrier=76.875, v_b=15601 / 64, m_w=69 / 1024, m_b=142 / 1024, c=-92.0)
def test_doublet_order_below_double_precision(well, barrier, v_b, m_w, m_b, c):
    """Two equal wells behind a barrier so thick that the doublet splitting is mostly far below double
    precision: index 0 is even and index 1 odd, E0 <= E1, energies and splittings (resolved within their
    bars, or upper bounds above the exact ones) against the transfer-matrix reference in mpmath."""
    layers = [{"name": "left cladding", "band_edge": v_b, "mass": m_b},
              {"name": "left well", "thickness": well, "band_edge": 0.0, "mass": m_w},
              {"name": "barrier", "thickness": barrier, "band_edge": v_b, "mass": m_b},
              {"name": "right well", "thickness": well, "band_edge": 0.0, "mass": m_w},
              {"name": "right cladding", "band_edge": v_b, "mass": m_b}]
    sol = solve({"layer": shifted_layers(layers, c)})
    what = f"pair: wells {well} nm, barrier {barrier} nm, {v_b} meV, masses {m_w}/{m_b}, baseline {c}"
    ref = Stack([Layer(None, v_b + c, m_b), Layer(well, c, m_w), Layer(barrier, v_b + c, m_b),
                 Layer(well, c, m_w), Layer(None, v_b + c, m_b)]).levels(len(sol.energy))
    assert len(sol.energy) >= 2 and list(sol.index) == list(range(len(ref))), (what, list(sol.index), len(ref))
    assert list(sol.parity[:2]) == [1, -1], (what, list(sol.parity))
    assert_ordered(sol, what)
    # the zero of energy is the baseline: accuracy relative to the energy above the well bottom
    assert_energies(sol, ref, rel=TOL, what=what, scale=lambda e: e - c)
    assert_splittings(sol, ref, what=what)
