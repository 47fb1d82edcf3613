"""Quasi-bound states in a uniform field on the open line, against outgoing-wave conditions written with Airy
functions and solved here with mpmath (independent of the code under test).  Invented parameters."""

import mpmath as mp
import numpy as np
import pytest

from fdsolver.continuum.quasibound import quasi_bound_states
from fdsolver.input.case import case_from_dict
from fdsolver.runs import solve_case


def _point_in_field(alpha, field):
    return case_from_dict({"units": "atomic", "potential": [{"shape": "point", "center": 0.0, "strength": alpha},
                                                            {"shape": "linear", "field": field}]}).potential


def _stark_pole(alpha, field, guess, digits=40):
    """Derived here: H = -(1/2) d2/dx2 - alpha delta(x) + F x (hbar = m = 1, F > 0).

    With beta = (2F)^(1/3) and z = beta (x - E/F), psi'' = z psi in z.  Right of the point V rises: psi = a Ai(z);
    left of it V falls to -infinity and the wave must leave: psi = b Ci(z), Ci = Bi + i Ai ~ exp(i(zeta + pi/4))
    (its phase grows away from the point).  Continuity at x = 0 and the jump psi'(0+) - psi'(0-) = -2 alpha psi(0)
    give beta (Ai' Ci - Ai Ci') = -2 alpha Ai Ci at z0 = -beta E / F, and with the Wronskian
    Ai Bi' - Ai' Bi = 1/pi this is Ai(z0) Ci(z0) = beta / (2 pi alpha).
    """
    mp.mp.dps = digits
    beta = mp.cbrt(2 * mp.mpf(field))

    def f(e):
        z0 = -beta * e / field
        return mp.airyai(z0) * (mp.airybi(z0) + 1j * mp.airyai(z0)) - beta / (2 * mp.pi * alpha)

    z0 = mp.mpc(guess.real, guess.imag)
    return mp.findroot(f, (z0, z0 + mp.mpf(10) ** -9))


@pytest.mark.parametrize("field", [0.3, 0.1, 0.04])
def test_point_interaction_stark_resonance(field):
    alpha = 1.0
    res = quasi_bound_states(_point_in_field(alpha, field), (-1.0, 0.0))
    i = int(np.argmin(np.abs(res.energy + 0.5)))
    p = _stark_pole(alpha, field, complex(res.energy[i], -res.width[i] / 2))
    e_ex, g_ex = float(mp.re(p)), float(-2 * mp.im(p))
    assert abs(res.energy[i] - e_ex) < 1e-12 and abs(res.energy[i] - e_ex) <= res.energy_error[i] + 1e-15
    assert abs(res.width[i] / g_ex - 1) < 1e-9
    assert abs(res.width[i] - g_ex) <= res.width_error[i] + 1e-12 * g_ex


def test_weak_field_width_follows_the_exponential_law():
    # E0 = -alpha^2 / 2, kappa = alpha; for F -> 0, Gamma -> 2 |E0| exp(-(4/3) kappa^3 / (2F)) (the tunnelling
    # exponent 2 int kappa dx through the triangular barrier; derived from the Airy condition above with the
    # leading asymptotic forms of Ai and Bi).  The ratio tends to 1 with corrections of order F.
    alpha = 1.0
    ratios = []
    for field in (0.004, 0.002, 0.001):
        res = quasi_bound_states(_point_in_field(alpha, field), (-0.6, -0.4))
        law = np.log10(2 * 0.5) - (4 / 3) / (2 * field) / np.log(10)
        ratios.append(10 ** (res.log10_width[0] - law))
    assert all(abs(r - 1) < 0.02 for r in ratios)
    assert abs(ratios[2] - 1) < abs(ratios[0] - 1)  # closer to the law as the field weakens


def _square_well_in_field_pole(depth, width, field, guess, digits=40):
    """Derived here: V = -depth for |x| < w/2, plus F x; hbar = m = 1.  Three regions, each Airy in its own z:
    z_j = beta (x + (V_j - E)/F), beta = (2F)^(1/3).  Right: A Ai(z3) (V rises); well: B Ai(z2) + C Bi(z2);
    left: D Ci(z1) (outgoing).  psi and psi' continuous at x = -+w/2: a 4x4 determinant that vanishes at the pole.
    """
    mp.mp.dps = digits
    beta = mp.cbrt(2 * mp.mpf(field))
    a, b = -mp.mpf(width) / 2, mp.mpf(width) / 2

    def z(x, v, e):
        return beta * (x + (v - e) / field)

    def ci(t):
        return mp.airybi(t) + 1j * mp.airyai(t)

    def cid(t):
        return mp.airybi(t, 1) + 1j * mp.airyai(t, 1)

    def f(e):
        za1, za2 = z(a, 0, e), z(a, -depth, e)
        zb2, zb3 = z(b, -depth, e), z(b, 0, e)
        mat = mp.matrix([[ci(za1), -mp.airyai(za2), -mp.airybi(za2), 0],
                         [cid(za1), -mp.airyai(za2, 1), -mp.airybi(za2, 1), 0],
                         [0, mp.airyai(zb2), mp.airybi(zb2), -mp.airyai(zb3)],
                         [0, mp.airyai(zb2, 1), mp.airybi(zb2, 1), -mp.airyai(zb3, 1)]])
        return mp.det(mat) / (abs(mp.airybi(za2)) * abs(mp.airybi(zb2)) + 1) * mp.exp(0)

    z0 = mp.mpc(guess.real, guess.imag)
    return mp.findroot(f, (z0, z0 + mp.mpf(10) ** -9))


