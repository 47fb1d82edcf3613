"""Bloch bands against published dispersion relations, solved independently here.

Sources, one beside each check:

* Dirac comb: cos(qL) = cos(kL) + (m beta / (hbar^2 k)) sin(kL), beta the strength of repulsive
  spikes beta delta(x - jL), continued to E < 0 with k = i kappa (cosh, sinh): Griffiths,
  Introduction to Quantum Mechanics (2nd ed.), sec. 5.3.2 (section number from memory).
  fdsolver's point term is -alpha delta, so beta = -alpha.
* Kronig-Penney square barriers: cos(qL) = cos(ka) cosh(kappa b) + (kappa^2 - k^2)/(2 k kappa)
  sin(ka) sinh(kappa b) below the barrier, cos(ka) cos(k_b b) - (k^2 + k_b^2)/(2 k k_b) sin(ka)
  sin(k_b b) above it: Kronig and Penney, Proc. R. Soc. A 130, 499 (1931); Kittel, Introduction to
  Solid State Physics, ch. 7.
* A superlattice with different masses in well and barrier (BenDaniel-Duke matching), relation
  derived in :func:`bdd_discriminant`.
* The free particle: E = hbar^2 (q + G)^2 / 2m in the reduced zone; nearly free electrons: the first
  gap of V0 cos(2 pi x / L) is 2 |U_G| = V0 to first order (Kittel ch. 7).

References are solved with mpmath at 40 digits (roots by mpmath.findroot with brackets found on a
dense scan of the closed form in double precision), independent of fdsolver's transfer kernel.
Every error estimate must bound the true error.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from fdsolver.bloch.lattice import lattice
from fdsolver.bloch.structure import BandSettings, band_structure
from fdsolver.input.case import case_from_dict
from fdsolver.model import shapes as S
from fdsolver.model.potential import Potential
from fdsolver.model.stack import Layer, LayerStack
from fdsolver.model.units import UNIT_SYSTEMS
from fdsolver.zerorange.comb import comb, comb_bands

mp.mp.dps = 40
ATOMIC = UNIT_SYSTEMS["atomic"]
NM_MEV = UNIT_SYSTEMS["nm-meV"]


class Closed:
    """A closed-form discriminant D(E) written once over complex wave numbers (analytic continuation across
    E = 0 and the barrier top), evaluated with numpy (dense scans) or mpmath at 40 digits (roots)."""

    NP = (lambda x: np.sqrt(np.asarray(x) + 0j), np.cos, np.sin, np.cosh, np.sinh)
    MP = (lambda x: mp.sqrt(mp.mpc(x)), mp.cos, mp.sin, mp.cosh, mp.sinh)

    def __init__(self, formula):
        self.formula = formula

    def __call__(self, energy):
        return mp.re(self.formula(mp.mpf(energy), *self.MP))

    def scan(self, energies):
        with np.errstate(all="ignore"):
            return np.real(self.formula(np.asarray(energies, dtype=float), *self.NP))


def reference_edges(disc, e_lo, e_hi, n_edges, samples=400_001):
    """Energies where the closed-form D(E) = +-1: sign changes on a dense grid, refined with mpmath."""
    e = np.linspace(e_lo, e_hi, samples)
    d = disc.scan(e)
    out = []
    for target in (1.0, -1.0):
        f = d - target
        idx = np.flatnonzero(np.sign(f[1:]) != np.sign(f[:-1]))
        for i in idx:
            out.append(float(mp.findroot(lambda x: disc(x) - target, (mp.mpf(e[i]), mp.mpf(e[i + 1])), solver="anderson")))
    out = np.sort(np.array(out))
    assert out.size >= n_edges, "the reference scan found fewer edges than wanted"
    return out[:n_edges]


def root_in(disc, target, a, b):
    return float(mp.findroot(lambda x: disc(x) - target, (mp.mpf(a), mp.mpf(b)), solver="anderson"))


def assert_bounded(value, error, ref, what):
    """|value - ref| <= error, elementwise, with a message naming the worst entry."""
    value, error, ref = (np.asarray(a, dtype=float) for a in (value, error, ref))
    bad = np.abs(value - ref) > error
    assert not bad.any(), f"{what}: true errors {np.abs(value - ref)[bad]} exceed estimates {error[bad]}"


def check_structure(b, disc, scale):
    """Edges, E(q) and the error bars of a Bands result against the closed form ``disc``."""
    e = b.edges
    n = b.n_bands
    edges = np.sort(np.concatenate([e.band_bottom, e.band_top]))
    errs = np.concatenate([e.band_bottom_error, e.band_top_error])[np.argsort(np.concatenate([e.band_bottom, e.band_top]))]
    lo = e.band_bottom[0] - 0.05 * scale
    hi = 0.5 * (e.band_top[-1] + e.band_top[-1] + e.gap_above[-1])
    ref = reference_edges(disc, lo, hi, 2 * n)
    assert_bounded(edges, errs, ref, "band edges")
    assert np.all(errs <= 1e-11 * np.maximum(np.abs(ref), scale)), "edges should be exact to round-off"
    # E_n(q) at interior wavevectors, each root of the closed form inside its band
    for k in range(1, b.wavevector.size - 1, 7):
        c = math.cos(b.wavevector[k] * b.period)
        for m in range(n):
            r = root_in(disc, c, e.band_bottom[m], e.band_top[m])
            assert abs(b.energy[k, m] - r) <= b.energy_error[k, m], (k, m, b.energy[k, m] - r, b.energy_error[k, m])


# ------------------------------------------------------------------ Dirac comb
@pytest.mark.parametrize("alpha", [2.0, -2.0, 0.4])
def test_dirac_comb_griffiths(alpha):
    """Griffiths sec. 5.3.2: cos(qL) = cos(kL) + (m beta/(hbar^2 k)) sin(kL), beta = -alpha (atomic units, m = 1)."""
    period, m = 1.7, 1.0
    beta = -alpha

    def formula(energy, sqrt, cos, sin, cosh, sinh):
        k = sqrt(2 * m * energy)  # imaginary below zero energy: cos -> cosh, sin(kL)/k -> sinh(kappa L)/kappa
        return cos(k * period) + m * beta / k * sin(k * period)

    disc = Closed(formula)
    settings = BandSettings(n_bands=6, n_wavevectors=29)
    scale = 0.5 * (math.pi / period) ** 2
    analytic = comb_bands(comb([0.3], [alpha], period), settings)
    check_structure(analytic, disc, scale)
    pot = Potential((S.Point("p", 0.3, alpha),), ATOMIC, m, None)
    numeric = band_structure(lattice(pot, period), settings)
    check_structure(numeric, disc, scale)
    if alpha > 0:  # an attractive comb binds its lowest band below zero energy
        assert analytic.edges.band_bottom[0] < 0.0


# ------------------------------------------------------------------ Kronig-Penney
def kp_discriminant(v0, a, b, m=1.0):
    """Kronig-Penney (1931), Kittel ch. 7: well of width a (V = 0), barrier of width b (V = v0), atomic units.

    Above the barrier kap = i k_b turns cosh(kap b) into cos(k_b b) and (kap^2 - k^2)/(2 k kap) sinh(kap b)
    into -(k^2 + k_b^2)/(2 k k_b) sin(k_b b): the form quoted above the barrier.
    """

    def formula(energy, sqrt, cos, sin, cosh, sinh):
        k, kap = sqrt(2 * m * energy), sqrt(2 * m * (v0 - energy))  # kap = i k_b above the barrier
        return cos(k * a) * cosh(kap * b) + (kap**2 - k**2) / (2 * k * kap) * sin(k * a) * sinh(kap * b)

    return Closed(formula)


@pytest.mark.parametrize("v0,a,b", [(5.0, 1.5, 0.5), (40.0, 1.0, 0.6), (2.0, 0.5, 1.5)])
def test_kronig_penney(v0, a, b):
    """Square barriers of height v0 and width b every a + b: exact dispersion, below and above the barriers."""
    pot = Potential((S.Square("barrier", 0.0, v0, b),), ATOMIC, 1.0, None)
    lat = lattice(pot, a + b, start=0.5 * b)  # the period is [b/2, b/2 + a + b): well first, as in the formula
    bands = band_structure(lat, BandSettings(n_bands=7, n_wavevectors=29))
    check_structure(bands, kp_discriminant(v0, a, b), 0.5 * (math.pi / (a + b)) ** 2)
    assert bands.edges.converged.all()
    assert "exact cells" in bands.edges.method


# ------------------------------------------------------------------ BenDaniel-Duke superlattice
def bdd_discriminant(v0, a, b, m_w, m_b, c):
    """Kronig-Penney with masses m_w (well, V = 0, width a) and m_b (barrier, V = v0, width b); C = hbar^2/2m_e.

    Derivation.  In each layer psi'' = -(m (E - V) / C) psi; the matching conditions of BenDaniel and
    Duke keep psi and psi'/m continuous, so the pair (psi, psi'/m) is carried across a layer of width d by
        well:    [[cos ka, (m_w/k) sin ka], [-(k/m_w) sin ka, cos ka]],     k = sqrt(m_w E / C),
        barrier: [[cosh kb, (m_b/kap) sinh kb], [(kap/m_b) sinh kb, cosh kb]], kap = sqrt(m_b (v0 - E) / C),
    both of determinant 1.  Half the trace of their product is
        D = cos(ka) cosh(kap b) + (xi - 1/xi)/2 sin(ka) sinh(kap b),   xi = (kap / m_b) / (k / m_w),
    and Bloch's theorem gives cos(qL) = D.  Above the barrier kap = i k_b, k_b = sqrt(m_b (E - v0) / C):
        D = cos(ka) cos(k_b b) - (zeta + 1/zeta)/2 sin(ka) sin(k_b b),  zeta = (k_b / m_b) / (k / m_w).
    With m_w = m_b this is the Kronig-Penney relation.  Written once with complex kap (analytic continuation).
    """

    def formula(energy, sqrt, cos, sin, cosh, sinh):
        k, kap = sqrt(m_w * energy / c), sqrt(m_b * (v0 - energy) / c)  # kap = i k_b above the barrier
        xi = (kap / m_b) / (k / m_w)
        return cos(k * a) * cosh(kap * b) + (xi - 1 / xi) / 2 * sin(k * a) * sinh(kap * b)

    return Closed(formula)


def test_superlattice_with_two_masses():
    """Invented GaAs/AlGaAs-like superlattice (nm, meV): well 6 nm (m 0.067), barrier 2.5 nm of 230 meV (m 0.092)."""
    a, b, v0, m_w, m_b = 6.0, 2.5, 230.0, 0.067, 0.092
    c = NM_MEV.hbar2_2me
    stack = LayerStack((Layer("clad", math.inf, v0, m_b), Layer("well", a, 0.0, m_w), Layer("barrier", b, v0, m_b),
                        Layer("clad", math.inf, v0, m_b)), origin=0.0)
    pot = Potential((), NM_MEV, m_w, stack)
    lat = lattice(pot)  # the period is the inner layers: 8.5 nm from the stack origin
    assert lat.period == pytest.approx(a + b)
    bands = band_structure(lat, BandSettings(n_bands=5, n_wavevectors=29))
    disc = bdd_discriminant(v0, a, b, m_w, m_b, c)
    check_structure(bands, disc, c * math.pi**2 / (m_w * (a + b) ** 2))
    # effective mass at the bottom of the lowest miniband: curvature of the closed-form E(q) at q -> 0
    e0 = mp.mpf(bands.edges.band_bottom[0])
    e0 = mp.findroot(lambda x: disc(x) - 1, e0)
    mstar = []
    for q in (mp.mpf("1e-5"), mp.mpf("2e-5")):
        eq = mp.findroot(lambda x: disc(x) - mp.cos(q * (a + b)), e0 + c * q**2 / m_w)
        mstar.append(c * q**2 / (eq - e0))  # hbar^2 q^2 / (2 m* m_e) = E - E0  ->  m*/m_e = C q^2 / (E - E0)
    m_ref = float(mstar[0] + (mstar[0] - mstar[1]) / 3)  # remove the O(q^2) term
    got, err = bands.edges.effective_mass_bottom[0], bands.edges.effective_mass_bottom_error[0]
    assert abs(got - m_ref) <= max(err, 1e-9 * m_ref), (got, m_ref, err)
    assert m_w < got < 5 * m_b  # a miniband is heavier than the well material
    assert bands.edges.effective_mass_top[0] < 0


# ------------------------------------------------------------------ free particle
def test_free_particle_limit():
    """V = 0 with a period: E_n(q) = C (q + G_n)^2 / m in the reduced zone (common practice, no source)."""
    period, m = 5.0, 0.067
    c = NM_MEV.hbar2_2me
    pot = Potential((), NM_MEV, m, None)
    bands = band_structure(lattice(pot, period, 0.0), BandSettings(n_bands=6, n_wavevectors=41))
    q = bands.wavevector
    for n in range(6):
        k = n * math.pi / period + q if n % 2 == 0 else (n + 1) * math.pi / period - q
        assert_bounded(bands.energy[:, n], bands.energy_error[:, n] + 1e-12 * c / m / period**2,
                       c * k**2 / m, f"band {n}")
    # every gap closed; masses at the band bottoms of even bands... the lowest is the particle's own
    assert np.all(bands.edges.gap_above <= bands.edges.gap_above_error + 1e-9)
    assert bands.edges.effective_mass_bottom[0] == pytest.approx(m, rel=1e-10)
    # 1D free density of states per length and spin: g = m / (2 pi C k), E = C k^2 / m (common practice)
    e = np.array([3.0, 40.0, 170.0])
    g, g_err = bands.dos(e)
    k = np.sqrt(m * e / c)
    assert_bounded(g, g_err + 1e-12 * g, m / (2 * math.pi * c * k), "free density of states")


@pytest.mark.parametrize("v0", [1e-3, 1e-2])
def test_nearly_free_gap(v0):
    """V0 cos(2 pi x / L): the lowest gap is 2 |U_G| = V0 to first order in V0 (Kittel ch. 7), atomic units."""
    period = 2.0
    e_l = 0.5 * (math.pi / period) ** 2
    case = case_from_dict({"units": "atomic", "params": {"V0": v0 * e_l, "L": period},
                           "potential": [{"shape": "expression", "V": "V0*cos(2*pi*x/L)"}]})
    e = band_structure(lattice(case.potential, period, 0.0), BandSettings(n_bands=3, n_wavevectors=5)).edges
    gap = e.gap_above[0] / e_l
    assert abs(gap - v0) <= 2.0 * v0**2  # first-order law, second-order remainder
    assert e.gap_above[1] / e_l < 0.2 * v0  # the next gap opens only at second order
