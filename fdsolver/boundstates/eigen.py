"""Bound states of one assembled operator.

:func:`solve_window` returns the lowest eigenpairs of T below ``e_hi`` (at
most ``max_states``), each polished to near machine precision of the energy
scale:

1. a Sturm count (:func:`fdsolver.kernels.sturm_count`) says how many there
   are;
2. LAPACK bisection and inverse iteration (``stebz``/``stein`` through
   :func:`scipy.linalg.eigh_tridiagonal`, O(N) memory) gives them to an
   absolute accuracy of about eps * ||T||, which on graded grids with tiny
   cells (||T|| ~ C / (m h_min^2)) can be far worse than the target;
3. two steps of Rayleigh-quotient iteration with the flux-form quotient
   (:func:`fdsolver.kernels.flux_quotient`) bring each energy to a few ulps of
   the energy scale.  A polish that would move an energy further than
   LAPACK's error bound, or change its node count, is rejected.

Energies are in the case energy unit; ``psi`` are the grid values of the
wavefunctions, normalised so that sum w_i psi_i^2 = 1 (integral |psi|^2 dx = 1
with the lumped node weights), in length^-1/2.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import eigh_tridiagonal

from fdsolver.numerics import kernels
from fdsolver.numerics.operator import Operator

EPS = np.finfo(float).eps


@dataclass(frozen=True)
class GridStates:
    """Eigenpairs on one grid: ``energy`` (n,), ``psi`` (n, N) at interior nodes, ``count_below`` total below e_hi."""

    energy: np.ndarray
    psi: np.ndarray
    count_below: int


def count_nodes(psi: np.ndarray, rel: float = 1e-7) -> int:
    """Sign changes of ``psi``, ignoring values below ``rel`` of its maximum (round-off tails)."""
    big = np.abs(psi) > rel * np.max(np.abs(psi))
    s = np.sign(psi[big])
    return int(np.count_nonzero(s[1:] != s[:-1]))


def _from_guess(op: Operator, guess: np.ndarray, i0: int):
    """Eigenpairs i0, i0+1, ... by shifted inverse iteration from predicted energies; None if any check fails.

    Each state: three inverse-iteration steps at the predicted energy, one
    Rayleigh-quotient step, then two Sturm counts that prove it is eigenvalue
    number i0 + k (no state skipped or taken twice).  Costs O(N) per state
    instead of a full bisection.
    """
    d, e = op.d, op.e
    sqw = np.sqrt(op.w)
    n = guess.size
    vals = np.empty(n)
    vecs = np.empty((op.size, n))
    start = 1.0 + 0.01 * np.sin(np.arange(op.size) * 0.7548776662466927)  # deterministic, not an eigenvector
    for k in range(n):
        u = start / np.sqrt(np.sum(start * start))
        sigma = float(guess[k])
        for step in range(4):
            y = kernels.tridiag_solve(d, e, sigma, u)
            big = np.max(np.abs(y))
            if not np.isfinite(big) or big == 0.0:
                return None
            y = y / big
            u = y / np.sqrt(np.sum(y * y))
            if step == 2:
                sigma = kernels.flux_quotient(u / sqw, op.a, op.vw, op.w)
        lam = kernels.flux_quotient(u / sqw, op.a, op.vw, op.w)
        gap = abs(lam) * 1e-7 + 1e-300
        if kernels.sturm_count(d, e, lam - gap) != i0 + k or kernels.sturm_count(d, e, lam + gap) != i0 + k + 1:
            return None
        vals[k] = lam
        vecs[:, k] = u
    return vals, vecs


def solve_window(
    op: Operator, e_hi: float, max_states: int, e_lo: float | None = None, guess: np.ndarray | None = None
) -> GridStates:
    """Lowest eigenpairs with e_lo <= E < e_hi (at most ``max_states``), polished.

    ``guess``, predicted energies of exactly these states (from a coarser
    level), lets each be found by inverse iteration instead of bisection; the
    result is checked by Sturm counts and falls back to LAPACK if it fails.
    """
    d, e = op.d, op.e
    n_below = kernels.sturm_count(d, e, e_hi) if np.isfinite(e_hi) else op.size
    i0 = kernels.sturm_count(d, e, e_lo) if e_lo is not None else 0
    n = min(n_below - i0, max_states)
    if n <= 0:
        return GridStates(np.empty(0), np.empty((0, op.size)), n_below)
    found = _from_guess(op, np.asarray(guess, dtype=float), i0) if guess is not None and len(guess) == n else None
    if found is None:
        vals, vecs = eigh_tridiagonal(d, e, select="i", select_range=(i0, i0 + n - 1), lapack_driver="stebz")
    else:
        vals, vecs = found
    norm_t = float(np.max(np.abs(d)) + 2.0 * np.max(np.abs(e))) if e.size else float(np.max(np.abs(d)))
    lapack_bound = 8.0 * EPS * norm_t * max(1.0, np.sqrt(op.size) / 10.0)
    sqw = np.sqrt(op.w)
    energies = np.empty(n)
    psis = np.empty((n, op.size))
    for k in range(n):
        u = vecs[:, k]
        lam0 = vals[k]
        psi = u / sqw
        nodes0 = count_nodes(psi)
        lam = kernels.flux_quotient(psi, op.a, op.vw, op.w)
        best_psi, best_lam = psi, lam
        if abs(lam - lam0) <= lapack_bound + 1e-12 * abs(lam0):
            for _ in range(2):
                y = kernels.tridiag_solve(d, e, lam, u)
                big = np.max(np.abs(y))
                if not np.isfinite(big) or big == 0.0:
                    break
                y = y / big
                nrm = np.sqrt(np.sum(y * y))  # pairwise sum: the same result for any BLAS thread count
                if not np.isfinite(nrm) or nrm == 0.0:
                    break
                u_new = y / nrm
                psi_new = u_new / sqw
                lam_new = kernels.flux_quotient(psi_new, op.a, op.vw, op.w)
                if abs(lam_new - lam0) > lapack_bound + 1e-12 * abs(lam0) or count_nodes(psi_new) != nodes0:
                    break
                u, psi, lam = u_new, psi_new, lam_new
                best_psi, best_lam = psi, lam
        norm = np.sqrt(np.sum(op.w * best_psi**2))
        best_psi = best_psi / norm
        # sign convention: the first lobe (leftmost significant extremum) is positive
        big = np.flatnonzero(np.abs(best_psi) > 1e-3 * np.max(np.abs(best_psi)))
        if big.size and best_psi[big[0]] < 0:
            best_psi = -best_psi
        energies[k] = best_lam
        psis[k] = best_psi
    order = np.argsort(energies)
    energies, psis = energies[order], psis[order]
    keep = energies < e_hi if np.isfinite(e_hi) else np.ones(n, dtype=bool)
    return GridStates(energies[keep], psis[keep], n_below - int(np.count_nonzero(~keep)))
