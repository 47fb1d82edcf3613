"""Transmission T(E) against published closed forms, flux conservation and time reversal.

Sources are named beside each check.  Cases are invented (numbers chosen for
the checks, no device is meant).
"""

import math

import mpmath as mp
import numpy as np
import pytest

from fdsolver.continuum.transmission import transmission
from fdsolver.input.case import case_from_dict
from fdsolver.zerorange.pointscatter import point_transmission


def _atomic(*shapes):
    return case_from_dict({"units": "atomic", "potential": list(shapes)}).potential


def test_rectangular_barrier_below_and_above_the_top():
    # Griffiths, Introduction to Quantum Mechanics, problem 2.33 (hbar = m = 1, C = 1/2):
    # E < V0: T = [1 + V0^2 sinh^2(kappa a) / (4 E (V0 - E))]^-1, kappa = sqrt(2 (V0 - E));
    # E > V0: T = [1 + V0^2 sin^2(k a) / (4 E (E - V0))]^-1, k = sqrt(2 (E - V0)).
    v0, a = 1.3, 2.2
    pot = _atomic({"shape": "square", "center": 0.4, "width": a, "height": v0})
    e = np.array([0.05, 0.4, 1.0, 1.29, 1.31, 2.0, 5.0, 17.0])
    tr = transmission(pot, e)
    below = e < v0
    kap = np.sqrt(2 * (v0 - e[below]))
    k = np.sqrt(2 * (e[~below] - v0))
    exact = np.empty_like(e)
    exact[below] = 1 / (1 + v0**2 * np.sinh(kap * a) ** 2 / (4 * e[below] * (v0 - e[below])))
    exact[~below] = 1 / (1 + v0**2 * np.sin(k * a) ** 2 / (4 * e[~below] * (e[~below] - v0)))
    assert np.max(np.abs(tr.transmission / exact - 1)) < 1e-12
    assert np.all(np.abs(tr.transmission - exact) <= tr.transmission_error + 1e-15)
    assert np.max(tr.unitarity_defect) < 1e-13
    assert tr.levels == 1


def test_thick_barrier_does_not_overflow():
    # Griffiths 2.33 again, in logarithms: a barrier with exp(kappa a) = e^2000 (beyond 1e300 squared)
    v0, a, e = 2.0, 1000.0, 1.0
    pot = _atomic({"shape": "square", "center": 0.0, "width": a, "height": v0})
    tr = transmission(pot, [e])
    kap = math.sqrt(2 * (v0 - e))
    log_exact = float(-mp.log(1 + v0**2 * mp.sinh(kap * a) ** 2 / (4 * e * (v0 - e))))  # mpmath: no overflow
    assert abs(tr.log_transmission[0] - log_exact) < 1e-11 * abs(log_exact)
    assert tr.transmission[0] == 0.0 and tr.reflection[0] == pytest.approx(1.0, abs=1e-15)


def test_delta_barrier():
    # Griffiths sec. 2.5.2: T = 1 / (1 + m alpha^2 / (2 hbar^2 E)); a repulsive point of strength alpha
    alpha = 0.7
    pot = _atomic({"shape": "point", "center": 0.3, "strength": -alpha})
    e = np.geomspace(1e-3, 50, 9)
    tr = transmission(pot, e)
    exact = 1 / (1 + alpha**2 / (2 * e))
    assert np.max(np.abs(tr.transmission / exact - 1)) < 1e-13
    pt = point_transmission([0.3], [-alpha], e)
    assert np.max(np.abs(pt.transmission / exact - 1)) < 1e-14


def test_step_with_mass_discontinuity():
    # BenDaniel-Duke flux continuity (Bastard, Phys. Rev. B 24, 5693 (1981)):
    # T = 4 (k1/m1)(k2/m2) / ((k1/m1) + (k2/m2))^2 for a step from (0, m1) to (V, m2)
    m1, m2, step = 0.067, 0.092, 180.0
    pot = case_from_dict({"units": "nm-meV", "layer": [{"band_edge": 0.0, "mass": m1},
                                                        {"band_edge": step, "mass": m2}]}).potential
    c = pot.hbar2_2me
    e = np.array([181.0, 200.0, 400.0, 1500.0])
    for incident in ("left", "right"):
        tr = transmission(pot, e, incident=incident)
        k1, k2 = np.sqrt(m1 * e / c), np.sqrt(m2 * (e - step) / c)
        exact = 4 * (k1 / m1) * (k2 / m2) / ((k1 / m1) + (k2 / m2)) ** 2
        assert np.max(np.abs(tr.transmission / exact - 1)) < 1e-13
    below = transmission(pot, [100.0])
    assert below.transmission[0] == 0.0 and below.reflection[0] == pytest.approx(1.0, abs=1e-14)


