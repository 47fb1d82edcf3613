"""The cosine lattice V(x) = A cos(2 pi x / L) against Mathieu characteristic values and the deep-lattice law.

Mapping to Mathieu's equation (DLMF sec. 28.2, w'' + (a - 2 q cos 2z) w = 0).  With C = hbar^2 / 2 m_e
and a particle of mass m (m_e), the Schroedinger equation -(C/m) psi'' + A cos(2 pi x / L) psi = E psi
in the variable z = pi x / L (so 2 pi x / L = 2z and d^2/dx^2 = (pi/L)^2 d^2/dz^2) reads

    psi_zz + (E / E_R - (A / E_R) cos 2z) psi = 0,    E_R = (C / m) (pi / L)^2,

so a = E / E_R and q = A / (2 E_R).  (E_R is the recoil energy hbar^2 k^2 / 2m of a lattice of period
L = lambda / 2, k = pi / L.)  A period L in x is a period pi in z.  Solutions of period pi (Bloch
wavevector 0) have the characteristic values a_{2r}(q), b_{2r+2}(q); solutions of period 2 pi
(antiperiodic over L, wavevector pi / L) have a_{2r+1}(q), b_{2r+1}(q).  For q > 0 they are ordered
a_0 < b_1 < a_1 < b_2 < a_2 < ... (DLMF sec. 28.2(v)), and the bands are the intervals between
consecutive pairs: band n = [E_R a_n(q), E_R b_{n+1}(q)], the gaps [E_R b_n, E_R a_n].
Reference values from scipy.special.mathieu_a / mathieu_b.

Deep lattices.  For V = V0 sin^2(pi x / L) = V0/2 - (V0/2) cos(2 pi x / L) (depth V0, so A = -V0/2 and
q = V0 / (4 E_R); the sign of A only shifts the lattice by L/2) the lowest band width is asymptotically

    W ~ (16 / sqrt(pi)) E_R s^(3/4) exp(-2 sqrt(s)),   s = V0 / E_R

(Zwerger, J. Opt. B 5, S9 (2003)), the leading term of b_1(q) - a_0(q) ~ 32 sqrt(2/pi) q^(3/4) exp(-4 sqrt q)
(DLMF 28.8.2).  Its relative error is O(1/sqrt(s)): DLMF 28.8.2 continues with the factor
(1 - 7 / (32 sqrt q) + O(1/q)) for m = 0 (quoted from memory), i.e. 1 - 7 / (16 sqrt(s)).  The test
compares within that asymptotic accuracy.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import mathieu_a, mathieu_b

from fdsolver.bloch.lattice import lattice
from fdsolver.bloch.structure import BandSettings, band_edges, band_structure
from fdsolver.input.case import case_from_dict


def cosine_lattice(amplitude: float, period: float, units: str = "atomic", mass: float = 1.0):
    case = case_from_dict({"units": units, "mass": mass, "params": {"A": amplitude, "L": period},
                           "potential": [{"shape": "expression", "V": "A*cos(2*pi*x/L)"}]})
    return lattice(case.potential, period, 0.0), case.units.hbar2_2me * (math.pi / period) ** 2 / mass


@pytest.mark.parametrize("q_mathieu", [0.3, 2.0, 8.0])
def test_mathieu_band_edges(q_mathieu):
    """Band n = [E_R a_n(q), E_R b_{n+1}(q)] (DLMF sec. 28.2), atomic units, m = 1."""
    period = 2.0
    e_r = 0.5 * (math.pi / period) ** 2
    lat, _ = cosine_lattice(2.0 * q_mathieu * e_r, period)
    e = band_edges(lat, BandSettings(n_bands=6))
    bottom = np.array([mathieu_a(n, q_mathieu) for n in range(6)]) * e_r
    top = np.array([mathieu_b(n + 1, q_mathieu) for n in range(6)]) * e_r
    scipy_accuracy = 1e-10 * e_r  # mathieu_a/b agree to ~1e-13 here; allow for them
    assert np.all(np.abs(e.band_bottom - bottom) <= e.band_bottom_error + scipy_accuracy)
    assert np.all(np.abs(e.band_top - top) <= e.band_top_error + scipy_accuracy)
    assert np.all(e.band_bottom_error[:4] <= 1e-9 * np.maximum(np.abs(bottom[:4]), e_r))  # converged by Richardson
    assert "Richardson" in e.method


def test_mathieu_mapping_in_nm_mev_with_a_mass():
    """Same mapping with C = hbar^2/2m_e in meV nm^2 and m = 0.067: E_R = (C/m) (pi/L)^2 (DLMF sec. 28.2)."""
    period, mass = 12.0, 0.067
    lat, e_r = cosine_lattice(40.0, period, "nm-meV", mass)
    q = 40.0 / (2.0 * e_r)
    e = band_edges(lat, BandSettings(n_bands=3))
    ref = np.array([[mathieu_a(n, q), mathieu_b(n + 1, q)] for n in range(3)]) * e_r
    assert np.allclose(np.column_stack([e.band_bottom, e.band_top]), ref, rtol=1e-9, atol=1e-9 * e_r)
    # the band-edge masses are of the order of the particle mass and of opposite signs at bottom and top
    assert np.all(e.effective_mass_bottom > 0) and np.all(e.effective_mass_top < 0)


def test_dispersion_between_the_mathieu_edges():
    """E_n(q) runs monotonically from a_n to b_{n+1} across the zone (the discriminant is monotone in a band)."""
    period = 1.0
    lat, e_r = cosine_lattice(3.0, period)
    b = band_structure(lat, BandSettings(n_bands=4, n_wavevectors=31))
    q = 3.0 / (2.0 * e_r)
    for n in range(4):
        column = b.energy[:, n]
        steps = np.diff(column) if n % 2 == 0 else -np.diff(column)
        assert np.all(steps > 0)
        ends = sorted([column[0], column[-1]])
        assert ends == pytest.approx([mathieu_a(n, q) * e_r, mathieu_b(n + 1, q) * e_r], rel=1e-9)
    assert np.all(b.energy_error <= 1e-8 * np.maximum(np.abs(b.energy), e_r))


@pytest.mark.parametrize("s", [10.0, 20.0, 40.0, 80.0, 160.0])
def test_deep_lattice_width_law(s):
    """Lowest band width against Zwerger's W ~ (16/sqrt(pi)) E_R s^(3/4) exp(-2 sqrt s), within O(1/sqrt s)."""
    period = 1.0
    e_r = 0.5 * (math.pi / period) ** 2
    lat, _ = cosine_lattice(-0.5 * s * e_r, period)  # V0 sin^2 up to a constant: A = -V0/2
    e = band_edges(lat, BandSettings(n_bands=2))
    w, w_err = e.band_width[0], e.band_width_error[0]
    law = 16.0 / math.sqrt(math.pi) * e_r * s**0.75 * math.exp(-2.0 * math.sqrt(s))
    rel = w / law - 1.0
    assert w_err <= 0.1 * (0.6 / math.sqrt(s)) * w  # resolved far below the accuracy asked of the law
    assert abs(rel) <= 0.6 / math.sqrt(s)  # leading law: relative error O(1/sqrt s)
    # with the first correction of DLMF 28.8.2 (from memory) the remainder is O(1/s); at s = 160 the band
    # (2e-8 E_R wide, 1e-10 of the energy scale) is resolved only to about 1e-3 by double precision
    if w_err <= 0.1 * (0.6 / s) * w:
        assert abs(w / (law * (1.0 - 7.0 / (16.0 * math.sqrt(s)))) - 1.0) <= 0.6 / s
    else:
        assert s >= 160.0
