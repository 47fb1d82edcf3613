"""Bound states of a potential with error bars: box sizing, grid levels, Richardson.

:func:`solve_potential` takes a :class:`~fdsolver.potential.Potential`, a
:class:`Domain` and :class:`SolveSettings` and returns a :class:`Solution`:

1. the continuum threshold is the lower asymptote of V (``inf`` where V
   grows without bound at both ends or walls are hard);
2. a provisional solve on a coarse grid finds the states and their energy
   range; for open ends the box is then sized so that the WKB decay
   integral of the shallowest wanted state, from its outer turning point to
   the box end, exceeds S = ln(100 / tol) / 2 + 1 (truncation shift below
   about tol/100 of its energy); a box-independent count of the bound states
   (the zero-energy solution's nodes, :mod:`fdsolver.counting`) enlarges the
   box until no shallow state is missing;
3. nested grid levels are solved and extrapolated (:mod:`fdsolver.refine`)
   until every state's error estimate is below ``tolerance * |E|``, or the
   memory budget or level limit is reached (the states are then reported as
   not converged, with their estimate);
4. the box truncation is checked by solving once more in a box whose open
   ends are pushed out by half their decay length budget; the shift is
   added to the error estimate.

Energies in the case energy unit, lengths in its length unit, psi in
length^-1/2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from . import counting
from .eigen import GridStates, count_nodes, solve_window
from .errors import BudgetError, CaseError
from .grid import GridSettings, base_grid, refine
from .operator import Operator, assemble
from .potential import Potential
from .refine import Romberg

EPS = np.finfo(float).eps
BYTES_PER_NODE = 8 * 40  # measured upper bound of the working arrays per node (see DEVELOPERS.md)
BYTES_PER_NODE_STATE = 8 * 4


@dataclass(frozen=True)
class Domain:
    """``boundary`` is "open" (whole line, box sized automatically) or "hard" (walls at left/right)."""

    boundary: str = "open"
    left: float | None = None
    right: float | None = None


@dataclass(frozen=True)
class SolveSettings:
    """Accuracy and size controls.  ``tolerance`` is relative to |E|; ``memory_mb`` bounds the grid."""

    tolerance: float = 1e-8
    max_states: int = 10
    energy_window: tuple[float, float] | None = None
    memory_mb: float = 1500.0
    max_levels: int = 9
    min_levels: int = 3
    grid: GridSettings = field(default_factory=GridSettings)


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


# ---------------------------------------------------------------- thresholds
def continuum_threshold(potential: Potential, domain: Domain) -> float:
    """Lowest energy of the continuum: min of the asymptotes at open ends, inf for two hard walls."""
    if domain.boundary == "hard":
        return math.inf
    vals = []
    for side in (-1, 1):
        v = potential.asymptote(side)
        if v == -math.inf or math.isnan(v):
            where = "-infinity" if side < 0 else "+infinity"
            raise CaseError(
                f"the potential falls without bound toward {where}, so no state is bound on the open line; "
                'use boundary = "hard" with left and right walls',
                key="domain.boundary",
            )
        vals.append(v)
    return min(vals)


# ------------------------------------------------------------------- spacing
def _spacing_function(potential: Potential, e_lo: float, e_hi: float, gs: GridSettings):
    c = potential.hbar2_2me
    feats = potential.feature_scales()
    pts = potential.point_scales()

    # where V - E exceeds 25 times the energy range the states are negligible (decay 5x faster than
    # anywhere they live), so the wave number requirement is capped there
    r2_cap = 25.0 * potential.mass * abs(e_hi - e_lo) / c if math.isfinite(e_hi - e_lo) and e_hi != e_lo else np.inf
    m_max = max(float(np.max(potential.mass_at(np.array(potential.support())))), potential.mass)

    def spacing(x):
        x = np.asarray(x, dtype=float)
        with np.errstate(invalid="ignore", over="ignore"):
            v = potential.value(x)
            m = potential.mass_at(x)
            r2 = m * np.maximum(np.abs(v - e_lo), np.abs(v - e_hi)) / c
        r2 = np.minimum(np.where(np.isfinite(r2), r2, np.inf), r2_cap * m_max / potential.mass)
        h = gs.wave_fraction / np.sqrt(r2 + 1e-300)
        for p, s in feats:
            if math.isfinite(s):
                h = np.minimum(h, gs.feature_fraction * s + gs.growth * np.abs(x - p))
        for p, s in pts:
            h = np.minimum(h, 0.5 * gs.wave_fraction * s + gs.growth * np.abs(x - p))
        return h

    return spacing


def _length_scale(potential: Potential) -> float:
    lo, hi = potential.support()
    scales = [s for _, s in potential.feature_scales() if math.isfinite(s)]
    scales += [s for _, s in potential.point_scales()]
    return max([hi - lo] + scales + [1e-300])


def _decay_extent(potential: Potential, start: float, side: int, e_top: float, budget: float, scale: float) -> float:
    """Position beyond ``start`` (direction ``side``) where the WKB decay integral of energy e_top reaches ``budget``."""
    c = potential.hbar2_2me
    t = scale * 1e-3 * 1.02 ** np.arange(0, 2500)
    t = t[t < scale * 1e9]
    x = start + side * np.concatenate([[0.0], t])
    with np.errstate(over="ignore", invalid="ignore"):
        v = potential.value(x)
    v = np.where(np.isfinite(v), v, 1e300)
    kappa = np.sqrt(np.maximum(0.0, potential.mass_at(x) * (v - e_top) / c))
    allowed = np.flatnonzero(v <= e_top)
    i0 = int(allowed[-1]) if allowed.size else 0
    seg = kappa[i0:]
    integral = np.concatenate([[0.0], np.cumsum(0.5 * (seg[1:] + seg[:-1]) * np.abs(np.diff(x[i0:])))])
    hit = np.flatnonzero(integral >= budget)
    if hit.size == 0:
        return float(x[-1])
    return float(x[i0 + hit[0]])


# -------------------------------------------------------------------- levels
@dataclass
class _Setup:
    potential: Potential
    domain: Domain
    settings: SolveSettings
    threshold: float
    e_hi: float
    e_lo: float | None
    max_nodes: int


def _grid(setup: _Setup, box, e_lo, e_hi, gs: GridSettings, center):
    spacing = _spacing_function(setup.potential, e_lo, e_hi, gs)
    nodes = base_grid(spacing, setup.potential.features(), box[0], box[1], gs, center)
    if nodes.size > setup.max_nodes:
        raise BudgetError(
            f"the grid would need {nodes.size} nodes, more than the memory budget allows "
            f"({setup.max_nodes} at memory_mb = {setup.settings.memory_mb:g}); raise [solve] memory_mb or "
            "loosen the tolerance",
            key="solve.memory_mb",
        )
    return nodes


def _solve_nodes(setup: _Setup, nodes) -> tuple[Operator, GridStates]:
    op = assemble(setup.potential, nodes)
    states = solve_window(op, setup.e_hi, setup.settings.max_states, setup.e_lo)
    return op, states


def _center_for(setup: _Setup, box) -> float | None:
    x0 = setup.potential.mirror_center(box[0], box[1])
    if x0 is None:
        return None
    if abs((box[0] + box[1]) * 0.5 - x0) > 1e-12 * max(1.0, abs(box[1] - box[0])):
        return None
    return x0


def _open_box(setup: _Setup, e_top: float, budget: float, minimum) -> tuple[float, float]:
    pot, dom = setup.potential, setup.domain
    lo_s, hi_s = pot.support()
    scale = _length_scale(pot)
    lo = _decay_extent(pot, lo_s, -1, e_top, budget, scale)
    hi = _decay_extent(pot, hi_s, +1, e_top, budget, scale)
    lo = min(lo, minimum[0], lo_s - 0.5 * scale)
    hi = max(hi, minimum[1], hi_s + 0.5 * scale)
    if dom.left is not None:
        lo = min(lo, dom.left)
    if dom.right is not None:
        hi = max(hi, dom.right)
    # a symmetric potential gets a symmetric box so mirror nodes exist
    x0 = pot.mirror_center(lo_s - scale, hi_s + scale)
    if x0 is not None:
        half = max(x0 - lo, hi - x0)
        lo, hi = x0 - half, x0 + half
    return (lo, hi)


def solve_potential(potential: Potential, domain: Domain, settings: SolveSettings) -> Solution:
    """Bound states of ``potential`` in ``domain`` to ``settings.tolerance`` (see module docstring)."""
    tol = settings.tolerance
    threshold = continuum_threshold(potential, domain)
    e_hi = threshold
    e_lo = None
    if settings.energy_window is not None:
        e_lo = settings.energy_window[0]
        e_hi = min(e_hi, settings.energy_window[1])
    max_nodes = int(settings.memory_mb * 2**20 / (BYTES_PER_NODE + BYTES_PER_NODE_STATE * settings.max_states))
    setup = _Setup(potential, domain, settings, threshold, e_hi, e_lo, max_nodes)
    messages: list[str] = []
    hard = domain.boundary == "hard"
    budget = 0.5 * math.log(100.0 / tol) + 1.0
    scale = _length_scale(potential)
    lo_s, hi_s = potential.support()
    coarse = replace(settings.grid, wave_fraction=2.0 * settings.grid.wave_fraction)

    # ---- provisional box and energies
    if hard:
        box = (float(domain.left), float(domain.right))
    else:
        pad = 10.0 * scale
        box = [lo_s - pad, hi_s + pad]
        for i, side in enumerate((-1, 1)):
            if not math.isfinite(potential.asymptote(side)):
                # an unbounded side ends where states below the guess have decayed
                edge = (lo_s, hi_s)[i]
                far = potential.value(np.array([edge + side * pad]))[0]
                guess = threshold if math.isfinite(threshold) else 0.5 * (far + potential.value(np.array([edge]))[0])
                box[i] = _decay_extent(potential, edge, side, guess, budget, scale)
        box = (min(box[0], lo_s - 0.5 * scale), max(box[1], hi_s + 0.5 * scale))
        if domain.left is not None:
            box = (min(box[0], domain.left), box[1])
        if domain.right is not None:
            box = (box[0], max(box[1], domain.right))
    vs = potential.value(np.linspace(box[0], box[1], 4001)[1:-1])
    vmin = float(np.min(vs))
    point_depth = [potential.mass * a**2 / (4.0 * potential.hbar2_2me) for _, a in potential.point_terms() if a > 0]
    e_lo_grid = vmin - (sum(point_depth) * len(point_depth) if point_depth else 0.0)
    e_hi_grid = threshold if math.isfinite(threshold) else float(np.max(vs[[0, -1]]))
    center = _center_for(setup, box)
    nodes = _grid(setup, box, e_lo_grid, e_hi_grid, coarse, center)
    op, prov = _solve_nodes(setup, nodes)

    # ---- size the box for open ends, never missing a shallow state
    if not hard:
        expected = None
        for _attempt in range(40):
            if prov.energy.size:
                e_top = float(prov.energy[-1])
            else:
                e_top = threshold - (potential.hbar2_2me / potential.mass) / (box[1] - box[0]) ** 2
            new_box = _open_box(setup, min(e_top, threshold), budget, box)
            grown = new_box[0] < box[0] - 1e-12 * scale or new_box[1] > box[1] + 1e-12 * scale
            box = new_box
            center = _center_for(setup, box)
            nodes = _grid(setup, box, e_lo_grid, e_hi_grid, coarse, center)
            op, prov = _solve_nodes(setup, nodes)
            if math.isfinite(threshold):
                expected = counting.bound_state_count(op, potential, threshold)
                if prov.count_below < expected and (box[1] - box[0]) < 1e12 * scale:
                    # a very shallow state: its decay length exceeds the box; grow the box fourfold
                    mid, half = 0.5 * (box[0] + box[1]), 2.0 * (box[1] - box[0])
                    box = (mid - half, mid + half)
                    center = _center_for(setup, box)
                    nodes = _grid(setup, box, e_lo_grid, e_hi_grid, coarse, center)
                    op, prov = _solve_nodes(setup, nodes)
                    continue
            if not grown:
                break
        if expected is not None and prov.count_below < expected:
            messages.append(
                f"{expected - prov.count_below} state(s) bound too weakly to fit in a box of "
                f"{box[1] - box[0]:.3g} {potential.units.length} were not resolved"
            )

    # ---- final spacing from the actual energy range
    if prov.energy.size:
        e_lo_grid = float(prov.energy[0]) - 0.05 * abs(float(prov.energy[0]) - vmin)
        e_hi_grid = threshold if math.isfinite(threshold) else float(prov.energy[-1])
    base = _grid(setup, box, e_lo_grid, e_hi_grid, settings.grid, center)

    table = Romberg()
    level_e: list[np.ndarray] = []
    level_n: list[int] = []
    op = states = None
    n_expected = None
    conv = np.zeros(0, dtype=bool)
    for level in range(settings.max_levels):
        nodes = refine(base, level)
        if nodes.size > max_nodes:
            messages.append(
                f"refinement stopped at {level_n[-1] if level_n else 0} nodes: the next level "
                f"({nodes.size} nodes) exceeds the memory budget (memory_mb = {settings.memory_mb:g})"
            )
            break
        op_k, st_k = _solve_nodes(setup, nodes)
        if level == 0:
            base_energy = st_k.energy
        if n_expected is not None and st_k.energy.size != n_expected:
            table = Romberg()
            level_e = []
            level_n = []
        n_expected = st_k.energy.size
        op, states = op_k, st_k
        table.add(states.energy)
        level_e.append(states.energy)
        level_n.append(nodes.size)
        if states.energy.size == 0 and level >= 1:
            break
        err = table.error() + _roundoff(op, states.energy)
        scale_e = _energy_scale(states.energy, vmin)
        conv = err <= tol * scale_e
        if table.levels >= settings.min_levels and np.all(conv):
            break
    energy = table.value() if states.energy.size else np.empty(0)
    err = (table.error() + _roundoff(op, states.energy)) if states.energy.size else np.empty(0)

    # ---- box check: push open ends out and compare at the coarsest level
    box_err = np.zeros_like(energy)
    if not hard and energy.size:
        e_top = float(energy[-1])
        big = _open_box(setup, min(e_top, threshold), budget * 1.5, box)
        if big != box:
            # same nodes inside the old box, new nodes only beyond it: the shift is the truncation alone
            spacing = _spacing_function(potential, e_lo_grid, e_hi_grid, settings.grid)
            parts = [base]
            if big[0] < box[0]:
                parts.insert(0, base_grid(spacing, [], big[0], box[0], settings.grid)[:-1])
            if big[1] > box[1]:
                parts.append(base_grid(spacing, [], box[1], big[1], settings.grid)[1:])
            _, sb = _solve_nodes(setup, np.concatenate(parts))
            if sb.energy.size >= energy.size and base_energy.size >= energy.size:
                box_err = np.abs(sb.energy[: energy.size] - base_energy[: energy.size])
            else:
                messages.append("a larger box finds fewer states; the box check is inconclusive")
        err = err + box_err
    scale_e = _energy_scale(energy, vmin)
    conv = err <= tol * scale_e if energy.size else np.zeros(0, dtype=bool)
    for k in np.flatnonzero(~conv):
        messages.append(
            f"state {k} is not converged: estimated error {err[k]:.2e} is above the tolerance "
            f"{tol * scale_e[k]:.2e} ({potential.units.energy})"
        )
    if states.count_below > energy.size and math.isfinite(threshold) and settings.energy_window is None:
        messages.append(
            f"{states.count_below - energy.size} more bound state(s) exist above the {energy.size} returned "
            "(raise [solve] max_states)"
        )
    return _observables(setup, op, states, energy, err, conv, center, box, level_e, level_n, box_err, messages)


def _energy_scale(energy: np.ndarray, vmin: float) -> np.ndarray:
    return np.maximum(np.abs(energy), 1e-6 * max(abs(vmin), 1e-300))


def _roundoff(op: Operator, energy: np.ndarray) -> np.ndarray:
    """A few ulps of the energy scale: the accuracy of the flux-form Rayleigh quotient."""
    vscale = float(np.max(np.abs(op.v))) if op.v.size else 0.0
    return 64.0 * EPS * (np.abs(energy) + vscale)


def _observables(setup, op, states, energy, err, conv, center, box, level_e, level_n, box_err, messages) -> Solution:
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
        inside[:, j] = psi**2 @ overlap
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
