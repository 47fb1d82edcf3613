"""E_n(q) on one level: the root of D(E) = cos(q L) inside band n, where D is monotone.

Band n (edges from :mod:`fdsolver.bloch.edges`) is the bracket; D - cos(q L) has the sign (-1)^n at the
band bottom.  At q = 0 and q = pi/L the energy *is* a band edge and is taken from the edge set (no
root is solved there).  The first guess is linear in cos(q L) between the edges (exact for a
tight-binding cosine band), or the caller's (e.g. from the previous cell level).  Roots by
:func:`fdsolver.bloch.roots.solve`.  Wavevectors in 1/length, energies in the model's energy unit.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.bloch import roots
from fdsolver.bloch.edges import EdgeSet
from fdsolver.bloch.roots import NCOL


def wavevectors(period: float, n: int) -> np.ndarray:
    """n wavevectors q = t pi / L, t uniform on [0, 1] (1/length): the irreducible zone."""
    return np.linspace(0.0, 1.0, n) * math.pi / period


def dispersion(evaluate, es: EdgeSet, bands, q: np.ndarray, period: float, scale: float, guess=None):
    """E_n(q) for the given bands at wavevectors q (reduced to [0, pi/L]) on one level.

    Returns (energies (n_q, n_b), their round-off bound dD/|D'| (the edge errors at q = 0, pi/L),
    provider rows at the roots (zeros at the edges)).
    """
    bands = list(bands)
    t = np.clip(np.abs(np.asarray(q, dtype=float)) * period / math.pi, 0.0, 1.0)
    c = np.cos(math.pi * t)
    c = np.where(t == 0.0, 1.0, np.where(t == 1.0, -1.0, c))
    nq, nb = t.size, len(bands)
    s = np.where(np.array(bands) % 2 == 0, 1.0, -1.0)

    def grid(per_band):
        return np.broadcast_to(np.asarray(per_band, dtype=float), (nq, nb)).ravel()

    lo, hi = grid([es.bottom[n] for n in bands]), grid([es.top[n] for n in bands])
    cc, ss = np.broadcast_to(c[:, None], (nq, nb)).ravel(), grid(s)
    at_bottom, at_top = cc == ss, cc == -ss
    inner = ~(at_bottom | at_top)
    if guess is None:
        guess = lo + (hi - lo) * 0.5 * (1.0 - ss * cc)
    guess = np.clip(np.asarray(guess, dtype=float).ravel(), lo, hi)
    e = np.where(at_bottom, lo, hi)
    ro = np.where(at_bottom, grid([es.bottom_error[n] for n in bands]), grid([es.top_error[n] for n in bands]))
    rows = np.zeros((e.size, NCOL))
    if inner.any():
        x, r = roots.solve(evaluate, lo[inner], hi[inner], cc[inner], ss[inner], scale, guess[inner],
                           (hi - lo)[inner])
        e[inner], rows[inner] = x, r
        with np.errstate(divide="ignore", invalid="ignore"):
            ro[inner] = r[:, 2] / np.abs(r[:, 1])
    return e.reshape(nq, nb), ro.reshape(nq, nb), rows.reshape(nq, nb, NCOL)
