"""General facts about Bloch bands, checked on lattices with known properties.

* Bloch's theorem: psi(x + L) = exp(iqL) psi(x); the Bloch function solves the Schroedinger equation
  (here checked by finite differences inside a layer of constant V) and the free ones are plane waves
  exp(i k x) / sqrt(L) (common practice, no source).
* The density of states is the derivative of the number of states below E, and each band holds one
  state per period and spin: int_band g dE = 1/L (common practice, no source).
* A lattice does not depend on where its period window starts, nor on which side of the window a
  component straddling the boundary is written (wrapping), and a smooth component summed over its
  images equals the same sum written out as one profile (definition of the one-period potential).
* Thick barriers: the discriminant grows like exp(kappa b), yet the edges stay within their error
  bars (against the Kronig-Penney relation evaluated with mpmath at 60 digits; Kronig and Penney,
  Proc. R. Soc. A 130, 499 (1931)).
* Bad input: one clear error naming the key.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy.integrate import quad

from fdsolver.bloch.lattice import lattice, one_period
from fdsolver.bloch.structure import BandSettings, band_edges, band_structure
from fdsolver.errors import CaseError
from fdsolver.input.case import case_from_dict
from fdsolver.model import shapes as S
from fdsolver.model.potential import Potential
from fdsolver.model.stack import Layer, LayerStack
from fdsolver.model.units import UNIT_SYSTEMS

ATOMIC = UNIT_SYSTEMS["atomic"]


def kp_lattice(v0=5.0, a=1.5, b=0.5, start=None):
    pot = Potential((S.Square("barrier", 0.0, v0, b),), ATOMIC, 1.0, None)
    return lattice(pot, a + b, start)


def test_bloch_function_theorem_and_equation():
    bands = band_structure(kp_lattice(), BandSettings(n_bands=3, n_wavevectors=401))
    lat_start, period = -1.0, 2.0  # the window centres the barrier: [-1, 1)
    for n, q in ((0, 0.4), (1, 1.2), (2, 0.0)):
        bf = bands.bloch(n, q, points=2001)
        x = bf.x
        w = np.full(x.size, period / (x.size - 1))
        w[[0, -1]] *= 0.5
        assert np.sum(w * np.abs(bf.psi) ** 2) == pytest.approx(1.0, rel=1e-6)
        shifted = bands.bloch(n, q, x=x + period).psi
        assert np.allclose(shifted, np.exp(1j * q * period) * bf.psi, atol=1e-9)
        # inside the well (|x| > 0.25, V = 0): psi'' = -2 E psi (atomic units), central differences
        inside = np.flatnonzero((np.abs(x) > 0.3) & (np.abs(x) < 0.95))
        h = x[1] - x[0]
        lap = (bf.psi[inside + 1] - 2 * bf.psi[inside] + bf.psi[inside - 1]) / h**2
        assert np.allclose(lap, -2.0 * bf.energy * bf.psi[inside], atol=1e-4 * np.max(np.abs(bf.psi)) * abs(bf.energy) + 1e-5)
        assert bf.energy == pytest.approx(np.interp(q, bands.wavevector, bands.energy[:, n]), rel=1e-5)
    assert lat_start == pytest.approx(bands.model.source.start)


def test_free_bloch_functions_are_plane_waves():
    period = 3.0
    bands = band_structure(lattice(Potential((), ATOMIC, 1.0, None), period, 0.0), BandSettings(n_bands=2))
    q = 0.37
    bf = bands.bloch(0, q, points=301)
    plane = np.exp(1j * q * bf.x) / math.sqrt(period)
    phase = plane[0] / bf.psi[0]
    assert np.allclose(bf.psi * phase, plane, atol=1e-9)
    assert bf.energy == pytest.approx(0.5 * q * q, rel=1e-12)


def test_density_of_states_counts_one_state_per_period():
    bands = band_structure(kp_lattice(), BandSettings(n_bands=3, n_wavevectors=9))
    e = bands.edges
    for n in range(3):
        a, b = e.band_bottom[n], e.band_top[n]
        total, _ = quad(lambda x: bands.dos(np.array([x]))[0][0] * math.sqrt(max((x - a) * (b - x), 0.0)), a, b,
                        weight="alg", wvar=(-0.5, -0.5), limit=200)
        assert total == pytest.approx(1.0 / bands.period, rel=1e-7)
        mid = np.linspace(a, b, 7)[1:-1]
        h = 1e-6 * (b - a)
        deriv = (bands.states_below(mid + h) - bands.states_below(mid - h)) / (2 * h)
        g, g_err = bands.dos(mid)
        assert np.allclose(g, deriv, rtol=1e-6)
        assert np.all(g_err <= 1e-8 * g)
    gaps = 0.5 * (e.band_top[:-1] + e.band_bottom[1:])
    assert np.all(bands.dos(gaps)[0] == 0.0)
    assert np.allclose(bands.states_below(gaps), np.arange(1, 3) / bands.period)
    assert bands.density_of_states.shape == bands.dos_energy.shape


def test_window_start_and_wrapping_do_not_change_the_bands():
    ref = band_edges(kp_lattice(), BandSettings(n_bands=5))
    for start in (-0.9, 0.0, 0.77, 3.1):
        other = band_edges(kp_lattice(start=start), BandSettings(n_bands=5))
        assert np.allclose(other.band_bottom, ref.band_bottom, atol=1e-12)
        assert np.allclose(other.band_top, ref.band_top, atol=1e-12)
    # a barrier written across the boundary of the window [0, 2): the same lattice
    moved = Potential((S.Square("barrier", 1.9, 5.0, 0.5),), ATOMIC, 1.0, None)
    wrapped = band_edges(lattice(moved, 2.0, 0.0), BandSettings(n_bands=5))
    assert np.allclose(wrapped.band_bottom, ref.band_bottom, atol=1e-12)
    # a layer stack read from another start: the same layers, the same bands
    stack = LayerStack((Layer(None, math.inf, 5.0, 1.0), Layer(None, 1.5, 0.0, 1.0), Layer(None, 0.5, 5.0, 1.0),
                        Layer(None, math.inf, 5.0, 1.0)), origin=-0.3)
    pot = Potential((), ATOMIC, 1.0, stack)
    for start in (None, 0.4, -1.9):
        e = band_edges(lattice(pot, None, start), BandSettings(n_bands=5))
        assert np.allclose(e.band_bottom, ref.band_bottom, atol=1e-12)
        assert np.allclose(e.band_top, ref.band_top, atol=1e-12)


def test_images_of_a_smooth_component_are_summed():
    period, sigma, depth = 2.0, 0.45, 3.0
    gauss = Potential((S.Gaussian("g", 0.2, -depth, sigma),), ATOMIC, 1.0, None)
    images = " + ".join(f"exp(-(x - {0.2 + j * period})**2 / (2*{sigma}**2))" for j in range(-6, 7))
    case = case_from_dict({"units": "atomic", "potential": [{"shape": "expression", "V": f"-{depth}*({images})"}]})
    a = band_edges(lattice(gauss, period), BandSettings(n_bands=4, tolerance=1e-11))
    b = band_edges(lattice(case.potential, period, -0.8), BandSettings(n_bands=4, tolerance=1e-11))
    assert np.allclose(a.band_bottom, b.band_bottom, atol=1e-9)
    assert np.allclose(a.band_top, b.band_top, atol=1e-9)
    cell = one_period(gauss, period)
    x = np.linspace(-0.8, 1.2, 11)
    assert np.allclose(cell.value(x), case.potential.value(x), atol=1e-14)
    assert np.allclose(cell.value(x + 3 * period), cell.value(x), atol=1e-13)  # periodic everywhere


def test_thick_barriers_keep_honest_errors():
    """kappa b ~ 17: D ~ 1e7 across the barrier, edges still within their error bars (Kronig-Penney)."""
    mp.mp.dps = 60
    v0, a, b = 60.0, 1.0, 1.6
    e = band_edges(kp_lattice(v0, a, b, start=0.5 * b), BandSettings(n_bands=3))

    def d(energy):
        k, kap = mp.sqrt(2 * mp.mpf(energy)), mp.sqrt(2 * (v0 - mp.mpf(energy)))
        return mp.cos(k * a) * mp.cosh(kap * b) + (kap**2 - k**2) / (2 * k * kap) * mp.sin(k * a) * mp.sinh(kap * b)

    for n in range(3):
        s = 1 if n % 2 == 0 else -1
        for edge, err, target in ((e.band_bottom[n], e.band_bottom_error[n], s), (e.band_top[n], e.band_top_error[n], -s)):
            ref = float(mp.findroot(lambda x: d(x) - target, mp.mpf(edge)))
            assert abs(edge - ref) <= err
            assert err <= 1e-11 * v0
    assert np.all(e.band_width < 1e-2) and np.all(e.band_width > 1e-8)  # tight binding, resolved
    assert np.all(e.band_width_error < 1e-2 * e.band_width)


def test_bands_are_ordered_and_pinned_to_the_edges():
    bands = band_structure(kp_lattice(), BandSettings(n_bands=6, n_wavevectors=25))
    e = bands.edges
    for n in range(6):
        col = bands.energy[:, n]
        assert np.all(np.diff(col) > 0) if n % 2 == 0 else np.all(np.diff(col) < 0)
        assert {col[0], col[-1]} == {e.band_bottom[n], e.band_top[n]}  # edges exactly at q = 0 and pi/L
    assert np.all(e.band_bottom[1:] >= e.band_top[:-1])
    assert np.allclose(e.gap_above[:-1], e.band_bottom[1:] - e.band_top[:-1], atol=1e-13)
    assert np.all(e.effective_mass_bottom > 0) and np.all(e.effective_mass_top < 0)


@pytest.mark.parametrize("make,key", [
    (lambda: lattice(Potential((), ATOMIC, 1.0, None)), "domain.period"),
    (lambda: lattice(Potential((), ATOMIC, 1.0, None), -2.0), "domain.period"),
    (lambda: lattice(Potential((S.Harmonic(None, 0.0, 1.0, 0.5),), ATOMIC, 1.0, None), 2.0), "potential[1].shape"),
    (lambda: lattice(Potential((S.Square(None, 0.0, -1.0, 3.0),), ATOMIC, 1.0, None), 2.0), "potential[1].width"),
    (lambda: lattice(Potential((), ATOMIC, 1.0, LayerStack((Layer(None, math.inf, 1.0, 1.0), Layer(None, 2.0, 0.0, 1.0),
                                                              Layer(None, math.inf, 1.0, 1.0)))), 3.0), "layer"),
    (lambda: band_edges(kp_lattice(), BandSettings(n_bands=0)), "solve.n_bands"),
    (lambda: band_edges(kp_lattice(), BandSettings(tolerance=1.0)), "solve.tolerance"),
    (lambda: lattice(case_from_dict({"units": "atomic", "potential": [{"shape": "expression", "V": "cos(x)"}]}).potential,
                     2.0).finite(3, "open"), "potential[1].shape"),
    (lambda: kp_lattice().finite(3, "sideways"), "termination"),
])
def test_bad_input_names_the_key(make, key):
    with pytest.raises(CaseError) as err:
        make()
    assert err.value.key == key
    assert "\n" not in str(err.value)
