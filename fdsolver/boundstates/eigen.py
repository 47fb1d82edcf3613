"""Bound states of one grid: eigenpairs of the assembled operator, numbered by Sturm counts.

A grid problem is one operator (:class:`Sector` with parity 0) or, for a
mirror-symmetric potential, two: the even and odd sectors on the right half
line (:mod:`fdsolver.numerics.operator`), whose spectra together are exactly
the spectrum of the whole symmetric grid, with exact parities and doublets
apart by construction.  :func:`solve_grid` returns the lowest states with
e_lo <= E < e_hi (at most ``max_states``):

1. Sturm counts (:func:`fdsolver.numerics.kernels.sturm_count`) in every sector
   say how many states lie in the window, and give each state its global
   index: the number of states of the whole grid below it.  The accuracy of
   an eigenvalue of a symmetric tridiagonal matrix does not depend on its
   distance to the next one, so no cluster of near-degenerate states can hide
   a state or duplicate one.
2. The eigenvalues come from LAPACK bisection (``stebz``, O(N) per value), or,
   on finer levels, are predicted from the coarser ones and proved by Sturm
   counts (two per state, falling back to bisection when a proof fails).
3. Eigenvectors by inverse iteration from those eigenvalues
   (:func:`fdsolver.numerics.kernels.inverse_iteration`): O(N) per state, with
   Gram-Schmidt only inside a cluster of states closer than
   :data:`CLUSTER_RTOL` of their energy, whose members then form an
   orthonormal basis of the cluster.  Each vector's residual is checked; a
   state that fails takes one Rayleigh-quotient step (if isolated) and is
   redone with more steps if it still fails.  On the cluster path, predicted
   eigenvalues are first checked by Sturm counts (each cluster nearer its own
   eigenvalues than any other) and bisected where they are not.
4. Each energy is the flux-form Rayleigh quotient of its vector
   (:func:`fdsolver.numerics.kernels.flux_quotient`), a few ulps of the energy
   scale where LAPACK's bisection is only accurate to eps * ||T||, which grows
   as 1/h_min^2 on graded grids.

Energies are in the case energy unit, measured from the operator's shift;
eigenvectors ``u`` of T are kept per sector (psi = u / sqrt(w), normalised so
that sum w psi^2 = 1 over the sector).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.numerics import kernels
from fdsolver.numerics.operator import DIRICHLET, NEUMANN, Operator
from fdsolver.numerics.precision import EPS

#: states closer than this fraction of their energy scale are a cluster (Gram-Schmidt between them)
CLUSTER_RTOL = 1e-4
#: inverse-iteration steps per vector (from an eigenvalue accurate to bisection, or predicted by the coarser
#: levels).  Two would do for well separated states; the closely spaced states of a miniband then fail the
#: residual check and take the Rayleigh-quotient step and a redo (measured: DEVELOPERS.md, session 20)
INVERSE_STEPS = 3
#: a residual |T u - lambda u| above this many times the state's round-off scale is sharpened (a Rayleigh-quotient
#: step, then a redo); at or below it the state is kept as it is
RESIDUAL_FACTOR = 1e3
#: the flux-form Rayleigh quotient is trusted to this many ulps of its scale
QUOTIENT_ULPS = 64.0
#: bisection stops at this relative bracket: inverse iteration and the quotient take it from there
BISECTION_RTOL = 1e-9
#: beyond this many (values x grid nodes) LAPACK's simultaneous bisection is cheaper than one value at a time
LAPACK_WORK = 200_000


@dataclass(frozen=True)
class Sector:
    """One operator of a grid problem: the whole grid (parity 0), or the even (+1) / odd (-1) half.  Of the
    finest level's sectors the results read only the grid (:class:`SectorGrid`), which is all an all-levels
    call gives there."""

    op: Operator | SectorGrid
    parity: int = 0


@dataclass(frozen=True)
class SectorGrid:
    """The grid of a sector as the results read it (unfolding its eigenvectors, the box check): its nodes (the
    ends included), the weights of its unknowns, its cell masses (m_e) and its left end (``DIRICHLET``, or
    ``NEUMANN`` at a mirror centre); the same fields of an :class:`~fdsolver.numerics.operator.Operator`."""

    nodes: np.ndarray
    w: np.ndarray
    mass: np.ndarray
    left: str = DIRICHLET


@dataclass(frozen=True)
class GridStates:
    """The states of one grid, ascending in energy.

    ``energy`` (n,) relative to the operators' shift; ``index`` the global
    Sturm index (states of the whole grid below); ``sector`` and ``parity`` of
    each; ``vectors[k]`` the unit eigenvector of T in its sector;
    ``roundoff`` the round-off floor of each energy (:func:`_roundoff`); ``count_below`` the number
    of states below e_hi on this grid; ``first_index`` the global index of the
    lowest state in the window.
    """

    energy: np.ndarray
    index: np.ndarray
    sector: np.ndarray
    parity: np.ndarray
    vectors: tuple
    roundoff: np.ndarray
    count_below: int
    first_index: int

    @property
    def size(self) -> int:
        return int(self.energy.size)


def _count(op: Operator, e: float | None, default: int) -> int:
    if e is None:
        return 0
    if not math.isfinite(e):
        return default
    return int(kernels.sturm_count(op.d, op.e, e))


def _bisection(op: Operator, lo: int, hi: int, top: float, floor: float) -> np.ndarray:
    """Eigenvalues number lo .. hi - 1 of the sector by bisection on Sturm counts, to BISECTION_RTOL.

    Brackets: Gershgorin's lower bound and ``top`` (above every wanted value).
    Many values of a large grid go to LAPACK (``stebz``), whose simultaneous
    bisection shares the counts between them.
    """
    if hi <= lo:
        return np.empty(0)
    if op.size == 1:
        return np.array([op.d[0]])
    if (hi - lo) * op.size > LAPACK_WORK:
        from scipy.linalg import eigvalsh_tridiagonal

        return eigvalsh_tridiagonal(op.d, op.e, select="i", select_range=(lo, hi - 1), lapack_driver="stebz")
    off = np.abs(np.concatenate([[0.0], op.e])) + np.abs(np.concatenate([op.e, [0.0]]))
    below = float(np.min(op.d - off))
    above = top
    if not math.isfinite(above):  # walls or a confining potential: double a step until it holds the values
        above = kernels.upper_bracket(op.d, op.e, below, max(floor, 1e-3 * abs(below), 1e-300), hi)
    return kernels.bisect_eigenvalues(op.d, op.e, lo, hi - lo, below, above, BISECTION_RTOL, floor)


def _clusters(values: np.ndarray, floor: float) -> np.ndarray:
    """first[j]: the first member of the cluster of state j (states closer than CLUSTER_RTOL of their scale)."""
    return kernels.cluster_starts(np.ascontiguousarray(values, dtype=float), float(floor), CLUSTER_RTOL)


def _roundoff(matrix: np.ndarray, quotient: np.ndarray, energies: np.ndarray) -> np.ndarray:
    """Round-off floor of each energy (:func:`fdsolver.numerics.kernels.roundoff_floor`): the quotient's ulps;
    the rounding of its differences on fine cells, about 4 eps sqrt((|E| + <|V|>) sum |T_ii| u_i^2); and
    matrix^2 / gap (a vector mixed with its nearest neighbour of the same sector moves the quotient by
    gap * mixing^2, mixing ~ matrix / gap), at most the gap."""
    return kernels.roundoff_floor(np.ascontiguousarray(matrix, dtype=float), np.ascontiguousarray(quotient, dtype=float),
                                  np.ascontiguousarray(energies, dtype=float), QUOTIENT_ULPS)


def _vectors(op: Operator, values: np.ndarray, floor: float):
    """Unit eigenvectors (rows), energies and (matrix, quotient) round-off scales for the sector's eigenvalues
    ``values`` (ascending); None if inverse iteration broke down.

    Inverse iteration (orthonormal within clusters), a flux-form
    Rayleigh-Ritz rotation inside every cluster of two or more, which
    separates its members to the accuracy of the quotient, then
    :func:`fdsolver.numerics.kernels.finish_vectors` (quotients, residual
    checks, sharpening).
    """
    k = values.size
    vectors, energy, scales = np.empty((k, op.size)), np.empty(k), np.empty((k, 2))
    first = _clusters(values, floor)
    if not kernels.inverse_iteration(op.d, op.e, np.ascontiguousarray(values, dtype=float), first, INVERSE_STEPS,
                                     vectors):
        return None
    _rayleigh_ritz(op, vectors, first)
    kernels.finish_vectors(op.d, op.e, op.a, op.vw, op.w, first, float(floor), INVERSE_STEPS, RESIDUAL_FACTOR,
                           QUOTIENT_ULPS, EPS, vectors, energy, scales)
    return vectors, energy, scales


def _rayleigh_ritz(op: Operator, vectors: np.ndarray, first: np.ndarray) -> None:
    """Rotate every cluster's orthonormal basis onto the eigenvectors of K within it (in place).

    Inverse iteration from shifts that are not yet exact (a prediction, or
    bisection to BISECTION_RTOL) finds a cluster's subspace accurately (its
    distance to the rest of the spectrum is large) but not the members
    inside it; the flux-form matrix of the basis separates them.
    """
    starts = np.flatnonzero(np.diff(np.concatenate([first, [-1]])) != 0)
    j = 0
    for end in starts:
        if end > j:
            block = vectors[j : end + 1]
            h = kernels.flux_matrix(block / np.sqrt(op.w)[None, :], op.a, op.vw)
            _, rot = np.linalg.eigh(h)
            vectors[j : end + 1] = rot.T @ block
        j = end + 1


def solve_grid(sectors, e_lo: float | None, e_hi: float, max_states: int, floor: float,
               guess: tuple | None = None, vectors: bool = True, tried: bool = False) -> GridStates:
    """The lowest states with e_lo <= E < e_hi (at most ``max_states``) of the sectors (module docstring).

    ``floor`` is the smallest energy scale that counts (for relative
    comparisons near E = 0).  ``guess``, predicted energies and sectors (two arrays) of
    exactly these states from a coarser grid, lets the eigenvalues be found
    by inverse iteration instead of bisection; the prediction is proved by
    Sturm counts and replaced by bisection where the proof fails (``tried``: the
    one-call pass :func:`_predicted_grid` already failed on these sectors, so
    the general path starts at once).  Without
    ``vectors`` the energies are the bisection values (relative accuracy
    :data:`BISECTION_RTOL`), with empty vectors and zero round-off floors: a
    coarse solve that only locates the states.
    """
    if guess is not None and not tried:
        fast = _predicted_grid(sectors, e_lo, e_hi, max_states, floor, guess)
        if fast is not None:
            return fast
    lows = [_count(s.op, e_lo, 0) for s in sectors]
    highs = [_count(s.op, e_hi, s.op.size) for s in sectors]
    total = sum(h - lo for h, lo in zip(highs, lows))
    n = min(total, max_states)
    first_index, count_below = sum(lows), sum(highs)
    if n <= 0:
        return GridStates(np.empty(0), np.empty(0, int), np.empty(0, int), np.empty(0, int), (), np.empty(0),
                          count_below, first_index)
    # candidates: the lowest n of every sector, merged; the n lowest of them are the states
    wanted: list[int] = []
    values_of: list[np.ndarray] = []
    predicted = _predicted(guess, len(sectors), n)
    for s, (sector, lo, hi) in enumerate(zip(sectors, lows, highs)):
        m = min(hi - lo, n) if predicted is None else predicted[s].size
        values_of.append(predicted[s] if predicted is not None else _bisection(sector.op, lo, lo + m, e_hi, floor))
        wanted.append(m)
    if predicted is None:
        allv = np.concatenate(values_of)
        tags = np.concatenate([np.full(v.size, s) for s, v in enumerate(values_of)])
        keep = np.lexsort((tags, allv))[:n]
        wanted = [int(np.count_nonzero(tags[keep] == s)) for s in range(len(sectors))]
        values_of = [values_of[s][: wanted[s]] for s in range(len(sectors))]
    vecs, energies, rounds = [], [], []
    for s, sector in enumerate(sectors):
        if not vectors and predicted is None:
            vecs.append([np.empty(0)] * values_of[s].size)
            energies.append(values_of[s])
            rounds.append(np.zeros(values_of[s].size))
            continue
        got = _sector_states(sector.op, values_of[s], lows[s], floor, predicted is not None)
        if got is None:  # the prediction failed its proof: bisection
            got = _sector_states(sector.op, _bisection(sector.op, lows[s], lows[s] + wanted[s], e_hi, floor), lows[s],
                                 floor, False)
        if got is None:
            raise FloatingPointError("inverse iteration broke down on this grid")
        vecs.append(got[0])
        energies.append(got[1])
        rounds.append(got[2])
    if len(sectors) == 2:
        energy = np.concatenate(energies)
        sizes = (energies[0].size, energies[1].size)
        sector_of = np.concatenate([np.zeros(sizes[0], dtype=int), np.ones(sizes[1], dtype=int)])
        # mirror halves: by the oscillation theorem the even sector's j-th state is state 2j of the whole grid and
        # the odd sector's j-th is 2j + 1, so the order is exact even where the two energies agree to every digit
        rank = np.concatenate([2 * (lows[0] + np.arange(sizes[0])), 2 * (lows[1] + np.arange(sizes[1])) + 1])
        order = np.argsort(rank, kind="stable")
        flat_vecs = [*vecs[0], *vecs[1]]  # the sectors' vectors differ in length
        rounding = np.concatenate(rounds)
    else:
        energy, rounding = energies[0], rounds[0]
        sector_of = np.zeros(energy.size, dtype=int)
        order = np.argsort(energy, kind="stable")
        flat_vecs = vecs[0]
    if predicted is not None and not _complete(sectors, float(energy.max()), first_index + n, floor):
        return solve_grid(sectors, e_lo, e_hi, max_states, floor, None)
    if math.isfinite(e_hi):
        order = order[energy[order] < e_hi]
    parity = np.array([s.parity for s in sectors], dtype=int)[sector_of]
    return GridStates(energy[order], first_index + np.arange(order.size), sector_of[order], parity[order],
                      tuple(flat_vecs[i] for i in order), rounding[order],
                      count_below - (energy.size - order.size), first_index)


def _predicted_grid(sectors, e_lo, e_hi: float, max_states: int, floor: float, guess) -> GridStates | None:
    """:func:`solve_grid` with a guess, every step in one compiled call
    (:func:`fdsolver.numerics.kernels.predicted_grid`): the same counts, passes, round-off floors, merge and
    checks, hence the same states; None wherever the general path must decide (a cluster, a failed proof, a
    guess that does not fit the window), which then starts from the beginning."""
    two = len(sectors) == 2
    op0 = sectors[0].op
    op1 = sectors[1].op if two else op0
    energy, sector = guess
    status, en, sec, rounding, row, count_below, first_index, v0, v1 = kernels.predicted_grid(
        op0.d, op0.e, op0.a, op0.vw, op0.w, op1.d, op1.e, op1.a, op1.vw, op1.w, two,
        np.ascontiguousarray(energy, dtype=float), np.ascontiguousarray(sector, dtype=np.int64), e_lo is not None,
        0.0 if e_lo is None else float(e_lo), float(e_hi), int(max_states), float(floor), CLUSTER_RTOL,
        INVERSE_STEPS, RESIDUAL_FACTOR, QUOTIENT_ULPS, EPS)
    if status != 0:
        return None
    return _states_of(sec, en, rounding, row, count_below, first_index, (v0, v1), [s.parity for s in sectors])


def _states_of(sec, en, rounding, row, count_below: int, first_index: int, rows, parities) -> GridStates:
    """GridStates from a compiled pass's arrays (:func:`fdsolver.numerics.kernels.predicted_grid`)."""
    which = sec.tolist()
    return GridStates(en, first_index + np.arange(en.size), sec, np.array([parities[s] for s in which], dtype=int),
                      tuple(rows[s][r] for s, r in zip(which, row.tolist())), rounding, count_below, first_index)


