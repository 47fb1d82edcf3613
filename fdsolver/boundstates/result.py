"""The result of a solve and its per-state observables.

:func:`finish` turns the finest level of a solve into a :class:`Solution`:
wavefunctions on the whole grid (mirror halves unfolded), normalised so that
sum w psi^2 = 1 with the lumped node weights; <x>, the spread, the
probability inside every named component or layer and the one holding most
of it; parity; the hard-wall flag; the convergence flag and every note.

A state's number is its Sturm index (its node count, by the oscillation
theorem).  The wavefunction's sign changes are checked only where it can be
resolved (|psi| above :data:`RESOLVED_FRACTION` of its peak): more sign
changes there than the index allows means the vector is mixed with another
state, and the state is flagged; fewer is normal where nodes lie in regions
where psi is below double precision (far walls, deep tunnelling).

A *hard-wall state* lives next to a wall rather than in the potential's
structure: more than half of its probability lies between a hard wall and the
potential feature nearest to it.  Without features inside the box (a plain
box, a field between walls) no state is flagged.

Energies in the case energy unit, lengths in its length unit, psi in
length^-1/2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.numerics import kernels
from fdsolver.numerics.operator import NEUMANN
from fdsolver.numerics.tables import potential_at

#: psi is resolved where |psi| exceeds this fraction of its peak (eigenvector noise lies far below)
RESOLVED_FRACTION = 1e-6
#: a state with more than this share of its probability in a wall zone is a hard-wall state
WALL_SHARE = 0.5
#: region shares closer than this (as fractions of the state's probability) are equal: of regions that share a
#: state equally (the wells of a mirror-symmetric pair) the first in the case's order is its home, whatever the
#: last bits of psi say
HOME_TIE = 1e-6


def home_regions(inside: np.ndarray) -> np.ndarray:
    """Each state's home: the index of the region holding the largest share of its probability (``inside``:
    state x region, fractions of the state's probability), the first in the case's order among shares within
    :data:`HOME_TIE` of the largest; -1 where no region holds any.  Dimensionless."""
    inside = np.asarray(inside, dtype=float)
    if inside.ndim != 2 or inside.shape[1] == 0:
        return np.full(inside.shape[0] if inside.ndim else 0, -1, dtype=int)
    return kernels.home_of(np.ascontiguousarray(inside), HOME_TIE).astype(int)


@dataclass(frozen=True)
class Solution:
    """Result of :func:`~fdsolver.boundstates.driver.solve_potential`; arrays over ``state`` and the nodes ``x``."""

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
    index: np.ndarray  # global Sturm index of every state (= its node count)
    home: np.ndarray  # region holding most of the state's probability (-1: none named; the first in the case's order of equal shares)
    wall: np.ndarray  # -1 / +1: a hard-wall state at the left / right wall; 0 otherwise
    splitting: np.ndarray  # E_{k+1} - E_k, extrapolated as a sequence of its own
    splitting_error: np.ndarray
    splitting_bound: np.ndarray  # True: splitting is only an upper bound (below double precision)
    resolved_count: int  # states the box resolved below the window top
    whole_line_count: int  # box-independent number of bound states on the open line (-1: not counted)
    reference: float  # the energy the solver measured from (continuum threshold or lowest V)
    # --- quasi-bound states on the open line (set by fdsolver.continuum.openline; None for bound states only,
    # read as zero widths and infinite lifetimes).  Full width Gamma (case energy unit), its error, log10 of
    # Gamma in the energy unit (finite where Gamma underflows a double), lifetime hbar/Gamma (s) and its log10.
    width: np.ndarray | None = None
    width_error: np.ndarray | None = None
    log10_width: np.ndarray | None = None
    lifetime: np.ndarray | None = None
    log10_lifetime: np.ndarray | None = None


def _whole_nodes(sector) -> np.ndarray:
    """The nodes of the whole grid a sector's operator lives on (its half mirrored about the centre)."""
    half = sector.op.nodes
    if sector.parity == 0:
        return half
    return np.concatenate([2.0 * half[0] - half[:0:-1], half])


