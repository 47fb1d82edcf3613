"""Cell layouts of a potential for the march (:mod:`fdsolver.numerics.march`).

A :class:`Layout` fixes, for a family of potentials (say the two ends of a
parameter interval), how far the cells reach beyond the outermost features
and how many base cells each segment between features gets, so that a
quantity marched across the cells is a continuous function of the family
parameter.  :func:`cells` turns one potential into edges, cell midpoints and
point strengths on nested level ``level`` (every base cell halved ``level``
times).

* *Compact* potentials (square wells, point terms and layer stacks only) are
  constant between features: one cell per segment is exact, and no tails are
  needed (V equals its asymptote beyond the outer features).
* Other potentials get tails out to where V has reached its asymptote to
  1e-15 of its range (toward an infinite wall: where the WKB decay integral
  at the reference energy exceeds 20).  Every segment between features is
  cut at its midpoint, and each half gets cells of at most a quarter of the
  local wavelength or decay length that start at a tenth of the length scale
  of the feature they touch and grow geometrically (at most 5 % per base
  cell) toward the midpoint.  A narrow feature (a smooth edge 1e-5 of the
  distance to its neighbour) then costs a few hundred cells, not one per
  tenth of its scale across the whole gap.  The grading is a smooth map of
  a uniform parameter within each half, so halving every cell keeps the
  even error expansion of the midpoint march (Richardson over levels).
  The counts are fixed by the layout for a whole family of potentials and
  the grading follows each member's own geometry continuously.  All
  segments are sampled in one vectorised pass, so the cost of a layout is
  linear in the number of features.

Lengths in the case length unit, energies in its energy unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: samples of V and m over the span of a layout's cells, for its flux scale
LAYOUT_SAMPLES = 513
#: a segment gets at most this many base cells
MAX_CELLS_PER_SEGMENT = 200_000
#: samples per segment when sizing its cells
SEGMENT_SAMPLES = 33
#: decay integral at which a tail toward an infinite wall ends
WALL_DECAY = 20.0
#: base cells grow by at most this factor per cell away from a feature
GROWTH = 1.05
#: the first cell at a feature is this fraction of the feature's length scale
FEATURE_CELL = 0.1


@dataclass(frozen=True)
class Layout:
    """Cells shared by every potential of one family: tails beyond the outer features and base cell counts."""

    compact: bool
    tails: tuple[float, float]
    counts: tuple[int, ...]
    kscale: float
    notes: tuple[str, ...] = ()


def is_compact(pot) -> bool:
    """True if V is constant between the features (square wells, points, layer stacks)."""
    return all(getattr(s, "piecewise_constant", False) for s in pot.shapes)


def scale_of(pot) -> float:
    """The largest length of the potential: its extent or its largest feature scale (1 if it has none)."""
    lo, hi = pot.support()
    scales = [s for _, s in pot.feature_scales() if math.isfinite(s)] + [s for _, s in pot.point_scales()]
    return max([hi - lo] + scales + [1e-300]) if (hi > lo or scales) else 1.0


def _finest(pot) -> float:
    scales = [s for _, s in pot.feature_scales() if math.isfinite(s) and s > 0]
    return min(scales) if scales else scale_of(pot)


def features(pot) -> np.ndarray:
    """The potential's features, or its support ends (a single 0 if it has neither)."""
    f = pot.features()
    if f.size == 0:
        lo, hi = pot.support()
        f = np.array([lo, hi]) if hi > lo else np.array([0.0])
    return f


def tail(pot, edge: float, side: int, e_ref: float, notes: list) -> float:
    """Length beyond ``edge`` after which V equals its asymptote (or a wall has decayed the solution)."""
    scale = scale_of(pot)
    t = scale * 1e-3 * 1.05 ** np.arange(0, 340)  # up to ~1.6e4 scales
    x = edge + side * t
    with np.errstate(all="ignore"):
        v = pot.value(x)
    va = pot.asymptote(side)
    if math.isfinite(va):
        span = float(np.max(np.abs(v - va))) if v.size else 0.0
        dev = np.abs(v - va)
        big = np.flatnonzero(~(dev <= 1e-15 * max(span, abs(va), 1e-300)))
        if big.size == 0:
            return 0.0
        if big[-1] == t.size - 1:
            notes.append(
                f"V still differs from its asymptote by {dev[-1]:.2e} at {t[-1]:.3g} {pot.units.length} beyond the "
                "outermost feature; it is treated as constant from there"
            )
            return float(t[-1])
        return float(t[big[-1] + 1])
    m = pot.mass_at(x)
    v = np.where(np.isfinite(v), v, 1e300)
    kappa = np.sqrt(np.clip(m * (v - e_ref) / pot.hbar2_2me, 0.0, 1e300))
    integral = np.concatenate([[0.0], np.cumsum(0.5 * (kappa[1:] + kappa[:-1]) * np.diff(t))])
    hit = np.flatnonzero(integral >= WALL_DECAY)
    return float(t[hit[0]]) if hit.size else float(t[-1])


