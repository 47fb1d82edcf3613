"""Nested grid levels of one box, and Richardson extrapolation of every energy and every splitting.

Level k splits every cell of the base grid into 2^k (:func:`fdsolver.numerics.grid.refine`);
on such nested grids the flux-form energies expand in even powers of the
step, and :class:`~fdsolver.numerics.richardson.Romberg` removes the h^2 and
h^4 terms.  Each state is judged on its own: its error estimate (the change of
its extrapolated energy between levels, plus its round-off scale) against
the tolerance times its own energy scale.  Refinement stops when every state
has converged, when the next level would exceed the memory budget or the
level limit, or when every state still open is limited by round-off (its
round-off scale grows about 4x per level with the matrix norm where it
lives); the distance between two states never stops it, because an
eigenvalue's accuracy does not depend on it.

Splittings E_{k+1} - E_k are extrapolated as sequences of their own: their
discretisation error is far smaller than either energy's, so a tunnel
splitting of 1e-10 of E keeps a meaningful error bar.  A splitting below its
round-off scale is only known to be smaller than that (an upper bound).
Energies relative to the problem's reference, in the case energy unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.boundstates.eigen import (
    GridStates,
    Sector,
    constant_coarse,
    constant_level,
    constant_levels,
    point_arrays,
    solve_grid,
)
from fdsolver.boundstates.problem import Problem
from fdsolver.numerics import kernels
from fdsolver.numerics.grid import refine
from fdsolver.numerics.operator import assemble, cell_constants, mirror_halves
from fdsolver.numerics.richardson import Romberg

#: round-off grows by about this factor per level (matrix norm ~ 1/h^2)
ROUNDOFF_GROWTH = 4.0


def sectors_on(problem: Problem, nodes: np.ndarray, center: float | None, cells=None) -> list[Sector]:
    """The operators of a grid: the whole grid, or its even and odd halves about the mirror centre (assembled on
    the right half only).  ``cells``: V and m on every cell of ``nodes``, where they are constant on each
    (:func:`fdsolver.numerics.operator.cell_constants`)."""
    if center is None:
        return [Sector(assemble(problem.potential, nodes, problem.reference, cells=cells), 0)]
    c = int(np.searchsorted(nodes, center, side="left"))
    # the right half and the one cell left of the centre: every array of the halves is local to its cells and
    # nodes, so this is exactly the whole grid's assembly there (the left half is its mirror image)
    half = None if cells is None else (cells[0][c - 1:], cells[1][c - 1:])
    even, odd = mirror_halves(assemble(problem.potential, nodes[c - 1:], problem.reference, cells=half), 1)
    return [Sector(even, 1), Sector(odd, -1)]


def solve_nodes(problem: Problem, nodes: np.ndarray, center: float | None, guess=None,
                vectors: bool = True, cells=None, tried: bool = False) -> tuple[list[Sector], GridStates]:
    """The states of ``problem`` on one grid (energies only without ``vectors``: :func:`solve_grid`; ``tried``:
    the one-call pass from ``guess`` already failed on this grid)."""
    sectors = sectors_on(problem, nodes, center, cells)
    s = problem.settings
    states = solve_grid(sectors, problem.e_lo, problem.e_hi, s.max_states, problem.floor, guess, vectors, tried)
    return sectors, states


def coarse_states(problem: Problem, nodes: np.ndarray, center: float | None) -> GridStates:
    """The energies of the states on a coarse grid, by bisection, no vectors (:func:`solve_nodes` without
    ``vectors``); where V and m are constant on every cell, in one compiled call
    (:func:`fdsolver.boundstates.eigen.constant_coarse`, the same states)."""
    cells = cell_constants(problem.potential, nodes)
    if cells is not None:
        got = constant_coarse(nodes, cells, center, problem.potential, problem.reference, problem.e_lo,
                              problem.e_hi, problem.settings.max_states, problem.floor)
        if got is not None:
            return got
    return solve_nodes(problem, nodes, center, vectors=False)[1]


@dataclass
class LevelRun:
    """The finest level reached and the extrapolated energies and splittings (relative energies)."""

    energy: np.ndarray
    error: np.ndarray
    splitting: np.ndarray
    splitting_error: np.ndarray
    splitting_bound: np.ndarray  # True where the splitting is below its round-off: an upper bound
    states: GridStates
    sectors: list
    nodes: np.ndarray
    level: int
    level_energies: list
    level_sizes: list
    roundoff_limited: np.ndarray  # states whose next level would be limited by round-off
    base: np.ndarray | None = None  # the base grid the levels refine
    # (V, m) on every base cell where each cell of every level sees one value (its base cell's), else None
    cells: tuple | None = None


def _cells_of(constant, level: int):
    """V and m on every cell of level ``level`` (each base cell's values repeated), or None."""
    return None if constant is None else (np.repeat(constant[0], 2**level), np.repeat(constant[1], 2**level))


def _prediction(level_e: list, sectors: np.ndarray):
    """(energy, sector) predictions for the next level: E_{k+1} ~ E_k - (E_{k-1} - E_k)/4 for an h^2 error."""
    if not level_e:
        return None
    nxt = level_e[-1] - (level_e[-2] - level_e[-1]) / 4.0 if len(level_e) >= 2 else level_e[-1]
    return np.asarray(nxt, dtype=float), np.asarray(sectors)


def _out_of_order(value: np.ndarray, err: np.ndarray) -> np.ndarray:
    """How far each extrapolated energy lies from the value at its index in the sorted energies, where that is
    more than the two errors (0 elsewhere).

    On a grid the states are numbered by Sturm index, so their energies rise with it; their extrapolations
    can still come out in the wrong order when two nearly equal states of different discretisation error
    (states of two unlike wells) have not yet crossed on the finest grid: each extrapolation then follows
    the other state's index.  Such states are not converged until a finer level separates them.
    """
    return kernels.out_of_order(np.ascontiguousarray(value, dtype=float), np.ascontiguousarray(err, dtype=float))


def _judge(problem: Problem, table: Romberg, states: GridStates) -> tuple[np.ndarray, np.ndarray]:
    """(done, limited) of every state of the newest level: its error estimate (the table's plus its round-off
    floor) within the tolerance and its extrapolation in order (:func:`_out_of_order`); or not done, in order,
    and limited by round-off on the next level (which grows it about :data:`ROUNDOFF_GROWTH` times)."""
    tol = problem.settings.tolerance
    err = table.error() + states.roundoff
    scale = problem.energy_scale(states.energy)
    crossed = _out_of_order(table.value(), err) > 0 if table.levels >= 2 else np.zeros(states.size, dtype=bool)
    done = (err <= tol * scale) & ~crossed
    limited = ~done & ~crossed & (ROUNDOFF_GROWTH * states.roundoff > tol * scale)
    return done, limited


def refine_levels(problem: Problem, base: np.ndarray, center: float | None, messages: list,
                  first_guess: tuple | None = None) -> LevelRun:
    """Solve nested refinements of ``base`` until every state has converged (module docstring).

    ``first_guess``: (energies, sectors) of the states expected on the first level, from a coarser solve; like
    every prediction it is proved by Sturm counts, and bisection takes over where the proof fails.
    """
    settings = problem.settings
    table = Romberg()
    level_e: list[np.ndarray] = []
    level_n: list[int] = []
    states = sectors = nodes = None
    last, n_expected = 0, None
    limited = np.zeros(0, dtype=bool)
    judged = -1  # the level whose states ``limited`` describes
    vanished: list[tuple[int, int, int]] = []  # (first, last, nodes) of states lost on a finer grid
    constant = cell_constants(problem.potential, base)  # V and m per base cell, where each cell sees one value
    points = None if constant is None else point_arrays(problem.potential)
    start, failed, reason, compiled, judged_all = 0, -1, None, None, None
    if constant is not None and first_guess is not None:
        # the regular levels in one compiled call; the loop below goes on from where it stopped, if it must
        reason, rows, sizes, done, compiled, judged_all = constant_levels(
            base, constant, center, problem.potential, problem.reference, problem.e_lo, problem.e_hi,
            settings.max_states, problem.floor, first_guess, settings.max_levels, settings.min_levels,
            problem.max_nodes(center is not None), settings.tolerance, ROUNDOFF_GROWTH, points)
        for row, size in zip(rows, sizes):
            if judged_all is None:  # else the call extrapolated and judged every state (used below)
                table.add(row)
            level_e.append(row)
            level_n.append(size)
        if done is not None:
            states, last, n_expected = done, len(rows) - 1, done.size
        start = len(rows)
        if reason == kernels.LEVELS_FAILED:
            failed = start  # the general path decides that level at once
    finished = reason in (kernels.LEVELS_DONE, kernels.LEVELS_ALL)  # judged, or at the level limit: no loop
    for level in range(start, start if finished else settings.max_levels):
        size = (base.size - 1) * 2**level + 1
        if size > problem.max_nodes(center is not None):
            messages.append(
                f"refinement stopped at {level_n[-1] if level_n else 0} nodes: the next level ({size} nodes) "
                f"exceeds the memory budget (memory_mb = {settings.memory_mb:g}; it needs about "
                f"{math.ceil(problem.megabytes_for(size, center is not None)):d} MB with max_states = "
                f"{settings.max_states}); where states "
                "are not converged, raise [solve] memory_mb, ask for fewer states or loosen the tolerance"
            )
            break
        guess = _prediction(level_e, states.sector) if states is not None else first_guess
        st_k = grid = sectors_k = None  # a constant level's grid and operators are built after the loop, if finest
        if constant is not None and guess is not None and level != failed:
            st_k = constant_level(base, constant, level, center, problem.potential, problem.reference, problem.e_lo,
                                  problem.e_hi, settings.max_states, problem.floor, guess, points)
        if st_k is None:
            grid = refine(base, level)
            sectors_k, st_k = solve_nodes(problem, grid, center, guess, cells=_cells_of(constant, level),
                                          tried=constant is not None and guess is not None)
        below = st_k.first_index - states.first_index if states is not None else 0
        if n_expected is not None and st_k.size < n_expected and below >= 0:
            # fewer states on the finer grid: those that sank below an energy window's foot left it (no note),
            # the top one(s) rose out of the window and are not resolved; the others keep their levels, so each
            # row keeps the states of the same global indices
            if below + st_k.size < n_expected:
                vanished.append((st_k.first_index + st_k.size, states.first_index + n_expected - 1, size))
            level_e = [row[below: below + st_k.size] for row in level_e]
            table = Romberg()
            for row in level_e:
                table.add(row)
        elif n_expected is not None and (st_k.size != n_expected or below != 0):
            table, level_e, level_n = Romberg(), [], []  # the states changed: restart the tables
        n_expected = st_k.size
        states, sectors, nodes, last = st_k, sectors_k, grid, level
        table.add(states.energy)
        level_e.append(states.energy)
        level_n.append(size)
        if states.size == 0:
            if level >= 1:
                break
            continue
        if table.levels >= settings.min_levels:  # before that no level stops the refinement: nothing to judge
            done, limited = _judge(problem, table, states)
            judged = level
            if np.all(done) or np.all(done | limited):
                break
    if states is not None and sectors is None and compiled is not None and last == start - 1:
        nodes, sectors = compiled  # the all-levels call's finest level, and its operators
    elif states is not None and sectors is None:  # the finest level came from a per-level call: its operators
        nodes = refine(base, last)
        sectors = sectors_on(problem, nodes, center, _cells_of(constant, last))
    if states is None or states.size == 0:
        empty = np.empty(0)
        return LevelRun(empty, empty, empty, empty, np.zeros(0, bool),
                        states if states is not None else solve_nodes(problem, base, center)[1],
                        sectors or [], nodes if nodes is not None else base, last, level_e, level_n, np.zeros(0, bool),
                        base)
    # splittings at or below the two round-off floors only bounded by them; an inversion within the error bars
    # (a doublet split below double precision) made one mean; how far an extrapolation is out of order
    if judged_all is not None:  # the all-levels call's extrapolation, judgement and splittings, settled (same numbers)
        energy, error, limited, splitting, splitting_error, bound, off = judged_all
    else:
        if judged != last:
            limited = _judge(problem, table, states)[1]
        gaps = Romberg()  # the splittings' table, from the same rows as the energies'
        for row in level_e:
            gaps.add(np.diff(row))
        energy, error, splitting, splitting_error, bound, off = kernels.settle_levels(
            np.ascontiguousarray(table.value(), dtype=float),
            np.ascontiguousarray(table.error() + states.roundoff, dtype=float),
            np.ascontiguousarray(gaps.value(), dtype=float), np.ascontiguousarray(gaps.error(), dtype=float),
            np.ascontiguousarray(states.roundoff, dtype=float))
    top = states.first_index + states.size - 1
    for lowest, highest, size in vanished:  # said only of states that did not come back
        if highest > top:
            messages.append(f"state(s) {max(lowest, top + 1)} to {highest} vanished on the grid of {size} nodes: "
                            "bound too weakly to be resolved here (not resolved)")
    if off.any():
        # beyond the bars: the levels of nearly equal states have not yet crossed on the finest grid, so an
        # extrapolation may belong to another state's index; each such error covers the exchange (not converged)
        error = np.maximum(error, off)
        which = ", ".join(str(states.first_index + k) for k in np.flatnonzero(off > 0))
        messages.append(f"states {which}: their extrapolated energies are out of order by up to {float(np.max(off)):.3g} "
                        "(the grid levels have not yet separated nearly equal states of unlike wells; their discrete "
                        "levels cross beyond the finest grid): which energy belongs to which index is uncertain by "
                        "that much, and their errors include it")
    return LevelRun(energy, error, splitting, splitting_error, bound, states, sectors, nodes, last, level_e, level_n,
                    limited, base, constant)
