"""Adaptive non-uniform grids.

A grid is built in two steps:

1. :func:`base_grid` places a coarse set of nodes on the box [lo, hi]: every
   breakpoint (discontinuity, edge, centre, point interaction, layer
   interface) is a node, and in between the spacing follows a target
   spacing function h(x) that is

   * fine near each feature (``feature_fraction`` of its length scale),
   * fine where the local wave number or decay constant
     r(x) = sqrt(m(x) max(|V - E_lo|, |V - E_hi|) / C) is large
     (h <= ``wave_fraction`` / r),
   * Lipschitz-limited, |dh/dx| <= ``growth``, so neighbouring cells differ
     by at most a factor of about (1 + growth).

   Far from features the spacing grows geometrically, so a well 1e-4 times
   narrower than the decay length costs a few hundred nodes more, not millions.
2. :func:`refine` splits every base cell into 2**level equal cells.  The grid
   of level k+1 contains all nodes of level k (nested refinement of one fixed
   piecewise-linear map), which is what makes the Richardson extrapolation
   in :mod:`fdsolver.refine` valid: the discretisation error of the flux-form
   scheme on such grids expands in even powers of the level step
   (E_k = E + c2 4^-k + c4 16^-k + ...).

All positions are in the case length unit.  When a mirror centre is given,
the grid is built on the right half and mirrored, so mirror-image nodes exist
exactly and parities can be read off the states.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from fdsolver.model.potential import remembered
from fdsolver.numerics.kernels import (
    cone_tables,
    grid_samples,
    inner_bounds,
    mirrored_piece_grid,
    piece_grid,
    refine_nodes,
    sample_offsets,
    sample_pass,
    segment_nodes,
    target_spacing,
)
from fdsolver.numerics.precision import EPS

#: uniform samples of the spacing function over the box before the samples are refined where it asks for it
BACKGROUND_SAMPLES = 257


@dataclass(frozen=True)
class GridSettings:
    """Resolution of the base grid (dimensionless fractions)."""

    feature_fraction: float = 0.2
    wave_fraction: float = 0.5
    growth: float = 0.25
    min_cells_per_segment: int = 2


def base_grid(
    spacing, breakpoints, lo: float, hi: float, settings: GridSettings, center: float | None = None, max_nodes: int | None = None
):
    """Nodes of the base grid on [lo, hi] (both ends included), strictly increasing.

    ``spacing(x)`` returns the raw target spacing (length unit) at sample
    positions, each value depending on its own position only (it is sampled
    once per position); ``breakpoints`` are positions that must be nodes.  With
    ``center`` the grid is mirror-symmetric about it (``lo`` and ``hi`` must be
    symmetric too).  With ``max_nodes`` the node count is checked before any
    node array is allocated (:class:`~fdsolver.errors.BudgetError`).
    """
    half = None if center is None or max_nodes is None else max_nodes // 2 + 1  # the right half's budget
    if isinstance(spacing, Spacing) and spacing.table is not None:  # every step in one compiled call
        limit = max_nodes if center is None else half
        rest = (float(settings.growth), _offsets(settings.growth), BACKGROUND_SAMPLES,
                int(settings.min_cells_per_segment), -1 if limit is None else int(limit), *spacing.table, *spacing.args)
        points = np.ascontiguousarray(breakpoints, dtype=float)
        if center is None:
            nodes, total = piece_grid(float(lo), float(hi), points, 64.0 * EPS * max(abs(lo), abs(hi), hi - lo), *rest)
        else:  # the right half, mirrored, as below
            nodes, total = mirrored_piece_grid(float(center), float(hi), points, EPS, *rest)
        if limit is not None and total > limit:
            _over_budget(total, limit)
        return nodes
    if center is not None:
        right = base_grid(spacing, [b for b in breakpoints if b > center], center, hi, settings, None, half)
        left = 2.0 * center - right[:0:-1]
        return np.concatenate([left, right])
    tiny = 64.0 * EPS * max(abs(lo), abs(hi), hi - lo)  # closer than this is round-off
    bps = inner_bounds(np.asarray(list(breakpoints), dtype=float), float(lo), float(hi), tiny)
    bounds = np.concatenate([[lo], bps, [hi]])
    width = hi - lo
    # samples: dense near every bound (geometric), plus a uniform background; refined where the spacing asks
    # (h(x) is pointwise, so each pass samples it at the new midpoints only)
    xs = grid_samples(lo, hi, bounds, spacing(bounds), _offsets(settings.growth), BACKGROUND_SAMPLES)
    none, cap = np.empty(0), float(width / 4.0)
    xs, raw, hs, mids = sample_pass(xs, np.ascontiguousarray(spacing(xs), dtype=float), none, none, cap,
                                    settings.growth)
    for _ in range(8):
        if mids.size == 0:
            break
        xs, raw, hs, mids = sample_pass(xs, raw, mids, np.ascontiguousarray(spacing(mids), dtype=float), cap,
                                        settings.growth)
    if max_nodes is not None:
        total = float(np.sum(0.5 * (1.0 / hs[1:] + 1.0 / hs[:-1]) * np.diff(xs))) + bounds.size * settings.min_cells_per_segment
        if total > max_nodes:
            _over_budget(total, max_nodes)
    return segment_nodes(bounds, xs, hs, settings.min_cells_per_segment)


@functools.lru_cache(maxsize=64)
def _offsets(growth: float) -> np.ndarray:
    """The sample offsets of a base grid with this growth rate (:func:`fdsolver.numerics.kernels.sample_offsets`),
    made once per value."""
    return sample_offsets(float(growth))


def _over_budget(total: float, max_nodes: int):
    from fdsolver.errors import BudgetError

    raise BudgetError(
        f"the grid would need about {total:.3g} nodes, more than the memory budget allows ({max_nodes}); "
        "raise [solve] memory_mb or loosen the tolerance",
        key="solve.memory_mb",
    )


def refine(nodes: np.ndarray, level: int) -> np.ndarray:
    """Split every cell of ``nodes`` into 2**level equal cells (nested refinement)."""
    if level == 0:
        return nodes
    return refine_nodes(np.ascontiguousarray(nodes, dtype=float), 2**level)


def spacing_function(potential, e_lo: float, e_hi: float, gs: GridSettings, deep_reach: float | None = None):
    """Raw target spacing h(x) (length unit) for the states with energies in [e_lo, e_hi].

    h = wave_fraction / r(x), r = sqrt(m max(|V - e_lo|, |V - e_hi|) / C), and
    near every feature of scale s at p: h <= feature_fraction * s + growth |x - p|
    (for an attractive point interaction s = its decay length 1/g, at half the
    wave fraction).  :func:`base_grid` then limits |dh/dx| to ``growth``.
    Farther than ``deep_reach`` from the potential's support the deepest
    states have decayed, and only |V - e_hi| sets r there (a weakly bound state
    then costs a number of far nodes independent of how weakly it is bound).
    """
    c = potential.hbar2_2me
    # where V - E exceeds 25 times the energy range the states are negligible (decay 5x faster than
    # anywhere they live), so the wave number requirement is capped there
    r2_cap = 25.0 * potential.mass * abs(e_hi - e_lo) / c if math.isfinite(e_hi - e_lo) and e_hi != e_lo else np.inf
    # the wave fraction sizes only the point terms' cones: without them, one set of tables serves every fraction
    wave = float(gs.wave_fraction) if potential.point_scales() else None
    key = ("grid cones", float(gs.feature_fraction), wave, float(gs.growth))
    m_max, apex, left, right = remembered(potential, key, lambda: _cones(potential, gs))
    lo_s, hi_s = potential.support()
    reach = math.inf if deep_reach is None else float(deep_reach)
    cap = float(r2_cap * m_max / potential.mass)
    return Spacing(potential, (float(e_lo), float(e_hi), float(c), reach, float(lo_s), float(hi_s), cap,
                               float(gs.wave_fraction), apex, left, right, float(gs.growth)))


def _cones(potential, gs: GridSettings):
    """(largest mass at the support's ends or the bulk, and the cone tables of :func:`_cone_tables`) of the
    spacing function: they depend on the potential and the grid settings only, so a potential keeps them
    (:func:`~fdsolver.model.potential.remembered`)."""
    feats = potential.feature_scales()
    pts = potential.point_scales()
    m_max = max(float(potential.mass_at(np.array(potential.support())).max()), potential.mass)
    cone_p = [p for p, s in feats if math.isfinite(s)] + [p for p, _ in pts]
    cone_c = [gs.feature_fraction * s for _, s in feats if math.isfinite(s)] + [0.5 * gs.wave_fraction * s for _, s in pts]
    return (m_max, *_cone_tables(np.asarray(cone_p, dtype=float), np.asarray(cone_c, dtype=float), gs.growth))


class Spacing:
    """The raw target spacing h(x) of :func:`spacing_function` (length unit): ``spacing(x)`` samples V and m of
    the potential at ``x`` and applies :func:`fdsolver.numerics.kernels.target_spacing` with ``args``.  Where
    the potential is constant between its features, ``table`` holds its piece tables
    (:attr:`fdsolver.model.potential.Potential.piece_table`, else None), and :func:`base_grid` builds the
    whole grid in one compiled call from them."""

    __slots__ = ("args", "potential", "table")

    def __init__(self, potential, args: tuple):
        self.potential = potential
        self.args = args
        self.table = getattr(potential, "piece_table", None)

    def __call__(self, x):
        x = np.ascontiguousarray(x, dtype=float)
        with np.errstate(invalid="ignore", over="ignore"):
            v = np.ascontiguousarray(self.potential.value(x), dtype=float)
            m = np.ascontiguousarray(self.potential.mass_at(x), dtype=float)
        return target_spacing(x, v, m, *self.args)


def _cone_tables(p: np.ndarray, c: np.ndarray, slope: float):
    """Tables of the cone envelope x -> min_j (c_j + slope |x - p_j|) (inf without cones), O(K log K) for K
    cones: the sorted apexes p, prefix minima of c - slope p (inf first) and suffix minima of c + slope p (inf
    last), in one compiled call (:func:`fdsolver.numerics.kernels.cone_tables`).

    Left of x the minimum is min_{p_j <= x} (c_j - slope p_j) + slope x, right of it
    min_{p_j >= x} (c_j + slope p_j) - slope x; :func:`fdsolver.numerics.kernels.target_spacing` reads it.
    """
    return cone_tables(np.ascontiguousarray(p, dtype=float), np.ascontiguousarray(c, dtype=float), float(slope))
