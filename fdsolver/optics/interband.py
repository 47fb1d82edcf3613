"""Interband transitions e_i - h_j: overlap integrals and transition energies on (electron_state, hole_state).

Overlap.  |<e_i|h_j>|^2 of the envelope functions of two solves on different grids (electrons
and holes are solved separately, each on its own adaptive grid).  Both are piecewise linear on
their own nodes, so on the union of the two node sets both are exactly linear in every cell and
the product integrates exactly:

    integral_cell f g dx = h/6 (2 f_a g_a + f_a g_b + f_b g_a + 2 f_b g_b).

Each state is normalised with the same rule before the overlap is taken, so <e_i|e_i> = 1 exactly
and |<e_i|h_j>|^2 <= 1 (Cauchy-Schwarz); the result is second order in the coarser grid's spacing.
A state is zero outside its own box.  The hole picture mirrors energies, not wavefunctions, so the
hole envelopes are used as solved.

Transition energy.  E_ij = E_gap,eff + epsilon_e,i + epsilon_h,j, with the solver energies
(confinement energies, each measured from its band extremum, see
:mod:`fdsolver.model.materials.bands`) and E_gap,eff = E_c,min - E_v,max
(:func:`~fdsolver.model.materials.bands.effective_gap`); in a type-I well that is the well's gap.
Energies in the case energy unit.  Excitonic binding (a few meV in GaAs wells) and strain are not
included; the squared overlap is the envelope part of the interband strength (the Bloch part,
E_P and the polarisation factor of heavy and light holes, is not included).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def _on_union(x_a, psi_a, x_b, psi_b):
    xa, xb = np.asarray(x_a, dtype=float), np.asarray(x_b, dtype=float)
    u = np.union1d(xa, xb)
    pa = np.atleast_2d(np.asarray(psi_a, dtype=float))
    pb = np.atleast_2d(np.asarray(psi_b, dtype=float))
    fa = np.array([np.interp(u, xa, p, left=0.0, right=0.0) for p in pa])
    fb = np.array([np.interp(u, xb, p, left=0.0, right=0.0) for p in pb])
    return u, fa, fb


def _products(u, f, g) -> np.ndarray:
    """[i, j] = integral f_i g_j dx for piecewise-linear f, g on nodes u (exact)."""
    h6 = np.diff(u) / 6.0
    fa, fb, ga, gb = f[:, :-1], f[:, 1:], g[:, :-1], g[:, 1:]
    return (fa * h6) @ (2 * ga + gb).T + (fb * h6) @ (ga + 2 * gb).T


def _norms(u, f) -> np.ndarray:
    """sqrt(integral f_i^2 dx) for piecewise-linear f on nodes u (exact)."""
    a, b = f[:, :-1], f[:, 1:]
    return np.sqrt(np.sum(np.diff(u) / 3.0 * (a * a + a * b + b * b), axis=1))


def overlap_squared(x_a, psi_a, x_b, psi_b) -> np.ndarray:
    """|<a_i|b_j>|^2 for states psi_a (state, x_a) and psi_b (state, x_b), each renormalised exactly."""
    u, fa, fb = _on_union(x_a, psi_a, x_b, psi_b)
    s = _products(u, fa, fb) / np.outer(_norms(u, fa), _norms(u, fb))
    return s * s


@dataclass(frozen=True)
class InterbandTransitions:
    """e_i - h_j transitions on dims (electron_state, hole_state); energies in the case energy unit."""

    carrier: str  # the hole carrier: "heavy_hole" or "light_hole"
    transition_energy: np.ndarray
    overlap: np.ndarray  # |<e_i|h_j>|^2
    effective_gap: float
    electron_energy: np.ndarray  # confinement energies
    hole_energy: np.ndarray


def interband(electron, hole, gap: float, carrier: str = "heavy_hole") -> InterbandTransitions:
    """Transitions between the states of two solves (objects with ``x``, ``psi`` and ``energy``).

    ``electron.energy`` and ``hole.energy`` are solver energies in the two pictures (confinement
    energies measured from each band's extremum); ``gap`` = E_c,min - E_v,max in the same unit.
    """
    ee, eh = np.asarray(electron.energy, dtype=float), np.asarray(hole.energy, dtype=float)
    return InterbandTransitions(
        carrier=carrier,
        transition_energy=float(gap) + ee[:, None] + eh[None, :],
        overlap=overlap_squared(electron.x, electron.psi, hole.x, hole.psi),
        effective_gap=float(gap),
        electron_energy=ee,
        hole_energy=eh,
    )
