"""Narrow wells, extremely weak binding, states that exist but cannot be resolved, and potentials that
bind nothing (atomic units unless said).

Reference: tests/references/finite_well.py -- the finite square well's even/odd equations
(Griffiths, Introduction to Quantum Mechanics, sec. 2.6) solved in mpmath, including the number of
bound states ceil(2 z0 / pi).  A potential that is nowhere below its lower asymptote binds nothing
(min-max principle: H >= min V; Reed & Simon, Methods of Modern Mathematical Physics IV, sec. XIII.1).

Checked:
* narrow deep wells down to 1e-6 wide and 1e6 deep, and wells binding by as little as 5e-13 hartree:
  the bound count, converged energies within 1e-8 of |E| and inside their bars; seeded siblings;
* beyond double precision (wells 1e-7 and 1e-8 of the decay length, masses of 1e-7, subnormal widths,
  tiny depths and masses): refused with a CaseError naming the key, or solved with honest bars, the
  right count and, where a state is not resolved, the note "N bound state(s) exist, M not resolved",
  never "no bound state" (in the messages and on the command line);
* potentials that bind nothing, at any baseline: no state, bound_count 0, no note claiming otherwise,
  and the command line says so with exit code 0.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

import fdsolver
from fdsolver.cli import main

sys.path.insert(0, str(Path(__file__).resolve().parent))
from references.checks import (
    assert_energies,
    assert_notes_agree,
    assert_ordered,
    round_allowance,
)
from references.finite_well import square_well_count, square_well_levels

REL = 1e-8


def square(width, depth, mass=1.0, max_states=20):
    case = fdsolver.case_from_dict({
        "title": "square well (invented)", "units": "atomic", "mass": mass,
        "potential": [{"shape": "square", "center": 0.0, "width": width, "depth": depth}],
        "solve": {"tolerance": REL, "max_states": max_states}})
    return fdsolver.solve_case(case)


def check_resolved(width, depth, mass=1.0):
    """Every bound state is returned, converged, accurate and inside its bar."""
    ref = square_well_levels(width, depth, mass=mass)
    count = square_well_count(width, depth, mass=mass)
    assert count == len(ref)
    sol = square(width, depth, mass)
    what = f"square well width {width!r}, depth {depth!r}, mass {mass!r}"
    assert sol.bound_count == count, f"{what}: bound_count {sol.bound_count}, Griffiths {count}"
    assert list(sol.index) == list(range(min(count, 20))), f"{what}: indices {list(sol.index)}; notes {sol.messages}"
    assert_energies(sol, ref, rel=REL, what=what)
    assert list(sol.parity) == [(-1) ** k for k in range(len(sol.index))]
    assert_notes_agree(sol, what)
    assert_ordered(sol, what)
    return sol, ref


def check_honest(sol, ref, what):
    """Whatever the solver returns: right count, honest bars, and unresolved states said to exist."""
    assert sol.bound_count == len(ref), f"{what}: bound_count {sol.bound_count}, Griffiths {len(ref)}"
    n = len(sol.index)
    assert list(sol.index) == list(range(n)), f"{what}: indices {list(sol.index)}"
    for k in range(n):
        e, r = float(sol.energy[k]), float(ref[k])
        assert abs(e - r) <= float(sol.energy_error[k]) + round_allowance(e, r), (
            f"{what}: state {k}: E = {e!r}, exact {r!r}, |dE| = {abs(e - r):.3e} > bar {sol.energy_error[k]:.3e} "
            f"(converged = {bool(sol.converged[k])}); notes {sol.messages}")
    if n < len(ref):
        want = f"{len(ref)} bound state(s) exist, {len(ref) - n} not resolved"
        assert any(want in m for m in sol.messages), f"{what}: {n} of {len(ref)} returned, notes {sol.messages}"
    assert_notes_agree(sol, what)


# ------------------------------------------------------------------ narrow and deep
def test_named_narrow_deep_well():
    """1e-6 wide, 1e6 deep: E0 = -0.49999967 (issue 9), one state."""
    sol, ref = check_resolved(1e-6, 1e6)
    assert len(ref) == 1 and abs(float(ref[0]) + 0.49999967) < 5e-9
    assert abs(sol.energy[0] + 0.49999967) < 5e-9


def narrow_sibling(seed):
    """Seeded: width 1e-6 to 1e-2, depth x width (the integrated strength) 0.3 to 3 hartree bohr."""
    rng = np.random.default_rng(seed)
    width = float(f"{10 ** rng.uniform(-6.0, -2.0):.3g}")
    strength = float(f"{rng.uniform(0.3, 3.0):.3g}")
    return width, float(f"{strength / width:.6g}")


@pytest.mark.parametrize("seed", [31, 32, 33, 34])
def test_narrow_siblings(seed):
    check_resolved(*narrow_sibling(seed))


def test_narrow_deep_well_of_double_strength():
    """The named well made twice as deep (1e-6 wide, 2e6 deep; E0 = -1.9999973): same class."""
    check_resolved(1e-6, 2e6)


# ------------------------------------------------------------------ weak binding
def test_extremely_weak_binding():
    """1 bohr wide, 1e-6 hartree deep: E0 = -4.9999967e-13 hartree, decay length 1e6 bohr."""
    _, ref = check_resolved(1.0, 1e-6)
    assert abs(float(ref[0]) + 4.9999967e-13) < 1e-19


def weak_sibling(seed):
    """Seeded: width 0.5 to 5 bohr, binding 1e-12 to 1e-4 hartree (decay length at most 1e6 widths), mass 0.1 to 10."""
    rng = np.random.default_rng(seed)
    width = float(f"{rng.uniform(0.5, 5.0):.3g}")
    mass = float(f"{10 ** rng.uniform(-1.0, 1.0):.3g}")
    binding = 10 ** rng.uniform(-12.0, -4.0)
    kappa = np.sqrt(2.0 * mass * binding)  # delta-limit: kappa = m * depth * width (hbar = 1)
    kappa = max(kappa, 1.0 / (1e6 * width))
    return width, float(f"{kappa / (mass * width):.4g}"), mass


@pytest.mark.parametrize("seed", [41, 42, 43])
def test_weak_siblings(seed):
    check_resolved(*weak_sibling(seed))


# ------------------------------------------------------------------ beyond double precision
BEYOND = [
    (1e-7, 1e7, 1.0),      # a feature 1e-7 of the decay length
    (1e-8, 1e8, 1.0),      # 1e-8 of it
    (1.0, 1e-8, 1.0),      # decay length 1e8 widths
    (1.0, 1e-3, 1e-7),     # mass 1e-7 m_e: decay length 1e10 widths (issue 9)
]


@pytest.mark.parametrize("width,depth,mass", BEYOND)
def test_beyond_double_precision_is_honest(width, depth, mass):
    ref = square_well_levels(width, depth, mass=mass)
    sol = square(width, depth, mass)
    check_honest(sol, ref, f"square well width {width!r}, depth {depth!r}, mass {mass!r}")


def test_unresolvable_state_is_said_to_exist(tmp_path, capsys):
    """Mass 1e-7 m_e, a 1 bohr well 1e-3 hartree deep: one state, bound by 5e-14 hartree, whose decay
    length (1e10 bohr) exceeds any box.  The messages and the command line must say that it exists."""
    width, depth, mass = 1.0, 1e-3, 1e-7
    assert square_well_count(width, depth, mass=mass) == 1
    sol = square(width, depth, mass)
    check_honest(sol, square_well_levels(width, depth, mass=mass), "mass 1e-7 well")
    case = tmp_path / "light.toml"
    case.write_text('title = "very light particle (invented)"\nunits = "atomic"\nmass = 1e-7\n'
                    '[[potential]]\nshape = "square"\ncenter = 0.0\nwidth = 1.0\ndepth = 1e-3\n')
    assert main(["solve", str(case)]) == 0
    out = capsys.readouterr().out
    if len(sol.index) == 0:
        assert "1 bound state(s) exist, 1 not resolved" in out, out
    assert "no bound state" not in out and "binds nothing" not in out, out


HOSTILE = [
    ({"mass": 1e-30}, {"width": 1.0, "depth": 1.0}),
    ({"mass": 1e-22}, {"width": 1.0, "depth": 1.0}),
    ({}, {"width": 5e-324, "depth": 1.0}),
    ({}, {"width": 1e-310, "depth": 1e300}),
    ({}, {"width": 1.0, "depth": 1e-308}),
    ({"mass": 1e30}, {"width": 1.0, "depth": 1.0}),
]


@pytest.mark.parametrize("top,well", HOSTILE)
def test_inputs_beyond_double_precision_refused_or_solved(top, well):
    """Refused with a CaseError naming its key, or solved with the right count, honest bars and notes."""
    data = {"title": "hostile (invented)", "units": "atomic", **top,
            "potential": [{"shape": "square", "center": 0.0, **well}]}
    try:
        case = fdsolver.case_from_dict(data)
        sol = fdsolver.solve_case(case)
    except fdsolver.CaseError as err:
        assert err.key, f"refused without naming a key: {err}"
        assert "\n" not in str(err)
        return
    ref = square_well_levels(well["width"], well["depth"], mass=top.get("mass", 1.0), dps=800)
    check_honest(sol, ref, f"{top} {well}")


# ------------------------------------------------------------------ binds nothing
def nothing_cases():
    rng = np.random.default_rng(51)
    out = [
        ("flat -100 meV", {"units": "nm-meV", "mass": 0.067, "layer": [{"band_edge": -100.0}]}),
        ("50 meV barrier on -100 meV", {"units": "nm-meV", "mass": 0.067, "layer": [
            {"band_edge": -100.0}, {"thickness": 10.0, "band_edge": -50.0}, {"band_edge": -100.0}]}),
        ("valence-like stack", {"units": "nm-meV", "mass": 0.5, "layer": [
            {"band_edge": -131.0}, {"thickness": 8.0, "band_edge": 0.0}, {"band_edge": -131.0}]}),
        ("gaussian bump", {"units": "atomic", "potential": [
            {"shape": "gaussian", "center": 0.0, "sigma": 1.0, "height": 1.0}]}),
    ]
    for k in range(4):  # seeded: barriers and flat stretches on a random baseline, step-free ends
        base = float(np.round(rng.uniform(-500.0, 500.0), 2))
        layers = [{"band_edge": base, "mass": float(np.round(rng.uniform(0.05, 0.5), 3))}]
        for _ in range(int(rng.integers(1, 5))):
            layers.append({"thickness": float(np.round(rng.uniform(1.0, 30.0), 2)),
                           "band_edge": base + float(np.round(rng.uniform(0.0, 300.0), 2)),
                           "mass": float(np.round(rng.uniform(0.05, 0.5), 3))})
        layers.append({"band_edge": base, "mass": layers[0]["mass"]})
        comps = [{"shape": "sech2", "center": 20.0, "width": 3.0, "height": float(np.round(rng.uniform(1, 50), 2))}]
        out.append((f"barriers on {base} meV (seed 51/{k})", {"units": "nm-meV", "mass": 0.067, "layer": layers,
                                                              "potential": comps if k % 2 else []}))
    return out


@pytest.mark.parametrize("name,data", nothing_cases(), ids=[n for n, _ in nothing_cases()])
def test_binds_nothing(name, data):
    sol = fdsolver.solve_case(fdsolver.case_from_dict({"title": f"{name} (invented)", **data}))
    assert len(sol.energy) == 0, f"{name}: {len(sol.energy)} states at {sol.energy}"
    assert sol.bound_count == 0, f"{name}: bound_count {sol.bound_count}"
    for msg in sol.messages:
        assert "exist" not in msg and "not converged" not in msg and "not resolved" not in msg, (name, msg)
    assert_notes_agree(sol, name)


def test_binds_nothing_on_the_command_line(tmp_path, capsys):
    case = tmp_path / "flat.toml"
    case.write_text('title = "flat baseline (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
                    '[[layer]]\nband_edge = -100.0\n[[layer]]\nthickness = 10.0\nband_edge = -50.0\n'
                    '[[layer]]\nband_edge = -100.0\n')
    assert main(["solve", str(case)]) == 0
    out = capsys.readouterr().out
    assert "no bound state" in out and "exist" not in out, out
