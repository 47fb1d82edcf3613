"""Finite stacks of N periods against the bands of the infinite lattice.

Checks against the outside:

* Hard walls at the period ends: the levels are E_n(j pi / (N L)), j = 1 .. N-1, plus one Dirichlet
  level of a single period per gap.  This follows from Abeles' formula for the N-th power of a
  unimodular 2x2 matrix, M^N = U_{N-1}(D) M - U_{N-2}(D) I (Born and Wolf, Principles of Optics,
  sec. 1.6.5, from memory; Cayley-Hamilton), and is checked here against levels computed by the
  finite-difference bound-state solver, which knows nothing of Bloch's theorem.  The Dirichlet levels
  themselves are checked against the bound states of one period between hard walls (same solver).
* Open ends, deep wells (tight binding): N coupled levels E_0 + 2 t cos(j pi / (N + 1)), so the cluster
  width is the band width times cos(pi / (N + 1)) (common practice, no source), to the accuracy of
  nearest-neighbour tight binding.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fdsolver.bloch.finite import stack_bands
from fdsolver.bloch.lattice import lattice
from fdsolver.boundstates.driver import solve_potential
from fdsolver.boundstates.settings import SolveSettings
from fdsolver.input.case import case_from_dict


def square_lattice(start=None):
    """Invented superlattice: wells 4 nm wide, 200 meV deep, period 7 nm, m = 0.067."""
    case = case_from_dict({"units": "nm-meV", "mass": 0.067,
                           "potential": [{"shape": "square", "center": 0.0, "width": 4.0, "depth": 200.0}]})
    return lattice(case.potential, 7.0, start)


@pytest.mark.parametrize("start", [None, -2.0])
def test_hard_walls_give_the_bloch_levels(start):
    """Levels of N periods between walls = E_n(j pi/NL) and the Dirichlet levels (Abeles' formula)."""
    lat = square_lattice(start)
    sb = stack_bands(lat, (2, 3, 5), "hard", n_bands=3, tolerance=1e-10)
    ok = np.isfinite(sb.energy)
    diff = np.abs(sb.energy - sb.predicted_energy)[ok]
    assert np.all(diff <= sb.energy_error[ok] + 1e-9 * np.abs(sb.energy[ok]))
    assert np.all(diff <= 1e-8 * np.abs(sb.energy[ok]))
    # N - 1 levels at the Bloch wavevectors j pi/(NL) in every band, whatever the Dirichlet levels do
    for i, n in enumerate(sb.n_periods):
        q = sb.wavevector[i][sb.band[i] >= 0]
        for j in range(1, n):
            assert np.any(np.abs(q - j * math.pi / (n * lat.period)) < 1e-6 / lat.period)
    # the predicted cluster widths are the measured ones, and they grow towards the band widths
    assert np.allclose(sb.cluster_width, sb.predicted_width, rtol=1e-7, atol=1e-7)
    assert np.all(np.diff(sb.width_ratio, axis=0) > 0)
    assert np.all(sb.width_ratio <= 1.0 + 1e-9)


def test_dirichlet_levels_are_one_period_between_walls():
    """The gap levels mu_g are the bound states of a single period between hard walls (finite differences)."""
    lat = square_lattice()
    sb = stack_bands(lat, (1,), "hard", n_bands=3, tolerance=1e-10)
    mu, mu_err = sb.bands.model.dirichlet_levels()
    pot, dom = lat.finite(1, "hard")
    sol = solve_potential(pot, dom, SolveSettings(tolerance=1e-11, max_states=3))
    assert np.allclose(mu, sol.energy, rtol=1e-9)
    assert np.all(np.abs(mu - sol.energy) <= mu_err + sol.energy_error + 1e-12 * np.abs(mu))
    e = sb.bands.edges
    for g in range(1, 3):  # each lies in its closed gap [top_{g-1}, bottom_g]
        assert e.band_top[g - 1] - 1e-9 <= mu[g - 1] <= e.band_bottom[g] + 1e-9


def test_smooth_lattice_between_walls():
    """The cosine lattice (Richardson over cell levels) between walls: the same exact statement."""
    case = case_from_dict({"units": "atomic", "params": {"A": 4.0, "L": 2.0},
                           "potential": [{"shape": "expression", "V": "A*cos(2*pi*x/L)"}]})
    lat = lattice(case.potential, 2.0, 0.3)
    sb = stack_bands(lat, (2, 4), "hard", n_bands=3, tolerance=1e-10)
    ok = np.isfinite(sb.energy)
    assert np.allclose(sb.energy[ok], sb.predicted_energy[ok], rtol=1e-8, atol=1e-8)


def test_open_stacks_cluster_like_tight_binding():
    """Deep wells in barrier material: N levels per miniband, cluster width -> W cos(pi/(N+1)) (tight binding)."""
    case = case_from_dict({"units": "nm-meV", "mass": 0.067,
                           "potential": [{"shape": "square", "center": 0.0, "width": 6.0, "depth": 500.0}]})
    lat = lattice(case.potential, 11.0)  # invented: both minibands bound, barriers 5 nm
    sb = stack_bands(lat, (2, 3, 4, 6), "open", n_bands=2, tolerance=1e-10)
    for i, n in enumerate(sb.n_periods):
        assert sb.cluster_count[i, 0] == n and sb.cluster_count[i, 1] == n  # both minibands bound, N-fold
        # nearest-neighbour tight binding: the deeper band to 1e-3, the upper (less tightly bound) to 1e-2
        for k, tol in ((0, 1e-3), (1, 1e-2)):
            assert sb.width_ratio[i, k] == pytest.approx(math.cos(math.pi / (n + 1)), abs=tol)
    assert np.all(np.isnan(sb.predicted_width))
    assert len(sb.rows()) == sb.n_periods.size * 2
    # every level lies inside its miniband (the clusters do not leave the bands)
    assert np.all(sb.band[np.isfinite(sb.energy)] >= 0)
