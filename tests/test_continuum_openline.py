"""Quasi-bound states through `fdsolver solve` and `fdsolver sweep` on the open line (no hard walls): the solve
archive's width and lifetime against outgoing-wave conditions written with Airy functions (mpmath, derived here),
lifetime = hbar / width (CODATA hbar and e from scipy.constants), true bound states keep width 0.  Invented
cases."""

from __future__ import annotations

from pathlib import Path

import mpmath as mp
import numpy as np
from scipy.constants import e as E_CHARGE
from scipy.constants import hbar as HBAR

import fdsolver
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"


def _point_in_field_pole(alpha: float, field: float, guess: complex) -> complex:
    """Derived here (hbar = m = 1): H = -(1/2) d2/dx2 - alpha delta(x) + F x.  Right of the point psi = a Ai(z),
    left of it the outgoing wave b (Bi + i Ai)(z), z = (2F)^(1/3) (x - E/F); continuity and the derivative jump
    -2 alpha psi(0) with the Wronskian Ai Bi' - Ai' Bi = 1/pi give Ai(z0) (Bi + i Ai)(z0) = beta / (2 pi alpha)
    at z0 = -beta E / F (the Airy functions: Abramowitz & Stegun 10.4)."""
    mp.mp.dps = 40
    beta = mp.cbrt(2 * mp.mpf(field))

    def f(e):
        z0 = -beta * e / field
        return mp.airyai(z0) * (mp.airybi(z0) + 1j * mp.airyai(z0)) - beta / (2 * mp.pi * alpha)

    g = mp.mpc(guess.real, guess.imag)
    return complex(mp.findroot(f, (g, g + mp.mpf(10) ** -9)))


def _point_in_field(field: float) -> dict:
    return {"title": "attractive point in a field (invented)", "units": "atomic",
            "potential": [{"shape": "point", "center": 0.0, "strength": 1.0},
                          {"shape": "linear", "field": field}],
            "solve": {"energy_window": [-1.0, 0.0]}}


def test_solve_of_a_point_in_a_field_gives_the_airy_pole():
    field = 0.1
    ds = fdsolver.solve(fdsolver.case_from_dict(_point_in_field(field)))
    assert ds.sizes["state"] == 1
    pole = _point_in_field_pole(1.0, field, complex(float(ds.energy[0]), -0.5 * float(ds.width[0])))
    assert abs(float(ds.energy[0]) - pole.real) < 1e-11
    assert abs(float(ds.width[0]) / (-2 * pole.imag) - 1) < 1e-8
    assert abs(float(ds.width[0]) - (-2 * pole.imag)) <= float(ds.width_error[0]) + 1e-12 * float(ds.width[0])
    # lifetime in s = hbar / Gamma with Gamma in hartree (CODATA: 1 hartree = 27.211386 eV)
    gamma_joule = float(ds.width[0]) * 27.211386245988 * E_CHARGE
    assert abs(float(ds.lifetime[0]) / (HBAR / gamma_joule) - 1) < 1e-8
    assert abs(float(ds.log10_width[0]) - np.log10(float(ds.width[0]))) < 1e-9


def test_without_a_field_the_solve_is_the_bound_state_solver_with_zero_widths():
    # alpha delta well: E = -alpha^2/2 (Griffiths sec. 2.5.2), bound, width 0, lifetime inf
    ds = fdsolver.solve(fdsolver.case_from_dict(
        {"units": "atomic", "potential": [{"shape": "point", "center": 0.0, "strength": 1.0}]}))
    assert abs(float(ds.energy[0]) + 0.5) < 1e-8
    assert float(ds.width[0]) == 0.0 and np.isinf(float(ds.lifetime[0])) and np.isneginf(float(ds.log10_width[0]))


