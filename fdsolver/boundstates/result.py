"""Per-state observables of a converged solve: normalised psi on all nodes, nodes, parity, <x>, spread,
probability inside each named region.  Lengths in the case length unit, psi in length^-1/2."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.boundstates.eigen import count_nodes


@dataclass(frozen=True)
class Solution:
    """Result of :func:`solve_potential`; arrays over ``state`` and over the nodes ``x``."""

    x: np.ndarray
    potential: np.ndarray
    mass: np.ndarray
    weights: np.ndarray
    energy: np.ndarray
    energy_error: np.ndarray
    converged: np.ndarray
    psi: np.ndarray
    nodes: np.ndarray
    parity: np.ndarray
    mean_x: np.ndarray
    spread: np.ndarray
    inside: np.ndarray
    region_names: tuple[str, ...]
    threshold: float
    box: tuple[float, float]
    boundary: str
    mirror_center: float | None
    level_energies: np.ndarray
    level_sizes: np.ndarray
    box_error: np.ndarray
    bound_count: int
    messages: tuple[str, ...]


def observables(setup, op, states, energy, err, conv, center, box, level_e, level_n, box_err, messages) -> Solution:
    """Assemble the :class:`Solution` from the finest level's operator and states."""

    pot = setup.potential
    x_all = op.nodes
    n = energy.size
    npts = x_all.size
    psi = np.zeros((n, npts))
    psi[:, 1:-1] = states.psi
    w_all = np.concatenate([[0.0], op.w, [0.0]])
    mean_x = np.array([np.sum(w_all * p**2 * x_all) for p in psi])
    spread = np.array([math.sqrt(max(0.0, np.sum(w_all * p**2 * (x_all - mx) ** 2))) for p, mx in zip(psi, mean_x)])
    nodes = np.array([count_nodes(p) for p in states.psi], dtype=int)
    parity = np.zeros(n, dtype=int)
    if center is not None and np.allclose(x_all + x_all[::-1], 2 * center, rtol=0, atol=1e-9 * (box[1] - box[0])):
        for k in range(n):
            overlap = np.sum(w_all * psi[k] * psi[k][::-1])
            parity[k] = 1 if overlap > 0 else -1
    regions = pot.regions()
    h = np.diff(x_all)
    lo_cell = np.concatenate([[x_all[0]], x_all[1:] - 0.5 * h])
    hi_cell = np.concatenate([x_all[:-1] + 0.5 * h, [x_all[-1]]])
    inside = np.zeros((n, len(regions)))
    for j, (_, rlo, rhi) in enumerate(regions):
        overlap = np.clip(np.minimum(hi_cell, rhi) - np.maximum(lo_cell, rlo), 0.0, None)
        inside[:, j] = np.sum(psi**2 * overlap, axis=1)
    v_nodes = pot.value(x_all)
    v_nodes[1:-1] = op.v
    m_nodes = pot.mass_at(x_all)
    nlev = len(level_e)
    le = np.full((nlev, n), np.nan)
    for i, row in enumerate(level_e):
        le[i, : min(n, row.size)] = row[:n]
    return Solution(
        x=x_all,
        potential=v_nodes,
        mass=m_nodes,
        weights=w_all,
        energy=energy,
        energy_error=err,
        converged=conv,
        psi=psi,
        nodes=nodes,
        parity=parity,
        mean_x=mean_x,
        spread=spread,
        inside=inside,
        region_names=tuple(r[0] for r in regions),
        threshold=setup.threshold,
        box=(float(box[0]), float(box[1])),
        boundary=setup.domain.boundary,
        mirror_center=center,
        level_energies=le,
        level_sizes=np.array(level_n, dtype=int),
        box_error=box_err,
        bound_count=int(states.count_below) if math.isfinite(setup.e_hi) else n,
        messages=tuple(messages),
    )
