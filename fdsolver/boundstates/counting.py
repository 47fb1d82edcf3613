"""How many states are bound, without any box, and where that number changes.

The number of bound states below the continuum threshold V_t equals the
number of nodes, over the whole line, of the solution of H psi = V_t psi that
is bounded at the left end (oscillation theorem).  Near a binding threshold
the new state's decay length diverges, so box eigenvalues are the wrong tool;
this zero-energy solution stays local.  It is followed as a continuous
Pruefer phase instead of an integer node count:

    psi = r sin(theta),  u / K = r cos(theta),   u = (C / m) psi'  (the flux),

with K > 0 a fixed flux scale.  theta increases through every multiple of pi
(each node), u is continuous across mass steps and jumps by -alpha psi at a
point term.  With theta_dec in (0, pi) the phase of the solution bounded at
the right end (pi/2 where V tends to V_t there, that of exp(-kappa x) where V
tends to V_R > V_t), the *phase margin*

    Phi = (theta(right end) - theta_dec) / pi

is a continuous function of every parameter, and the state with N nodes is
bound exactly when Phi > N.  A threshold of state N is a root of Phi - N
(Brent's method).  The solution is carried by the one march of
:mod:`fdsolver.numerics.march` over the cells of
:mod:`fdsolver.numerics.cells`: exact for compact potentials (square wells,
point terms, layer stacks: thresholds to about 1e-15 relative), midpoint
(second-order Magnus) on nested levels with Richardson-extrapolated roots
otherwise.  Params in the caller's units; lengths and energies in the case
units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from fdsolver.boundstates.eigen import point_arrays
from fdsolver.errors import CaseError
from fdsolver.model.domain import Domain, continuum_threshold
from fdsolver.numerics.cells import LAYOUT_SAMPLES, Layout, cells, make_layout, scale_of
from fdsolver.numerics.march import margin, tabled_margin
from fdsolver.numerics.precision import EPS
from fdsolver.numerics.richardson import Romberg
from fdsolver.numerics.tables import apart_tolerance

#: most nested cell levels in a threshold refinement (smooth potentials)
MAX_LEVELS = 7
#: round-off of a phase margin, in ulps per cell crossed (the margin is computed with full relative accuracy
#: near an integer, from cross products)
MARGIN_ULPS = 16.0
#: a root is bracketed again around its previous value by growing a window at most this many times
MAX_BRACKET_GROWTH = 80


#: the open line (no walls), where no domain is given
_OPEN = Domain()


def open_threshold(potential, domain: Domain | None = None) -> float:
    """Continuum threshold of an open-ended problem; CaseError when none exists (walls, confining V)."""
    domain = domain or _OPEN
    if domain.hard:
        raise CaseError('hard walls bind every state, so there is no binding threshold; use boundary = "open"',
                        key="domain.boundary")
    vt = continuum_threshold(potential, domain)
    if not math.isfinite(vt):
        raise CaseError("the potential confines at both ends (no continuum), so every state is bound and none "
                        "appears at a threshold", key="potential")
    return vt


def layout_for(potentials) -> Layout:
    """The cell layout shared by ``potentials`` (each at its own continuum threshold)."""
    pots = list(potentials)
    return make_layout(pots, [open_threshold(p) for p in pots])


def _end_flux(pot, vt: float, side: int, x_end: float) -> float:
    """Flux u of the solution with psi = 1 that decays toward ``side`` from ``x_end``."""
    va = pot.asymptote(side)
    if math.isfinite(va):
        m, dv = pot.asymptotic_mass(side), va - vt
    else:
        m = float(pot.mass_at(np.array([x_end]))[0])
        dv = float(pot.value(np.array([x_end]))[0]) - vt
    kappa = math.sqrt(max(m * dv / pot.hbar2_2me, 0.0))
    return -side * pot.hbar2_2me * kappa / m


def phase_margin(potential, layout: Layout | None = None, level: int = 0, vt: float | None = None) -> float:
    """Phi of ``potential`` on the open line (module docstring): the state with N nodes is bound iff Phi > N."""
    vt = open_threshold(potential) if vt is None else vt
    layout = layout or make_layout([potential], [vt])
    edges, mid, jump = cells(potential, layout, level, vt)
    v, m = _values_at(potential, layout, mid)
    k2 = m * (np.where(np.isfinite(v), v, 1e300) - vt) / potential.hbar2_2me
    u0 = _end_flux(potential, vt, -1, edges[0])
    u_end = _end_flux(potential, vt, 1, edges[-1])
    return margin(edges, np.ascontiguousarray(k2, dtype=float), np.ascontiguousarray(m, dtype=float),
                  np.ascontiguousarray(jump, dtype=float), potential.hbar2_2me, layout.kscale, u0, u_end)


def _tabled_margin(potential) -> float | None:
    """:func:`phase_margin` of ``potential`` on its own layout, in one compiled call
    (:func:`fdsolver.numerics.march.tabled_margin`) where it keeps piece tables
    (:attr:`~fdsolver.model.potential.Potential.piece_table`) and has features: the same number, or None (work it
    out step by step) where it keeps none, or where a sample of the layout's flux scale lies next to a feature
    (:func:`fdsolver.numerics.tables.apart_tolerance`) without being on it."""
    table = getattr(potential, "piece_table", None)
    if table is None or not table[0].size:
        return None
    vt = open_threshold(potential)
    feats = table[0]
    first, last = float(feats[0]), float(feats[-1])  # the compact layout's ends (no tails)
    pos, alpha = point_arrays(potential)
    done, phi, _ = tabled_margin(LAYOUT_SAMPLES, feats, *table[1:], pos, alpha, vt,
                                 potential.hbar2_2me, scale_of(potential) ** -2, _end_flux(potential, vt, -1, first),
                                 _end_flux(potential, vt, 1, last), apart_tolerance(feats))
    return phi if done else None


def _values_at(potential, layout: Layout, mid: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """V and m at the cell midpoints ``mid`` of a compact layout (:func:`~fdsolver.numerics.cells.cells`).

    Where the potential keeps piece tables (:attr:`~fdsolver.model.potential.Potential.piece_table`), the
    compact cells are the outer features (zero-width end cells, midpoint the feature itself) and the pieces
    between them, whose midpoints are the table's own probes: the values are read from the tables, the same
    numbers an evaluation there gives.  Otherwise V and m are evaluated at ``mid``."""
    table = getattr(potential, "piece_table", None) if layout.compact else None
    if table is not None and table[0].size and mid.size == table[0].size + 1:
        _feats, v_piece, m_piece, v_feat, m_feat = table
        return (np.concatenate([v_feat[:1], v_piece[1:-1], v_feat[-1:]]),
                np.concatenate([m_feat[:1], m_piece[1:-1], m_feat[-1:]]))
    with np.errstate(all="ignore"):
        v = potential.value(mid)
    return v, potential.mass_at(mid)


def count_from_margin(phi: float) -> int:
    """Number of bound states for a phase margin Phi: the states N = 0, 1, ... with N < Phi."""
    return max(0, math.ceil(phi)) if phi > 0 else 0


def bound_count(potential, layout: Layout | None = None) -> int:
    """Number of bound states of ``potential`` on the whole open line, from the zero-energy phase (no box).

    A state counts only if the margin exceeds it by more than the margin's own
    error: round-off for compact potentials (one exact cell per segment); for
    smooth ones the margin is Richardson-extrapolated from cell levels 1 and 2
    and its error is the change.  A state within that band of its threshold
    (a zero-energy resonance, e.g. -sech^2 at lambda = 1) is not bound.
    """
    phi = _tabled_margin(potential) if layout is None else None
    if phi is not None:
        return count_from_margin(phi - MARGIN_ULPS * EPS * (potential.features().size + 1 + abs(phi) + 1.0))
    layout = layout or layout_for([potential])
    if layout.compact:
        phi = phase_margin(potential, layout, level=0)
        err = MARGIN_ULPS * EPS * (layout_cells(potential, layout) + abs(phi) + 1.0)
    else:
        p1, p2 = phase_margin(potential, layout, level=1), phase_margin(potential, layout, level=2)
        phi = p2 + (p2 - p1) / 3.0
        err = abs(p2 - p1) / 3.0 + MARGIN_ULPS * EPS * (layout_cells(potential, layout, 2) + abs(phi) + 1.0)
    return count_from_margin(phi - err)


def layout_cells(potential, layout: Layout, level: int = 0) -> int:
    """Number of cells the march crosses on ``level`` (the round-off of a margin grows with it)."""
    if layout.compact:
        return int(potential.features().size + 1)
    return int(sum(layout.counts) * 2**level + 2)


# ------------------------------------------------------------------ thresholds
@dataclass(frozen=True)
class Threshold:
    """State ``state`` (its node count) becomes bound at ``param`` = ``value`` (+- ``uncertainty``).

    ``direction`` is +1 if it binds as the param increases, -1 as it
    decreases.  ``value`` and ``uncertainty`` are in ``units``.
    """

    param: str
    state: int
    value: float
    uncertainty: float
    direction: int
    units: str = ""


@dataclass(frozen=True)
class Search:
    """All thresholds found in [lo, hi], the bound-state counts at the two ends and the scan behind them."""

    param: str
    lo: float
    hi: float
    units: str
    thresholds: tuple[Threshold, ...]
    count_lo: int
    count_hi: int
    scan_values: np.ndarray
    scan_margin: np.ndarray
    notes: tuple[str, ...] = field(default=())


def find_thresholds(family: Callable[[float], object], name: str, lo: float, hi: float, *, state: int | None = None,
                    scan: int = 129, rtol: float = 1e-9, units: str = "") -> Search:
    """Every threshold in [lo, hi] of a family of potentials ``family(p)`` (only of ``state`` if given).

    The interval is scanned at ``scan`` points for sign changes of Phi - N; two
    thresholds of one state closer together than a scan step can be missed.
    Each is solved to relative ``rtol`` (Brent, Richardson over cell levels for
    smooth potentials); its uncertainty is a round-off estimate
    16 eps (cells + N + 1) / |dPhi/dp| plus the Richardson change.
    """
    cache: dict[float, object] = {}

    def at(p: float):
        p = float(p)
        if p not in cache:
            cache[p] = family(p)
        return cache[p]

    layout = layout_for([at(lo), at(hi)])
    ps = np.linspace(lo, hi, max(3, int(scan)))
    phi = np.array([phase_margin(at(p), layout) for p in ps])
    found: list[Threshold] = []
    notes = list(layout.notes)
    for a, b, fa, fb in zip(ps[:-1], ps[1:], phi[:-1], phi[1:]):
        for n in range(max(0, math.ceil(min(fa, fb))), math.floor(max(fa, fb)) + 1):
            if (state is not None and n != state) or (fa > n) == (fb > n):
                continue
            found.append(_refine(at, layout, name, n, a, b, fb > n, rtol, units, notes))
    found.sort(key=lambda t: (t.value, t.state))
    return Search(name, float(lo), float(hi), units, tuple(found), count_from_margin(phi[0]),
                  count_from_margin(phi[-1]), ps, phi, tuple(dict.fromkeys(notes)))


def _refine(at, layout: Layout, name, n, a, b, grows: bool, rtol, units, notes) -> Threshold:
    from scipy.optimize import brentq

    span = abs(b - a)
    table = Romberg()
    value = err = math.nan
    prev = None
    level = 0
    for level in range(1 if layout.compact else MAX_LEVELS):
        def f(p, lev=level):
            return phase_margin(at(p), layout, lev) - n

        lo_b, hi_b = _bracket(f, a, b, prev, span)
        root = brentq(f, lo_b, hi_b, xtol=1e-15 * max(abs(lo_b), abs(hi_b), 1e-300) + 1e-300, rtol=4 * EPS, maxiter=200)
        table.add(np.array([root]))
        value = float(table.value()[0])
        prev = root
        if layout.compact:
            break
        err = float(table.error()[0])
        if table.levels >= 3 and err <= 0.1 * rtol * max(abs(value), 1e-12 * span):
            break
    delta = 1e-7 * max(abs(value), span)
    slope = (phase_margin(at(value + delta), layout, level) - phase_margin(at(value - delta), layout, level)) / (2 * delta)
    pot = at(value)
    n_cells = cells(pot, layout, level, open_threshold(pot))[0].size
    rounding = 16 * EPS * (n_cells + abs(n) + 1) / max(abs(slope), 1e-300)
    unc = rounding + 4 * EPS * abs(value) + (0.0 if layout.compact else err)
    if not math.isfinite(unc) or unc > rtol * max(abs(value), 1e-12 * span):
        notes.append(f"the threshold of state {n} near {name} = {value:.8g} is known only to +-{unc:.2g} (asked: relative {rtol:g})")
    return Threshold(name, int(n), value, float(unc), 1 if grows else -1, units)


def _bracket(f, a, b, guess, span):
    """An interval with a sign change of f: [a, b] itself, or one grown around ``guess``."""
    fa, fb = f(a), f(b)
    if (fa > 0) != (fb > 0) or fa == 0 or fb == 0:
        return a, b
    w = 1e-3 * span
    g = guess if guess is not None else 0.5 * (a + b)
    for _ in range(MAX_BRACKET_GROWTH):
        lo, hi = g - w, g + w
        if (f(lo) > 0) != (f(hi) > 0):
            return lo, hi
        w *= 2.0
    raise CaseError(f"lost the threshold near {g:g} on a finer level; the potential may be too rough for the cell layout",
                    key="--vary")
