"""Finite-difference assembly of H = -C d/dx (1/m) d/dx + V(x) - shift - sum alpha_p delta(x - x_p).

On nodes x_0 < ... < x_{n+1} the flux-conservative three-point scheme for an
unknown node i reads

    (K psi)_i = a_{i-1} (psi_i - psi_{i-1}) + a_i (psi_i - psi_{i+1}) + Vw_i psi_i
    a_j = C / (m_j h_j)        (cell j between x_j and x_{j+1}, mass at its midpoint)
    w_i = (h_{i-1} + h_i) / 2  (node weight)
    Vw_i = integral of (V - shift) over the dual cell [x_i - h_{i-1}/2, x_i + h_i/2] - alpha_i

and K psi = E W psi.  This is the piecewise-linear finite-element stiffness
with a lumped mass; interfaces of m and discontinuities of V on nodes are
treated exactly (BenDaniel-Duke matching: psi and psi'/m continuous), and a
point interaction on a node is the exact discrete jump condition.  The dual
cell integrals come from :meth:`fdsolver.model.potential.Potential.half_cell_integrals`
(exact for piecewise polynomials up to degree 5 between nodes, and for
tabulated profiles).  The eigenvalue error is O(h^2) and, on nested
refinements, expands in even powers of h.

``shift`` is subtracted from V *before* integration, so that energies are
measured from a reference (the continuum threshold): where V equals the
reference, V - shift is exactly zero and no rounding of the baseline enters
the spectrum.

Ends: the right end is a Dirichlet node (psi = 0).  The left end is Dirichlet
too, or, with ``left="neumann"``, an unknown with psi' = 0 and the half dual
cell [x_0, x_0 + h_0/2] (a point term on x_0 counts half): the even sector of
a mirror-symmetric problem on its right half, whose eigenvalues are exactly
the even eigenvalues of the full discrete problem.  ``a`` has one entry per
coupling, ``a[0]`` to the left end (0 for Neumann) and ``a[n]`` to the right.

The symmetric tridiagonal T = W^-1/2 K W^-1/2 (diagonal ``d``, off-diagonal
``e``) has the same eigenvalues; psi = W^-1/2 u for an eigenvector u of T.
Units: energies in the case energy unit, lengths in its length unit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.numerics.kernels import cell_piece_values, even_half, flux_operator

DIRICHLET, NEUMANN = "dirichlet", "neumann"


@dataclass(frozen=True)
class Operator:
    """Assembled operator on one grid.  Arrays over the unknown nodes unless noted."""

    nodes: np.ndarray  # all nodes including the ends (n + 2 Dirichlet, n + 1 with a Neumann left end)
    a: np.ndarray  # couplings C / (m h), n + 1 (a[0] = 0 for a Neumann left end)
    w: np.ndarray  # node weights, n
    vw: np.ndarray  # dual-cell integral of V - shift minus point strengths, n
    v: np.ndarray  # dual-cell average of V (unshifted), n (for plots and the archive)
    mass: np.ndarray  # cell masses, one per cell
    d: np.ndarray  # diagonal of T, n
    e: np.ndarray  # off-diagonal of T, n - 1
    shift: float = 0.0
    left: str = DIRICHLET

    @property
    def x(self) -> np.ndarray:
        """Positions of the unknowns."""
        return self.nodes[:-1] if self.left == NEUMANN else self.nodes[1:-1]

    @property
    def size(self) -> int:
        return self.w.size


#: a feature closer than this fraction of a cell's width to one of its ends counts as on that node
#: (:func:`cell_constants`): no half-cell midpoint of any refinement up to 2^20 sub-cells comes that close
ON_NODE_RTOL = 1e-9


def cell_constants(potential, nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """(V, m) on every cell of ``nodes`` where both are constant inside each cell, else None.

    That holds for a piecewise-constant potential (square wells, layer stacks, point terms) whose features
    are all nodes (the base grids, :func:`fdsolver.numerics.grid.base_grid`, make them so; one within
    :data:`ON_NODE_RTOL` of a cell's width from a node counts as on it): V and m are then read once at each
    cell's midpoint, and every nested refinement's sub-cells take their cell's values
    (:func:`assemble` with ``cells``), exactly the values an evaluation at the sub-cells' own points gives.
    Energy and mass units of the potential.
    """
    if not potential.piecewise_constant:
        return None
    nodes = np.ascontiguousarray(nodes, dtype=float)
    table = getattr(potential, "piece_table", None)
    if table is not None:  # the same test and numbers in one compiled call, read from the potential's tables
        ok, v, m = cell_piece_values(nodes, table[0], ON_NODE_RTOL, *table)  # table[0]: the features
        return (v, m) if ok else None
    feats = potential.features()
    i = np.searchsorted(nodes, feats, side="right") - 1  # the cell whose left node is at or below each feature
    inside = (i >= 0) & (i < nodes.size - 1)
    i, f = i[inside], feats[inside]
    if np.any(np.minimum(f - nodes[i], nodes[i + 1] - f) > ON_NODE_RTOL * (nodes[i + 1] - nodes[i])):
        return None
    mid = 0.5 * (nodes[:-1] + nodes[1:])
    return potential.value(mid), potential.mass_at(mid)


def assemble(potential, nodes: np.ndarray, shift: float = 0.0, left: str = DIRICHLET,
             cells: tuple[np.ndarray, np.ndarray] | None = None) -> Operator:
    """Assemble the operator of ``potential`` on ``nodes`` (see module docstring).

    ``cells``: (V, m) on every cell of ``nodes``, where both are constant inside each cell
    (:func:`cell_constants` of a grid these nodes refine); the half-cell integrals are then h/2 times V - shift,
    the same numbers :meth:`~fdsolver.model.potential.Potential.half_cell_integrals` gives for such a potential,
    without evaluating it again.
    """
    nodes = np.ascontiguousarray(nodes, dtype=float)
    if cells is None:
        mid = 0.5 * (nodes[:-1] + nodes[1:])
        mass = potential.mass_at(mid)
        il, ir = potential.half_cell_integrals(nodes, shift)
    else:
        v_cell, mass = cells
        il = ir = 0.5 * (nodes[1:] - nodes[:-1]) * (v_cell - shift if shift else v_cell)
    a, w, vw, v, d, e, ok = flux_operator(nodes, mass, il, ir, float(potential.hbar2_2me), float(shift), left == NEUMANN)
    if not ok:
        raise ValueError("grid nodes must be strictly increasing")
    x = nodes[:-1] if left == NEUMANN else nodes[1:-1]
    if not np.isfinite(vw).all():
        bad = x[~np.isfinite(vw)][0]
        raise CaseError(
            f"the potential is not finite near x = {bad:g}; check its expression or table, or set [domain] left/right",
            key="potential",
        )
    terms = potential.point_terms()
    if terms:
        pos, alpha = (np.array(t, dtype=float) for t in zip(*terms))
        inside = (pos >= x[0] - 1e-12 * abs(x[0])) & (pos <= x[-1] + 1e-12 * abs(x[-1]))
        pos, alpha = pos[inside], alpha[inside]
        i = np.clip(np.searchsorted(x, pos), 0, x.size - 1)
        i = np.where((i > 0) & (np.abs(x[np.maximum(i - 1, 0)] - pos) < np.abs(x[i] - pos)), i - 1, i)
        tol = 1e-9 * np.maximum(1.0, np.abs(pos)) + 1e-12 * (nodes[-1] - nodes[0])
        if np.any(np.abs(x[i] - pos) > tol):
            raise ValueError(f"point interaction at {pos[np.abs(x[i] - pos) > tol][0]} is not on a grid node")
        if left == NEUMANN:  # a point on the mirror centre acts half on each half line
            alpha = np.where(i == 0, 0.5 * alpha, alpha)
        np.subtract.at(vw, i, alpha)
        d[i] = (a[i] + a[i + 1] + vw[i]) / w[i]
    return Operator(nodes=nodes, a=a, w=w, vw=vw, v=v, mass=mass, d=d, e=e, shift=float(shift), left=left)


def mirror_halves(op: Operator, center_index: int, even: tuple | None = None) -> tuple[Operator, Operator]:
    """The even and odd sectors of a mirror-symmetric operator, from its assembly on the whole grid.

    ``center_index`` is the index of the mirror centre among ``op.nodes``.
    Even: the right half with the centre as a Neumann unknown (half its weight
    and half its dual-cell integral, point term included); odd: the right half
    with a Dirichlet centre.  Exactly what :func:`assemble` gives on the right
    half nodes, without evaluating the potential again.  ``even``: the even half's (a, w, vw, d, e), where a
    compiled assembly made them already (:func:`fdsolver.numerics.kernels.constant_sectors`).
    """
    c = center_index - 1  # the centre among the unknowns
    nodes = op.nodes[center_index:]
    mass = op.mass[center_index:]
    a_even, w_even, vw_even, d_even, e_even = even_half(op.a, op.w, op.vw, op.d, op.e, c) if even is None else even
    v_even = op.v[c:]
    even = Operator(nodes=nodes, a=a_even, w=w_even, vw=vw_even, v=v_even, mass=mass, d=d_even, e=e_even,
                    shift=op.shift, left=NEUMANN)
    odd = Operator(nodes=nodes, a=op.a[c + 1:], w=op.w[c + 1:], vw=op.vw[c + 1:], v=op.v[c + 1:], mass=mass,
                   d=op.d[c + 1:], e=op.e[c + 1:], shift=op.shift, left=DIRICHLET)
    return even, odd