def point_arrays(potential) -> tuple[np.ndarray, np.ndarray]:
    """(positions, strengths) of the potential's point terms as two arrays, for :func:`constant_level`."""
    terms = potential.point_terms()
    return np.array([p for p, _ in terms], dtype=float), np.array([a for _, a in terms], dtype=float)


def constant_level(base: np.ndarray, cells: tuple, level: int, center: float | None, potential, shift: float,
                   e_lo, e_hi: float, max_states: int, floor: float, guess, points=None) -> GridStates | None:
    """The states of level ``level`` of ``base`` for a potential constant on every base cell (``cells``: its V and
    m per base cell, :func:`fdsolver.numerics.operator.cell_constants`), from the predicted energies ``guess``,
    in one compiled call (:func:`fdsolver.numerics.kernels.constant_level`): the operators of
    :func:`fdsolver.boundstates.levels.sectors_on` on ``fdsolver.numerics.grid.refine(base, level)`` and the
    states :func:`solve_grid` finds from the guess, without building the operators in Python.  None where the
    general path must decide (:func:`_predicted_grid`).  ``points``: :func:`point_arrays` of the potential, if
    the caller keeps them across levels.
    """
    energy, sector = guess
    pos, alpha = point_arrays(potential) if points is None else points
    (status, en, sec, rounding, row, count_below, first_index, v0, v1), _ = kernels.constant_level(
        base, cells[0], cells[1], int(level), center is not None, 0.0 if center is None else float(center),
        float(potential.hbar2_2me), float(shift), pos, alpha, np.ascontiguousarray(energy, dtype=float),
        np.ascontiguousarray(sector, dtype=np.int64), e_lo is not None, 0.0 if e_lo is None else float(e_lo),
        float(e_hi), int(max_states), float(floor), CLUSTER_RTOL, INVERSE_STEPS, RESIDUAL_FACTOR, QUOTIENT_ULPS, EPS)
    if status != 0:
        return None
    return _states_of(sec, en, rounding, row, count_below, first_index, (v0, v1), (1, -1) if center is not None else (0,))


