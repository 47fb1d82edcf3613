"""Finite stacks of N periods beside the bands: their levels in the minibands, N-fold clusters, widths.

The stack of N periods (:meth:`fdsolver.bloch.lattice.Lattice.finite`) is solved as any potential, by
:func:`fdsolver.boundstates.driver.solve_potential` (finite differences, Richardson, error bars), and
each level is set beside the band structure of the infinite lattice:

* ``"hard"``: walls at the two period ends x0 and x0 + N L.  Exact statement: the one-period monodromy
  M is unimodular, so M^N = U_{N-1}(D) M - U_{N-2}(D) I (Cayley-Hamilton; U the Chebyshev polynomials
  of the second kind, D = Tr M / 2: Abeles' formula for N identical layers, Born and Wolf, Principles
  of Optics, sec. 1.6.5, from memory).  The solution vanishing at the first wall vanishes at the last
  iff M12 U_{N-1}(D) = 0: the levels are E_n(q_j), q_j = j pi / (N L), j = 1 .. N-1 (N - 1 in every
  band), plus one level per gap where M12 = 0 (the Dirichlet eigenvalue of one period, in the gap or
  at one of its edges).  The cluster of band n then spans E_n(q_1) .. E_n(q_{N-1}) (the
  ``predicted_width``), a fraction 1 - O(1/N^2) of the band width;
* ``"open"``: N periods of the localised components (and the stack's inner layers) embedded in the
  background (the stack's outer layers); the bound levels below the continuum threshold form
  clusters of N levels per miniband (tight binding: the cluster width is W cos(pi / (N + 1)) for
  nearest-neighbour coupling), and a termination can add states in the gaps.

A level belongs to band n when it lies within [bottom_n, top_n] widened by the errors of the level
and of the edges (and 1e-9 E_L); otherwise to no band (-1, in a gap).  Its Bloch wavevector is
arccos(D(E)) / L there.  Energies in the case energy unit, wavevectors in 1/length.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.bloch.lattice import Lattice
from fdsolver.bloch.result import Bands
from fdsolver.bloch.structure import BandSettings, band_structure
from fdsolver.boundstates.driver import solve_potential
from fdsolver.boundstates.settings import SolveSettings
from fdsolver.errors import CaseError

#: columns of :meth:`StackBands.rows`
ROW_FIELDS = ("n_periods", "band", "count", "cluster_bottom", "cluster_top", "cluster_width", "band_width",
              "width_ratio", "predicted_width")


@dataclass(frozen=True)
class StackBands:
    """Levels of N-period stacks beside the bands (arrays over ``n_periods`` x level or x band).

    ``energy``/``energy_error``/``band``/``wavevector`` (n_stacks, max levels; nan / -2 padding):
    the stack's levels, the band holding each (-1: in a gap) and its Bloch wavevector (nan in gaps).
    ``cluster_*`` (n_stacks, n_bands): count, bottom, top and width of the levels in each band;
    ``width_ratio`` = cluster width / band width.  Hard walls only (else nan): ``predicted_energy``
    (n_stacks, max levels), the exact levels E_n(j pi / NL) and the one-period Dirichlet levels, lowest
    first, and ``predicted_width``, the width of the predicted cluster in each band.
    ``bands``: the infinite lattice's band structure.
    """

    termination: str
    n_periods: np.ndarray
    energy: np.ndarray
    energy_error: np.ndarray
    band: np.ndarray
    wavevector: np.ndarray
    cluster_count: np.ndarray
    cluster_bottom: np.ndarray
    cluster_top: np.ndarray
    cluster_width: np.ndarray
    width_ratio: np.ndarray
    predicted_width: np.ndarray
    predicted_energy: np.ndarray
    bands: Bands
    messages: tuple = ()

    def rows(self) -> list[dict]:
        """One dict per (stack, band): the table of clusters (keys :data:`ROW_FIELDS`)."""
        out = []
        w = self.bands.edges.band_width
        for i, n in enumerate(self.n_periods):
            for b in range(w.size):
                out.append(dict(zip(ROW_FIELDS, (int(n), b, int(self.cluster_count[i, b]),
                                                 float(self.cluster_bottom[i, b]), float(self.cluster_top[i, b]),
                                                 float(self.cluster_width[i, b]), float(w[b]),
                                                 float(self.width_ratio[i, b]), float(self.predicted_width[i, b])))))
        return out


def _assign(bands: Bands, energy: np.ndarray, error: np.ndarray):
    """Band index (-1 in a gap) and Bloch wavevector of each level."""
    ed = bands.edges
    slack = error[:, None] + 1e-9 * ed.energy_scale
    lo = ed.band_bottom[None, :] - ed.band_bottom_error[None, :] - slack
    hi = ed.band_top[None, :] + ed.band_top_error[None, :] + slack
    inside = (energy[:, None] >= lo) & (energy[:, None] <= hi)
    band = np.where(inside.any(axis=1), np.argmax(inside, axis=1), -1)
    q = np.full(energy.size, np.nan)
    ok = band >= 0
    if ok.any():
        d = bands.model.levels[-1].evaluate(energy[ok], False)[:, 0]
        q[ok] = np.arccos(np.clip(d, -1.0, 1.0)) / bands.period
    return band, q


def stack_bands(lat: Lattice, n_periods=(2, 4, 8, 16), termination: str = "hard", bands: Bands | None = None,
                n_bands: int = 3, tolerance: float = 1e-9) -> StackBands:
    """Solve stacks of each N in ``n_periods`` and set their levels beside the bands (module docstring).

    ``bands`` defaults to :func:`~fdsolver.bloch.structure.band_structure` of ``lat`` with ``n_bands``
    bands; each stack asks the solver for N * n_bands levels at relative ``tolerance``.
    """
    ns = np.asarray(sorted({int(n) for n in n_periods}), dtype=int)
    if ns.size == 0 or ns[0] < 1:
        raise CaseError(f"numbers of periods must be whole numbers >= 1, got {n_periods!r}", key="n_periods")
    if bands is None:
        bands = band_structure(lat, BandSettings(n_bands=n_bands, n_wavevectors=11))
    nb = bands.n_bands
    levels, errors, messages = [], [], []
    for n in ns:
        pot, dom = lat.finite(int(n), termination)
        sol = solve_potential(pot, dom, SolveSettings(tolerance=tolerance, max_states=int(n) * nb))
        levels.append(np.asarray(sol.energy, float))
        errors.append(np.asarray(sol.energy_error, float))
        messages.extend(f"N = {n}: {m}" for m in sol.messages)
    width = max(e.size for e in levels)
    shape = (ns.size, width)
    energy, error = np.full(shape, np.nan), np.full(shape, np.nan)
    band, wq = np.full(shape, -2, dtype=int), np.full(shape, np.nan)
    count = np.zeros((ns.size, nb), dtype=int)
    c_lo, c_hi, pred = (np.full((ns.size, nb), np.nan) for _ in range(3))
    pred_e = np.full(shape, np.nan)
    mu = bands.model.dirichlet_levels()[0] if termination == "hard" else None
    for i, (e, err) in enumerate(zip(levels, errors)):
        energy[i, : e.size], error[i, : e.size] = e, err
        b, q = _assign(bands, e, err)
        band[i, : e.size], wq[i, : e.size] = b, q
        for k in range(nb):
            mine = e[b == k]
            count[i, k] = mine.size
            if mine.size:
                c_lo[i, k], c_hi[i, k] = mine.min(), mine.max()
        if mu is not None:
            p, pb = _predicted(bands, mu, int(ns[i]), lat.period)
            take = min(e.size, p.size)
            pred_e[i, :take] = p[:take]
            for k in range(nb):
                mine = p[:take][pb[:take] == k]
                pred[i, k] = mine.max() - mine.min() if mine.size else np.nan
    c_w = c_hi - c_lo
    ratio = c_w / bands.edges.band_width[None, :]
    return StackBands(termination, ns, energy, error, band, wq, count, c_lo, c_hi, c_w, ratio, pred, pred_e, bands,
                      tuple(messages))


def _predicted(bands: Bands, mu: np.ndarray, n: int, period: float):
    """Exact levels of N periods between hard walls (module docstring), sorted, with their band (-1: gap)."""
    ed = bands.edges
    es, bs = [mu], [np.full(mu.size, -1)]
    if n >= 2:
        qj = np.arange(1, n) * math.pi / (n * period)
        for k in range(bands.n_bands):
            es.append(bands.model.energies_at(k, qj)[0])
            bs.append(np.full(qj.size, k))
    e, b = np.concatenate(es), np.concatenate(bs)
    slack = 1e-9 * ed.energy_scale
    for k in range(bands.n_bands):  # a Dirichlet level on a band edge counts in that band
        at = (b == -1) & (e >= ed.band_bottom[k] - ed.band_bottom_error[k] - slack) & \
             (e <= ed.band_top[k] + ed.band_top_error[k] + slack)
        b[at] = k
    order = np.argsort(e, kind="stable")
    return e[order], b[order]
