"""Bloch bands with error bars: the driver (edges, widths, gaps, masses, E_n(q), density of states).

Method: the one-period transfer matrix.  On every cell level (:mod:`fdsolver.bloch.cellgrid`) the
Hill discriminant D(E) = Tr M / 2, its exact energy derivative and the Dirichlet count come from
:func:`fdsolver.numerics.period.evaluate`; band edges are found with none missed by the band index of
:mod:`fdsolver.bloch.edges`; E_n(q) is the root of D(E) = cos(q L) inside band n
(:mod:`fdsolver.bloch.dispersion`), and at q = 0 and q = pi/L it *is* the band edge.  Effective masses
come from the curvature of E(q) at the edges, which the discriminant gives in closed form: expanding
D(E_edge + dE) = D_edge + D' dE = cos(q L) about q = 0 or pi/L,

    d^2E/dq^2 = -D_edge L^2 / D'(E_edge),
    m* / m_e = hbar^2 / (m_e d^2E/dq^2) = -2 C D'(E_edge) / (D_edge L^2)

(C = hbar^2 / 2 m_e; positive at band bottoms, negative at tops; it tends to 0 where a gap closes, as
in two-band k.p theory).

Accuracy and error estimates:

* compact lattices (square wells and barriers, layer stacks, point terms: V constant between
  features) are solved on exact cells; every number is exact up to round-off, and its error estimate
  is the propagated round-off of D (:func:`fdsolver.bloch.roots.roundoff`);
* smooth potentials use midpoint cells on nested levels (error O(h^2), even expansion).  Edges,
  widths, gaps, masses and every E_n(q) are Richardson-extrapolated over the levels
  (:class:`fdsolver.numerics.richardson.Romberg`; widths and gaps extrapolated as differences, whose
  discretisation error is far smaller than that of each edge) until every energy's error estimate is
  below ``tolerance * max(|E|, E_L)`` (E_L = C pi^2 / (m_min L^2), the free-particle energy at the zone
  boundary) or below four times its round-off, which grows with the number of cells (then more levels
  would not help); the finest level's round-off is added.  Masses are extrapolated on the same levels
  and carry their own error estimate (they are not asked to meet the tolerance: near a closed gap a
  mass tends to zero and no relative tolerance is meaningful).

A quantity whose error stays above the tolerance is reported with its honest error and
``converged = False`` (typically the edges of an almost closed gap, whose conditioning as roots of
D = +-1 is only sqrt(round-off)).  Energies in the case energy unit, lengths in its length unit,
wavevectors in 1/length, masses in m_e.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.bloch import roots
from fdsolver.bloch.dispersion import dispersion, wavevectors
from fdsolver.bloch.edges import EdgeSet, find_edges, with_curvature
from fdsolver.bloch.lattice import Lattice
from fdsolver.bloch.model import BandModel
from fdsolver.bloch.result import BandEdges, Bands
from fdsolver.bloch.source import Source, lattice_source
from fdsolver.errors import CaseError
from fdsolver.numerics.richardson import Romberg


@dataclass(frozen=True)
class BandSettings:
    """How many bands and wavevectors, and how accurately.

    ``n_bands`` bands from the lowest; ``n_wavevectors`` points on [0, pi/L] (both ends included);
    ``tolerance`` the target error relative to max(|E|, E_L) (module docstring); ``min_levels`` /
    ``max_levels`` bound the nested cell levels of smooth potentials; ``n_dos`` about the number of
    energies in the density-of-states table (:func:`dos_energies`).
    """

    n_bands: int = 10
    n_wavevectors: int = 101
    tolerance: float = 1e-10
    min_levels: int = 3
    max_levels: int = 10
    n_dos: int = 401

    def checked(self) -> BandSettings:
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


# ------------------------------------------------------------------ one level
def _level_values(es: EdgeSet, n: int, c: float, period: float) -> dict:
    """Edge quantities of one level; masses from dD/dE at the edges (module docstring)."""
    s = np.where(np.arange(n) % 2 == 0, 1.0, -1.0)
    k = 2.0 * c / period**2
    gap = np.where(es.closed_below[1:], 0.0, np.maximum(es.bottom[1:] - es.top, 0.0))
    return {"bottom": es.bottom[:n], "top": es.top, "width": es.top - es.bottom[:n], "gap": gap,
            "mass_bottom": -k * s * es.bottom_rows[:n, 1], "mass_top": k * s * es.top_rows[:, 1]}


def _edge_errors(es: EdgeSet, n: int, c: float, period: float) -> dict:
    """Round-off of every edge quantity on one level (masses: round-off of D' plus |D''| times the edge error)."""
    k = 2.0 * c / period**2
    eb, et = es.bottom_error, es.top_error
    return {"bottom": eb[:n], "top": et, "width": eb[:n] + et, "gap": eb[1:] + et,
            "mass_bottom": k * (es.bottom_rows[:n, 3] + es.bottom_curvature[:n] * eb[:n]),
            "mass_top": k * (es.top_rows[:, 3] + es.top_curvature * et)}


def _hints(history: list) -> np.ndarray:
    """Energies bracketing each edge on the next level: the h^2-predicted value +- twice the predicted change."""
    last = history[-1]
    if len(history) == 1:
        delta = np.full(last.size, 1e-3 * float(np.max(last) - np.min(last) + 1e-300))
        return np.concatenate([last - delta, last + delta])
    step = (last - history[-2]) / 4.0
    delta = 2.0 * np.abs(step) + 1e-12 * float(np.max(np.abs(last)) + 1e-300)
    return np.concatenate([last + step - delta, last + step + delta])


def _reference(key: str, value: np.ndarray, e_l: float) -> np.ndarray:
    return np.abs(value) if key.startswith("mass") else np.maximum(np.abs(value), e_l)


def _settled(key: str, table: Romberg, roundoff: np.ndarray, tol: float, e_l: float) -> bool:
    """Every value's extrapolation error is within the tolerance, or already below four times its round-off."""
    v, err = table.value(), table.error()
    return bool(np.all(err <= np.maximum(tol * _reference(key, v, e_l), 4.0 * roundoff)))


# ------------------------------------------------------------------ the run
@dataclass
class _Run:
    used: list
    sets: list
    values: dict
    errors: dict
    compact: bool
    q: np.ndarray
    evaluations: int


def _run(src: Source, settings: BandSettings, with_q: bool) -> _Run:
    """Edges (and E(q)) on as many levels as the tolerance asks."""
    n = settings.n_bands
    e_l = src.zone_energy
    e_lo, e_hi = src.first_range(n)
    levels = src.levels(e_lo, e_hi)  # cells sized for the guessed range (it holds the wanted bands)
    q = wavevectors(src.period, settings.n_wavevectors)
    tables, history, guesses = {}, [], []
    used, sets, evals = [], [], 0
    tol = settings.tolerance
    ro = {}
    rows_q = ro_q = None
    for level in range(1 if levels.compact else settings.max_levels):
        cells = levels.at(level)
        used.append(cells)
        es = find_edges(cells.evaluate, n, e_lo, e_hi, e_l, _hints(history) if history else (), curvature=False)
        evals += es.evaluations
        sets.append(es)
        history.append(np.concatenate([es.bottom, es.top]))
        vals = _level_values(es, n, src.hbar2_2me, src.period)
        ro = _edge_errors(es, n, src.hbar2_2me, src.period)
        if with_q:
            guess = None
            if len(guesses) >= 2:
                guess = guesses[-1] + (guesses[-1] - guesses[-2]) / 4.0
            elif guesses:
                guess = guesses[-1]
            eq, ro_q, rows_q = dispersion(cells.evaluate, es, range(n), q, src.period, e_l, guess)
            guesses.append(eq)
            vals["energy"], ro["energy"] = eq.ravel(), ro_q.ravel()
        for k, v in vals.items():
            tables.setdefault(k, Romberg()).add(v)
        e_lo, e_hi = float(es.bottom[0]) - 0.1 * e_l, float(es.bottom[-1]) + 0.1 * e_l
        if levels.compact or level + 1 < settings.min_levels:
            continue
        if all(_settled(k, tables[k], ro[k], tol, e_l) for k in tables if not k.startswith("mass")):
            break
    out = {k: (t.value(), t.error() if t.levels > 1 else np.zeros_like(t.value())) for k, t in tables.items()}
    sets[-1] = with_curvature(used[-1].evaluate, sets[-1], e_l)  # the kept edges: curvature-aware errors
    ro.update(_edge_errors(sets[-1], n, src.hbar2_2me, src.period))
    if with_q:  # round-off of the finest level's roots from the rows there (D'' only where D' is tiny)
        rows = rows_q.reshape(-1, rows_q.shape[-1])
        inner = rows[:, 1] != 0.0
        r = ro_q.ravel().copy()
        r[inner] = roots.roundoff(used[-1].evaluate, guesses[-1].ravel()[inner], rows[inner], e_l)
        ro["energy"] = r
    values = {k: v[0] for k, v in out.items()}
    errors = {k: out[k][1] + ro[k] for k in out}
    return _Run(used, sets, values, errors, levels.compact, q, evals)


def _edges_result(src: Source, settings: BandSettings, run: _Run) -> BandEdges:
    n = settings.n_bands
    e_l, tol = src.zone_energy, settings.tolerance
    v, err = run.values, run.errors
    conv = np.ones(n, dtype=bool)
    for k in ("bottom", "top", "width"):
        conv &= err[k] <= tol * _reference(k, v[k], e_l)
    notes = []
    if not conv.all():
        bad = ", ".join(str(i) for i in np.flatnonzero(~conv))
        why = ("round-off of the discriminant (it grows like exp(kappa b) across thick barriers, and the edges of an "
               "almost closed gap are sensitive to it)" if run.compact else
               f"round-off or the cell levels ({len(run.used)})")
        notes.append(f"band(s) {bad} are not within the tolerance {tol:g}: limited by {why}")
    method = ("one-period transfer matrix on exact cells (piecewise-constant potential)" if run.compact else
              f"one-period transfer matrix on midpoint cells, {len(run.used)} nested levels, Richardson-extrapolated")
    es = run.sets[-1]
    return BandEdges(
        period=src.period,
        band_bottom=v["bottom"], band_bottom_error=err["bottom"],
        band_top=v["top"], band_top_error=err["top"],
        band_width=v["width"], band_width_error=err["width"],
        gap_above=np.maximum(v["gap"], 0.0), gap_above_error=err["gap"],
        gap_closed=es.closed_below[1:] | (v["gap"] <= err["gap"]),
        effective_mass_bottom=v["mass_bottom"], effective_mass_bottom_error=err["mass_bottom"],
        effective_mass_top=v["mass_top"], effective_mass_top_error=err["mass_top"],
        converged=conv, tolerance=tol, energy_scale=e_l, method=method, levels=len(run.used),
        cells=int(getattr(run.used[-1], "size", 0)), evaluations=int(run.evaluations), notes=tuple(notes))


def _source(model) -> Source:
    if isinstance(model, Source):
        return model
    if isinstance(model, Lattice):
        return lattice_source(model)
    if hasattr(model, "source"):
        return model.source()
    raise TypeError(f"no band source for {type(model).__name__}")


def dos_energies(edges: BandEdges, n: int) -> np.ndarray:
    """About ``n`` energies for the density-of-states table: every band sampled alike, however narrow.

    Each band gets n / n_bands points at the midpoints of a cosine-spaced grid (dense toward its edges,
    where g diverges as 1/sqrt|E - E_edge|, never on an edge itself); each gap gets its middle and two
    points 1e-3 of it from its ends, and 2 % of the span below the lowest band and above the highest
    two points each (g = 0 there).
    """
    nb = edges.n_bands
    m = max(8, (n - 3 * (nb + 1)) // nb)
    u = 0.5 * (1.0 - np.cos(np.pi * (np.arange(m) + 0.5) / m))
    b, t = edges.band_bottom, edges.band_top
    span = float(t[-1] - b[0])
    parts = [np.array([b[0] - 0.02 * span, b[0] - 0.01 * span])]
    for k in range(nb):
        parts.append(b[k] + (t[k] - b[k]) * u)
        hi = b[k + 1] if k + 1 < nb else t[k] + 0.02 * span
        if hi > t[k]:
            d = 1e-3 * (hi - t[k]) if k + 1 < nb else 0.5 * (hi - t[k])
            parts.append(np.array([t[k] + d, 0.5 * (t[k] + hi), hi - d]) if k + 1 < nb else np.array([t[k] + d, hi]))
    return sorted_distinct(np.concatenate(parts))


def band_edges(model, settings: BandSettings | None = None) -> BandEdges:
    """Band edges, widths, gaps and band-edge masses of a lattice (or comb, or Source); no wavevector grid."""
    settings = (settings or BandSettings()).checked()
    src = _source(model)
    return _edges_result(src, settings, _run(src, settings, with_q=False))


def band_structure(model, settings: BandSettings | None = None) -> Bands:
    """The band structure of a lattice (or comb, or Source): edges, E_n(q) with errors, density of states."""
    settings = (settings or BandSettings()).checked()
    src = _source(model)
    run = _run(src, settings, with_q=True)
    edges = _edges_result(src, settings, run)
    n = settings.n_bands
    bm = BandModel(src, run.used, run.sets)
    dos_e = dos_energies(edges, settings.n_dos)
    g, g_err = bm.dos(dos_e)
    return Bands(edges, run.q, run.values["energy"].reshape(-1, n), run.errors["energy"].reshape(-1, n),
                 dos_e, g, g_err, bm)