def constant_levels(base: np.ndarray, cells: tuple, center: float | None, potential, shift: float, e_lo,
                    e_hi: float, max_states: int, floor: float, guess, max_levels: int, min_levels: int,
                    max_nodes: int, tol: float, growth: float, points=None):
    """Levels 0, 1, ... of ``base`` for a potential constant on every base cell, solved, extrapolated and judged
    in one compiled call (:func:`fdsolver.numerics.kernels.constant_levels`) while they are regular.

    Returns (reason, rows, sizes, states, grid, judged): the reason it stopped (a ``kernels.LEVELS_*`` code),
    the energies of every level done (one array each), their node counts, the newest done level's
    :class:`GridStates` and (nodes, sectors) (both None if no level was done): its nodes and its sectors' grids
    (:class:`SectorGrid`, the fields of the operators :func:`fdsolver.boundstates.levels.sectors_on` makes that
    the results read), from the same call; and where every state was judged (``LEVELS_DONE``) the extrapolation
    settled by :func:`fdsolver.numerics.kernels.settle_levels` (energies, their errors with the round-off floor,
    the states limited by round-off, the splittings and their errors, which splittings are only bounded, how far
    each energy is out of order), else None; the caller's level loop goes on from level
    ``len(rows)`` where the reason asks for it.  The arguments are those of :func:`constant_level`,
    with the level loop's limits and tolerance.
    """
    energy, sector = guess
    pos, alpha = point_arrays(potential) if points is None else points
    reason, done, rows, sizes, got, ops, judged = kernels.constant_levels(
        base, cells[0], cells[1], center is not None, 0.0 if center is None else float(center),
        float(potential.hbar2_2me), float(shift), pos, alpha, np.ascontiguousarray(energy, dtype=float),
        np.ascontiguousarray(sector, dtype=np.int64), e_lo is not None, 0.0 if e_lo is None else float(e_lo),
        float(e_hi), int(max_states), float(floor), CLUSTER_RTOL, INVERSE_STEPS, RESIDUAL_FACTOR, QUOTIENT_ULPS, EPS,
        int(max_levels), int(min_levels), int(max_nodes), float(tol), float(growth))
    states = grid = None
    if done:
        _, en, sec, rounding, row, count_below, first_index, v0, v1 = got
        states = _states_of(sec, en, rounding, row, count_below, first_index, (v0, v1),
                            (1, -1) if center is not None else (0,))
        nodes, w_even, sub, mass, w = ops  # the finest level's grid (the centre is node 1 of sub with a mirror)
        if center is None:
            sectors = [Sector(SectorGrid(sub, w, mass), 0)]
        else:  # the halves of :func:`~fdsolver.numerics.operator.mirror_halves`: the nodes and cells right of it
            sectors = [Sector(SectorGrid(sub[1:], w_even, mass[1:], NEUMANN), 1),
                       Sector(SectorGrid(sub[1:], w[1:], mass[1:], DIRICHLET), -1)]
        grid = (nodes, sectors)
    return (int(reason), list(rows), [int(k) for k in sizes], states, grid,
            judged if reason == kernels.LEVELS_DONE else None)


