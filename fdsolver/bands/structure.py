"""Bloch bands of a lattice with error bars: the driver (edges, masses, E_n(q), density of states).

Method: the one-period transfer matrix.  On every cell level (:mod:`fdsolver.bands.cellgrid`) the
Hill discriminant D(E) = Tr M / 2, its exact energy derivative and the Dirichlet count come from
:func:`fdsolver.numerics.period.evaluate`; band edges are found with none missed by the band index of
:mod:`fdsolver.bands.edges`; E_n(q) is the root of D(E) = cos(q L) inside band n, where D is monotone
(:mod:`fdsolver.bands.roots`), and at q = 0 and q = pi/L it *is* the band edge.  Effective masses come
from the curvature of E(q) at the edges, which the discriminant gives in closed form: expanding
D(E_edge + dE) = D_edge + D' dE = cos(q L) about q = 0 or pi/L,

    d^2E/dq^2 = -D_edge L^2 / D'(E_edge),   m* / m_e = hbar^2 / (m_e d^2E/dq^2) = -2 C D'(E_edge) / (D_edge L^2)

(C = hbar^2 / 2 m_e; positive at band bottoms, negative at tops; it tends to 0 where a gap closes, as
in two-band k.p theory).

Accuracy and error estimates:

* compact lattices (square wells and barriers, layer stacks, point terms: V constant between
  features) are solved on exact cells; every number is exact up to round-off, and its error estimate
  is the propagated round-off of D (:func:`fdsolver.bands.roots.roundoff`);
* smooth potentials use midpoint cells on nested levels (error O(h^2), even expansion).  Edges,
  widths, gaps, masses and every E_n(q) are Richardson-extrapolated over the levels
  (:class:`fdsolver.numerics.richardson.Romberg`; widths and gaps extrapolated as differences, whose
  discretisation error is far smaller than that of each edge) until every error estimate is below
  ``tolerance * max(|E|, E_L)``, E_L = C pi^2 / (m_min L^2) the free-particle energy at the zone
  boundary (masses: ``tolerance`` relative); the round-off of the finest level is added.

Energies in the case energy unit, lengths in its length unit, wavevectors in 1/length, masses in m_e.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.bands import roots
from fdsolver.bands.bloch import bloch_values
from fdsolver.bands.cellgrid import CellLevels, cell_levels
from fdsolver.bands.dos import density, density_error, states_below
from fdsolver.bands.edges import EdgeSet, find_edges
from fdsolver.bands.lattice import Lattice, free_mass
from fdsolver.bands.result import BandEdges, Bands, BlochFunction
from fdsolver.errors import CaseError
from fdsolver.numerics.richardson import Romberg


@dataclass(frozen=True)
class BandSettings:
    """How many bands and wavevectors, and how accurately.

    ``n_bands`` bands from the lowest; ``n_wavevectors`` points on [0, pi/L] (both ends included);
    ``tolerance`` the target error relative to max(|E|, E_L) (structure docstring); ``min_levels`` /
    ``max_levels`` bound the nested cell levels of smooth potentials; ``n_dos`` energies in the
    density-of-states table.
    """

    n_bands: int = 10
    n_wavevectors: int = 101
    tolerance: float = 1e-10
    min_levels: int = 3
    max_levels: int = 10
    n_dos: int = 401

    def checked(self) -> "BandSettings":
        """Self, or CaseError naming the bad setting."""
        for key, lo, hi in (("n_bands", 1, 10_000), ("n_wavevectors", 2, 10_000_000), ("min_levels", 1, 30),
                            ("max_levels", 1, 30), ("n_dos", 2, 10_000_000)):
            v = getattr(self, key)
            if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or not lo <= v <= hi:
                raise CaseError(f"must be a whole number from {lo} to {hi}, got {v!r}", key=f"solve.{key}")
        t = self.tolerance
        if isinstance(t, bool) or not isinstance(t, (int, float)) or not (1e-15 <= t <= 0.1):
            raise CaseError(f"must be a relative error from 1e-15 to 0.1, got {t!r}", key="solve.tolerance")
        if self.min_levels > self.max_levels:
            raise CaseError("min_levels must not exceed max_levels", key="solve.min_levels")
        return self


def zone_energy(lat: Lattice) -> float:
    """E_L = C pi^2 / (m_min L^2): the free-particle energy at the zone boundary (energy unit)."""
    return lat.hbar2_2me * math.pi**2 / (free_mass(lat) * lat.period**2)


def _first_range(lat: Lattice, n_bands: int) -> tuple[float, float]:
    """Guesses of an energy below band 0 and one above the bottom of band n_bands (edges.find_edges widens them)."""
    pot = lat.cell()
    xs = np.linspace(lat.start, lat.start + lat.period, 1025)
    v = pot.value(xs)
    m_max = float(np.max(pot.mass_at(xs)))
    attract = sum(a for _, a in pot.point_terms() if a > 0)
    repel = sum(-a for _, a in pot.point_terms() if a < 0)
    e_l = zone_energy(lat)
    e_lo = float(np.min(v)) - m_max * attract**2 / (4.0 * lat.hbar2_2me) - 0.1 * e_l
    e_hi = float(np.max(v)) + e_l * (n_bands + 1) ** 2 + repel / lat.period
    return e_lo, e_hi


def _masses(es: EdgeSet, n: int, c: float, period: float):
    """Band-edge effective masses (m_e) from dD/dE at the edges (structure docstring)."""
    s = np.where(np.arange(n) % 2 == 0, 1.0, -1.0)
    k = 2.0 * c / period**2
    return -k * s * es.bottom_rows[:n, 1], k * s * es.top_rows[:, 1]


def _level_values(es: EdgeSet, n: int, c: float, period: float) -> dict:
    mb, mt = _masses(es, n, c, period)
    gap = es.bottom[1:] - es.top
    gap = np.where(es.closed_below[1:], 0.0, gap)
    return {"bottom": es.bottom[:n], "top": es.top, "width": es.top - es.bottom[:n], "gap": gap,
            "mass_bottom": mb, "mass_top": mt}


def _edge_errors(es: EdgeSet, n: int, c: float, period: float) -> dict:
    """Round-off of every edge quantity on one level."""
    k = 2.0 * c / period**2
    eb, et = es.bottom_error, es.top_error
    # mass error: round-off of dD/dE plus its change |D''| dE over the edge's own error
    return {"bottom": eb[:n], "top": et, "width": eb[:n] + et, "gap": eb[1:] + et,
            "mass_bottom": k * (es.bottom_rows[:n, 3] + es.bottom_curvature[:n] * eb[:n]),
            "mass_top": k * (es.top_rows[:, 3] + es.top_curvature * et)}


class _LatticeModel:
    """What a :class:`Bands` keeps to evaluate more: the cell levels used (DOS, Bloch functions)."""

    def __init__(self, lat: Lattice, levels: list, edge_sets: list, energy_scale: float):
        self.lat = lat
        self.levels = levels
        self.edge_sets = edge_sets
        self.energy_scale = energy_scale

    def _rows(self, energies):
        table = Romberg()
        for cells in self.levels:
            table.add(cells.evaluate(energies, False)[:, :4])
        return table.value(), (table.error() if len(self.levels) > 1 else np.zeros((energies.size, 4)))

    def dos(self, energies):
        e = np.atleast_1d(energies)
        rows, extrap = self._rows(e)
        d, dd = rows[:, 0], rows[:, 1]
        d_err, dd_err = rows[:, 2] + extrap[:, 0], rows[:, 3] + extrap[:, 1]
        return density(d, dd, self.lat.period), density_error(d, dd, d_err, dd_err, self.lat.period)

    def states_below(self, energies):
        return states_below(self.levels[-1].evaluate(np.atleast_1d(energies)), self.lat.period)

    def bloch(self, bands: Bands, band: int, q: float, x, points: int) -> BlochFunction:
        lat = self.lat
        if not 0 <= band < bands.n_bands:
            raise CaseError(f"band must be from 0 to {bands.n_bands - 1}, got {band}", key="band")
        qr = abs(math.remainder(q, 2.0 * math.pi / lat.period))
        e, err = _energies_at(self, band, np.array([qr]))
        if x is None:
            x = np.linspace(lat.start, lat.start + lat.period, points)
        x = np.asarray(x, dtype=float)
        psi = bloch_values(self.levels[-1], lat.start, lat.period, float(e[0]), q, x)
        return BlochFunction(band, float(q), float(e[0]), float(err[0]), x, psi)


def _energies_at(model: _LatticeModel, band: int, q: np.ndarray):
    """E_n(q) at other wavevectors, extrapolated over the model's levels as the table was."""
    table = Romberg()
    for cells, es in zip(model.levels, model.edge_sets):
        e, _, _ = _dispersion(cells.evaluate, es, [band], q, model.lat.period, model.energy_scale)
        table.add(e[:, 0])
    err = table.error() if len(model.levels) > 1 else np.zeros(q.size)
    return table.value(), err


