"""The delta comb (any number of points per period) and its zero-range check against finite wells and barriers.

Checks against the outside:

* Griffiths, Introduction to Quantum Mechanics (2nd ed.), sec. 5.3.2: the Dirac comb of period L/2
  folded into the zone of period L is the comb with two equal points per period L (its bands pair up,
  touching at the folded zone boundary).
* Deep attractive points far apart (tight binding): the N bands below zero shrink onto the bound states
  of the N-point cluster on the open line, computed by the independent analytic point model
  (:func:`fdsolver.zerorange.pointmodel.point_spectrum`, matching matrix of the point interactions).
* The first-order law of :mod:`fdsolver.zerorange.combcheck` (a narrow well of coupling g and mean
  distance l acts as a point of coupling g (1 - g l)) against the exact square-well comb written out
  here (Kronig-Penney-type transfer matrices, Kittel ch. 7), and against the deviations the check
  measures on a width ladder.
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from fdsolver.bloch.structure import BandSettings, band_structure
from fdsolver.errors import CaseError
from fdsolver.zerorange.comb import comb, comb_bands, comb_edges
from fdsolver.zerorange.combcheck import QUANTITIES, comb_check, finite_comb
from fdsolver.zerorange.pointmodel import point_spectrum


def griffiths_edges(beta, period, n_edges, m=1.0):
    """Edges of the Dirac comb cos(qL) = cos(kL) + (m beta/(hbar^2 k)) sin(kL) (Griffiths 5.3.2), mpmath, atomic units."""

    def d(e):
        k = mp.sqrt(2 * m * mp.mpc(e))
        return mp.re(mp.cos(k * period) + m * beta / k * mp.sin(k * period))

    e = np.linspace(-2.0 * beta**2 - 1.0, 60.0 / period**2 * (n_edges / 2 + 1) ** 2, 200_001)
    k = np.sqrt(2 * m * e + 0j)
    dd = np.real(np.cos(k * period) + m * beta / k * np.sin(k * period))
    out = []
    for t in (1.0, -1.0):
        i = np.flatnonzero(np.sign(dd[1:] - t) != np.sign(dd[:-1] - t))
        out += [float(mp.findroot(lambda x: d(x) - t, (mp.mpf(e[j]), mp.mpf(e[j + 1])), solver="anderson")) for j in i]
    return np.sort(out)[:n_edges]


def test_two_point_comb_folds_the_one_point_comb():
    """Two equal points per period L = the Griffiths comb of period L/2, folded: its edges and touching bands."""
    alpha, period = 1.3, 3.0
    two = comb_edges(comb([0.2, 0.2 + period / 2], [alpha, alpha], period), BandSettings(n_bands=6))
    ref = griffiths_edges(-alpha, period / 2, 6)  # three bands of the half period, six edges
    # band 2j and 2j+1 of period L make band j of period L/2: outer edges from Griffiths, the middle closed
    for j in range(3):
        assert two.band_bottom[2 * j] == pytest.approx(ref[2 * j], abs=1e-12)
        assert two.band_top[2 * j + 1] == pytest.approx(ref[2 * j + 1], abs=1e-12)
        assert two.gap_closed[2 * j]  # the folded zone boundary of the half-period comb is no gap
        assert two.band_top[2 * j] == pytest.approx(two.band_bottom[2 * j + 1], abs=1e-6)


def test_deep_points_shrink_onto_the_cluster_states():
    """Four deep attractive points per long period: four bands below zero, each around a bound state of the cluster."""
    xs, alphas, period = [0.0, 1.1, 2.6, 3.4], [3.0, 2.5, 3.5, 2.8], 9.4
    bands = comb_bands(comb(xs, alphas, period), BandSettings(n_bands=5, n_wavevectors=21))
    e = bands.edges
    spec = point_spectrum(np.array(xs), np.array(alphas), mass=1.0, hbar2_2me=0.5)
    assert spec.n_states == 4
    assert np.all(e.band_top[:4] < 0.0) and e.band_bottom[4] > 0.0  # none missed, none spurious
    # inter-cell coupling exp(-kappa (L - 3.4)) makes bands of width ~1e-8 .. 1e-6: each holds its cluster level
    # up to that coupling
    kappa = np.sqrt(-2.0 * spec.energy)
    reach = 10.0 * np.abs(spec.energy) * np.exp(-kappa * (period - 3.4))
    centre = 0.5 * (e.band_bottom[:4] + e.band_top[:4])
    assert np.all(np.abs(centre - spec.energy) <= reach)
    assert np.all(e.band_width[:4] > 0.0) and np.all(e.band_width[:4] <= 2 * reach)
    assert np.all(e.band_width_error[:4] <= 1e-3 * e.band_width[:4])  # resolved although 1e-8 .. 1e-6 wide


@pytest.mark.parametrize("xs,alphas", [([0.0, 0.9, 1.7], [1.5, -2.0, 0.8]), ([0.3], [-3.0])])
def test_closed_form_and_numerical_kernel_agree(xs, alphas):
    """Two independent implementations: the comb's numpy closed form and the period cells' numba kernel."""
    c = comb(xs, alphas, 2.4)
    s = BandSettings(n_bands=7, n_wavevectors=33)
    a, b = comb_bands(c, s), band_structure(c.as_lattice(), s)
    assert np.allclose(a.energy, b.energy, rtol=0, atol=1e-11)
    assert np.allclose(a.edges.effective_mass_bottom, b.edges.effective_mass_bottom, rtol=1e-9)
    e = np.linspace(-5.0, 40.0, 301)
    assert np.allclose(c.evaluate(e)[:, [0, 4]], c.cells().evaluate(e)[:, [0, 4]], rtol=1e-10, atol=1e-10)
    if max(alphas) < 0:  # a repulsive comb has no state below zero
        assert a.edges.band_bottom[0] > 0


# ------------------------------------------------------------------ the zero-range check
def square_comb_discriminant(alpha, w, period, energy):
    """Exact D(E) of square wells of depth alpha/w and width w every L (Kronig-Penney form, Kittel ch. 7), m = 1."""
    k, kw = mp.sqrt(2 * mp.mpc(energy)), mp.sqrt(2 * (mp.mpc(energy) + alpha / w))
    a = period - w
    return mp.re(mp.cos(kw * w) * mp.cos(k * a) - (k**2 + kw**2) / (2 * k * kw) * mp.sin(kw * w) * mp.sin(k * a))


def point_comb_discriminant(g, period, energy):
    k = mp.sqrt(2 * mp.mpc(energy))
    return mp.re(mp.cos(k * period) - g / k * mp.sin(k * period))


@pytest.mark.parametrize("alpha", [1.2, -1.2])
def test_first_order_law_g_eff(alpha):
    """A square of strength alpha and width w acts as a point of coupling g (1 - g w/3) up to O(w^2), at any energy."""
    mp.mp.dps = 40
    period = 2.0
    g = alpha  # m alpha / hbar^2 in atomic units with m = 1
    for energy in (-0.4, 0.7, 6.0):
        if alpha < 0 and energy < 0:
            continue
        res = []
        for w in (1e-3, 2e-3, 4e-3):
            exact = square_comb_discriminant(alpha, w, period, energy)
            plain = point_comb_discriminant(g, period, energy)
            eff = point_comb_discriminant(g * (1 - g * w / 3), period, energy)
            res.append((float(abs(exact - plain)), float(abs(exact - eff))))
        plain_err, eff_err = np.array(res).T
        assert np.all(plain_err > 10 * eff_err)  # the law removes the first-order deviation
        assert eff_err[2] / eff_err[0] == pytest.approx(16.0, rel=0.1)  # what is left is O(w^2)
        assert plain_err[2] / plain_err[0] == pytest.approx(4.0, rel=0.1)


@pytest.mark.parametrize("shape", ["square", "gaussian"])
def test_comb_check_law_and_validity(shape):
    """Deviations on the ladder are linear in the width with the predicted coefficients; validity ~ tol / a."""
    c = comb([0.0, 1.0], [2.0, -1.0], 2.5)
    r = comb_check(c, shape, tolerance=1e-2, n_bands=3)
    assert r.deviation.shape == (r.widths.size, len(QUANTITIES), 3)
    big = 0.1 * np.max(np.abs(r.predicted_coefficient[:3]))
    for qi, name in enumerate(QUANTITIES[:3]):
        for n in range(3):
            a, fit = r.predicted_coefficient[qi, n], r.law_coefficient[qi, n]
            if abs(a) < big:  # a small coefficient: the O(w^2) term may change the sign in the fitting window
                continue
            assert fit == pytest.approx(a, rel=0.03), (name, n)
            assert r.law_exponent[qi, n] == pytest.approx(1.0, abs=0.05), (name, n)
    worst = np.max(np.abs(r.predicted_coefficient[:3]), axis=0)
    assert np.all(r.validity_flag == 0)  # a crossing inside the ladder, refined
    assert np.allclose(r.validity_width, 1e-2 / worst, rtol=0.3)
    # a well binds less than its point (band 0 rises), a barrier repels more: both shift the edges up
    assert np.all(r.table("bottom")[:, 0] > 0)


def test_finite_comb_and_bad_input():
    c = comb([0.0, 1.0], [2.0, -1.0], 2.5)
    lat = finite_comb(c, "sech2", 0.05)
    assert len(lat.source.shapes) == 2
    with pytest.raises(CaseError):
        finite_comb(c, "triangle", 0.1)
    with pytest.raises(CaseError):
        comb([0.0, 2.5], [1.0, 1.0], 2.5)  # the same point modulo the period
    with pytest.raises(CaseError):
        comb([0.0], [1.0], -1.0)
    with pytest.raises(CaseError):
        comb_check(c, tolerance=2.0)
