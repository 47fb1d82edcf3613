"""A quantum well in a field between far hard walls, with an energy window (nm-meV units).

Reference: tests/references/airy.py -- exact Airy-function solutions of each linear segment
(scipy.special.airy / airye; Abramowitz & Stegun 10.4), matched with BenDaniel-Duke conditions across
the interfaces (Bastard, Phys. Rev. B 24, 5693 (1981)) and psi = 0 at the walls; levels isolated by
their Sturm count (global index = number of nodes) and refined by Brent's method; where each state
lives from the Hellmann-Feynman theorem (Feynman, Phys. Rev. 56, 340 (1939)) applied to each layer.

The structures: the example of issue 9 (8 nm well, 2 meV/nm, walls at -200 and +216 nm) and seeded
random siblings (well 4-12 nm, fields of either sign 0.5-3 meV/nm, offsets 180-350 meV, masses varied,
walls 100-250 nm away on each side).  All invented.

Checked for every state in the window:
* the solver returns exactly the reference states of the window, each with its global index;
* converged, within 1e-8 of E - min V, inside its error bar; splittings inside theirs;
* home is the layer the reference says holds most of the probability; the wall flag is set (to the
  side) exactly for states living in a layer that touches a wall, and never for a well state;
* parity 0 (a field breaks mirror symmetry); no note contradicts the numbers.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.special import ai_zeros

import fdsolver

sys.path.insert(0, str(Path(__file__).resolve().parent))
from references.airy import LinearBox, Segment
from references.checks import (
    assert_energies,
    assert_notes_agree,
    assert_ordered,
    assert_splittings,
)
from references.constants import hbar2_2me

REL = 1e-8
MAX_STATES = 60


def structure(well, field, v_b, m_w, m_b, left, right):
    """Case dict and reference segments: a well [0, well] (edge 0, mass m_w) in barriers (v_b, m_b), field*x added."""
    layers = [{"name": "left barrier", "band_edge": v_b, "mass": m_b},
              {"name": "well", "thickness": well, "band_edge": 0.0, "mass": m_w},
              {"name": "right barrier", "band_edge": v_b, "mass": m_b}]
    case = {"title": "well in a field between hard walls (invented)", "units": "nm-meV", "mass": m_w,
            "layer": layers, "potential": [{"shape": "linear", "field": field}],
            "domain": {"boundary": "hard", "left": left, "right": right}}
    segs = [Segment(left, 0.0, v_b + field * left, field, m_b, "left barrier"),
            Segment(0.0, well, 0.0, field, m_w, "well"),
            Segment(well, right, v_b + field * well, field, m_b, "right barrier")]
    return case, LinearBox(segs, units="nm-meV")


def safe_window(box, lo, hi):
    """Move each window edge off any level by at least 1e-4 meV (a level on an edge is ambiguous)."""
    def clear(e):
        for _ in range(50):
            _, lv = box.levels_between(e - 1e-4, e + 1e-4)
            if not lv:
                return e
            e += 3e-4
        raise AssertionError("no clear window edge")
    return clear(lo), clear(hi)


def check(case, box, window, what):
    lo, hi = safe_window(box, *window)
    idx, levels = box.levels_between(lo, hi)
    assert idx, f"{what}: the window holds no state (a bad test case)"
    case = {**case, "solve": {"tolerance": REL, "max_states": MAX_STATES, "energy_window": [lo, hi]}}
    sol = fdsolver.solve_case(fdsolver.case_from_dict(case))
    what = f"{what}, window [{lo}, {hi}] meV"
    n = min(len(idx), MAX_STATES)
    assert list(sol.index) == idx[:n], f"{what}: indices {list(sol.index)}, reference {idx[:n]}"
    ref = dict(zip(idx, levels))
    ref_err = {i: box.error_estimate(e) for i, e in ref.items()}
    # the zero of energy is the well's band edge at x = 0, an arbitrary choice: accuracy is judged
    # relative to the energy above the lowest potential in the box
    assert_energies(sol, ref, rel=REL, what=what, ref_error=ref_err, scale=lambda e: e - box.v_min)
    assert_splittings(sol, ref, what=what, ref_error=ref_err)
    assert list(sol.parity) == [0] * n, f"{what}: parities {list(sol.parity)}"
    assert_notes_agree(sol, what)
    assert_ordered(sol, what)
    names = list(sol.region_names)
    rows, bad = [], False
    for k, i in enumerate(idx[:n]):
        share = box.probabilities(i, ref[i])
        home = max(share, key=share.get)
        want_wall = -1 if home == "left barrier" else (1 if home == "right barrier" else 0)
        got_home = names[sol.home[k]] if sol.home[k] >= 0 else None
        ok = got_home == home and int(sol.wall[k]) == want_wall
        bad |= not ok
        rows.append(f"  index {i}: E = {ref[i]:.6f}, reference shares "
                    + ", ".join(f"{n_}: {p:.3f}" for n_, p in share.items())
                    + f"; solver home {got_home!r}, wall {int(sol.wall[k])}" + ("" if ok else "   <--"))
    assert not bad, f"{what}: where the states live\n" + "\n".join(rows)
    return sol, idx, levels


# ------------------------------------------------------------------ the reference itself
def test_reference_v_shaped_well():
    """V = F |x| (two segments of opposite field, walls far away): the even levels are
    (C F^2 / m)^(1/3) |a'_n| and the odd ones (C F^2 / m)^(1/3) |a_n|, with a_n and a'_n the zeros of
    Ai and Ai' (scipy.special.ai_zeros); a textbook result, from memory.  Checks the matching across a
    segment boundary."""
    field, mass = 1.5, 0.07
    box = LinearBox([Segment(-400.0, 0.0, 400.0 * field, -field, mass, "left"),
                     Segment(0.0, 400.0, 0.0, field, mass, "right")])
    scale = (float(hbar2_2me("nm-meV")) * field**2 / mass) ** (1.0 / 3.0)
    a, ap, _, _ = ai_zeros(8)
    want = sorted(scale * np.concatenate([-a, -ap]))
    idx, levels = box.levels_between(0.0, want[-1] + 0.01)
    assert idx == list(range(16))
    for e, w in zip(levels, want):
        assert abs(e - w) <= 1e-12 * w + box.error_estimate(e)


def test_reference_bouncer():
    """A linear potential F x against one wall at x = 0 (the far wall many decay lengths away):
    E_n = (C F^2 / m)^(1/3) |a_n|, a_n the zeros of Ai (scipy.special.ai_zeros); a textbook result
    (the quantum bouncer; from memory)."""
    field, mass = 2.5, 0.08
    box = LinearBox([Segment(0.0, 400.0, 0.0, field, mass, "ramp")])
    scale = (float(hbar2_2me("nm-meV")) * field**2 / mass) ** (1.0 / 3.0)
    a_n = -ai_zeros(12)[0]
    idx, levels = box.levels_between(0.0, scale * a_n[-1] + 0.1)
    assert idx == list(range(12))
    for e, a in zip(levels, a_n):
        assert abs(e - scale * a) <= 1e-12 * e + box.error_estimate(e)


# ------------------------------------------------------------------ named example (issue 9)
def test_issue_example():
    """8 nm well (m 0.067), 243 meV barriers (m 0.092), 2 meV/nm, walls at -200 and +216 nm; the window
    [0, 200] meV holds the two well states and the left-wall states between them."""
    case, box = structure(8.0, 2.0, 243.0, 0.067, 0.092, -200.0, 216.0)
    sol, _, _ = check(case, box, (0.0, 200.0), "issue 9 Stark example")
    names = list(sol.region_names)
    assert sum(names[h] == "well" for h in sol.home) == 2  # the two well levels of an 8 nm well
    assert any(sol.wall == -1)


# ------------------------------------------------------------------ seeded random siblings
def random_structure(seed):
    rng = np.random.default_rng(seed)
    r2 = lambda a, b: float(np.round(rng.uniform(a, b), 2))
    well = r2(4.0, 12.0)
    field = r2(0.5, 3.0) * (1 if rng.integers(2) else -1)
    v_b = r2(180.0, 350.0)
    m_w, m_b = float(np.round(rng.uniform(0.04, 0.09), 3)), float(np.round(rng.uniform(0.07, 0.15), 3))
    left, right = -r2(100.0, 250.0), well + r2(100.0, 250.0)
    case, box = structure(well, field, v_b, m_w, m_b, left, right)
    # the window: from the well bottom at its centre up to 3/4 of the barrier there
    v_mid = field * well / 2
    what = f"seed {seed}: well {well} nm, F {field} meV/nm, V_b {v_b} meV, m {m_w}/{m_b}, walls {left}/{right} nm"
    return case, box, (v_mid + 1.0, v_mid + 0.75 * v_b), what


@pytest.mark.slow
@pytest.mark.parametrize("seed", [21, 22])
def test_random_stark(seed):
    case, box, window, what = random_structure(seed)
    check(case, box, window, what)


@pytest.mark.slow
@pytest.mark.parametrize("seed", range(600, 612))
def test_many_random_stark(seed):
    case, box, window, what = random_structure(seed)
    check(case, box, window, what)
