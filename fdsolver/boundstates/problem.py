"""The fixed facts of one solve, worked out once before any grid: thresholds, reference, budgets, symmetry.

Energies inside the solver are measured from a *reference*: the continuum
threshold V_t (the lower asymptote of V at open ends) where there is one,
else the lowest value of V in the box (hard walls, confining potentials).
The operator subtracts it from V before integrating (exactly zero where V
equals it), so a baseline of -100 meV or +1e6 changes no digit of the
spectrum, and "bound" means exactly "below the continuum threshold".  The
tolerance is relative to a state's energy measured from the same reference
(its binding energy at open ends), with a floor of 1e-6 of the potential's
range.  Energies in the case energy unit, lengths in its length unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdsolver.boundstates import counting
from fdsolver.boundstates.box import length_scale, provisional_box
from fdsolver.boundstates.settings import SolveSettings
from fdsolver.errors import CaseError
from fdsolver.model.domain import Domain, continuum_threshold
from fdsolver.model.potential import remembered
from fdsolver.numerics import kernels

#: measured upper bound of the working arrays per grid node (see DEVELOPERS.md)
BYTES_PER_NODE = 8 * 40
#: per node of the whole grid and kept state, what a solve holds at its peak (the observables of its finest
#: level) besides: the state's wavefunction unfolded on the whole grid, 8 bytes, and one byte of margin; its
#: eigenvector adds 8 bytes per node of its sector (:data:`BYTES_PER_VECTOR_NODE`: the whole grid, or half of it
#: for mirror halves) (peaks measured with tracemalloc: see DEVELOPERS.md; the observables are summed in one
#: compiled pass with temporaries per node only)
BYTES_PER_PSI_NODE = 8 + 1
BYTES_PER_VECTOR_NODE = 8
#: the WKB decay budget of a box end is ln(DECAY_TARGET / tol) / 2 + 1: truncation shift below tol / 100
DECAY_TARGET = 100.0
#: the energy scale of relative tolerances never falls below this fraction of the potential's range
ENERGY_FLOOR = 1e-6
#: samples of V over the provisional box for its range and minimum (a V that varies between its features; one
#: constant between them is read once in the middle of every piece, which sees every value it takes)
RANGE_SAMPLES = 4001


@dataclass
class Problem:
    """What to solve and the limits to solve it in; energies ``e_lo``/``e_hi`` are relative to ``reference``."""

    potential: object
    domain: Domain
    settings: SolveSettings
    threshold: float  # continuum threshold (absolute; inf for walls or confining V)
    reference: float  # absolute energy the solver measures from
    e_lo: float | None  # window, relative
    e_hi: float  # relative (inf: every state below the window top is bound)
    budget: float  # WKB decay integral of a box end
    scale: float  # the potential's largest length (box growth limits)
    box: tuple[float, float]  # provisional box
    v_range: tuple[float, float]  # min and max of V - reference over the provisional box
    deepest: float  # no bound state lies below this (relative; :func:`binding_floor`)
    floor: float  # smallest energy scale of relative tolerances
    mirror: float | None = None  # the potential's mirror centre (tested once), or None
    messages: list[str] = field(default_factory=list)
    _count: list[int] = field(default_factory=list, repr=False)

    @property
    def open(self) -> bool:
        """True if the ends are open and a continuum threshold exists (states can be unbound)."""
        return not self.domain.hard and math.isfinite(self.threshold)

    @property
    def whole_spectrum(self) -> bool:
        """True if every state below the threshold is wanted (no energy window)."""
        return self.settings.energy_window is None

    def absolute(self, energy):
        """Energies measured from the reference, back in the case's absolute scale."""
        return np.asarray(energy) + self.reference

    def energy_scale(self, energy: np.ndarray) -> np.ndarray:
        """|E - reference|: what relative tolerances are relative to (a state bound by 1e-12 of the depth must
        have its energy to 1e-8 of that, or be reported as not converged)."""
        return np.maximum(np.abs(energy), 1e-300)

    def bytes_per_node(self, halves: bool) -> int:
        """Bytes per node of a grid (as ``memory_mb`` counts them) with ``max_states`` states, solved whole or
        (``halves``) as its even and odd mirror halves, whose eigenvectors cover half the grid each."""
        k = self.settings.max_states
        vector = BYTES_PER_VECTOR_NODE // 2 if halves else BYTES_PER_VECTOR_NODE
        return BYTES_PER_NODE + k * (BYTES_PER_PSI_NODE + vector)

    def max_nodes(self, halves: bool) -> int:
        """The most grid nodes the memory budget allows (:meth:`bytes_per_node`)."""
        return int(self.settings.memory_mb * 2**20 / self.bytes_per_node(halves))

    def megabytes_for(self, nodes: int, halves: bool) -> float:
        """The memory (MB, as ``memory_mb`` counts it) a grid of ``nodes`` nodes takes with ``max_states`` states."""
        return nodes * self.bytes_per_node(halves) / 2**20

    def whole_line_count(self) -> int | None:
        """The box-independent number of bound states (zero-energy phase, computed once per potential:
        :meth:`~fdsolver.model.potential.Potential.remembered`); None without a threshold."""
        if not self.open:
            return None
        if not self._count:
            pot = self.potential
            self._count.append(remembered(pot, "open-line bound count", lambda: counting.bound_count(pot)))
        return self._count[0]


