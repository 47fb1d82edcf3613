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
from dataclasses import dataclass, replace

import numpy as np

from fdsolver.boundstates import counting

from fdsolver.numerics import kernels
from fdsolver.boundstates.eigen import GridStates, count_nodes, solve_window
from fdsolver.errors import BudgetError
from fdsolver.boundstates.box import length_scale, open_box, provisional_box
from fdsolver.boundstates.settings import SolveSettings
from fdsolver.model.domain import Domain, continuum_threshold
from fdsolver.numerics.grid import GridSettings, base_grid, refine, spacing_function
from fdsolver.boundstates.result import Solution, observables
from fdsolver.numerics.operator import Operator, assemble
from fdsolver.model.potential import Potential
from fdsolver.numerics.richardson import Romberg

EPS = np.finfo(float).eps
BYTES_PER_NODE = 8 * 40  # measured upper bound of the working arrays per node (see DEVELOPERS.md)
BYTES_PER_NODE_STATE = 8 * 4


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
    budget: float


def _deep_reach(setup: _Setup, e_lo: float) -> float | None:
    """Distance from the support beyond which states near e_lo have decayed by the box budget."""
    if not math.isfinite(setup.threshold) or e_lo >= setup.threshold:
        return None
    pot = setup.potential
    kappa = math.sqrt(min(pot.asymptotic_mass(-1), pot.asymptotic_mass(1)) * (setup.threshold - e_lo) / pot.hbar2_2me)
    return setup.budget / kappa


def _grid(setup: _Setup, box, e_lo, e_hi, gs: GridSettings, center):
    spacing = spacing_function(setup.potential, e_lo, e_hi, gs, _deep_reach(setup, e_lo))
    nodes = base_grid(spacing, setup.potential.features(), box[0], box[1], gs, center, setup.max_nodes)
    if nodes.size > setup.max_nodes:
        raise BudgetError(
            f"the grid would need {nodes.size} nodes, more than the memory budget allows "
            f"({setup.max_nodes} at memory_mb = {setup.settings.memory_mb:g}); raise [solve] memory_mb or "
            "loosen the tolerance",
            key="solve.memory_mb",
        )
    return nodes


def _solve_nodes(setup: _Setup, nodes, guess=None) -> tuple[Operator, GridStates]:
    op = assemble(setup.potential, nodes)
    states = solve_window(op, setup.e_hi, setup.settings.max_states, setup.e_lo, guess)
    return op, states