def wavevectors(period: float, n: int) -> np.ndarray:
    """n wavevectors q = t pi / L, t uniform on [0, 1] (1/length)."""
    return np.linspace(0.0, 1.0, n) * math.pi / period


def _dispersion(evaluate, es: EdgeSet, bands, q: np.ndarray, period: float, scale: float, guess=None):
    """E_n(q) for the given bands at wavevectors q in [0, pi/L] on one level.

    Returns (energies (n_q, n_b), their round-off bound dD/|D'| (edge errors at q = 0, pi/L), rows).
    """
    bands = list(bands)
    t = np.clip(np.asarray(q, dtype=float) * period / math.pi, 0.0, 1.0)
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
    rows = np.zeros((e.size, 5))
    if inner.any():
        x, r = roots.solve(evaluate, lo[inner], hi[inner], cc[inner], ss[inner], scale, guess[inner],
                           (hi - lo)[inner])
        e[inner], rows[inner] = x, r
        with np.errstate(divide="ignore", invalid="ignore"):
            ro[inner] = r[:, 2] / np.abs(r[:, 1])
    return e.reshape(nq, nb), ro.reshape(nq, nb), rows.reshape(nq, nb, 5)


def _hints(history: list) -> np.ndarray:
    """Energies bracketing each edge on the next level: the h^2-predicted value +- twice the predicted change."""
    last = history[-1]
    if len(history) == 1:
        delta = np.full(last.size, 1e-3 * float(np.max(last) - np.min(last) + 1e-300))
        return np.concatenate([last - delta, last + delta])
    step = (last - history[-2]) / 4.0
    pred = last + step
    delta = 2.0 * np.abs(step) + 1e-12 * float(np.max(np.abs(last)) + 1e-300)
    return np.concatenate([pred - delta, pred + delta])


