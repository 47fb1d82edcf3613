"""Finite-difference assembly of H = -C d/dx (1/m) d/dx + V(x) - sum alpha_p delta(x - x_p).

On nodes x_0 < ... < x_{n+1} with Dirichlet ends (psi_0 = psi_{n+1} = 0) the
flux-conservative three-point scheme for interior node i reads

    (K psi)_i = a_{i-1} (psi_i - psi_{i-1}) + a_i (psi_i - psi_{i+1}) + Vw_i psi_i
    a_j = C / (m_j h_j)        (cell j between x_j and x_{j+1}, mass at its midpoint)
    w_i = (h_{i-1} + h_i) / 2  (node weight)
    Vw_i = integral of V over the dual cell [x_i - h_{i-1}/2, x_i + h_i/2] - alpha_i

and K psi = E W psi.  This is the piecewise-linear finite-element stiffness
with a lumped mass; interfaces of m and discontinuities of V on nodes are
treated exactly (BenDaniel-Duke matching: psi and psi'/m continuous), and a
point interaction on a node is the exact discrete jump condition.  The dual
cell integral uses 3-point Gauss-Legendre on each half cell (exact for
piecewise polynomials up to degree 5 between nodes).  The eigenvalue error is
O(h^2) and, on nested refinements, expands in even powers of h.

The symmetric tridiagonal T = W^-1/2 K W^-1/2 (diagonal ``d``, off-diagonal
``e``) has the same eigenvalues; psi = W^-1/2 u for an eigenvector u of T.
Units: energies in the case energy unit, lengths in its length unit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.model.potential import Potential

_GL_X = np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)])
_GL_W = np.array([5.0, 8.0, 5.0]) / 9.0


@dataclass(frozen=True)
class Operator:
    """Assembled operator on one grid.  Arrays over interior nodes unless noted."""

    nodes: np.ndarray  # all nodes including the two Dirichlet ends (n + 2)
    a: np.ndarray  # cell coefficients C / (m h), n + 1
    w: np.ndarray  # node weights, n
    vw: np.ndarray  # dual-cell integral of V minus point strengths, n
    v: np.ndarray  # dual-cell average of V, n (for plots and the archive)
    mass: np.ndarray  # cell masses, n + 1
    d: np.ndarray  # diagonal of T, n
    e: np.ndarray  # off-diagonal of T, n - 1

    @property
    def x(self) -> np.ndarray:
        return self.nodes[1:-1]

    @property
    def size(self) -> int:
        return self.w.size


def _half_cell_integrals(potential: Potential, nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Integrals of V over the left and right half of every cell (Gauss-Legendre, 3 points each)."""
    left, right = nodes[:-1], nodes[1:]
    mid = 0.5 * (left + right)
    quarter = 0.25 * (right - left)
    out = []
    for centre in (0.5 * (left + mid), 0.5 * (mid + right)):
        pts = centre[:, None] + quarter[:, None] * _GL_X[None, :]
        vals = potential.value(pts.ravel()).reshape(pts.shape)
        out.append(quarter * (vals[:, 0] * _GL_W[0] + vals[:, 1] * _GL_W[1] + vals[:, 2] * _GL_W[2]))
    return out[0], out[1]


def assemble(potential: Potential, nodes: np.ndarray) -> Operator:
    """Assemble the operator of ``potential`` on ``nodes`` (Dirichlet at both ends)."""
    h = np.diff(nodes)
    if np.any(h <= 0):
        raise ValueError("grid nodes must be strictly increasing")
    mid = 0.5 * (nodes[:-1] + nodes[1:])
    mass = potential.mass_at(mid)
    a = potential.hbar2_2me / (mass * h)
    w = 0.5 * (h[:-1] + h[1:])
    il, ir = _half_cell_integrals(potential, nodes)
    vint = ir[:-1] + il[1:]
    if not np.all(np.isfinite(vint)):
        bad = nodes[1:-1][~np.isfinite(vint)][0]
        raise CaseError(
            f"the potential is not finite near x = {bad:g}; check its expression or table, or set [domain] left/right",
            key="potential",
        )
    v = vint / w
    vw = vint.copy()
    x = nodes[1:-1]
    for pos, alpha in potential.point_terms():
        i = int(np.argmin(np.abs(x - pos)))
        if abs(x[i] - pos) > 1e-9 * max(1.0, abs(pos)) + 1e-12 * (nodes[-1] - nodes[0]):
            raise ValueError(f"point interaction at {pos} is not on a grid node")
        vw[i] -= alpha
    d = (a[:-1] + a[1:] + vw) / w
    e = -a[1:-1] / np.sqrt(w[:-1] * w[1:])
    return Operator(nodes=nodes, a=a, w=w, vw=vw, v=v, mass=mass, d=d, e=e)