def _center_for(setup: _Setup, box) -> float | None:
    x0 = setup.potential.mirror_center(box[0], box[1])
    if x0 is None:
        return None
    if abs((box[0] + box[1]) * 0.5 - x0) > 1e-12 * max(1.0, abs(box[1] - box[0])):
        return None
    return x0


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
    budget = 0.5 * math.log(100.0 / tol) + 1.0
    setup = _Setup(potential, domain, settings, threshold, e_hi, e_lo, max_nodes, budget)
    messages: list[str] = []
    hard = domain.boundary == "hard"
    scale = length_scale(potential)
    lo_s, hi_s = potential.support()
    coarse = replace(settings.grid, wave_fraction=2.0 * settings.grid.wave_fraction)

    counted: list[int] = []

    def whole_line_count() -> int:
        """The box-independent number of bound states (computed once)."""
        if not counted:
            counted.append(counting.bound_count(potential))
        return counted[0]

    # ---- provisional box and energies
    box = provisional_box(potential, domain, threshold, budget)
    vs = potential.value(np.linspace(box[0], box[1], 4001)[1:-1])
    vmin = float(np.min(vs))
    # attractive point terms bind at most as deeply as one point of their summed strength: E >= -m A^2 / (4 C)
    attract = sum(a for _, a in potential.point_terms() if a > 0)
    e_lo_grid = vmin - potential.mass * attract**2 / (4.0 * potential.hbar2_2me)
    e_hi_grid = threshold if math.isfinite(threshold) else float(np.max(vs[[0, -1]]))
    center = _center_for(setup, box)
    nodes = _grid(setup, box, e_lo_grid, e_hi_grid, coarse, center)
    op, prov = _solve_nodes(setup, nodes)

    # ---- size the box for open ends, never missing a shallow state
    if not hard:
        expected = None
        for _attempt in range(40):
            if math.isfinite(threshold) and setup.e_hi == threshold and setup.e_lo is None:
                expected = whole_line_count()
                if prov.count_below < expected and (box[1] - box[0]) < 1e12 * scale:
                    # a very shallow state: its decay length exceeds the box; grow the box fourfold
                    mid, half = 0.5 * (box[0] + box[1]), 2.0 * (box[1] - box[0])
                    box = (mid - half, mid + half)
                    center = _center_for(setup, box)
                    op, prov = _solve_nodes(setup, _grid(setup, box, e_lo_grid, e_hi_grid, coarse, center))
                    continue
            if prov.energy.size:
                e_top = float(prov.energy[-1])
            else:
                e_top = threshold - (potential.hbar2_2me / potential.mass) / (box[1] - box[0]) ** 2
            new_box = open_box(potential, domain, min(e_top, threshold), budget, box)
            if not (new_box[0] < box[0] - 1e-12 * scale or new_box[1] > box[1] + 1e-12 * scale):
                break
            box = new_box
            center = _center_for(setup, box)
            op, prov = _solve_nodes(setup, _grid(setup, box, e_lo_grid, e_hi_grid, coarse, center))
        if expected is not None and prov.count_below < expected:
            messages.append(
                f"{expected - prov.count_below} state(s) bound too weakly to fit in a box of "
                f"{box[1] - box[0]:.3g} {potential.units.length} were not resolved"
            )

    # ---- levels on the final grid; grow the box if the converged shallowest state asks for more
    for _round in range(8):
        if prov.energy.size:
            e0, etop = float(prov.energy[0]), float(prov.energy[-1])
            e_lo_grid = e0 - 0.05 * max(abs(e0), etop - e0)
            e_hi_grid = threshold if math.isfinite(threshold) else etop
        base = _grid(setup, box, e_lo_grid, e_hi_grid, settings.grid, center)
        run = _levels(setup, base, vmin, messages)
        if hard:
            break
        if math.isfinite(threshold) and setup.e_hi == threshold and setup.e_lo is None:
            expected = whole_line_count()
            if expected > run.states.count_below and (box[1] - box[0]) < 1e12 * scale:
                # the fine grid binds a state the box cannot hold: grow the box fourfold
                mid, half = 0.5 * (box[0] + box[1]), 2.0 * (box[1] - box[0])
                box = (mid - half, mid + half)
                center = _center_for(setup, box)
                prov = GridStates(run.energy, run.states.psi, run.states.count_below)
                continue
        if run.energy.size == 0:
            break
        need = open_box(potential, domain, min(float(run.energy[-1]), threshold), budget, box)
        if need[0] >= box[0] - 1e-9 * scale and need[1] <= box[1] + 1e-9 * scale:
            break
        box = need
        center = _center_for(setup, box)
        prov = GridStates(run.energy, run.states.psi, run.states.count_below)
    energy, err, states, op = run.energy, run.error, run.states, run.op

    # ---- box check at the finest level: same nodes inside, extra nodes beyond the open ends
    box_err = np.zeros_like(energy)
    if not hard and energy.size:
        big = open_box(potential, domain, min(float(energy[-1]), threshold), budget * 1.5, box)
        grow_left, grow_right = big[0] < box[0] - 1e-9 * scale, big[1] > box[1] + 1e-9 * scale
        if grow_left or grow_right:
            spacing = spacing_function(potential, e_lo_grid, e_hi_grid, settings.grid, _deep_reach(setup, e_lo_grid))
            parts = [refine(base, run.level)]
            if grow_left:
                parts.insert(0, refine(base_grid(spacing, [], big[0], box[0], settings.grid), run.level)[:-1])
            if grow_right:
                parts.append(refine(base_grid(spacing, [], box[1], big[1], settings.grid), run.level)[1:])
            wide = np.concatenate(parts)
            if wide.size <= max_nodes:
                _, sb = _solve_nodes(setup, wide, states.energy)
                if sb.energy.size >= energy.size:
                    box_err = np.abs(sb.energy[: energy.size] - states.energy[: energy.size])
                else:
                    messages.append("a larger box finds fewer states; the box check is inconclusive")
            else:
                messages.append("the box check was skipped: the enlarged grid exceeds the memory budget")
        err = err + box_err
    scale_e = _energy_scale(energy, vmin)
    conv = err <= tol * scale_e if energy.size else np.zeros(0, dtype=bool)
    # oscillation theorem: the state numbered i0 + k has i0 + k nodes; anything else is under-resolved
    i0 = kernels.sturm_count(op.d, op.e, setup.e_lo) if setup.e_lo is not None and energy.size else 0
    for k in range(energy.size):
        n_nodes = count_nodes(states.psi[k])
        if n_nodes != i0 + k:
            conv[k] = False
            messages.append(
                f"state {k} has {n_nodes} nodes where the oscillation theorem requires {i0 + k}: "
                "the grid does not resolve it (a feature far narrower than the decay length?)"
            )
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
    return observables(setup, op, states, energy, err, conv, center, box, run.level_e, run.level_n, box_err, messages)


