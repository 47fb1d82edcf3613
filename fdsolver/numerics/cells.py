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
  at the reference energy exceeds 20), and base cells of at most a quarter of
  the local wavelength or decay length, and a tenth of the finest feature
  scale.  All segments are sampled in one vectorised pass, so the cost of a
  layout is linear in the number of features.

Lengths in the case length unit, energies in its energy unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: a segment gets at most this many base cells
MAX_CELLS_PER_SEGMENT = 200_000
#: samples per segment when sizing its cells
SEGMENT_SAMPLES = 33
#: decay integral at which a tail toward an infinite wall ends
WALL_DECAY = 20.0


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


def _segment_counts(pot, edges: np.ndarray, e_ref: float) -> np.ndarray:
    """Base cells per segment: a quarter of the largest local wave number or decay constant, a tenth of the finest scale."""
    h_feat = 0.1 * _finest(pot)
    a, b = edges[:-1], edges[1:]
    frac = np.linspace(0.0, 1.0, SEGMENT_SAMPLES)
    sx = a[:, None] + (b - a)[:, None] * frac[None, :]
    with np.errstate(all="ignore"):
        k = np.sqrt(np.abs(pot.mass_at(sx.ravel()) * (pot.value(sx.ravel()) - e_ref)) / pot.hbar2_2me)
    k = np.where(np.isfinite(k), k, 0.0).reshape(sx.shape)
    kmax = np.max(k, axis=1)
    need = np.ceil((b - a) * np.maximum(kmax / 0.25, 1.0 / h_feat))
    return np.clip(need, 2, MAX_CELLS_PER_SEGMENT).astype(np.int64)


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
        xs = np.linspace(edges[0], edges[-1], 513)
        with np.errstate(all="ignore"):
            dv = np.abs(pot.value(xs) - e_ref)
        dv = dv[np.isfinite(dv)]
        m_max = float(np.max(pot.mass_at(xs)))
        vspan = float(np.max(dv)) if dv.size else 0.0
        kscale = max(kscale, pot.hbar2_2me * math.sqrt(m_max * vspan / pot.hbar2_2me + scale_of(pot) ** -2) / m_max)
        if compact:
            continue
        segs = _segment_counts(pot, edges, e_ref)
        counts = segs if counts is None or counts.size != segs.size else np.maximum(counts, segs)
    return Layout(compact, (tails[0], tails[1]), tuple(int(c) for c in (counts if counts is not None else ())),
                  kscale, tuple(dict.fromkeys(notes)))


def cells(pot, layout: Layout, level: int, e_ref: float):
    """(edges, midpoints, point strength at each edge) of ``pot`` on nested level ``level``."""
    f = features(pot)
    edges = np.concatenate([[f[0] - layout.tails[0]], f, [f[-1] + layout.tails[1]]])
    if not layout.compact:
        counts = np.asarray(layout.counts if len(layout.counts) == edges.size - 1 else _segment_counts(pot, edges, e_ref))
        n = counts * 2**level
        a, b = edges[:-1], edges[1:]
        start = np.concatenate([[0], np.cumsum(n)])
        seg = np.repeat(np.arange(n.size), n)
        j = np.arange(start[-1]) - start[seg]
        inner = a[seg] + (b - a)[seg] * (j / n[seg])
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
