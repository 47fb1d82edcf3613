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


# ------------------------------------------------------------- extrapolated overlaps
def refined_overlaps(potential_a, sol_a, potential_b, sol_b, levels: int = 3):
    """|<a_i|b_j>|^2 of two solves, Richardson-extrapolated over their nested grids, and an error estimate.

    Each solve's finest grid is nested (every second node is the previous level), so the states of
    both are re-solved on x[::2^k] of their own finest grid (:func:`fdsolver.optics.refine.grid_states`)
    and the overlaps of each level are fed to a Romberg table in h^2 (the product rule on the union of the
    two node sets is exact; the error is that of the states themselves, O(h^2)).  Returns (overlap,
    error); with fewer than two usable levels (a sub-grid missing an interface) the finest grids' overlap
    and NaN errors.
    """
    from fdsolver.numerics.richardson import Romberg
    from fdsolver.optics.refine import _usable_levels, grid_states

    fine = overlap_squared(sol_a.x, sol_a.psi, sol_b.x, sol_b.psi)
    na, nb = sol_a.energy.size, sol_b.energy.size
    if na == 0 or nb == 0 or hasattr(sol_a, "state_mass") or hasattr(sol_b, "state_mass"):
        return fine, np.full_like(fine, np.nan)  # energy-dependent masses: one grid only
    usable = min(_usable_levels(potential_a, np.asarray(sol_a.x), levels),
                 _usable_levels(potential_b, np.asarray(sol_b.x), levels))
    if usable < 2:
        return fine, np.full_like(fine, np.nan)
    ia, ib = np.asarray(sol_a.nodes, dtype=int), np.asarray(sol_b.nodes, dtype=int)
    table = Romberg()
    for k in reversed(range(usable)):
        xa, xb = np.asarray(sol_a.x)[:: 2**k], np.asarray(sol_b.x)[:: 2**k]
        ea, pa, _, _ = grid_states(potential_a, xa, int(ia.max()) + 1)
        eb, pb, _, _ = grid_states(potential_b, xb, int(ib.max()) + 1)
        if ea.size <= ia.max() or eb.size <= ib.max():
            return fine, np.full_like(fine, np.nan)
        table.add(overlap_squared(xa, pa[ia], xb, pb[ib]).ravel())
    value = table.value().reshape(na, nb)
    clipped = np.clip(value, 0.0, 1.0)  # |<a|b>|^2 lies in [0, 1]; extrapolation can step past by round-off
    return clipped, table.error().reshape(na, nb) + np.abs(value - clipped)


@dataclass(frozen=True)
class InterbandStudy:
    """Electrons, heavy holes and light holes of one stack: energies, e-h transitions, overlaps, band edges, envelopes.

    Energies in the case energy unit: confinement energies of each carrier measured from its band
    extremum; transition energies E = effective_gap + e_i + h_j; band edges on the materials' absolute
    scale.  Envelopes on ``x``, the union of the three solves' grids (each exactly as solved: linear between
    its own nodes, zero outside its box).
    """

    x: np.ndarray
    electron_state: np.ndarray
    heavy_hole_state: np.ndarray
    light_hole_state: np.ndarray
    electron_energy: np.ndarray
    electron_energy_error: np.ndarray
    heavy_hole_energy: np.ndarray
    heavy_hole_energy_error: np.ndarray
    light_hole_energy: np.ndarray
    light_hole_energy_error: np.ndarray
    heavy_hole_transition_energy: np.ndarray
    heavy_hole_transition_energy_error: np.ndarray
    heavy_hole_overlap: np.ndarray
    heavy_hole_overlap_error: np.ndarray
    light_hole_transition_energy: np.ndarray
    light_hole_transition_energy_error: np.ndarray
    light_hole_overlap: np.ndarray
    light_hole_overlap_error: np.ndarray
    conduction_band_edge: np.ndarray
    valence_band_edge: np.ndarray
    electron_psi: np.ndarray
    heavy_hole_psi: np.ndarray
    light_hole_psi: np.ndarray
    effective_gap: float
    electron_reference: float  # absolute energy of the lowest conduction-band edge
    hole_reference: float  # absolute energy of the highest valence-band edge
    notes: tuple[str, ...]


def interband_study(electron, heavy, light, gap: float, e_reference: float, h_reference: float, notes=()) -> InterbandStudy:
    """The :class:`InterbandStudy` of three solves given as (potential, solution) pairs.

    ``gap`` = E_c,min - E_v,max, ``e_reference`` = E_c,min and ``h_reference`` = E_v,max (absolute, energy unit).
    Band edges come from the electron and heavy-hole potentials (V_e = E_c - E_c,min, V_h = E_v,max - E_v).
    """
    (pe, se), (ph, sh), (pl, sl) = electron, heavy, light
    x = np.union1d(np.union1d(np.asarray(se.x), np.asarray(sh.x)), np.asarray(sl.x))

    def on_x(sol):
        if sol.energy.size == 0:
            return np.zeros((0, x.size))
        return np.array([np.interp(x, sol.x, p, left=0.0, right=0.0) for p in sol.psi])

    ohh, ohh_err = refined_overlaps(pe, se, ph, sh)
    olh, olh_err = refined_overlaps(pe, se, pl, sl)
    ee, eh, el = (np.asarray(s.energy, dtype=float) for s in (se, sh, sl))
    de, dh, dl = (np.asarray(s.energy_error, dtype=float) for s in (se, sh, sl))
    return InterbandStudy(
        x=x,
        electron_state=np.asarray(se.nodes, dtype=int), heavy_hole_state=np.asarray(sh.nodes, dtype=int),
        light_hole_state=np.asarray(sl.nodes, dtype=int),
        electron_energy=ee, electron_energy_error=de, heavy_hole_energy=eh, heavy_hole_energy_error=dh,
        light_hole_energy=el, light_hole_energy_error=dl,
        heavy_hole_transition_energy=gap + ee[:, None] + eh[None, :], heavy_hole_transition_energy_error=de[:, None] + dh[None, :],
        heavy_hole_overlap=ohh, heavy_hole_overlap_error=ohh_err,
        light_hole_transition_energy=gap + ee[:, None] + el[None, :], light_hole_transition_energy_error=de[:, None] + dl[None, :],
        light_hole_overlap=olh, light_hole_overlap_error=olh_err,
        conduction_band_edge=e_reference + pe.value(x), valence_band_edge=h_reference - ph.value(x),
        electron_psi=on_x(se), heavy_hole_psi=on_x(sh), light_hole_psi=on_x(sl),
        effective_gap=float(gap), electron_reference=float(e_reference), hole_reference=float(h_reference),
        notes=tuple(notes),
    )