def constant_coarse(nodes: np.ndarray, cells: tuple, center: float | None, potential, shift: float, e_lo,
                    e_hi: float, max_states: int, floor: float) -> GridStates | None:
    """:func:`solve_grid` without a guess and without vectors (a coarse solve: energies by bisection) for a grid
    whose V and m are constant on every cell (``cells``, :func:`fdsolver.numerics.operator.cell_constants`), in
    one compiled call (:func:`fdsolver.numerics.kernels.constant_coarse`): the same states.  None where the
    general path must decide (it says what is wrong, or hands many values to LAPACK)."""
    pos, alpha = point_arrays(potential)
    status, energy, sector, count_below, first_index = kernels.constant_coarse(
        np.ascontiguousarray(nodes, dtype=float), cells[0], cells[1], center is not None,
        0.0 if center is None else float(center), float(potential.hbar2_2me), float(shift), pos, alpha,
        e_lo is not None, 0.0 if e_lo is None else float(e_lo), float(e_hi), int(max_states), float(floor),
        BISECTION_RTOL, LAPACK_WORK)
    if status != 0:
        return None
    parity = np.array([(1, -1)[s] if center is not None else 0 for s in sector.tolist()], dtype=int)
    return GridStates(energy, first_index + np.arange(energy.size), sector, parity,
                      tuple(np.empty(0) for _ in range(energy.size)), np.zeros(energy.size), int(count_below),
                      int(first_index))