def test_stark_well_from_the_command_line(tmp_path, capsys):
    out, fig = tmp_path / "s.nc", tmp_path / "s.png"
    assert main(["solve", str(CASES / "stark_well.toml"), "-o", str(out), "--plot", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "width [meV]" in text and "lifetime [s]" in text and "quasi-bound" in text
    ds = fdsolver.open_run(out)
    assert ds.sizes["state"] >= 2 and fig.stat().st_size > 0
    w = ds.width.values
    assert np.all(w > 0) and w[1] > 1e3 * w[0]  # the upper level leaks far faster through the thinner barrier
    assert ds.width.attrs["units"] == "meV" and ds.lifetime.attrs["units"] == "s"
    # ground level lies in the well: above its bottom (0 at x = 0 plus the field), below the right barrier's top
    assert 0.0 < float(ds.energy[0]) < 230.0


def test_field_sweep_carries_widths_and_they_grow_with_the_field(tmp_path, capsys):
    out = tmp_path / "f.nc"
    assert main(["sweep", str(CASES / "stark_well.toml"), "--vary", "F=20:60:3", "--executor", "serial",
                 "-o", str(out), "-q"]) == 0
    assert "quasi-bound at 3 points" in capsys.readouterr().out
    ds = fdsolver.open_run(out)
    l10 = ds.log10_level_width.sel(state=0).values
    assert np.all(np.isfinite(l10)) and np.all(np.diff(l10) > 0)  # field ionisation speeds up with F
    one = fdsolver.solve(fdsolver.load_case(CASES / "stark_well.toml").with_params(F=40.0))
    assert abs(float(ds.level_width.sel(state=0).values[1]) / float(one.width[0]) - 1) < 1e-6


def _double_barrier_pole(v0, b, w, guess):
    """Derived here (hbar = m = 1): barriers of height v0 on [0, b] and [b + w, 2b + w], V = 0 elsewhere.
    Outgoing on both sides: psi = e^{-ikx} left of 0 (psi = 1, psi' = -ik at 0), marched through each constant
    region by [[cos qL, sin(qL)/q], [-q sin qL, cos qL]] with q = sqrt(2(E - V)); the pole is where the wave
    leaving on the right is outgoing too: psi' - ik psi = 0 at 2b + w (k = sqrt(2E), Im k < 0 below the axis)."""
    mp.mp.dps = 30

    def f(e):
        k = mp.sqrt(2 * e)
        y = mp.matrix([[1], [-1j * k]])
        for v, length in ((v0, b), (0, w), (v0, b)):
            q = mp.sqrt(2 * (e - v))
            y = mp.matrix([[mp.cos(q * length), mp.sin(q * length) / q],
                           [-q * mp.sin(q * length), mp.cos(q * length)]]) * y
        return y[1] - 1j * k * y[0]

    g = mp.mpc(guess.real, guess.imag)
    return complex(mp.findroot(f, (g, g + mp.mpf(10) ** -9)))


def test_well_between_barriers_above_the_threshold_gives_its_resonances():
    v0, b, w = 1.0, 1.5, 3.0
    ds = fdsolver.solve(fdsolver.case_from_dict({
        "title": "double barrier (invented)", "units": "atomic",
        "potential": [{"shape": "square", "center": b / 2, "width": b, "height": v0},
                      {"shape": "square", "center": 1.5 * b + w, "width": b, "height": v0}],
        "solve": {"quasi_bound": True}}))
    assert ds.sizes["state"] >= 1 and np.all(ds.width.values > 0)  # nothing is bound: V >= 0 everywhere
    for k in range(ds.sizes["state"]):
        e, g = float(ds.energy[k]), float(ds.width[k])
        assert 0 < e < v0
        pole = _double_barrier_pole(v0, b, w, complex(e, -g / 2))
        assert abs(e - pole.real) < 1e-10 and abs(g / (-2 * pole.imag) - 1) < 1e-8
    assert ds.attrs["box_left"] == float(ds.x[0]) and ds.attrs["box_right"] == float(ds.x[-1])  # the shown grid


def test_quasi_bound_key_chooses_whether_states_above_the_threshold_are_listed():
    # a well with a thin right barrier above a lower right cladding (invented): bound below 100 meV, quasi-bound
    # between 100 and 300 meV.  By default the bound states stay the solver's alone (a note says more may exist),
    # and a structure that binds nothing still returns no state.
    layers = [{"band_edge": 300.0}, {"thickness": 8.0, "band_edge": 0.0}, {"thickness": 3.0, "band_edge": 300.0},
              {"band_edge": 100.0}]
    base = {"title": "leaky well (invented)", "units": "nm-meV", "mass": 0.067, "layer": layers}
    plain = fdsolver.solve(fdsolver.case_from_dict(base))
    assert np.all(plain.width.values == 0) and np.all(plain.energy.values < 100.0)
    assert "quasi_bound = true" in plain.attrs["messages"]
    full = fdsolver.solve(fdsolver.case_from_dict({**base, "solve": {"quasi_bound": True}}))
    n = plain.sizes["state"]
    assert np.array_equal(full.energy.values[:n], plain.energy.values)  # the bound states are untouched
    q = full.energy.values[n:]
    assert q.size >= 1 and np.all((q > 100.0) & (q < 300.0)) and np.all(full.width.values[n:] > 0)
    assert np.all(np.diff(full.energy.values) > 0)
    # the same poles as `fdsolver resonances` in that window (one engine)
    res = fdsolver.resonances(fdsolver.case_from_dict(base), (100.0, 300.0), max_width=50.0)
    assert np.allclose(res.resonance_energy.values[: q.size], q, rtol=1e-10)


def test_quasi_bound_false_keeps_the_old_refusal_in_a_field(tmp_path, capsys):
    case = tmp_path / "field.toml"
    case.write_text((CASES / "stark_well.toml").read_text() + "\n[solve]\nquasi_bound = false\n")
    assert main(["solve", str(case), "-o", str(tmp_path / "x.nc")]) == 2
    err = capsys.readouterr().err
    assert "hard" in err and err.count("\n") == 1 and not (tmp_path / "x.nc").exists()