#: an empty array: no cell values for :func:`fdsolver.numerics.kernels.wave_columns`
_NONE = np.zeros(0)


def unfold_into(row: np.ndarray, sector, u: np.ndarray) -> None:
    """psi on the whole grid (``row``, zero on entry) of a sector's eigenvector u, normalised over the whole grid:
    u / sqrt(w) at the unknowns (zero at Dirichlet ends); a half's values are divided by sqrt(2) and mirrored with
    the sector's parity."""
    op = sector.op
    # the first unknown of a half: the centre itself (even half, Neumann end), else the node right of it
    kernels.unfold_row(row, np.ascontiguousarray(u, dtype=float), op.w, int(sector.parity), op.left == NEUMANN)


def _potential_on(pot, x_all: np.ndarray, averaged: np.ndarray | None = None) -> np.ndarray:
    """V at the nodes: its dual-cell average at interior nodes (as the operator sees it), the value at the ends.
    ``averaged``: those averages already made from V on every cell where it is constant on each (the levels'
    cell values; :func:`fdsolver.numerics.kernels.wave_columns`), the same numbers as from the half cells'
    integrals, which are used otherwise."""
    if x_all.size <= 2:
        return pot.value(x_all)
    if averaged is not None and averaged.size == x_all.size:
        v_nodes = averaged
    else:
        v_nodes = np.empty(x_all.size)
        il, ir = pot.half_cell_integrals(x_all)
        h = np.diff(x_all)
        v_nodes[1:-1] = (ir[:-1] + il[1:]) / (0.5 * (h[:-1] + h[1:]))
    v_nodes[0], v_nodes[-1] = potential_at(pot, np.array([x_all[0], x_all[-1]]))  # V at the ends: their values alone
    return v_nodes


def _sign_changes(psi: np.ndarray) -> np.ndarray:
    """Sign changes of each row of psi inside the stretches where it is resolved (never across an unresolved
    gap: both neighbours above :data:`RESOLVED_FRACTION` of the row's peak;
    :func:`fdsolver.numerics.kernels.wave_columns`)."""
    psi = np.ascontiguousarray(psi, dtype=float)
    return kernels.wave_columns(np.zeros(psi.shape[1]), psi, np.zeros((0, 2)), 0.0, RESOLVED_FRACTION, _NONE, 1,
                                False)[2]


def _wall_zones(problem, box) -> list[tuple[int, float, float]]:
    """(side, lo, hi) between each hard wall and the potential feature nearest to it."""
    if not problem.domain.hard:
        return []
    feats = problem.potential.features()
    feats = feats[(feats > box[0]) & (feats < box[1])]
    if feats.size == 0:
        return []
    return [(-1, box[0], float(feats[0])), (1, float(feats[-1]), box[1])]


def _cell_overlaps(x_all: np.ndarray, intervals) -> np.ndarray:
    """Length of each node's dual cell inside each of the ``intervals`` (lo, hi): one column per interval
    (:func:`fdsolver.numerics.kernels.wave_columns`: min(cell end, hi) - max(cell start, lo) on the nodes whose
    dual cells reach into the interval, 0 elsewhere)."""
    bounds = np.ascontiguousarray(np.asarray(intervals, dtype=float).reshape(-1, 2))
    x_all = np.ascontiguousarray(x_all, dtype=float)
    return kernels.wave_columns(x_all, np.zeros((0, x_all.size)), bounds, 0.0, RESOLVED_FRACTION, _NONE, 1,
                                True)[1][:, 2:]