def _predicted(guess, n_sectors: int, n: int):
    """Per-sector arrays of predicted energies, or None if the guess does not describe exactly n states.

    ``guess`` is (energies, sectors), two arrays of one entry per state."""
    if guess is None:
        return None
    energy, sector = guess
    if energy.size != n or not np.isfinite(energy).all() or (n and (sector.min() < 0 or sector.max() >= n_sectors)):
        return None
    if n_sectors == 1:
        return [np.sort(energy)]
    return [np.sort(energy[sector == s]) for s in range(n_sectors)]


def _sector_states(op: Operator, values: np.ndarray, lo: int, floor: float, prove: bool):
    """(vectors, energies, round-off) of one sector's states, or None when a predicted set fails its proof.

    Without clusters the whole pass is one compiled call
    (:func:`fdsolver.numerics.kernels.sector_pass`); with clusters the
    Rayleigh-Ritz step runs between the inverse iteration and the rest, and
    predicted values (``prove``) must first pass
    :func:`fdsolver.numerics.kernels.predictions_separate` (each cluster nearer
    its own eigenvalues than any other), so that no vectors are computed from
    predictions the proof would refuse.
    """
    k = values.size
    if k == 0:
        return np.empty((0, op.size)), np.empty(0), np.empty(0)
    vectors, energies, scales = np.empty((k, op.size)), np.empty(k), np.empty((k, 2))
    status = kernels.sector_pass(op.d, op.e, op.a, op.vw, op.w, np.ascontiguousarray(values, dtype=float), int(lo),
                                 float(floor), bool(prove), CLUSTER_RTOL, INVERSE_STEPS, RESIDUAL_FACTOR,
                                 QUOTIENT_ULPS, EPS, vectors, energies, scales)
    if status == 1:
        vectors = energies = scales = None  # the cluster path makes its own: not both at once
        if prove and not kernels.predictions_separate(op.d, op.e, np.ascontiguousarray(values, dtype=float),
                                                      _clusters(values, floor), int(lo)):
            return None  # the predictions are too far off to start from: bisection, with no vectors spent on them
        got = _vectors(op, values, floor)
        if got is None:
            return None
        vectors, energies, scales = got
        order = np.argsort(energies, kind="stable")
        if np.any(order != np.arange(k)):  # where the quotients changed their order
            _permute_rows(vectors, order)
            energies, scales = energies[order], scales[order]
        if prove and not kernels.prove_indices(op.d, op.e, energies, _clusters(energies, floor), int(lo), float(floor),
                                               np.ascontiguousarray(scales[:, 0])):
            return None
        kernels.sign_convention(vectors)
    elif status != 0:
        return None
    return vectors, energies, _roundoff(scales[:, 0], scales[:, 1], energies)


def _permute_rows(rows: np.ndarray, order: np.ndarray) -> None:
    """rows[:] = rows[order] in place, with one row of scratch (a sector's vectors are the largest arrays of a
    many-state solve: no second copy)."""
    done = np.zeros(order.size, dtype=bool)
    for start in range(order.size):
        if done[start] or order[start] == start:
            continue
        scratch = rows[start].copy()
        j = start
        while True:
            done[j] = True
            nxt = int(order[j])
            if nxt == start:
                rows[j] = scratch
                break
            rows[j] = rows[nxt]
            j = nxt


def _complete(sectors, top: float, expected: int, floor: float) -> bool:
    """True if exactly ``expected`` states of the whole grid lie at or below ``top`` (nothing was skipped)."""
    delta = max(1e-7 * max(abs(top), floor), 0.0)
    return sum(int(kernels.sturm_count(s.op.d, s.op.e, top + delta)) for s in sectors) == expected
