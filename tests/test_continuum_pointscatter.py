"""The zero-range model for scattering: closed forms, an independent pole condition solved with mpmath, agreement
with the general solver, and the first-order law of finite barriers of shrinking width.  Invented numbers."""

import mpmath as mp
import numpy as np

from fdsolver.continuum.resonances import find_resonances
from fdsolver.continuum.transmission import transmission
from fdsolver.input.case import case_from_dict
from fdsolver.zerorange.pointscatter import point_resonances, point_transmission


def test_single_point_griffiths():
    # Griffiths sec. 2.5.2 (hbar = m = 1): T = 1 / (1 + alpha^2 / (2 E)), R = 1 - T, for a well or a barrier
    e = np.geomspace(1e-4, 1e3, 15)
    for alpha in (0.8, -0.8):
        pt = point_transmission([1.7], [alpha], e)
        exact = 1 / (1 + alpha**2 / (2 * e))
        assert np.max(np.abs(pt.transmission / exact - 1)) < 1e-14
        assert np.max(np.abs(pt.transmission + pt.reflection - 1)) < 1e-14


def test_double_point_poles_against_the_symmetric_outgoing_condition():
    # derived here: psi = c1 exp(ik|x + d/2|) + c2 exp(ik|x - d/2|) with the jumps gives, for equal strengths and
    # g = alpha (hbar = m = 1), i k + g (1 +- exp(i k d)) = 0 (c2 = +-c1): the even and odd poles, E = k^2 / 2
    d, alpha = 2.0, -3.0
    res = point_resonances([-d / 2, d / 2], [alpha, alpha], (0.05, 12.0), max_width=12.0)
    assert len(res) >= 3 and res.count == len(res)
    mp.mp.dps = 30
    for e_r, g in zip(res.energy, res.width):
        k0 = mp.sqrt(2 * mp.mpc(e_r, -g / 2))
        best = None
        for sign in (1, -1):
            try:
                k = mp.findroot(lambda k: 1j * k + alpha * (1 + sign * mp.exp(1j * k * d)), k0)
            except ValueError:
                continue
            if best is None or abs(k - k0) < abs(best - k0):
                best = k
        e_ex = best**2 / 2
        assert abs(e_r - float(mp.re(e_ex))) < 1e-12 * e_r
        assert abs(g - float(-2 * mp.im(e_ex))) < 1e-11 * g


def test_point_model_matches_the_general_solver():
    pos, alpha = [-1.3, 0.2, 2.5], [-2.0, 1.1, -0.7]
    case = case_from_dict({"units": "atomic", "potential": [
        {"shape": "point", "center": p, "strength": a} for p, a in zip(pos, alpha)]})
    e = np.linspace(0.01, 8.0, 41)
    a = point_transmission(pos, alpha, e)
    b = transmission(case.potential, e)
    assert np.max(np.abs(a.transmission - b.transmission)) < 1e-13
    pr = point_resonances(pos, alpha, (0.05, 8.0))
    fr = find_resonances(case.potential, (0.05, 8.0))
    assert len(pr) == len(fr) > 0
    assert np.max(np.abs(pr.energy - fr.energy)) < 1e-11 and np.max(np.abs(pr.width - fr.width)) < 1e-10
    bound = point_resonances(pos, alpha, (-5.0, -1e-6))
    assert np.all(bound.bound) and len(bound) == 1  # one attractive point, one bound state


def test_finite_barriers_approach_the_point_model_at_first_order():
    # a square barrier of width w and height alpha / w has the strength of the point; its T(E) tends to the
    # point's with a deviation proportional to w (cosh(kappa w) = 1 + m alpha w / (2 C) + ...; common practice,
    # no source): halving w halves the deviation
    alpha = 1.5
    e = np.array([0.3, 1.0, 4.0])
    point = point_transmission([0.0], [-alpha], e).transmission
    devs = []
    for w in (0.02, 0.01, 0.005, 0.0025):
        case = case_from_dict({"units": "atomic", "potential": [
            {"shape": "square", "center": 0.0, "width": w, "height": alpha / w}]})
        devs.append(transmission(case.potential, e).transmission - point)
    devs = np.array(devs)
    ratios = devs[:-1] / devs[1:]
    assert np.all(np.abs(ratios[-1] - 2.0) < 0.02)
    assert np.all(np.abs(devs[-1]) < np.abs(devs[0]))