def _edge_run(lat: Lattice, settings: BandSettings, with_q: bool):
    """Edges (and E(q)) on as many levels as the tolerance asks; returns everything the results need."""
    n = settings.n_bands
    e_l = zone_energy(lat)
    e_lo, e_hi = _first_range(lat, n)
    levels: CellLevels = cell_levels(lat, e_lo, e_hi)
    if not levels.compact:  # size the cells for the energy range actually spanned by the wanted bands
        es0 = find_edges(levels.at(0).evaluate, n, e_lo, e_hi, e_l)
        span = float(es0.bottom[-1] - es0.bottom[0])
        levels = cell_levels(lat, float(es0.bottom[0]) - 0.05 * span, float(es0.bottom[-1]) + 0.05 * span)
        e_lo, e_hi = float(es0.bottom[0]) - 0.05 * span - 0.1 * e_l, float(es0.bottom[-1]) + 0.05 * span
    q = wavevectors(lat.period, settings.n_wavevectors)
    tables, history, guesses = {}, [], []
    used, sets, es, evals = [], [], None, 0
    tol = settings.tolerance
    for level in range(1 if levels.compact else settings.max_levels):
        cells = levels.at(level)
        used.append(cells)
        es = find_edges(cells.evaluate, n, e_lo, e_hi, e_l, _hints(history) if history else ())
        evals += es.evaluations
        sets.append(es)
        history.append(np.concatenate([es.bottom, es.top]))
        vals = _level_values(es, n, lat.hbar2_2me, lat.period)
        ro = _edge_errors(es, n, lat.hbar2_2me, lat.period)
        if with_q:
            guess = None
            if len(guesses) >= 2:
                guess = guesses[-1] + (guesses[-1] - guesses[-2]) / 4.0
            elif guesses:
                guess = guesses[-1]
            eq, ro_q, rows_q = _dispersion(cells.evaluate, es, range(n), q, lat.period, e_l, guess)
            guesses.append(eq)
            vals["energy"], ro["energy"] = eq.ravel(), ro_q.ravel()
        for k, v in vals.items():
            tables.setdefault(k, Romberg()).add(v)
        e_lo, e_hi = float(es.bottom[0]) - 0.1 * e_l, float(es.bottom[-1]) + 0.1 * e_l
        if levels.compact or level + 1 < settings.min_levels:
            continue
        if all(_settled(k, tables[k], ro[k], tol, e_l) for k in tables):
            break
    final = used[-1]
    out = {k: (t.value(), t.error() if t.levels > 1 else np.zeros_like(t.value())) for k, t in tables.items()}
    ro = _edge_errors(es, n, lat.hbar2_2me, lat.period)
    if with_q:  # round-off of the finest level's roots, from the rows at them (edges: their own errors)
        rows = rows_q.reshape(-1, 5)
        inner = rows[:, 1] != 0.0
        ro_e = ro_q.ravel().copy()
        ro_e[inner] = roots.roundoff(final.evaluate, guesses[-1].ravel()[inner], rows[inner], e_l)
        ro["energy"] = ro_e
    return levels, used, sets, out, ro, q, evals