def test_square_well_in_a_field():
    depth, width, field = 1.0, 4.0, 0.05
    pot = case_from_dict({"units": "atomic", "potential": [
        {"shape": "square", "center": 0.0, "width": width, "depth": depth},
        {"shape": "linear", "field": field}]}).potential
    res = quasi_bound_states(pot)
    levels = res.energy[res.energy < -0.05]
    assert len(levels) >= 2
    for e_r, g in zip(res.energy, res.width):
        if e_r > -0.05:
            continue
        p = _square_well_in_field_pole(depth, width, field, complex(e_r, -g / 2))
        assert abs(e_r - float(mp.re(p))) < 1e-11
        assert abs(g / float(-2 * mp.im(p)) - 1) < 1e-8


def test_zero_field_gives_bound_states_with_zero_width():
    # without a field the same call returns the square well's bound states (even-parity ground state:
    # k tan(k w/2) = kappa, Griffiths sec. 2.6), width exactly 0
    depth, width = 1.0, 4.0
    pot = case_from_dict({"units": "atomic", "potential": [
        {"shape": "square", "center": 0.0, "width": width, "depth": depth}]}).potential
    res = quasi_bound_states(pot)
    assert np.all(res.bound) and np.all(res.width == 0)
    mp.mp.dps = 30
    e0 = float(mp.findroot(lambda e: mp.sqrt(2 * (e + depth)) * mp.tan(mp.sqrt(2 * (e + depth)) * width / 2)
                           - mp.sqrt(-2 * e), -0.8))
    assert abs(res.energy[0] - e0) < 1e-12


#: an invented biased double barrier (nm, meV, 0.067 m_e): 2 nm barriers of 300 meV around a 5 nm well, the field
#: term V = -2 meV/nm x over the whole line (closed on the left, where V rises; open on the right)
BIASED = {"units": "nm-meV", "mass": 0.067,
          "layer": [{"band_edge": 0.0}, {"thickness": 2.0, "band_edge": 300.0}, {"thickness": 5.0, "band_edge": 0.0},
                    {"thickness": 2.0, "band_edge": 300.0}, {"band_edge": 0.0}],
          "potential": [{"shape": "linear", "field": -2.0}]}


def _biased_stack_mismatch(edges, bands, field, mass, c, digits=30):
    """Derived here: f(E) = A - i B of the last region, zero at a pole.  Region j has V = bands[j] + F x, so
    psi'' = (a x + b_j) psi with a = m F / C, b_j = m (bands[j] - E) / C; in z = beta (x + b_j / a), beta = a^(1/3)
    (the real cube root, negative here), psi = A Ai(z) + B Bi(z).  The first region decays as V rises to the left:
    (A, B) = (1, 0).  psi and psi' are continuous at every edge (one mass); with W(Ai, Bi) = 1/pi (DLMF 9.2.7) the
    next region's A = pi (psi Bi'(z) - psi' Bi(z) / beta), B = pi (psi' Ai(z) / beta - psi Ai'(z)).  The last region
    carries only the outgoing wave Bi + i Ai (its phase grows to the right, where z -> -inf): A = i B."""
    mp.mp.dps = digits
    a = mp.mpf(mass) * field / c
    beta = -mp.cbrt(-a) if a < 0 else mp.cbrt(a)

    def f(e):
        amp = (mp.mpc(1), mp.mpc(0))
        for j, x in enumerate(edges):
            z = beta * (x + mass * (bands[j] - e) / c / a)
            psi = amp[0] * mp.airyai(z) + amp[1] * mp.airybi(z)
            dpsi = beta * (amp[0] * mp.airyai(z, 1) + amp[1] * mp.airybi(z, 1))
            z = beta * (x + mass * (bands[j + 1] - e) / c / a)
            amp = (mp.pi * (psi * mp.airybi(z, 1) - dpsi * mp.airybi(z) / beta),
                   mp.pi * (dpsi * mp.airyai(z) / beta - psi * mp.airyai(z, 1)))
        return (amp[0] - 1j * amp[1]) / (abs(amp[0]) + abs(amp[1]))

    return f


def test_biased_double_barrier_levels_are_its_poles():
    """Every quasi-bound level the solve reports for a double barrier under bias (a field at both open ends: Ai
    on the closed side, the outgoing Bi + i Ai on the open side) is a zero of the outgoing-wave condition written
    with mpmath's Airy functions, to its error bar; the well's own level (localised between the barriers) is
    among them, and the contour counts are clean (with Airy values that jumped at the negative real axis they
    were not, and the solve found 2 of these 7 levels)."""
    case = case_from_dict(BIASED)
    pot = case.potential
    sol = solve_case(case)
    assert not any("not clean" in m for m in sol.messages), sol.messages
    f = _biased_stack_mismatch([0.0, 2.0, 7.0, 9.0], [0.0, 300.0, 0.0, 300.0, 0.0], -2.0, 0.067, pot.hbar2_2me)
    assert pot.value(np.array([1.0, 4.0, 8.0, 12.0])) == pytest.approx([298.0, -8.0, 284.0, -24.0], abs=1e-12)
    in_well = (sol.mean_x > 2.0) & (sol.mean_x < 7.0) & (sol.spread < 2.5)  # the well spans 2 to 7 nm
    assert in_well.sum() == 1
    for e_r, err, g, g_err in zip(sol.energy, sol.energy_error, sol.width, sol.width_error):
        p = mp.findroot(f, (mp.mpc(e_r, -g / 2), mp.mpc(e_r, -g / 2) + mp.mpf(10) ** -7))
        assert abs(e_r - float(mp.re(p))) <= err + 1e-12 * abs(e_r)
        assert abs(g - float(-2 * mp.im(p))) <= g_err + 1e-9 * g
