"""The first-order width correction and the zero-energy counts of fdsolver.zerorange.narrow, checked from outside.

References used here, none of them the module under test:

* Griffiths, Introduction to Quantum Mechanics (2nd ed.), sec. 2.6: the finite
  square well of half width a and depth V0 has even states with
  kappa a = z tan z, z^2 + (kappa a)^2 = z0^2, z0 = (a / hbar) sqrt(2 m V0)
  (section from memory), solved with scipy.optimize.brentq;
* the same matching conditions (psi and psi' continuous at every edge) applied
  to several square wells by exact transfer matrices, written out below;
* scipy.integrate.quad / dblquad for the mean distance of a profile;
* the zero-energy matching of a square-well pair, derived in the comments.

Units: atomic (hbar = m_e = 1, C = 1/2), mass 1, so the coupling of a well of
strength alpha is g = m alpha / hbar^2 = alpha.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from fdsolver.model import shapes as S
from fdsolver.zerorange.pointmodel import point_spectrum
from fdsolver.zerorange.narrow import critical_scale, first_order, mean_distance, scaled, zero_energy_count

C = 0.5  # hbar^2 / (2 m_e) in hartree bohr^2


def square_kappa_exact(g: float, w: float) -> float:
    """Even ground state of V = -(g/w) on |x| < w/2 (alpha = g, m = hbar = 1) from Griffiths sec. 2.6.

    z0^2 = a^2 * 2 m V0 / hbar^2 = (w/2)^2 * 2 g / w = g w / 2; kappa = z tan(z) / a, with z the root of
    z tan z = sqrt(z0^2 - z^2) in (0, z0) (z0 < pi/2 here).
    """
    a = 0.5 * w
    z0 = math.sqrt(g * w / 2.0)
    z = brentq(lambda z: z * math.tan(z) - math.sqrt(max(z0 * z0 - z * z, 0.0)), 1e-300, z0, xtol=1e-300, rtol=1e-15)
    return z * math.tan(z) / a


def transfer_kappas(wells, guesses):
    """Exact kappas of square wells [(centre, width, depth)] on the open line, one near each guess (m = 1, C = 1/2).

    psi = exp(kappa x) left of the first well; across a well of depth D,
    q = sqrt(2 (D - kappa^2 / 2)) and (psi, psi') rotate by cos/sin; between wells
    cosh/sinh with kappa.  Bound when psi' + kappa psi = 0 right of the last well
    (the growing part vanishes): the matching conditions of Griffiths sec. 2.6 at
    every edge.  Roots by brentq on a bracket scanned around each guess.
    """
    wells = sorted(wells)

    def mismatch(k):
        psi, dpsi = 1.0, k
        x = wells[0][0] - 0.5 * wells[0][1]
        for c, w, depth in wells:
            lo = c - 0.5 * w
            gap = lo - x
            ch, sh = math.cosh(k * gap), math.sinh(k * gap)
            psi, dpsi = psi * ch + dpsi * sh / k, psi * k * sh + dpsi * ch
            q = math.sqrt(2.0 * depth - k * k)
            cs, sn = math.cos(q * w), math.sin(q * w)
            psi, dpsi = psi * cs + dpsi * sn / q, -psi * q * sn + dpsi * cs
            s = math.hypot(psi, dpsi / k)
            psi, dpsi = psi / s, dpsi / s
            x = c + 0.5 * w
        return dpsi / k + psi

    out = []
    for k0 in guesses:
        grid = k0 * np.linspace(0.98, 1.0 + 1e-9, 4001)
        vals = [mismatch(k) for k in grid]
        i = next(i for i in range(len(grid) - 1) if vals[i] * vals[i + 1] < 0)
        out.append(brentq(mismatch, grid[i], grid[i + 1], xtol=1e-300, rtol=1e-15))
    return np.array(out)


# --------------------------------------------------------------- one well
@pytest.mark.parametrize("g", [0.5, 1.0, 3.0])
def test_single_square_well_first_order_law(g):
    """kappa ~ g (1 - g l) with l = w/3, against the exact square-well equation (Griffiths sec. 2.6)."""
    widths = np.array([1e-2, 3e-3, 1e-3, 3e-4]) / g
    ratio = np.array([(g - square_kappa_exact(g, w)) / (g * g * w) for w in widths])
    # the first-order coefficient l / w = 1/3, approached linearly in g w
    np.testing.assert_allclose(ratio, 1.0 / 3.0, rtol=3.0 * g * widths.max())
    assert abs(ratio[-1] - 1 / 3) < abs(ratio[0] - 1 / 3) / 10  # the remainder shrinks ~ w (second order in kappa)
    # the module's prediction for the same well: dkappa = -g^2 l, deviation of E = 2 g l
    for w in widths:
        well = S.FINITE_REPLACEMENTS["square"](None, 0.0, g, w)  # alpha = g in these units
        sp = point_spectrum([0.0], [g], mass=1.0, hbar2_2me=C)
        dk, dev = first_order(sp, [mean_distance(well)])
        exact = square_kappa_exact(g, w)
        assert dk[0] == pytest.approx(-g * g * w / 3.0, rel=1e-12)
        assert g + dk[0] - exact == pytest.approx(0.0, abs=2.0 * (g * w) ** 2 * g)  # error O(w^2)
        e_exact = exact**2 / (g * g)  # E_finite / E_point
        assert dev[0] == pytest.approx(1.0 - e_exact, rel=5.0 * g * w)


# ---------------------------------------------------------- mean distance
def _brute_mean_distance(shape, reach):
    """sum_ij p_i p_j |x_i - x_j| w_i w_j over composite 8-point Gauss-Legendre nodes (numpy.polynomial.legendre).

    A direct double sum of the definition, independent of the module's
    cumulative-profile method; panels split at the shape's features, so the
    only kink left is |x - x'| on diagonal panels (error ~ h^2, ~1e-6 here).
    """
    c = shape.center
    t, wt = np.polynomial.legendre.leggauss(8)
    pts = sorted({c - reach, *[f for f in shape.features() if abs(f - c) < reach], c + reach})
    xs, ws = [], []
    for a, b in zip(pts[:-1], pts[1:]):
        edges = np.linspace(a, b, int(max(8, 400 * (b - a) / (2 * reach))) + 1)
        for lo, hi in zip(edges[:-1], edges[1:]):
            xs.append(0.5 * (lo + hi) + 0.5 * (hi - lo) * t)
            ws.append(0.5 * (hi - lo) * wt)
    x, w = np.concatenate(xs), np.concatenate(ws)
    p = np.abs(shape.value(x)) * w
    p = p / p.sum()
    return float(p @ np.abs(x[:, None] - x[None, :]) @ p)


@pytest.mark.parametrize("kind,closed", [
    ("square", lambda w: w / 3.0),  # elementary: E|U - U'| = 1/3 for uniform U on [0, 1]
    ("gaussian", lambda s: 2.0 * s / math.sqrt(math.pi)),  # X - X' ~ N(0, 2 s^2), E|N(0, t^2)| = t sqrt(2/pi)
    ("sech2", lambda w: w),  # logistic law of scale w/2: mean difference 2 * (w/2) (derived in fdsolver.zerorange.narrow; from memory)
    ("smooth_square", None),
])
def test_mean_distance_against_double_quadrature(kind, closed):
    w = 0.7
    shape = S.FINITE_REPLACEMENTS[kind](None, 0.4, 2.0, w)
    ours = mean_distance(shape)
    reach = {"square": 0.5 * w, "gaussian": 12 * w, "sech2": 25 * w, "smooth_square": 0.5 * w + 4 * w}[kind]
    assert ours == pytest.approx(_brute_mean_distance(shape, reach), rel=2e-5)
    if closed is not None:
        assert ours == pytest.approx(closed(w), rel=1e-12)


# ----------------------------------------------------------- N wells
@pytest.mark.parametrize("alphas,positions", [
    ((1.0, 1.0), (-1.5, 1.5)),  # symmetric pair: even and odd states
    ((1.3, 0.8), (-1.0, 1.6)),  # unequal strengths, no mirror symmetry
    ((1.0, 1.2, 0.9), (-2.0, 0.0, 2.5)),  # three wells
])
def test_first_order_shift_of_n_wells_against_exact_square_wells(alphas, positions):
    """dkappa_n of the first-order matching matrix against exact square-well transfer matrices (matching as in Griffiths 2.6)."""
    sp = point_spectrum(positions, alphas, mass=1.0, hbar2_2me=C)
    rel = []
    for w in (2e-4, 1e-3):
        wells = [S.FINITE_REPLACEMENTS["square"](None, x, a, w) for x, a in zip(positions, alphas)]
        dk, dev = first_order(sp, [mean_distance(s) for s in wells])
        exact = transfer_kappas([(s.center, s.width, abs(s.amplitude)) for s in wells], sp.kappa)
        # first order: the relative error of the shift is O(g w) (measured ~0.8 g w)
        np.testing.assert_allclose(exact - sp.kappa, dk, rtol=2.0 * max(alphas) * w)
        np.testing.assert_allclose(1.0 - (exact / sp.kappa) ** 2, dev, rtol=2.0 * max(alphas) * w)
        rel.append(np.abs((exact - sp.kappa) / dk - 1.0))
    assert np.all((rel[1] / rel[0] > 3.0) & (rel[1] / rel[0] < 7.0))  # remainder linear in w: first order exact
    assert np.all(dk < 0)  # finite wells bind less (first order)


# ------------------------------------------------------ zero-energy counts
@pytest.mark.parametrize("z0", [0.5, 1.6, 3.3, 7.9])
def test_count_of_one_square_well(z0):
    """Bound states of one square well: ceil(z0 / (pi/2)) (Griffiths sec. 2.6)."""
    a = 0.8
    depth = (z0 / a) ** 2 / 2.0  # z0 = a sqrt(2 m V0) / hbar
    well = S.Square(None, 0.3, -depth, 2 * a)
    assert zero_energy_count([well], 1.0, C)[0] == math.ceil(z0 / (math.pi / 2))


def test_count_of_smooth_profiles_poeschl_teller():
    """-V0 sech^2(x/w) binds ceil(lambda) states, lambda (lambda + 1) = 2 m V0 w^2 / hbar^2 (Poeschl-Teller; from memory)."""
    for lam in (0.6, 1.4, 2.7):
        depth = lam * (lam + 1) / (2.0 * 0.9**2)
        assert zero_energy_count([S.Sech2(None, 0.0, -depth, 0.9)], 1.0, C)[0] == math.ceil(lam)


def test_critical_separation_of_a_square_pair_closed_form():
    """Odd state of two equal square wells binds at d_c = w + 2 cot(q w) / q, q = sqrt(2 m V0) / hbar.

    Derivation (E = 0 matching): the odd solution is psi = x between the wells,
    (x - a) -> cos/sin inside the well from a = d/2 - w/2, and is flat outside at
    threshold: psi'(a + w) = cos(q w) - q a sin(q w) = 0, so a = cot(q w) / q.
    For w -> 0 this gives 1/g + w/3 = 1/g + l, the point value 1/g (g = alpha) plus l.
    """
    g = 1.0
    for w in (0.3, 0.03, 3e-3):
        depth = g / w
        q = math.sqrt(2.0 * depth)
        exact = w + 2.0 / (q * math.tan(q * w))
        s = critical_scale(lambda f: scaled([S.Square(None, -1.5, -depth, w), S.Square(None, 1.5, -depth, w)], f, 0.0),
                           1, 1.0 / 3.0, 1.0, C)
        assert 3.0 * s == pytest.approx(exact, rel=1e-9)
    assert exact == pytest.approx(1.0 / g + w / 3.0, rel=2 * g * w)


def test_smooth_wells_count_like_points_when_narrow():
    """Narrow wells of any profile bind as many states as their point limit (count from pointmodel)."""
    from fdsolver.zerorange.pointmodel import zero_energy_solution

    for d, expect in ((1.2, 2), (0.8, 1)):  # the odd state of a g = 1 pair binds for d > 1/g = 1
        for kind in S.FINITE_REPLACEMENTS:
            wells = [S.FINITE_REPLACEMENTS[kind](None, x, 1.0, 1e-3) for x in (-d / 2, d / 2)]
            assert zero_energy_count(wells, 1.0, C)[0] == expect
        assert zero_energy_solution([-d / 2, d / 2], [1.0, 1.0], mass=1.0, hbar2_2me=C)[0] == expect