def _feature_cells(pot, edges: np.ndarray) -> np.ndarray:
    """The first cell wanted at each edge: a tenth of the length scale of the feature there (inf where none).

    A potential without any feature scale keeps the old rule: a tenth of its overall scale everywhere."""
    scales = [(p, s) for p, s in pot.feature_scales() if math.isfinite(s) and s > 0]
    if not scales:
        return np.full(edges.size, FEATURE_CELL * scale_of(pot))
    pos = np.array([p for p, _ in scales])
    val = np.array([s for _, s in scales])
    order = np.argsort(pos)
    pos, val = pos[order], val[order]
    out = np.full(edges.size, np.inf)
    i = np.clip(np.searchsorted(pos, edges), 0, pos.size - 1)
    for j in (i - 1, i):  # the nearest scaled feature on either side, if it sits on this edge
        j = np.clip(j, 0, pos.size - 1)
        tol = 1e-12 * np.maximum(1.0, np.abs(edges))
        on = np.abs(pos[j] - edges) <= tol
        out = np.where(on, np.minimum(out, FEATURE_CELL * val[j]), out)
    return out


def _halves(edges: np.ndarray):
    """Each segment cut at its midpoint: (start, end, graded-from-start) of every half, left to right.

    A half is graded from the segment end it touches (the start of a left half, the end of a right half)."""
    a, b = edges[:-1], edges[1:]
    m = 0.5 * (a + b)
    start = np.ravel(np.column_stack([a, m]))
    end = np.ravel(np.column_stack([m, b]))
    return start, end


def _half_counts(pot, edges: np.ndarray, e_ref: float) -> np.ndarray:
    """Base cells per half segment: a quarter of the largest local wave number or decay constant (with room for
    the grading), and enough cells to grow from the feature's first cell at most GROWTH per cell."""
    start, end = _halves(edges)
    first = _first_cells(pot, edges)
    frac = np.linspace(0.0, 1.0, SEGMENT_SAMPLES)
    sx = start[:, None] + (end - start)[:, None] * frac[None, :]
    with np.errstate(all="ignore"):
        k = np.sqrt(np.abs(pot.mass_at(sx.ravel()) * (pot.value(sx.ravel()) - e_ref)) / pot.hbar2_2me)
    k = np.where(np.isfinite(k), k, 0.0).reshape(sx.shape)
    length = end - start
    n_k = np.ceil(length * np.max(k, axis=1) / 0.25)
    with np.errstate(divide="ignore", invalid="ignore"):
        n_g = np.where(np.isfinite(first), np.ceil(np.log1p(length * (GROWTH - 1.0) / first) / math.log(GROWTH)), 0.0)
    need = np.maximum(2.0 * n_k, n_g)
    return np.clip(need, 2, MAX_CELLS_PER_SEGMENT).astype(np.int64)


def _first_cells(pot, edges: np.ndarray) -> np.ndarray:
    """The first cell of every half segment at the end it is graded from (inf: uniform)."""
    at = _feature_cells(pot, edges)
    return np.ravel(np.column_stack([at[:-1], at[1:]]))


def _graded(length: np.ndarray, first: np.ndarray, n: np.ndarray) -> np.ndarray:
    """Growth rate r >= 1 per cell such that n cells of geometric sizes, first ``first``, fill ``length``.

    r = 1 (uniform) where length / n is already at most ``first``; else the root of
    first * (r^n - 1) / (r - 1) = length, found by bisection on ln r (continuous in length and first)."""
    r = np.ones(length.size)
    need = np.isfinite(first) & (length / n > first)
    if not need.any():
        return r
    L, f, k = length[need], first[need], n[need].astype(float)
    lo = np.zeros(L.size)
    hi = np.full(L.size, 1.0)
    while True:  # grow hi until the series with rate e^hi overfills the length
        with np.errstate(over="ignore", invalid="ignore"):
            total = f * np.expm1(hi * k) / np.expm1(hi)
        short = total < L
        if not short.any():
            break
        hi = np.where(short, 2.0 * hi, hi)
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        with np.errstate(over="ignore", invalid="ignore"):
            total = f * np.expm1(mid * k) / np.expm1(mid)
        over = total > L
        hi = np.where(over, mid, hi)
        lo = np.where(over, lo, mid)
    r[need] = np.exp(0.5 * (lo + hi))
    return r