@dataclass
class _LevelRun:
    energy: np.ndarray
    error: np.ndarray
    states: GridStates
    op: Operator
    level: int
    level_e: list
    level_n: list


def _levels(setup: _Setup, base: np.ndarray, vmin: float, messages: list) -> _LevelRun:
    """Solve nested refinements of ``base`` until every state's error estimate is below tolerance."""
    settings = setup.settings
    table = Romberg()
    level_e: list[np.ndarray] = []
    level_n: list[int] = []
    op = states = None
    n_expected = None
    last = 0
    for level in range(settings.max_levels):
        size = (base.size - 1) * 2**level + 1
        if size > setup.max_nodes:
            messages.append(
                f"refinement stopped at {level_n[-1] if level_n else 0} nodes: the next level "
                f"({size} nodes) exceeds the memory budget (memory_mb = {settings.memory_mb:g})"
            )
            break
        if states is not None and states.energy.size and _roundoff_limited(setup, op, states):
            messages.append(
                f"refinement stopped at {level_n[-1]} nodes: on the next level the matrix norm "
                f"(~1/h_min^2) would make round-off comparable to the level spacing"
            )
            break
        nodes = refine(base, level)
        guess = None
        if len(level_e) >= 2:  # E_{k+1} ~ E_k - (E_{k-1} - E_k)/4 for an h^2 error
            guess = level_e[-1] - (level_e[-2] - level_e[-1]) / 4.0
        elif level_e:
            guess = level_e[-1]
        op_k, st_k = _solve_nodes(setup, nodes, guess)
        if n_expected is not None and st_k.energy.size < n_expected:
            # the top state(s) rose out of the window on the finer grid: they are not resolved; the others
            # keep their levels (states are numbered from the bottom, so the rows are cut, not shifted)
            n_new = st_k.energy.size
            messages.append(
                f"state(s) {n_new} to {n_expected - 1} vanished on the grid of {nodes.size} nodes: bound too "
                "weakly to be resolved here (not resolved)"
            )
            level_e = [row[:n_new] for row in level_e]
            table = Romberg()
            for row in level_e:
                table.add(row)
            n_expected = n_new
        if n_expected is not None and st_k.energy.size != n_expected:
            table, level_e, level_n = Romberg(), [], []  # a state appeared: restart the table
        n_expected = st_k.energy.size
        op, states, last = op_k, st_k, level
        table.add(states.energy)
        level_e.append(states.energy)
        level_n.append(nodes.size)
        if states.energy.size == 0 and level >= 1:
            break
        err = table.error() + _roundoff(op, states)
        if table.levels >= settings.min_levels and np.all(err <= settings.tolerance * _energy_scale(states.energy, vmin)):
            break
    if states.energy.size:
        energy, err = table.value(), table.error() + _roundoff(op, states)
    else:
        energy, err = np.empty(0), np.empty(0)
    return _LevelRun(energy, err, states, op, last, level_e, level_n)


def _state_roundoff(op: Operator, psi: np.ndarray) -> np.ndarray:
    """eps * sum_i |T_ii| u_i^2 per state: the round-off scale of its Sturm counts and eigenvector.

    The backward error of a Sturm count is a relative perturbation of each
    diagonal entry; weighted by the state it moves the eigenvalue by about this
    much (it grows as 1/h^2 where the state lives, not with the largest entry).
    """
    return EPS * np.sum(np.abs(op.d)[None, :] * op.w[None, :] * psi**2, axis=1)


def _roundoff_limited(setup: _Setup, op: Operator, states: GridStates) -> bool:
    """True if halving every cell (round-off x4) would bring it near the gaps between states."""
    energy = states.energy
    r_next = 4.0 * float(np.max(_state_roundoff(op, states.psi)))
    gaps = list(np.diff(energy))  # (a top state near the threshold may vanish; that is handled by the caller)
    if setup.e_lo is not None:
        gaps.append(float(energy[0]) - setup.e_lo)
    if not gaps:
        return False
    return r_next > 0.05 * min(gaps)


def _energy_scale(energy: np.ndarray, vmin: float) -> np.ndarray:
    return np.maximum(np.abs(energy), 1e-6 * max(abs(vmin), 1e-300))


def _roundoff(op: Operator, states: GridStates) -> np.ndarray:
    """Round-off floor of each energy: a few ulps of the energy scale (the flux-form Rayleigh quotient)."""
    vscale = float(np.max(np.abs(op.v))) if op.v.size else 0.0
    return 64.0 * EPS * (np.abs(states.energy) + vscale)


