"""Resonances of a symmetric double barrier against the exact transfer-matrix pole (computed here in complex
arithmetic with mpmath) and against a Breit-Wigner fit of T(E).  Invented structures (GaAs-like masses)."""

import mpmath as mp
import numpy as np
import pytest
from scipy.optimize import curve_fit

from fdsolver.continuum.resonances import find_resonances
from fdsolver.continuum.scan import transmission_scan
from fdsolver.continuum.transmission import transmission
from fdsolver.input.case import case_from_dict

M = 0.067


def _stack(vb, wb, ww):
    return case_from_dict({"units": "nm-meV", "layer": [
        {"band_edge": 0.0, "mass": M}, {"band_edge": vb, "thickness": wb, "mass": M},
        {"band_edge": 0.0, "thickness": ww, "mass": M}, {"band_edge": vb, "thickness": wb, "mass": M},
        {"band_edge": 0.0, "mass": M}]}).potential


def _exact_pole(vb, wb, ww, c, guess, digits):
    """Zero of the incoming amplitude for an outgoing wave on the right: the S-matrix pole.

    Written here from scratch: psi = exp(i k x) right of the structure, carried through the three layers with
    their 2x2 transfer matrices (psi, psi') -> (cosh, sinh/kappa; kappa sinh, cosh) at complex E, and the
    condition that no exp(+i k x) arrives from the left: psi' + i k psi = 0 at the left edge.
    """
    mp.mp.dps = digits
    c, m = mp.mpf(c), mp.mpf(M)
    widths, heights = [wb, ww, wb], [vb, 0, vb]

    def f(e):
        k = mp.sqrt(m * e / c)
        psi, dpsi = mp.mpc(1), 1j * k
        grow = 0
        for w, v in zip(widths[::-1], heights[::-1]):
            kap = mp.sqrt(m * (v - e) / c)
            ch, sh = mp.cosh(kap * w), mp.sinh(kap * w)
            psi, dpsi = ch * psi - sh / kap * dpsi, -kap * sh * psi + ch * dpsi
            grow += kap * w
        return (dpsi / k + 1j * psi) * mp.exp(-grow)  # analytic, of order one

    z0 = mp.mpc(guess.real, guess.imag)
    return mp.findroot(f, (z0, z0 * (1 + mp.mpf(10) ** -12)), tol=mp.mpf(10) ** (-digits))


@pytest.mark.parametrize("vb, wb, ww", [(300.0, 3.0, 5.0), (300.0, 4.0, 20.0), (400.0, 20.0, 6.0)])
def test_poles_match_the_exact_transfer_matrix_pole(vb, wb, ww):
    pot = _stack(vb, wb, ww)
    res = find_resonances(pot, (1.0, vb))
    assert len(res) >= 1 and not res.notes
    for e_r, g, de, dg in zip(res.energy, res.width, res.energy_error, res.width_error):
        p = _exact_pole(vb, wb, ww, pot.hbar2_2me, complex(e_r, -g / 2), 50)
        ex_e, ex_g = float(mp.re(p)), float(-2 * mp.im(p))
        assert abs(e_r - ex_e) <= max(de, 1e-13 * ex_e) and abs(e_r - ex_e) < 1e-11 * ex_e
        assert abs(g - ex_g) <= max(dg, 1e-9 * ex_g) and abs(g - ex_g) < 1e-8 * ex_g


def test_none_missed_none_doubled():
    # the well levels of a 20 nm well between 4 nm barriers: every pole of the exact function in the window,
    # found here independently by starting mpmath's root finder on a dense grid of points
    vb, wb, ww = 300.0, 4.0, 20.0
    pot = _stack(vb, wb, ww)
    res = find_resonances(pot, (1.0, 280.0), max_width=40.0)
    ours = sorted(zip(res.energy, res.width))
    ref = []
    for g0 in np.linspace(2.0, 278.0, 70):
        for w0 in (0.01, 1.0, 10.0):
            try:
                p = _exact_pole(vb, wb, ww, pot.hbar2_2me, complex(g0, -w0 / 2), 30)
            except (ZeroDivisionError, ValueError):
                continue
            e, g = float(mp.re(p)), float(-2 * mp.im(p))
            if 1.0 <= e <= 280.0 and 0 < g <= 40.0 and all(abs(complex(e, g) - complex(*q)) > 1e-6 for q in ref):
                ref.append((e, g))
    ref.sort()
    assert len(ours) == len(ref) == res.count
    for (e1, g1), (e2, g2) in zip(ours, ref):
        assert abs(e1 - e2) < 1e-9 * e2 and abs(g1 - g2) < 1e-7 * g2