def test_time_reversal_and_flux_on_an_asymmetric_stack():
    # T(left -> right) = T(right -> left) for any real potential (reciprocity; common practice, no source)
    layers = [{"band_edge": 0.0, "mass": 0.067}, {"band_edge": 250.0, "thickness": 2.1, "mass": 0.09},
              {"band_edge": -40.0, "thickness": 4.3, "mass": 0.06}, {"band_edge": 310.0, "thickness": 3.7, "mass": 0.1},
              {"band_edge": 60.0, "thickness": 7.0, "mass": 0.07}, {"band_edge": 25.0, "mass": 0.08}]
    pot = case_from_dict({"units": "nm-meV", "layer": layers,
                          "potential": [{"shape": "point", "center": 9.0, "strength": -300.0}]}).potential
    e = np.linspace(26.0, 600.0, 157)
    a = transmission(pot, e, incident="left")
    b = transmission(pot, e, incident="right")
    assert np.max(np.abs(a.transmission - b.transmission)) < 1e-12
    assert np.max(a.unitarity_defect) < 1e-12 and np.max(b.unitarity_defect) < 1e-12


def _sech2_exact(v0, a, e):
    # Landau & Lifshitz, Quantum Mechanics, sec. 25 problem 4 (hbar = m = 1): U = U0 / cosh^2(x/a)
    k = np.sqrt(2 * e)
    s = 8 * v0 * a * a
    if s > 1:
        den = np.cosh(0.5 * np.pi * np.sqrt(s - 1)) ** 2
    else:
        den = np.cos(0.5 * np.pi * np.sqrt(1 - s)) ** 2
    return np.sinh(np.pi * k * a) ** 2 / (np.sinh(np.pi * k * a) ** 2 + den)


@pytest.mark.parametrize("v0", [0.8, -0.05, -1.1])
def test_sech2_barrier_and_well(v0):
    a = 1.2
    key = {"height": v0} if v0 > 0 else {"depth": -v0}
    pot = _atomic({"shape": "sech2", "center": 0.0, "width": a, **key})
    e = np.array([0.02, 0.3, 0.79, 1.5, 4.0])
    tr = transmission(pot, e, tol=1e-11)
    exact = _sech2_exact(v0, a, e)
    err = np.abs(tr.transmission - exact)
    assert np.max(err / exact) < 1e-10
    assert np.all(err <= tr.transmission_error)  # the Richardson estimate bounds the true error
    assert tr.levels > 1


def test_reflectionless_sech2_well():
    # Landau & Lifshitz sec. 25 problem 4: U = -(hbar^2 / 2 m a^2) lambda (lambda - 1) / cosh^2(x/a) reflects
    # nothing at any energy when lambda is an integer
    a, lam = 0.9, 4
    pot = _atomic({"shape": "sech2", "center": 0.0, "width": a, "depth": lam * (lam - 1) / (2 * a * a)})
    e = np.array([0.01, 0.2, 1.0, 3.0])
    tr = transmission(pot, e, tol=1e-11)
    assert np.max(tr.reflection) < 1e-10
    assert np.max(np.abs(tr.transmission - 1)) < 1e-10
    # a non-integer lambda does reflect: the check can fail
    pot2 = _atomic({"shape": "sech2", "center": 0.0, "width": a, "depth": 3.5 * 2.5 / (2 * a * a)})
    assert transmission(pot2, [0.01]).reflection[0] > 1e-3


def test_eckart_step_barrier():
    # Eckart, Phys. Rev. 35, 1303 (1930), in the form V = A / (1 + exp(-x/L)) + B / (4 cosh^2(x / 2L)),
    # hbar = m = 1: T = [cosh(2 pi L (k1 + k2)) - cosh(2 pi L (k1 - k2))] / [cosh(2 pi L (k1 + k2)) + cosh(2 pi d)],
    # k1 = sqrt(2E), k2 = sqrt(2(E - A)), d = sqrt(2 B L^2 - 1/4) (cos(2 pi sqrt(1/4 - 2 B L^2)) if negative)
    A, B, L = 0.6, 2.5, 0.7
    case = case_from_dict({"units": "atomic", "params": {"A": A, "B": B, "L": L},
                           "potential": [{"shape": "expression",
                                          "V": "A/(1 + exp(-x/L)) + B/(4*cosh(x/(2*L))**2)"}]})
    e = np.array([0.65, 0.9, 1.2, 2.0, 3.5])
    tr = transmission(case.potential, e, tol=1e-11)
    k1, k2 = np.sqrt(2 * e), np.sqrt(2 * (e - A))
    d = math.sqrt(2 * B * L * L - 0.25)
    exact = (np.cosh(2 * np.pi * L * (k1 + k2)) - np.cosh(2 * np.pi * L * (k1 - k2))) / (
        np.cosh(2 * np.pi * L * (k1 + k2)) + np.cosh(2 * np.pi * d))
    assert np.max(np.abs(tr.transmission / exact - 1)) < 1e-9
    assert np.all(np.abs(tr.transmission - exact) <= tr.transmission_error)
