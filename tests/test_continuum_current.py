"""Tsu-Esaki current density: the linear response against an independent quadrature of Griffiths's barrier
transmission, and the symmetry of a symmetric stack.  Invented structures."""

import numpy as np
import scipy.constants as sc
from scipy.integrate import quad

from fdsolver.continuum.current import current_density, current_voltage
from fdsolver.input.case import case_from_dict

M = 0.067


def _barrier(height, width):
    return case_from_dict({"units": "nm-meV", "layer": [
        {"band_edge": 0.0, "mass": M}, {"band_edge": height, "thickness": width, "mass": M},
        {"band_edge": 0.0, "mass": M}]}).potential


def test_linear_response_matches_the_landauer_integral():
    # Tsu and Esaki, Appl. Phys. Lett. 22, 562 (1973): J = (e m / (2 pi^2 hbar^3)) int T(E) S(E) dE; for V -> 0,
    # S -> e V f(E) (Fermi-Dirac), so J / V -> (e^2 m / (2 pi^2 hbar^3)) int T(E) f(E) dE.  T(E) of the rectangular
    # barrier from Griffiths problem 2.33; the antisymmetric part (J(V) - J(-V)) / 2 removes the V^2 term.
    height, width, ef, temp = 200.0, 3.0, 15.0, 77.0
    pot = _barrier(height, width)
    c = pot.hbar2_2me
    kt = sc.k * temp / (1e-3 * sc.e)

    def t_exact(e):
        if e < height:
            kap = np.sqrt(M * (height - e) / c)
            return 1 / (1 + height**2 * np.sinh(kap * width) ** 2 / (4 * e * (height - e)))
        k = np.sqrt(M * (e - height) / c)
        return 1 / (1 + height**2 * np.sin(k * width) ** 2 / (4 * e * (e - height)))

    def integrand(e):
        return t_exact(e) / (1 + np.exp((e - ef) / kt))

    val = quad(integrand, 1e-12, ef + 40 * kt, limit=200, epsabs=0, epsrel=1e-12)[0]
    val += quad(integrand, ef + 40 * kt, height + 400, limit=200)[0]
    mev = 1e-3 * sc.e
    g = sc.e**2 * M * sc.m_e / (2 * np.pi**2 * sc.hbar**3) * val * mev  # A / (m^2 V)
    v = 2e-4
    jp, ep, _, _ = current_density(pot, v, temperature=temp, fermi_level=ef)
    jm, em, _, _ = current_density(pot, -v, temperature=temp, fermi_level=ef)
    assert abs(0.5 * (jp - jm) / v / g - 1) < 2e-3
    assert ep < 1e-5 * abs(jp)


def test_symmetric_stack_gives_an_odd_current():
    # a mirror-symmetric stack conducts the same either way: J(-V) = -J(V) (common practice, no source)
    pot = case_from_dict({"units": "nm-meV", "layer": [
        {"band_edge": 0.0, "mass": M}, {"band_edge": 300.0, "thickness": 3.0, "mass": M},
        {"band_edge": 0.0, "thickness": 5.0, "mass": M}, {"band_edge": 300.0, "thickness": 3.0, "mass": M},
        {"band_edge": 0.0, "mass": M}]}).potential
    cv = current_voltage(pot, [-0.12, 0.12], temperature=4.2, fermi_level=20.0)
    j = cv.current_density
    assert abs(j[0] + j[1]) <= 10 * (cv.current_error[0] + cv.current_error[1]) + 1e-9 * abs(j[1])
    assert j[1] > 0


def test_resonant_peak_and_valley():
    # a double-barrier diode at low temperature: the current rises while the well level is pulled through the
    # emitter's occupied band, then drops once it falls below the emitter band edge (negative differential
    # resistance; common practice, no source)
    pot = case_from_dict({"units": "nm-meV", "layer": [
        {"band_edge": 0.0, "mass": M}, {"band_edge": 300.0, "thickness": 3.0, "mass": M},
        {"band_edge": 0.0, "thickness": 5.0, "mass": M}, {"band_edge": 300.0, "thickness": 3.0, "mass": M},
        {"band_edge": 0.0, "mass": M}]}).potential
    v = np.linspace(0.02, 0.4, 20)
    cv = current_voltage(pot, v, temperature=4.2, fermi_level=20.0)
    j = cv.current_density
    peak = int(np.argmax(j))
    assert 0 < peak < v.size - 1
    assert j[peak + 2] < 0.5 * j[peak]
    # at the peak bias the lowest resonance sits inside the emitter's occupied band [0, 20] meV
    res = cv.resonances[peak]
    assert np.any((res.energy > -1.0) & (res.energy < 21.0))
