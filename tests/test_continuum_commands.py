"""The continuum from the command line and the API: transmit, resonances, current (archives, tables, figures,
bad input).  Physics checks use outside references named beside them; the cases are invented."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.constants import e as E_CHARGE
from scipy.constants import hbar as HBAR

import fdsolver
from fdsolver.cli import main

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
BARRIER = {  # one rectangular barrier in atomic units (invented numbers)
    "title": "one barrier (invented)", "units": "atomic",
    "potential": [{"shape": "square", "center": 0.0, "width": 2.2, "height": 1.3}],
}


def _narrow_double_barrier(barrier=14.0):
    """A symmetric double barrier with thick walls: a resonance far narrower than its energy (invented)."""
    return fdsolver.case_from_dict({
        "title": "narrow double barrier (invented)", "units": "nm-meV", "mass": 0.067,
        "layer": [{"band_edge": 0.0}, {"band_edge": 300.0, "thickness": barrier}, {"band_edge": 0.0, "thickness": 5.0},
                  {"band_edge": 300.0, "thickness": barrier}, {"band_edge": 0.0}]})


def test_transmit_archive_against_the_barrier_formula(tmp_path):
    # Griffiths, Introduction to Quantum Mechanics, problem 2.33 (hbar = m = 1): both branches of T(E)
    ds = fdsolver.transmit(fdsolver.case_from_dict(BARRIER), "0.05:5:60")
    e = ds.energy.values
    assert e.size == 60 and np.allclose(np.diff(e), np.diff(e)[0])
    v0, a = 1.3, 2.2
    with np.errstate(invalid="ignore"):
        kap = np.sqrt(2 * (v0 - e + 0j))
    exact = 1 / (1 + (v0**2 * np.abs(np.sinh(kap * a)) ** 2 / (4 * e * np.abs(v0 - e))))
    assert np.max(np.abs(ds.transmission.values / exact - 1)) < 1e-11
    assert np.all(np.abs(ds.transmission.values - exact) <= ds.transmission_error.values + 1e-15)
    assert np.max(np.abs(ds.transmission.values + ds.reflection.values - 1)) < 1e-13
    assert np.allclose(10 ** ds.log10_transmission.values, ds.transmission.values, rtol=1e-12)
    assert ds.attrs["fdsolver_kind"] == "transmission"


def test_adaptive_grid_samples_a_very_narrow_resonance():
    # a symmetric double barrier transmits fully at resonance (common practice, no source needed: the two
    # barriers' reflections cancel); with Gamma / E ~ 1e-8 an even grid of thousands of points misses the peak,
    # the adaptive grid must sample it
    ds = fdsolver.transmit(_narrow_double_barrier(), "1:150")
    g = ds.resonance_width.values
    er = ds.resonance_energy.values
    assert er.size == 1 and 0 < g[0] < 1e-6 * er[0]
    near = np.abs(ds.energy.values - er[0]) < 2 * g[0]
    assert near.sum() >= 10
    assert ds.transmission.values.max() > 0.999
    # the lifetime is hbar / Gamma in seconds (scipy.constants: hbar, e; 1 meV = 1e-3 e J)
    assert ds.lifetime.values[0] == pytest.approx(HBAR / (g[0] * 1e-3 * E_CHARGE), rel=1e-12)


def test_fixed_grid_names_the_resonances_it_cannot_resolve():
    ds = fdsolver.transmit(_narrow_double_barrier(), "1:150:300")
    assert ds.energy.size == 300
    assert "narrower than twice the grid spacing" in ds.attrs["notes"]


def test_resonances_at_zero_field_are_the_bound_states_of_the_solver():
    # two independent methods: zeros of the Jost function (transfer of exact solutions) against the
    # finite-difference eigenvalue solver with Richardson extrapolation
    case = fdsolver.load_case(CASES / "stark_well.toml", F=0.0)
    rs = fdsolver.resonances(case, "-60:229.9", max_width=50.0)  # up to just below the barriers (230 meV)
    bound = fdsolver.solve(case)
    assert rs.bound.values.all() and np.all(rs.resonance_width.values == 0)
    assert rs.resonance_energy.size == bound.energy.size == 3
    assert np.allclose(rs.resonance_energy.values, bound.energy.values, rtol=1e-9)


def test_resonance_sweep_over_the_field_runs_through_the_runner(tmp_path):
    out = tmp_path / "stark.nc"
    ds = fdsolver.resonances(CASES / "stark_well.toml", vary="F=0:60:4", executor="serial", output=out)
    assert out.exists() and not Path(str(out) + ".checkpoint").exists()
    assert ds.resonance_energy.dims == ("F", "resonance")
    e, g = ds.resonance_energy.values, ds.resonance_width.values
    # the Stark shift of the ground level is positive here (V = F x with x = 0 at the well's left edge: the
    # well's mean potential rises by F * 5 nm) and the width grows with the field (field ionisation)
    assert np.all(np.diff(e[:, 0]) > 0)
    assert g[0, 0] == 0 and np.all(np.diff(ds.log10_resonance_width.values[1:, 0]) > 0)
    assert ds.bound.values[0].all() and not ds.bound.values[1:].any()
    again = fdsolver.open_run(out)
    assert np.array_equal(again.resonance_energy.values, e, equal_nan=True)


def test_current_archive_peak_and_valley_and_executors_agree():
    case = fdsolver.load_case(CASES / "double_barrier.toml")
    biases = "0:0.3:7"
    serial = fdsolver.current(case, biases, executor="serial")
    par = fdsolver.current(case, biases, executor="processes", workers=2)
    assert np.array_equal(serial.current_density.values, par.current_density.values)
    j, v = serial.current_density.values, serial.bias.values
    assert j[0] == 0.0  # no bias, no net current (equal Fermi levels)
    vp, vv = float(serial.peak_bias), float(serial.valley_bias)
    ip, iv = int(np.argmin(np.abs(v - vp))), int(np.argmin(np.abs(v - vv)))
    assert j[ip] == pytest.approx(float(serial.peak_current_density)) and 0 < ip < iv
    assert j[ip] == j[: iv + 1].max() and j[iv] == j[ip:].min() and j[iv] < 0.5 * j[ip]
    assert np.all(serial.current_density_error.values <= 1e-4 * np.abs(j).max())


def test_commands_write_tables_archives_and_figures(tmp_path, capsys):
    t_nc, r_nc, j_nc = tmp_path / "t.nc", tmp_path / "r.nc", tmp_path / "j.nc"
    db = str(CASES / "double_barrier.toml")
    assert main(["transmit", db, "-o", str(t_nc), "--plot", str(tmp_path / "t.png")]) == 0
    out = capsys.readouterr().out
    assert "pole(s) with E_r in" in out and "E_r [meV]" in out and "lifetime [s]" in out
    assert main(["resonances", db, "--window", "0:200", "-o", str(r_nc), "--plot", str(tmp_path / "r.png")]) == 0
    assert "81.90" in capsys.readouterr().out
    assert main(["current", db, "--bias", "0:0.2:5", "--executor", "serial", "-q", "-o", str(j_nc),
                 "--plot", str(tmp_path / "j.png")]) == 0
    assert "J [A/m^2]" in capsys.readouterr().out
    for nc in (t_nc, r_nc, j_nc):
        assert main(["show", str(nc)]) == 0
        assert main(["plot", str(nc), "-o", str(tmp_path / (nc.stem + "2.png"))]) == 0
    assert all((tmp_path / f).stat().st_size > 10_000 for f in ("t.png", "r.png", "j.png", "t2.png", "r2.png", "j2.png"))


def test_a_window_without_resonances_is_a_plain_statement(tmp_path, capsys):
    out = tmp_path / "none.nc"
    assert main(["resonances", str(CASES / "double_barrier.toml"), "--window", "100:200", "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert "no resonance in the window [100, 200] meV" in text and out.exists()
    assert fdsolver.open_run(out).sizes["resonance"] == 0


@pytest.mark.parametrize("argv, key", [
    (["transmit", "double_barrier.toml", "--energies=-10:-5"], "below both asymptotes"),
    (["transmit", "STEP", "--energies", "50:80"], "--incident right"),
    (["transmit", "double_barrier.toml", "--energies", "5:1"], "reversed"),
    (["current", "double_square.toml", "--bias", "0:1:3", "--fermi-level", "3"], "needs a layer stack"),
    (["current", "double_barrier.toml", "--bias", "0:1"], "needs a count"),
    (["current", "coupled_wells.toml", "--bias", "0:1:3"], "--fermi-level"),
    (["resonances", "double_barrier.toml", "--window", "200:100"], "reversed"),
    (["resonances", "double_barrier.toml", "--resume"], "continue a sweep"),
])
def test_bad_input_exits_2_with_one_line_and_writes_nothing(tmp_path, capsys, argv, key):
    step = tmp_path.parent / (tmp_path.name + "_step.toml")  # a step: 100 meV on the left, 0 on the right
    step.write_text('units = "nm-meV"\n[[layer]]\nband_edge = 100.0\n[[layer]]\nband_edge = 0.0\n')
    argv = [argv[0], str(step if argv[1] == "STEP" else CASES / argv[1])] + argv[2:] + ["-o", str(tmp_path / "x.nc"), "--plot", str(tmp_path / "x.png")]
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and key in err, err
    assert list(tmp_path.iterdir()) == []


def test_hard_walls_are_refused_for_scattering(tmp_path, capsys):
    case = tmp_path / "walls.toml"
    case.write_text('units = "nm-meV"\n[[potential]]\nshape = "square"\ncenter = 0\nwidth = 2\nheight = 100\n'
                    '[domain]\nboundary = "hard"\nleft = -10\nright = 10\n')
    for cmd in ("transmit", "resonances"):
        assert main([cmd, str(case), "-o", str(tmp_path / "x.nc")]) == 2
        assert "open ends" in capsys.readouterr().err
    assert not (tmp_path / "x.nc").exists()


def test_transport_table_keys_are_checked(tmp_path):
    case = tmp_path / "typo.toml"
    case.write_text((CASES / "double_barrier.toml").read_text() + "fermi_levl = 3\n")
    with pytest.raises(fdsolver.CaseError, match="fermi_level"):
        fdsolver.load_case(case)
    assert math.isfinite(fdsolver.load_case(CASES / "double_barrier.toml").data["transport"]["fermi_level"])