def make_layout(pots, e_refs) -> Layout:
    """One layout for all ``pots`` (each with its reference energy): the finest and widest of them."""
    compact = all(is_compact(p) for p in pots)
    notes: list[str] = []
    tails = [0.0, 0.0]
    counts: np.ndarray | None = None
    kscale = 0.0
    for pot, e_ref in zip(pots, e_refs):
        f = features(pot)
        if not compact:
            tails[0] = max(tails[0], 1.2 * tail(pot, f[0], -1, e_ref, notes))
            tails[1] = max(tails[1], 1.2 * tail(pot, f[-1], 1, e_ref, notes))
        edges = np.concatenate([[f[0] - tails[0]], f, [f[-1] + tails[1]]])
        xs = np.linspace(edges[0], edges[-1], LAYOUT_SAMPLES)
        with np.errstate(all="ignore"):
            dv = np.abs(pot.value(xs) - e_ref)
        dv = dv[np.isfinite(dv)]
        m_max = float(np.max(pot.mass_at(xs)))
        vspan = float(np.max(dv)) if dv.size else 0.0
        kscale = max(kscale, pot.hbar2_2me * math.sqrt(m_max * vspan / pot.hbar2_2me + scale_of(pot) ** -2) / m_max)
        if compact:
            continue
        segs = _half_counts(pot, edges, e_ref)
        counts = segs if counts is None or counts.size != segs.size else np.maximum(counts, segs)
    return Layout(compact, (tails[0], tails[1]), tuple(int(c) for c in (counts if counts is not None else ())),
                  kscale, tuple(dict.fromkeys(notes)))


def cells(pot, layout: Layout, level: int, e_ref: float):
    """(edges, midpoints, point strength at each edge) of ``pot`` on nested level ``level``."""
    f = features(pot)
    edges = np.concatenate([[f[0] - layout.tails[0]], f, [f[-1] + layout.tails[1]]])
    if not layout.compact:
        start, end = _halves(edges)
        own = len(layout.counts) == start.size
        counts = np.asarray(layout.counts if own else _half_counts(pot, edges, e_ref))
        base = counts
        n = counts * 2**level
        first = _first_cells(pot, edges)
        flip = np.tile([False, True], edges.size - 1)  # right halves are graded from their end
        rate = _graded(end - start, first, base)  # per base cell; a level's cells grow by rate^(1/2^level)
        seg = np.repeat(np.arange(n.size), n)
        offsets = np.concatenate([[0], np.cumsum(n)])
        j = (np.arange(offsets[-1]) - offsets[seg]) / n[seg]  # the uniform parameter u in [0, 1)
        u = np.where(flip[seg], 1.0 - j, j)
        lam = np.log(rate)[seg] * base[seg]  # the map x(u) = (e^(lam u) - 1) / (e^lam - 1), uniform for lam = 0
        with np.errstate(invalid="ignore", divide="ignore"):
            g = np.where(lam > 0, np.expm1(lam * u) / np.expm1(np.where(lam > 0, lam, 1.0)), u)
        g = np.where(flip[seg], 1.0 - g, g)
        inner = start[seg] + (end - start)[seg] * g  # increasing: right halves are mirrored, not reversed
        edges = np.concatenate([inner, edges[-1:]])
    mid = 0.5 * (edges[:-1] + edges[1:])
    jump = np.zeros(edges.size)
    terms = pot.point_terms()
    if terms:
        pos, alpha = (np.array(v, dtype=float) for v in zip(*terms))
        i = np.clip(np.searchsorted(edges, pos), 1, edges.size - 1)
        i -= (pos - edges[i - 1]) < (edges[i] - pos)  # the nearer edge (points are features, so exactly on one)
        np.add.at(jump, i, alpha)
    return edges, mid, jump


def is_piecewise_linear(pot) -> bool:
    """True if V is linear between the features: steps, points and stacks plus uniform fields and linear tables.

    Such potentials are solved exactly per segment by the complex march of
    :mod:`fdsolver.numerics.waves` (Airy solutions summed as series).
    """
    from fdsolver.model.shapes import Linear, Table

    return all(getattr(s, "piecewise_constant", False) or isinstance(s, Linear)
               or (isinstance(s, Table) and s.interpolation == "linear") for s in pot.shapes)
