"""Matrix elements between the states of one solve: position (length form) and flux (velocity form).

The states are the solver's: nodal values psi[state, node] on nodes x (both ends included, psi = 0
there), piecewise linear between nodes, normalised with the lumped node weights w
(sum_k w_k psi_k^2 = 1).  Lengths in the case length unit, psi in length^-1/2, masses in m_e.

Length form.  z_ij = <i|x|j> = sum_k w_k psi_i,k x_k psi_j,k (lumped quadrature, the solver's
inner product).  For i != j it does not depend on the origin (the states are orthogonal); the
diagonal is <x>_i.

Flux (velocity) form.  With the Hamiltonian H = -C d/dx (1/m(x)) d/dx + V (C = hbar^2/2m_e) the
velocity operator is v = (i/hbar)[H, x] = {p, 1/m}/(2 m_e) (a symmetrised product: p/m alone is
not Hermitian when m varies).  Between real states

    <i|v|j> = -(i hbar/2 m_e) W_ij,   W_ij = integral (psi_i psi_j' - psi_i' psi_j)/m dx,

and v_ij = i omega_ij z_ij gives the velocity-form dipole z_ij = C W_ij/(E_j - E_i).  On the
solver's grid (piecewise-linear psi, one mass per cell) the integral is exact cell by cell,

    W_ij = sum_cells (psi_i,a psi_j,b - psi_i,b psi_j,a)/m_cell,

and for eigenpairs of the same grid it equals the length form *exactly*: (E_i - E_j) z_ij =
psi_i^T [K, X] psi_j = -C W_ij for the stiffness K and X = diag(x).  With the solver's extrapolated
energies and the finest grid's psi the two differ by O(h^2), which measures the discretisation.

Energy-dependent masses (nonparabolicity): each state i has its own profile m_i(x) = m(x, E_i),
and the two-band (Kane) model's velocity matrix element pairs each derivative with its own state's
mass, W_ij = integral (psi_i psi_j'/m_j - psi_i' psi_j/m_i) dx (psi'/m is the continuous flux of
each state), evaluated exactly for piecewise-linear psi with cell-average psi.  The conduction
envelopes are then not orthogonal, and the length form becomes origin-dependent; use the flux form.
The two-band normalisation correction (the valence admixture, relative order (E - E_c)/E_g) is not
applied.

Accuracy: O(h^2) of the finest grid (second order in the largest cell size).
"""

from __future__ import annotations

import numpy as np


def _psi(psi) -> np.ndarray:
    p = np.asarray(psi, dtype=float)
    return p[None, :] if p.ndim == 1 else p


def dipole_matrix(x, weights, psi) -> np.ndarray:
    """z[i, j] = <i|x|j> (length unit), length form with the solver's lumped weights; diagonal <x>_i."""
    p = _psi(psi)
    xw = np.asarray(weights, dtype=float) * np.asarray(x, dtype=float)
    return (p * xw) @ p.T


def cell_masses(x, mass) -> np.ndarray:
    """Masses per cell, shape (cells,) or (state, cells), from node or cell values.

    ``mass`` may be one profile or one per state (first axis), given on the nodes (size of ``x``)
    or on the cells (one less).  Node values are read as the mass of the cell to their right: exact
    for piecewise-constant masses whose interfaces are nodes and whose interface nodes carry the
    right-hand layer's mass (fdsolver's layer stacks); otherwise first order in h.
    """
    m = np.asarray(mass, dtype=float)
    n = np.asarray(x).size
    if m.ndim == 0:
        return np.full(n - 1, float(m))
    if m.shape[-1] == n:
        m = m[..., :-1]
    elif m.shape[-1] != n - 1:
        raise ValueError(f"mass has {m.shape[-1]} values along x; expected {n} (nodes) or {n - 1} (cells)")
    if np.any(~(m > 0)):
        raise ValueError("masses must be positive")
    return m


def flux_matrix(x, psi, mass) -> np.ndarray:
    """W[i, j] = integral (psi_i psi_j' / m_j - psi_i' psi_j / m_i) dx (length^-1 per m_e), antisymmetric.

    One mass profile: W_ij = sum_cells (psi_i,a psi_j,b - psi_i,b psi_j,a)/m_cell (exact for the
    solver's piecewise-linear states).  One profile per state (shape (state, ...)): each state's
    derivative is divided by its own mass (two-band velocity operator, see the module doc).
    """
    p = _psi(psi)
    m = cell_masses(x, mass)
    a, b = p[:, :-1], p[:, 1:]
    if m.ndim == 1:
        inv = 1.0 / m
        return (a * inv) @ b.T - (b * inv) @ a.T
    if m.shape[0] != p.shape[0]:
        raise ValueError("a mass profile per state needs as many profiles as states")
    inv = 1.0 / m
    mean, diff = 0.5 * (a + b), b - a
    # sum_c mean_i,c diff_j,c / m_j,c  -  diff_i,c / m_i,c mean_j,c
    return mean @ (diff * inv).T - (diff * inv) @ mean.T


def velocity_dipole(flux, energy, hbar2_2me: float) -> np.ndarray:
    """z^v[i, j] = C W_ij / (E_j - E_i) (length unit); NaN on the diagonal and for degenerate pairs."""
    e = np.asarray(energy, dtype=float)
    de = e[None, :] - e[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        z = hbar2_2me * np.asarray(flux, dtype=float) / de
    z[de == 0] = np.nan
    return z


def inverse_mass_mean(x, psi, mass) -> np.ndarray:
    """<i|1/m|i> per state (1/m_e): trapezoid per cell with the cell masses (the lumped weights' rule)."""
    p = _psi(psi)
    m = cell_masses(x, mass)
    h = np.diff(np.asarray(x, dtype=float))
    return np.sum(0.5 * h * (p[:, :-1] ** 2 + p[:, 1:] ** 2) / m, axis=1)
