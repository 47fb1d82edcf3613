"""Binding thresholds from the zero-energy phase, checked against closed forms.

Sources are named beside each check.  C = hbar^2 / 2m_e comes from
fdsolver.model.units (scipy.constants CODATA values); masses are in m_e.
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest

import fdsolver
from fdsolver.scans import thresholds
from fdsolver.api import solve_case
from fdsolver.cli import main
from fdsolver.errors import CaseError
from fdsolver.numerics.operator import assemble
from fdsolver.model.units import UNIT_SYSTEMS

CASE = str(Path(__file__).resolve().parent.parent / "cases" / "double_square.toml")
C_NM = UNIT_SYSTEMS["nm-meV"].hbar2_2me
M = 0.067


def square_case(width=5.0, depth=100.0, mass=M, **extra):
    return fdsolver.case_from_dict({
        "units": "nm-meV", "mass": mass, "params": {"V0": depth, "w": width},
        "potential": [{"shape": "square", "center": 0.0, "width": "w", "depth": "V0"}], **extra,
    })


@pytest.mark.parametrize("n", [1, 2, 3])
def test_square_well_state_appears_at_griffiths_depth(n):
    # Griffiths, Introduction to Quantum Mechanics, sec. 2.6 (finite square well): with z0 = (w/2) sqrt(2 m V0)/hbar
    # a new state appears each time z0 passes a multiple of pi/2, i.e. state n at V0 = (n pi hbar / w)^2 / 2m.
    w = 5.0
    exact = (n * math.pi) ** 2 * C_NM / (M * w * w)
    res = thresholds.find_thresholds(square_case(w), "V0", 0.5 * exact, 1.5 * exact, state=n)
    assert len(res.thresholds) == 1
    t = res.thresholds[0]
    assert t.state == n and t.direction == +1
    assert abs(t.value - exact) <= 1e-9 * exact
    assert t.uncertainty <= 1e-6 * exact


def test_all_thresholds_of_square_well_in_one_interval():
    # same source (Griffiths sec. 2.6): states 1, 2, 3 appear at n^2 * (pi hbar / w)^2 / 2m
    w = 5.0
    unit = math.pi**2 * C_NM / (M * w * w)
    res = thresholds.find_thresholds(square_case(w), "V0", 0.5 * unit, 10.0 * unit)
    assert [t.state for t in res.thresholds] == [1, 2, 3]
    assert np.allclose([t.value for t in res.thresholds], [unit, 4 * unit, 9 * unit], rtol=1e-9, atol=0)
    assert (res.count_lo, res.count_hi) == (1, 4)


@pytest.mark.parametrize("units, mass, alpha", [("atomic", 1.0, 1.0), ("nm-meV", M, 300.0)])
def test_point_pair_odd_state_appears_at_hbar2_over_m_alpha(units, mass, alpha):
    # symmetric pair -alpha [delta(x - d/2) + delta(x + d/2)]: the odd state binds at d_c = hbar^2 / (m alpha)
    # (common practice, no source: from the zero-energy odd solution, flat outside and linear between the points)
    case = fdsolver.case_from_dict({
        "units": units, "mass": mass, "params": {"d": 1.0, "alpha": alpha},
        "potential": [{"shape": "point", "center": "-d/2", "strength": "alpha"},
                      {"shape": "point", "center": "d/2", "strength": "alpha"}],
    })
    c = UNIT_SYSTEMS[units].hbar2_2me
    exact = 2.0 * c / (mass * alpha)
    res = thresholds.find_thresholds(case, "d", 0.2 * exact, 5.0 * exact)
    assert [t.state for t in res.thresholds] == [1]
    assert abs(res.thresholds[0].value - exact) <= 1e-9 * exact
    assert res.thresholds[0].direction == +1


@pytest.mark.parametrize("n", [1, 2])
def test_poeschl_teller_threshold_uses_nested_cells(n):
    # V = -V0 sech^2(x/a): states n < lambda with lambda (lambda + 1) = 2 m V0 a^2 / hbar^2, so state n appears at
    # V0 = n (n + 1) hbar^2 / (2 m a^2)  (Landau & Lifshitz, Quantum Mechanics, sec. 23, problem 4; from memory)
    case = fdsolver.case_from_dict({"units": "atomic", "params": {"V0": 1.0},
                                    "potential": [{"shape": "sech2", "center": 0.0, "width": 1.0, "depth": "V0"}]})
    exact = n * (n + 1) * 0.5
    res = thresholds.find_thresholds(case, "V0", 0.6 * exact, 1.4 * exact, state=n)
    t = res.thresholds[0]
    assert abs(t.value - exact) <= 1e-6 * exact
    assert t.uncertainty <= 1e-6 * exact


def test_double_square_well_second_state_separation():
    # bundled invented case: two wells of width w, depth V0, barrier d.  At E = 0 the odd solution is flat outside,
    # cos(k (w - y)) in a well (k = sqrt(m V0 / C)) and linear through 0 in the barrier; matching psi'/psi = 2/d at the
    # inner edge gives d_c = 2 / (k tan(k w))  (derived here by matching; common practice, no source).
    case = fdsolver.load_case(CASE)
    k = math.sqrt(M * 100.0 / C_NM)
    exact = 2.0 / (k * math.tan(k * 3.0))
    res = thresholds.find_thresholds(case, "d", 0.1, 6.0)
    assert [t.state for t in res.thresholds] == [1]
    assert abs(res.thresholds[0].value - exact) <= 1e-9 * exact


def test_mass_step_does_not_move_threshold_in_width():
    # BenDaniel-Duke matching (psi and psi'/m continuous): at E = barrier edge the outside solution is flat, so psi'/m = 0
    # at the interfaces and state n appears at well width w_n = n pi / sqrt(m_w V0 / C), whatever the barrier mass
    # (derived here from the matching conditions; common practice, no source).
    case = fdsolver.case_from_dict({
        "units": "nm-meV", "params": {"w": 5.0},
        "layer": [{"band_edge": 200.0, "mass": 0.09}, {"thickness": "w", "band_edge": 0.0, "mass": 0.067},
                  {"band_edge": 200.0, "mass": 0.15}],
    })
    w1 = math.pi / math.sqrt(0.067 * 200.0 / C_NM)
    res = thresholds.find_thresholds(case, "w", 0.5 * w1, 2.5 * w1)
    assert [t.state for t in res.thresholds] == [1, 2]
    assert np.allclose([t.value for t in res.thresholds], [w1, 2 * w1], rtol=1e-9, atol=0)


def test_unbinding_direction_is_minus_one():
    # width = 5 - s shrinks as s grows: state 1 (Griffiths sec. 2.6, at w_1 = pi hbar / sqrt(2 m V0)) unbinds
    case = fdsolver.case_from_dict({"units": "nm-meV", "mass": M, "params": {"s": 0.0},
                                    "potential": [{"shape": "square", "center": 0.0, "width": "5 - s", "depth": 400.0}]})
    w1 = math.pi / math.sqrt(M * 400.0 / C_NM)  # 3.75 nm
    res = thresholds.find_thresholds(case, "s", 0.0, 4.0)
    assert [t.state for t in res.thresholds] == [1]
    assert res.thresholds[0].direction == -1
    assert abs(res.thresholds[0].value - (5.0 - w1)) <= 1e-9 * (5.0 - w1)


def discrete_count(case, h=0.002, half=40.0):
    """Independent reference: the zero-energy solution of the flux-form three-point scheme on a uniform grid.

    The discrete problem obeys a discrete oscillation theorem (Sturm sequence of
    the symmetric tridiagonal matrix): its sign changes, plus the one its
    linear continuation beyond the right end would add, count the states below
    the threshold 0 (flat potential outside).  Written here, not taken from fdsolver.
    """
    nodes = np.linspace(-half, half, int(round(2 * half / h)) + 1)
    op = assemble(case.potential, nodes)
    a, vw = op.a, op.vw
    prev, cur, changes = 1.0, 1.0, 0  # flat start: the E = V solution of a constant potential
    for i in range(vw.size - 1):
        nxt = cur + (a[i] * (cur - prev) + vw[i] * cur) / a[i + 1]
        changes += (nxt < 0.0) != (cur < 0.0)
        prev, cur = cur, nxt
        big = abs(cur)
        if big > 1e150:
            prev, cur = prev / big, cur / big
    if cur != 0.0 and (cur - prev) != 0.0 and ((cur - prev) > 0) != (cur > 0):
        changes += 1
    return int(changes)


@pytest.mark.parametrize("depth", [30.0, 150.0, 500.0, 1400.0])  # between the thresholds 224, 898, 2020 meV
def test_count_agrees_with_core_counting_and_solver(depth):
    # independent of this module: the core's discrete zero-energy node count and the box solve's number of states
    case = square_case(5.0, depth)
    n = thresholds.bound_count(case)
    assert n == discrete_count(case)
    assert n == solve_case(case).energy.size


@pytest.mark.parametrize("depth", [0.3, 2.0, 6.0])
def test_count_of_smooth_well_agrees_with_solver(depth):
    case = fdsolver.case_from_dict({"units": "atomic", "params": {"V0": depth},
                                    "potential": [{"shape": "gaussian", "center": 0.0, "sigma": 1.0, "depth": "V0"}]})
    assert thresholds.bound_count(case) == solve_case(case).energy.size == discrete_count(case, h=0.004, half=30.0)


def test_result_does_not_depend_on_the_box():
    # a box-independent method: naming a huge open domain must not move the threshold
    plain = thresholds.find_thresholds(square_case(5.0), "V0", 10.0, 300.0).thresholds
    boxed = thresholds.find_thresholds(square_case(5.0, domain={"left": -5000.0, "right": 5000.0}), "V0", 10.0, 300.0).thresholds
    assert [t.value for t in plain] == [t.value for t in boxed]


def test_no_threshold_in_interval_is_said_plainly(capsys):
    res = thresholds.find_thresholds(square_case(5.0), "V0", 1.0, 100.0)
    assert res.thresholds == () and res.count_lo == res.count_hi == 1
    rc = main(["threshold", CASE, "--vary", "d=0.1:1"])
    out = capsys.readouterr().out
    assert rc == 0 and "no bound state appears or disappears" in out


def test_cli_json_object(capsys):
    rc = main(["threshold", CASE, "--vary", "d=0.1:6", "--json"])
    obj = json.loads(capsys.readouterr().out)
    assert rc == 0
    assert obj["param"] == "d" and obj["state"] == 1 and obj["direction"] == 1 and obj["units"] == "nm"
    k = math.sqrt(M * 100.0 / C_NM)
    assert abs(obj["value"] - 2.0 / (k * math.tan(k * 3.0))) < 1e-9 and 0 < obj["uncertainty"] < 1e-6


def test_cli_json_when_nothing_found(capsys):
    rc = main(["threshold", CASE, "--vary", "d=0.1:1", "--state", "1", "--json"])
    obj = json.loads(capsys.readouterr().out)
    assert rc == 0 and obj["found"] is False and obj["value"] is None and obj["thresholds"] == []


def test_threshold_archive_show_and_plot(tmp_path, capsys):
    out = tmp_path / "t.nc"
    assert main(["threshold", CASE, "--vary", "depth=10:400", "--all", "-o", str(out)]) == 0
    assert main(["show", str(out)]) == 0
    assert "state 1 appears at depth" in capsys.readouterr().out
    assert main(["plot", str(out), "-o", str(tmp_path / "t.png")]) == 0
    assert (tmp_path / "t.png").stat().st_size > 1000


def test_hard_walls_have_no_threshold(capsys):
    case = square_case(5.0, domain={"boundary": "hard", "left": -10.0, "right": 10.0})
    with pytest.raises(CaseError, match="hard walls"):
        thresholds.find_thresholds(case, "V0", 10.0, 100.0)


@pytest.mark.parametrize("spec, words", [("d=2:1", "reversed"), ("d=1:1", "empty"), ("dd=1:2", "did you mean 'd'"), ("d=1:2:3", "LO:HI")])
def test_cli_bad_interval_exit_2(spec, words, capsys):
    rc = main(["threshold", CASE, "--vary", spec])
    err = capsys.readouterr().err
    assert rc == 2 and words in err and len(err.strip().splitlines()) == 1
