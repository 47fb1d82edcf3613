"""`fdsolver delta-check --transmission`: T(E) and resonances of finite barriers against point interactions.

Outside references: the delta barrier T = 1/(1 + m alpha^2/(2 hbar^2 E)) (Griffiths, Introduction to Quantum
Mechanics, sec. 2.5.2), the rectangular barrier T = [1 + V0^2 sinh^2(kappa a)/(4E(V0 - E))]^-1 and its E > V0 form
(Griffiths, problem 2.33), and the double-delta resonance poles from the product of the two point transfer matrices
computed here in complex arithmetic with mpmath.  Invented parameters, atomic units (hbar = m = 1).
"""

from __future__ import annotations

from pathlib import Path

import mpmath as mp
import numpy as np
import pytest

import fdsolver
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"


def _points(*pts) -> dict:
    return {"title": "thin barriers (invented)", "units": "atomic",
            "potential": [{"shape": "point", "center": x, "strength": a} for x, a in pts]}


def _griffiths_barrier(e, v0, a):
    """Rectangular barrier of height v0 and width a, m = hbar = 1 (Griffiths problem 2.33)."""
    e = np.asarray(e, float)
    out = np.empty_like(e)
    below = e < v0
    kap = np.sqrt(2 * (v0 - e[below]))
    out[below] = 1 / (1 + v0**2 * np.sinh(kap * a) ** 2 / (4 * e[below] * (v0 - e[below])))
    kp = np.sqrt(2 * (e[~below] - v0))
    out[~below] = 1 / (1 + v0**2 * np.sin(kp * a) ** 2 / (4 * e[~below] * (e[~below] - v0)))
    return out


def test_delta_barrier_and_its_rectangular_replacements_against_closed_forms():
    alpha = -2.0  # a repulsive point: a barrier of int V dx = 2 hartree bohr
    ds = fdsolver.delta_check(fdsolver.case_from_dict(_points((0.0, alpha))), transmission=True,
                              energies="0.1:4:40", widths="0.001:0.3:5")
    e = ds.energy.values
    assert np.allclose(ds.transmission_limit.values, 1 / (1 + alpha**2 / (2 * e)), rtol=1e-12, atol=1e-15)
    for i, w in enumerate(ds.width.values):
        assert np.allclose(ds.transmission.values[i], _griffiths_barrier(e, -alpha / w, w), rtol=1e-9, atol=1e-14)
        assert np.allclose(ds.replacement_depth.values[i, 0], alpha / w)  # a barrier: negative depth
    d = ds.transmission_deviation.values
    assert np.all(np.diff(d) > 0) and abs(float(ds.law_exponent) - 1) < 0.05
    assert ds.sizes["resonance"] == 0


def _double_delta_pole(alpha, d, guess):
    """Poles of t for -alpha delta(x) - alpha delta(x - d), hbar = m = 1: g = alpha, k = sqrt(2E) on the lower
    half plane of E.  Point transfer matrix (A', B') = M (A, B) for psi = A e^{ikx} + B e^{-ikx}:
    M = [[1 + i g/k, (i g/k) e^{-2ikx}], [-(i g/k) e^{2ikx}, 1 - i g/k]] (continuity and the jump -2 g psi);
    the pole is where (M_2 M_1)_22 = 0, written out here."""
    mp.mp.dps = 30

    def m(x, k):
        u = 1j * alpha / k
        return mp.matrix([[1 + u, u * mp.exp(-2j * k * x)], [-u * mp.exp(2j * k * x), 1 - u]])

    def f(e):
        k = mp.sqrt(2 * e)
        return (m(d, k) * m(0, k))[1, 1]

    g = mp.mpc(guess.real, guess.imag)
    return complex(mp.findroot(f, (g, g + mp.mpf(10) ** -8)))


def test_double_delta_resonances_and_their_shift_with_width():
    alpha, d = -4.0, 3.0
    ds = fdsolver.delta_check(fdsolver.case_from_dict(_points((0.0, alpha), (d, alpha))), transmission=True,
                              energies="0.05:3", widths="0.0005:0.05:4")
    assert ds.sizes["resonance"] == 2
    for k in range(2):
        e_r, gam = float(ds.resonance_energy_limit[k]), float(ds.resonance_width_limit[k])
        pole = _double_delta_pole(alpha, d, complex(e_r, -gam / 2))
        assert abs(e_r - pole.real) < 1e-10 and abs(gam / (-2 * pole.imag) - 1) < 1e-9
        # T reaches 1 at a symmetric double barrier's resonance (common practice, no source); the grid holds E_r
        assert float(ds.transmission_limit.sel(energy=e_r, method="nearest")) > 0.99
        # thin barriers of finite width are taller than they are strong: the resonance shifts up and narrows,
        # linearly in the width
        shift = ds.resonance_energy_deviation.values[:, k]
        assert np.all(shift > 0) and np.all(ds.resonance_width_deviation.values[:, k] < 0)
        slope = np.polyfit(np.log(ds.width.values), np.log(shift), 1)[0]
        assert abs(slope - 1) < 0.05


def test_sheet_on_a_layer_stack_uses_the_transfer_march(tmp_path, capsys):
    out, fig = tmp_path / "st.nc", tmp_path / "st.png"
    case = tmp_path / "stack.toml"
    case.write_text('title = "barrier sheet in a well (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
                    '[[layer]]\nband_edge = 0.0\n[[layer]]\nthickness = 3.0\nband_edge = 250.0\n'
                    '[[layer]]\nthickness = 8.0\nband_edge = 0.0\n[[layer]]\nthickness = 3.0\nband_edge = 250.0\n'
                    '[[layer]]\nband_edge = 0.0\n'
                    '[[potential]]\nshape = "point"\nname = "sheet"\ncenter = 7.0\nstrength = -30.0\n')
    assert main(["delta-check", str(case), "--transmission", "--energies", "1:200:60", "--widths", "0.01:0.5:3",
                 "-o", str(out), "--plot", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "transfer march" in text and "max |dT|" in text
    ds = fdsolver.open_run(out)
    ref = fdsolver.transmit(case, "1:200:60")
    assert np.allclose(ds.transmission_limit.values, ref.transmission.values, rtol=1e-10, atol=1e-14)
    assert ds.sizes["resonance"] >= 1 and fig.stat().st_size > 20_000
    assert main(["show", str(out)]) == 0


@pytest.mark.parametrize("argv, needle", [
    (["--energies", "0.1:1:5"], "add --transmission"),
    (["--transmission", "--map", "width=0.01:1:3", "--map", "d=1:2:3"], "drop --map"),
    (["--transmission", "--energies=-3:-1:5"], "incident asymptote"),
    (["--transmission", "--energies", "1:x"], "--energies"),
])
def test_bad_input_exit_2_one_line(tmp_path, capsys, argv, needle):
    case = tmp_path / "pair.toml"
    case.write_text('units = "atomic"\n[params]\nd = 3.0\n[[potential]]\nshape = "point"\ncenter = 0\nstrength = -4\n'
                    '[[potential]]\nshape = "point"\ncenter = "d"\nstrength = -4\n')
    out = tmp_path / "x.nc"
    assert main(["delta-check", str(case), *argv, "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert needle in err and err.count("\n") == 1, err
    assert not out.exists()