def _reference(key: str, value: np.ndarray, e_l: float) -> np.ndarray:
    return np.abs(value) if key.startswith("mass") else np.maximum(np.abs(value), e_l)


def _settled(key: str, table: Romberg, roundoff: np.ndarray, tol: float, e_l: float) -> bool:
    """Every value's extrapolation error is within the tolerance, or already below its round-off."""
    v, err = table.value(), table.error()
    return bool(np.all(err <= np.maximum(tol * _reference(key, v, e_l), 4.0 * roundoff)))


def _edges_result(lat, settings, levels, used, sets, out, ro, evals) -> BandEdges:
    es = sets[-1]
    n = settings.n_bands
    e_l = zone_energy(lat)
    err = {k: out[k][1] + ro[k] for k in ro if k in out}
    tol = settings.tolerance
    conv = np.ones(n, dtype=bool)
    for k in ("bottom", "top", "width"):
        conv &= err[k] <= tol * _reference(k, out[k][0], e_l)
    notes = []
    if not conv.all():
        bad = ", ".join(str(i) for i in np.flatnonzero(~conv))
        why = ("round-off of the discriminant (thick barriers: D grows like exp(kappa b))" if levels.compact
               else f"the cell levels ({len(used)}) or round-off")
        notes.append(f"band(s) {bad} are not within the tolerance {tol:g}: limited by {why}")
    method = ("exact cells (piecewise-constant potential), one-period transfer matrix" if levels.compact else
              f"midpoint cells on {len(used)} nested levels, Richardson-extrapolated, one-period transfer matrix")
    return BandEdges(
        period=lat.period,
        band_bottom=out["bottom"][0], band_bottom_error=err["bottom"],
        band_top=out["top"][0], band_top_error=err["top"],
        band_width=out["width"][0], band_width_error=err["width"],
        gap_above=out["gap"][0], gap_above_error=err["gap"], gap_closed=es.closed_below[1:].copy(),
        effective_mass_bottom=out["mass_bottom"][0], effective_mass_bottom_error=err["mass_bottom"],
        effective_mass_top=out["mass_top"][0], effective_mass_top_error=err["mass_top"],
        converged=conv, tolerance=tol, energy_scale=e_l, method=method, levels=len(used),
        cells=used[-1].size, evaluations=int(evals), notes=tuple(notes))


def band_edges(lat: Lattice, settings: BandSettings | None = None) -> BandEdges:
    """Band edges, widths, gaps and band-edge masses of ``lat`` (no wavevector grid): for scans."""
    settings = (settings or BandSettings()).checked()
    levels, used, sets, out, ro, _, evals = _edge_run(lat, settings, with_q=False)
    return _edges_result(lat, settings, levels, used, sets, out, ro, evals)


def band_structure(lat: Lattice, settings: BandSettings | None = None) -> Bands:
    """The band structure of ``lat``: edges, E_n(q) with errors, and the density of states (module docstring)."""
    settings = (settings or BandSettings()).checked()
    levels, used, sets, out, ro, q, evals = _edge_run(lat, settings, with_q=True)
    edges = _edges_result(lat, settings, levels, used, sets, out, ro, evals)
    n = settings.n_bands
    energy = out["energy"][0].reshape(-1, n)
    energy_err = (out["energy"][1] + ro["energy"]).reshape(-1, n)
    model = _LatticeModel(lat, used, sets, zone_energy(lat))
    span = float(edges.band_top[-1] - edges.band_bottom[0])
    dos_e = np.linspace(edges.band_bottom[0] - 0.02 * span, edges.band_top[-1] + 0.02 * span, settings.n_dos)
    g, g_err = model.dos(dos_e)
    return Bands(edges, q, energy, energy_err, dos_e, g, g_err, model)


__all__ = ["BandSettings", "band_edges", "band_structure", "zone_energy", "wavevectors"]