def _cell_overlap(x_all: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Length of each node's dual cell inside [lo, hi]."""
    return _cell_overlaps(x_all, [(lo, hi)])[:, 0]


def finish(problem, box, center, run, box_error: np.ndarray, messages: list, wavefunctions: bool = True) -> Solution:
    """The :class:`Solution` of the finest level (module docstring).

    Without ``wavefunctions`` only the energies, errors, indices, parities and splittings are made (a study
    that needs nothing else): ``x``, ``psi`` and the node arrays are empty, the observables NaN and no state is
    a hard-wall state.  The sign changes of psi are checked either way (:func:`_check_signs`), so ``converged``
    is the same.
    """
    states = run.states
    n = run.energy.size
    error = run.error + box_error
    scale = problem.energy_scale(run.energy)
    conv = error <= problem.settings.tolerance * scale if n else np.zeros(0, dtype=bool)
    index = states.index.copy() if n else np.zeros(0, dtype=int)
    if wavefunctions:
        waves = _observables(problem, box, run, conv, index, messages)
    else:
        _check_signs(_unfolded(run), index, conv, messages)
        empty, nothing = np.zeros(0), np.full(n, np.nan)
        waves = {"x": empty, "potential": empty, "mass": empty, "weights": empty, "psi": np.zeros((n, 0)),
                 "mean_x": nothing, "spread": nothing.copy(),
                 "inside": np.full((n, len(problem.potential.regions())), np.nan), "home": np.full(n, -1),
                 "wall": np.zeros(n, dtype=int)}
    _convergence_notes(problem, run, error, scale, conv, index, messages)
    _existence_notes(problem, run, index, messages)
    le, whole, bound = _levels_and_counts(problem, run)
    return Solution(
        **waves,
        energy=problem.absolute(run.energy),
        energy_error=error,
        converged=conv,
        nodes=index.copy(),
        parity=states.parity.copy() if n else np.zeros(0, dtype=int),
        region_names=tuple(r[0] for r in problem.potential.regions()),
        threshold=problem.threshold,
        box=(float(box[0]), float(box[1])),
        boundary=problem.domain.boundary,
        mirror_center=center,
        level_energies=le,
        level_sizes=np.array(run.level_sizes, dtype=int),
        box_error=box_error,
        bound_count=int(bound),
        messages=tuple(dict.fromkeys(messages)),
        index=index,
        splitting=run.splitting,
        splitting_error=run.splitting_error,
        splitting_bound=run.splitting_bound,
        resolved_count=int(states.count_below),
        whole_line_count=-1 if whole is None else int(whole),
        reference=problem.reference,
    )


def _observables(problem, box, run, conv: np.ndarray, index: np.ndarray, messages: list) -> dict:
    """The wavefunctions on the whole finest grid and what :func:`finish` derives from them: the nodes, V, m and
    weights there, <x>, the spreads, each region's share, each state's home region and hard-wall side.  A state
    whose resolved wavefunction changes sign more often than its index allows is marked not converged (``conv``)
    with a note."""
    pot = problem.potential
    n = run.energy.size
    x_all, psi = _unfolded(run)
    regions = pot.regions()
    zones = _wall_zones(problem, box)
    # every state's norm-weighted sums of x, (x - x_ref)^2 and each region's and wall zone's share, in one
    # compiled pass over psi (each interval summed over its own nodes only: O(N) per state however many regions)
    x_ref = 0.5 * sum(pot.support())  # second moments about the structure's middle: no cancellation against <x>
    bounds = np.array([(lo, hi) for _, lo, hi in regions] + [(lo, hi) for _, lo, hi in zones], dtype=float)
    v_cells = _NONE if run.cells is None else np.ascontiguousarray(run.cells[0], dtype=float)  # per base cell
    w_all, _, found, averaged, sums = kernels.wave_columns(x_all, psi, bounds.reshape(-1, 2), float(x_ref),
                                                           RESOLVED_FRACTION, v_cells, 2**run.level, False)
    mean_x = sums[:, 0]
    spread = np.sqrt(np.maximum(0.0, sums[:, 1] - (mean_x - x_ref) ** 2))
    inside = sums[:, 2 : 2 + len(regions)]
    home = home_regions(inside) if regions and n else np.full(n, -1)
    wall = np.zeros(n, dtype=int)
    for j, (side, _, _) in enumerate(zones):
        wall[sums[:, 2 + len(regions) + j] > WALL_SHARE] = side
    _check_signs((x_all, psi), index, conv, messages, found)
    return {"x": x_all, "potential": _potential_on(pot, x_all, averaged), "mass": pot.mass_at(x_all), "weights": w_all,
            "psi": psi, "mean_x": mean_x, "spread": spread, "inside": inside, "home": home.astype(int), "wall": wall}


def _unfolded(run) -> tuple[np.ndarray, np.ndarray]:
    """(nodes of the whole finest grid, psi of every state on them: states x nodes, length^-1/2)."""
    states = run.states
    x_all = _whole_nodes(run.sectors[0]) if run.sectors else np.asarray(run.nodes, dtype=float)
    psi = np.zeros((run.energy.size, x_all.size))
    for k in range(run.energy.size):
        unfold_into(psi[k], run.sectors[states.sector[k]], states.vectors[k])
    return x_all, psi


def _check_signs(unfolded: tuple[np.ndarray, np.ndarray], index: np.ndarray, conv: np.ndarray, messages: list,
                 found: np.ndarray | None = None) -> None:
    """Mark not converged (``conv``, with a note) every state whose resolved wavefunction changes sign more often
    than its index allows: the grid does not separate it from a neighbouring state.  ``unfolded``: (nodes, psi)
    of :func:`_unfolded`; ``found``: the sign changes, where they were counted already (:func:`_sign_changes`)."""
    found = _sign_changes(unfolded[1]) if found is None else found
    for k in np.flatnonzero(found > index):
        conv[k] = False
        messages.append(
            f"state {index[k]}: its wavefunction changes sign {found[k]} times where it is resolved, more than its "
            f"index allows: the grid does not separate it from a neighbouring state"
        )


def _levels_and_counts(problem, run) -> tuple[np.ndarray, int | None, int]:
    """Every level's energies (absolute; level x state, NaN where a level had fewer states), the box-independent
    count of bound states (None where it is not counted) and the count reported as bound."""
    n = run.energy.size
    rows = run.level_energies
    if rows and all(row.size == n for row in rows):  # every level has every state (the regular levels)
        le = np.array(rows, dtype=float) + problem.reference  # absolute (Problem.absolute)
    else:
        le = np.full((len(rows), n), np.nan)
        for i, row in enumerate(rows):
            le[i, : min(n, row.size)] = row[:n] + problem.reference
    whole = problem.whole_line_count() if problem.whole_spectrum else None
    bound = whole if whole is not None else (int(run.states.count_below) if math.isfinite(problem.e_hi) else n)
    return le, whole, bound


def _convergence_notes(problem, run, error, scale, conv, index, messages) -> None:
    if conv.all():
        return
    tol = problem.settings.tolerance
    unit = problem.potential.units.energy
    for k in np.flatnonzero(~conv):
        if not error[k] > tol * scale[k]:
            continue  # flagged for another reason, said above
        why = " (round-off at the finest affordable grid limits it)" if k < run.roundoff_limited.size and \
            run.roundoff_limited[k] else ""
        messages.append(
            f"state {index[k]} is not converged: estimated error {error[k]:.2e} is above the tolerance "
            f"{tol * scale[k]:.2e} ({unit}){why}"
        )


def _existence_notes(problem, run, index, messages) -> None:
    """Bound states the box-independent count knows of but the grid did not resolve, and states left out."""
    states = run.states
    n = run.energy.size
    whole = problem.whole_line_count() if problem.whole_spectrum else None
    if whole is not None and whole > states.count_below:
        missing = whole - states.count_below
        messages.insert(0, f"{whole} bound state(s) exist, {missing} not resolved: bound too weakly for the box or "
                           "narrower than double precision can resolve on the grid (see the notes below)")
    shown = states.count_below if whole is None else min(whole, states.count_below)
    if problem.whole_spectrum and math.isfinite(problem.e_hi) and shown > n:
        messages.append(f"{shown - n} more bound state(s) exist above the {n} returned (raise [solve] max_states)")
