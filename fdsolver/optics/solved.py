"""The intersubband quantities of a solve, each with an error estimate, ready for its archive.

:func:`transitions_of` picks the best estimate a solve allows:

* constant mass per state (the usual solve): :func:`~fdsolver.optics.refine.refined_intersubband`,
  Richardson-extrapolated over the solver's nested grids, with Romberg error estimates;
* where the nested sub-grids do not carry every interface (``levels == 1``), or for sweeps
  (``refine=False``, one grid, O(h^2)): the single-grid values in velocity (flux) form, with the
  difference between the length and velocity forms as the error estimate (both are O(h^2) apart
  from the exact value and agree exactly on one grid's own eigenpairs, so their difference measures
  the discretisation carried by the extrapolated energies);
* an energy-dependent (Kane) mass (:class:`~fdsolver.boundstates.nonparabolic.KaneSolution`): the
  flux form with each state's own mass on the common grid; the error estimate is a third of the
  change when the same states are sampled on every second node (the O(h^2) quadrature error by one
  Richardson step), or NaN where that sub-grid misses an interface.

:class:`WithOptics` hands a solve and its transitions to the archive builder
(:data:`fdsolver.io.specs.SOLVE` reads ``transitions`` from it).  Units: the case's.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from fdsolver.optics.intersubband import Transitions, intersubband, of_solution


@dataclass(frozen=True)
class WithOptics:
    """A solve result (read through as if it were the result) plus its :class:`Transitions` (or None)."""

    solution: Any
    transitions: Transitions | None
    #: absolute band energy of each state on the materials library's scale (case energy unit), for a stack of
    #: named materials: band_reference + energy for electrons, band_reference - energy in the hole picture
    band_energy: Any = None

    def __getattr__(self, name: str):
        if name.startswith("__"):
            raise AttributeError(name)
        return getattr(self.solution, name)


def _form_difference(tr: Transitions) -> Transitions:
    """Single-grid values with |length form - velocity form| as the error estimate of dipole and f."""
    z, zv = tr.dipole, tr.velocity_dipole
    de = tr.transition_energy
    c = tr.units.hbar2_2me
    f_len = tr.reference_mass * de * z * z / c
    with np.errstate(invalid="ignore"):
        dz = np.where(np.isfinite(zv), np.abs(np.abs(z) - np.abs(zv)), 0.0)
    df = np.abs(f_len - tr.oscillator_strength)
    np.fill_diagonal(dz, 0.0)
    np.fill_diagonal(df, 0.0)
    return replace(tr, dipole_error=dz, oscillator_strength_error=df)


def _kane(potential, sol, units) -> Transitions:
    x, m = sol.x, sol.state_mass
    tr = intersubband(x, sol.weights, sol.psi, m, sol.energy, units, energy_dependent_mass=True)
    tr = replace(tr, dipole=np.where(np.eye(tr.size, dtype=bool), tr.dipole, tr.velocity_dipole))
    from fdsolver.optics.refine import _usable_levels

    if _usable_levels(potential, x, 2) < 2 or sol.energy.size < 2:
        nan = np.full_like(tr.dipole, np.nan)
        return replace(tr, dipole_error=nan, oscillator_strength_error=nan.copy())
    xc = x[::2]
    h = np.diff(xc)
    wc = np.concatenate([[0.0], 0.5 * (h[:-1] + h[1:]), [0.0]])
    pc = sol.psi[:, ::2]
    pc = pc / np.sqrt(np.sum(wc * pc * pc, axis=1))[:, None]
    coarse = intersubband(xc, wc, pc, m[:, ::2], sol.energy, units, tr.reference_mass, energy_dependent_mass=True)
    dz = np.abs(np.abs(tr.velocity_dipole) - np.abs(coarse.velocity_dipole)) / 3.0
    df = np.abs(tr.oscillator_strength - coarse.oscillator_strength) / 3.0
    dz = np.where(np.isfinite(dz), dz, 0.0)
    np.fill_diagonal(dz, 0.0)
    np.fill_diagonal(df, 0.0)
    return replace(tr, dipole_error=dz, oscillator_strength_error=df)


def transitions_of(potential, sol, units, refine: bool = True) -> Transitions | None:
    """Transition energies, dipoles and oscillator strengths of every pair of states of ``sol``, with errors.

    ``potential`` is the case's (for the sub-grids); None for a solve with no state.
    """
    if sol.energy.size == 0:
        return None
    if hasattr(sol, "state_mass"):
        return _kane(potential, sol, units)
    if refine and sol.energy.size >= 2:
        from fdsolver.optics.refine import refined_intersubband

        tr = refined_intersubband(potential, sol, units)
        if tr.levels >= 2:
            return tr
    return _form_difference(of_solution(sol, units))


def transition_energy_error(sol) -> np.ndarray:
    """Error of E_j - E_i: the sum of the two energies' error bars."""
    e = np.asarray(sol.energy_error, dtype=float)
    out = e[:, None] + e[None, :]
    np.fill_diagonal(out, 0.0)
    return out