def binding_floor(potential, threshold: float, ms: np.ndarray, vs: np.ndarray, dx: np.ndarray,
                  sums: tuple | None = None) -> float:
    """An energy no bound state lies below (absolute, case energy unit), from V and m sampled over the box
    (``vs``, ``ms``) with cell widths ``dx``; ``sums``: their :func:`floor_sums`, where the caller made them.

    On the line, every bound state of -d/dx (C/m) d/dx + V with V -> c at infinity obeys
    |E - c| <= (m_max / 4C) (int (c - V)_+ dx)^2: the case gamma = 1/2 of the Lieb-Thirring inequalities, whose
    sharp constant 1/2 (for sum |E_j|^(1/2) <= 1/2 int V_-, units hbar^2/2m = 1) was proved by Hundertmark,
    Lieb and Thomas, Adv. Theor. Math. Phys. 2, 719 (1998) (quoted from memory); a delta well meets it,
    and a larger mass only lowers the kinetic energy, hence m_max.  Walls only raise the energies (min-max),
    so between walls it holds with c the potential's asymptotic level, where that is finite.  The floor is the
    higher of this and the lowest V: for a well much narrower than its decay length (a thin deep layer) it
    is far above the bottom of the well.  The integral is exact for a V constant between its features
    (sampled once per piece), a midpoint sum otherwise.  Point terms are not included.
    """
    _, lowest, _, heaviest, area = floor_sums(potential, threshold, ms, vs, dx) if sums is None else sums
    level = _floor_level(potential, threshold)
    if not (math.isfinite(level) and vs.size):
        return lowest
    m_max = max(heaviest, potential.mass)
    return max(lowest, level - m_max * area * area / (4.0 * potential.hbar2_2me))


def _floor_level(potential, threshold: float) -> float:
    """The asymptotic level c of :func:`binding_floor`: the continuum threshold, else the lower asymptote."""
    return threshold if math.isfinite(threshold) else min(potential.asymptote(-1), potential.asymptote(1))


def floor_sums(potential, threshold: float, ms: np.ndarray, vs: np.ndarray, dx: np.ndarray) -> tuple:
    """(every V finite, min V, max V, max m, int (c - V)_+ dx) of the box samples, in one compiled pass
    (:func:`fdsolver.numerics.kernels.floor_sums`, the numbers numpy's min, max and sum give): what
    :func:`_box_facts` and :func:`binding_floor` read from them (min V inf and the rest -inf or 0 without
    samples).  Energies in the case unit, m in m_e."""
    finite, lowest, highest, heaviest, area = kernels.floor_sums(
        np.ascontiguousarray(vs, dtype=float), np.ascontiguousarray(ms, dtype=float),
        np.ascontiguousarray(dx, dtype=float), float(_floor_level(potential, threshold)))
    return bool(finite), float(lowest), float(highest), float(heaviest), float(area)


