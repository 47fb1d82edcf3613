"""Cells of one period on nested levels, and the Hill discriminant evaluated on them.

The period [start, start + L] is cut at every feature of the one-period
potential (:meth:`fdsolver.bloch.lattice.Lattice.cell`), as the march's cell
layouts of open potentials are (:mod:`fdsolver.numerics.cells`; a period has
no tails, so its layout is built here):

* a *compact* lattice (V constant between features: square wells and
  barriers, point terms, layer stacks) gets one cell per segment, exact, and
  a single level;
* otherwise segment [a, b] gets n = ceil((b - a) max(k / WAVE_STEP,
  1 / (VARIATION_STEP ell))) base cells (at least 2), with k the largest
  wave number or decay constant sqrt(m max(|V - E_lo|, |V - E_hi|) / C) on
  the segment for the energy range [E_lo, E_hi] of the wanted bands, and
  ell = (range of V over the period) / max |V'| on the segment, the length
  over which V changes there.  Level l halves every base cell l times
  (nested), each cell carrying V at its midpoint: the second-order Magnus
  cells of the march, whose error in D(E) is O(h^2) with an even expansion.

Every level is itself an exactly solved piecewise-constant period, so the
oscillation and interlacing theorems used by :mod:`fdsolver.bloch.edges`
hold on each level exactly.  The Dirichlet count is taken over the same cells
rotated to start at start + ROTATION L (the cell there is split, keeping its
value): a generic point, so that the Dirichlet eigenvalues of the rotated
period do not coincide with band edges, as they do for a period that starts
at a mirror point.  Lengths in the case length unit, energies in its energy
unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdsolver.bloch.lattice import Lattice
from fdsolver.numerics import period as P

#: base cell: at most this phase (radians) of the local wave
WAVE_STEP = 0.25
#: base cell: at most this fraction of the length over which V changes
VARIATION_STEP = 0.1
#: samples per segment when sizing its cells
SAMPLES = 33
#: a segment gets at most this many base cells
MAX_BASE_CELLS = 100_000
#: where the Dirichlet count's period starts, as a fraction of L (the golden section: a generic point)
ROTATION = 0.5 * (3.0 - math.sqrt(5.0))


@dataclass(frozen=True, eq=False)
class PeriodCells:
    """One level: cells of the period (edges, V, mass per cell; point strength per edge) and the rotated copy."""

    level: int
    edges: np.ndarray
    v: np.ndarray
    mass: np.ndarray
    jump: np.ndarray
    rotated: tuple
    c: float
    kscale: float
    constants: tuple = ()

    def __post_init__(self):
        object.__setattr__(self, "constants", P.cell_constants(self.edges, self.mass, self.c))

    @property
    def size(self) -> int:
        return int(self.v.size)

    def evaluate(self, energies, count: bool = True) -> np.ndarray:
        """Rows of :data:`fdsolver.numerics.period.COLUMNS` at each energy (D, dD/dE, errors, Dirichlet count, D -+ 1).

        Without ``count`` the Dirichlet count (a second march) is skipped and reported as -1.
        """
        e = np.ascontiguousarray(np.atleast_1d(np.asarray(energies, dtype=float)))
        out = np.empty((e.size, len(P.COLUMNS)))
        re, rv, rm, rj = self.rotated
        P.evaluate(*self.constants, self.v, self.jump, re, rv, rm, rj, self.c, self.kscale, e, bool(count), out)
        return out

    def monodromy(self, energy: float):
        """(M, dM/dE, log_scale) of the period at ``energy`` (:func:`fdsolver.numerics.period.monodromy`)."""
        return P.monodromy(self.edges, self.v, self.mass, self.jump, self.c, self.kscale, energy)

    def fundamentals(self, energy: float, xs):
        """Fundamental solutions at sorted positions ``xs`` in the period: (values (n, 4), log factors (n,))."""
        xs = np.ascontiguousarray(np.asarray(xs, dtype=float))
        out = np.empty((xs.size, 4))
        logs = np.empty(xs.size)
        P.fundamentals(self.edges, self.v, self.mass, self.jump, self.c, self.kscale, float(energy), xs, out, logs)
        return out, logs


def rotate(edges, v, mass, jump, start: float, period: float) -> tuple:
    """The same cells as a period starting at start + ROTATION * period (the cell there split in two)."""
    xs = start + ROTATION * period
    i = int(np.searchsorted(edges, xs, side="right")) - 1
    i = min(max(i, 0), v.size - 1)
    tiny = 1e-9 * (edges[i + 1] - edges[i])
    xs = min(max(xs, edges[i] + tiny), edges[i + 1] - tiny)
    n = v.size
    redges = np.concatenate([[xs], edges[i + 1:], edges[1:i + 1] + period, [xs + period]])
    rv = np.concatenate([[v[i]], v[i + 1:], v[:i], [v[i]]])
    rm = np.concatenate([[mass[i]], mass[i + 1:], mass[:i], [mass[i]]])
    rj = np.concatenate([[0.0], jump[i + 1:n], [jump[n] + jump[0]], jump[1:i + 1], [0.0]])
    return tuple(np.ascontiguousarray(a, dtype=float) for a in (redges, rv, rm, rj))


def _base_counts(pot, edges: np.ndarray, e_lo: float, e_hi: float) -> np.ndarray:
    """Base cells per segment (module docstring)."""
    a, b = edges[:-1], edges[1:]
    frac = np.linspace(0.0, 1.0, SAMPLES)
    sx = a[:, None] + (b - a)[:, None] * frac[None, :]
    v = pot.value(sx.ravel()).reshape(sx.shape)
    m = pot.mass_at(sx.ravel()).reshape(sx.shape)
    k = np.sqrt(m * np.maximum(np.abs(v - e_lo), np.abs(v - e_hi)) / pot.hbar2_2me)
    kmax = np.max(k, axis=1)
    span = float(np.max(v) - np.min(v))
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.max(np.abs(np.diff(v, axis=1)) / np.diff(sx, axis=1), axis=1)
        inv_ell = np.where(slope > 0, slope / max(span, 1e-300), 0.0)
    need = np.ceil((b - a) * np.maximum(kmax / WAVE_STEP, inv_ell / VARIATION_STEP))
    return np.clip(need, 2, MAX_BASE_CELLS).astype(np.int64)


def nested_cells(pot, base: np.ndarray, counts, level: int):
    """(edges, midpoints, point strength per edge): segment j of ``base`` split into counts[j] * 2**level equal cells."""
    if counts is None:
        edges = base
    else:
        n = np.asarray(counts, dtype=np.int64) * 2**level
        a, b = base[:-1], base[1:]
        start = np.concatenate([[0], np.cumsum(n)])
        seg = np.repeat(np.arange(n.size), n)
        j = np.arange(start[-1]) - start[seg]
        edges = np.concatenate([a[seg] + (b - a)[seg] * (j / n[seg]), base[-1:]])
    mid = 0.5 * (edges[:-1] + edges[1:])
    jump = np.zeros(edges.size)
    for pos, alpha in pot.point_terms():
        i = int(np.argmin(np.abs(edges - pos)))
        jump[i] += alpha
    return edges, mid, jump


@dataclass(frozen=True, eq=False)
class CellLevels:
    """The nested cell levels of one lattice, sized for the energy range [e_lo, e_hi]."""

    lattice: Lattice
    potential: object
    base: np.ndarray
    counts: tuple | None
    kscale: float
    e_range: tuple
    _cache: dict = field(default_factory=dict, repr=False)

    @property
    def compact(self) -> bool:
        return self.counts is None

    def at(self, level: int) -> PeriodCells:
        """The cells of nested level ``level`` (0 for compact lattices, which have one exact level)."""
        level = 0 if self.compact else int(level)
        if level not in self._cache:
            lat = self.lattice
            edges, mid, jump = nested_cells(self.potential, self.base, self.counts, level)
            v = self.potential.value(mid)
            mass = self.potential.mass_at(mid)
            arrs = [np.ascontiguousarray(a, dtype=float) for a in (edges, v, mass, jump)]
            self._cache[level] = PeriodCells(level, *arrs, rotate(*arrs, lat.start, lat.period), lat.hbar2_2me,
                                             self.kscale)
        return self._cache[level]


def cell_levels(lat: Lattice, e_lo: float, e_hi: float) -> CellLevels:
    """Cell levels of ``lat`` resolving energies from ``e_lo`` to ``e_hi`` (module docstring)."""
    pot = lat.cell()
    f = pot.features()
    base = f[(f >= lat.start) & (f <= lat.start + lat.period)]
    xs = np.linspace(lat.start, lat.start + lat.period, 513)
    v = pot.value(xs)
    m_max = float(np.max(pot.mass_at(xs)))
    vspan = float(np.max(np.abs(np.concatenate([v - e_lo, v - e_hi]))))
    c = pot.hbar2_2me
    kscale = c * math.sqrt(m_max * vspan / c + lat.period ** -2) / m_max
    counts = None if lat.compact else tuple(int(n) for n in _base_counts(pot, base, e_lo, e_hi))
    return CellLevels(lat, pot, base, counts, kscale, (float(e_lo), float(e_hi)))