def _breit_wigner(e, e_r, gamma, t0):
    return t0 / (1 + ((e - e_r) / (gamma / 2)) ** 2)


@pytest.mark.parametrize("wb", [5.0, 8.0, 11.0])
def test_isolated_narrow_resonance_agrees_with_a_breit_wigner_fit(wb):
    # an isolated narrow resonance of a symmetric double barrier is a Lorentzian of height 1 up to corrections
    # of relative order Gamma / E_r (Breit-Wigner; common practice, no source): fit T(E) sampled across it
    vb, ww = 300.0, 5.0
    pot = _stack(vb, wb, ww)
    res = find_resonances(pot, (1.0, 200.0))
    e_r, g = res.energy[0], res.width[0]
    e = e_r + g * np.linspace(-3, 3, 61)
    t = transmission(pot, e).transmission
    (fe, fg, ft), _ = curve_fit(_breit_wigner, e, t, p0=[e_r * (1 + 1e-9), g * 1.01, 0.99], xtol=1e-14, ftol=1e-14)
    small = g / e_r
    assert abs(fe - e_r) < 3 * small * g + 1e-7 * g
    assert abs(fg / g - 1) < 3 * small + 1e-7
    assert abs(ft - 1) < 3 * small + 1e-7


def test_width_of_1e_minus_12_of_the_energy():
    # a pole with Gamma / E_r ~ 1e-13: the exact mpmath pole (60 digits) against the real-axis formula
    vb, wb, ww = 400.0, 20.0, 6.0
    pot = _stack(vb, wb, ww)
    res = find_resonances(pot, (70.0, 90.0))
    assert len(res) == 1
    p = _exact_pole(vb, wb, ww, pot.hbar2_2me, complex(res.energy[0], -res.width[0] / 2), 60)
    ex_g = float(-2 * mp.im(p))
    assert ex_g / res.energy[0] < 1e-12
    assert abs(res.width[0] / ex_g - 1) < 1e-9
    assert abs(res.width[0] - ex_g) <= res.width_error[0]
    assert res.lifetime[0] == pytest.approx(1.0545718176461565e-34 / (ex_g * 1.602176634e-22), rel=1e-9)


def test_adaptive_grid_resolves_every_resonance():
    vb, wb, ww = 400.0, 12.0, 6.0
    pot = _stack(vb, wb, ww)
    tr = transmission_scan(pot, 1.0, 390.0, points=50)
    for e_r, g in zip(tr.resonances.energy, tr.resonances.width):
        near = np.abs(tr.energy - e_r) < g
        assert np.count_nonzero(near) >= 10  # the peak is sampled inside its half width
        assert np.max(tr.transmission[near]) > 0.99  # and reaches T = 1 (symmetric double barrier)


def test_smooth_well_bound_states_by_richardson():
    # Landau & Lifshitz sec. 23 problem 4: U = -U0 / cosh^2(x/a) has E_n = -(1/(8 a^2)) [sqrt(1 + 8 U0 a^2) - (1 + 2n)]^2
    # (hbar = m = 1).  The sech^2 well is smooth: midpoint cells on nested levels, Richardson; the levels are the
    # real zeros of the Jost function.
    u0, a = 3.0, 1.0
    pot = case_from_dict({"units": "atomic", "potential": [
        {"shape": "sech2", "center": 0.0, "width": a, "depth": u0}]}).potential
    root = np.sqrt(1 + 8 * u0 * a * a)
    exact = [-(root - (1 + 2 * n)) ** 2 / (8 * a * a) for n in range(3) if root > 1 + 2 * n]
    res = find_resonances(pot, (-u0, -1e-3))
    assert np.all(res.bound) and len(res) == len(exact) and res.levels > 1
    err = np.abs(res.energy - np.array(exact))
    assert np.max(err) < 1e-9
    assert np.all(err <= res.energy_error)


def test_deep_poles_of_smooth_tails_are_refused_with_a_note():
    # the sech^2 barrier's pole at k = (s - i/2)/a (Landau & Lifshitz sec. 25 problem 4 continued to complex k) lies
    # too deep for its 17 a long tails; the finder says so instead of returning noise
    pot = case_from_dict({"units": "atomic", "potential": [
        {"shape": "sech2", "center": 0.0, "width": 1.0, "height": 2.0}]}).potential
    res = find_resonances(pot, (0.5, 2.0), max_width=2.2)
    assert len(res) == 0
    assert any("not searched" in n for n in res.notes)