def plan(potential, domain: Domain, settings: SolveSettings) -> Problem:
    """The problem's facts: threshold, reference, window, node budget, decay budget and a first box.

    Those that depend on the potential, the domain and the decay budget only (:func:`_box_facts`) are worked
    out once per potential (:func:`~fdsolver.model.potential.remembered`)."""
    tol = settings.tolerance
    budget = 0.5 * math.log(DECAY_TARGET / tol) + 1.0
    threshold, box, vmin, vmax, lowest, scale, mirror = remembered(
        potential, ("box facts", domain, budget), lambda: _box_facts(potential, domain, budget))
    reference = threshold if math.isfinite(threshold) else vmin
    e_hi = threshold if math.isfinite(threshold) else math.inf
    e_lo = None
    if settings.energy_window is not None:
        e_lo = settings.energy_window[0]
        e_hi = min(e_hi, settings.energy_window[1])
    span = max(vmax - vmin, abs(vmin - reference), abs(vmax - reference))
    floor = ENERGY_FLOOR * span if span > 0 else ENERGY_FLOOR * max(abs(reference), 1.0)
    return Problem(
        potential=potential,
        domain=domain,
        settings=settings,
        threshold=threshold,
        reference=reference,
        e_lo=None if e_lo is None else e_lo - reference,
        e_hi=e_hi - reference,
        budget=budget,
        scale=scale,
        box=box,
        v_range=(vmin - reference, vmax - reference),
        deepest=lowest - reference,
        floor=floor,
        mirror=mirror,
    )


def _box_facts(potential, domain: Domain, budget: float) -> tuple:
    """(continuum threshold, provisional box, min and max of V over it, :func:`binding_floor`, the largest
    length, the mirror centre) of a potential in ``domain`` with the decay budget ``budget``; absolute energies.
    CaseError where V is not finite in the box."""
    threshold = continuum_threshold(potential, domain)
    box = provisional_box(potential, domain, threshold, budget)
    vs, ms, dx = _box_samples(potential, box)
    sums = floor_sums(potential, threshold, ms, vs, dx)
    if not sums[0]:
        raise CaseError("the potential is not finite everywhere in the box; check its expression or table, "
                        "or set [domain] left/right", key="potential")
    return (threshold, box, sums[1], sums[2], binding_floor(potential, threshold, ms, vs, dx, sums),
            length_scale(potential), potential.mirror_center(box[0], box[1]))


def _box_samples(potential, box) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(V, m, width) of the samples of the box that :func:`_box_facts` reads V's range and the binding floor from:
    for a V constant between its features the middle of every piece of the box, exact however thin a piece is
    (read from the piece tables, :attr:`~fdsolver.model.potential.Potential.piece_table`, where the box holds
    every feature inside it, so that its pieces are the tables' own and every middle lies inside its piece);
    otherwise :data:`RANGE_SAMPLES` even points, the ends left out."""
    if potential.piecewise_constant:  # exact: every piece once, however thin
        table = getattr(potential, "piece_table", None)
        if table is not None and table[0].size:
            lo, hi, first, last = float(box[0]), float(box[1]), float(table[0][0]), float(table[0][-1])
            if lo < 0.5 * (first + lo) < first and last < 0.5 * (hi + last) < hi:  # the end pieces' middles
                ends = np.empty(table[0].size + 2)  # the pieces' ends: lo, the features, hi
                ends[0], ends[1:-1], ends[-1] = lo, table[0], hi
                return table[1], table[2], ends[1:] - ends[:-1]  # numpy.diff's subtraction
        xs, dx = potential.pieces(box[0], box[1])
    else:
        xs = np.linspace(box[0], box[1], RANGE_SAMPLES)[1:-1]
        dx = np.full(xs.size, (box[1] - box[0]) / (RANGE_SAMPLES - 1))
    with np.errstate(all="ignore"):
        return potential.value(xs), potential.mass_at(xs), dx
