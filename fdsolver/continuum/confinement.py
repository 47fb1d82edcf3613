"""Does a potential leak?  Cheap tests (numpy and one compiled pass) that decide whether a solve needs quasi-bound states.

A potential *leaks* on the open line when

* it falls without bound at an open end (a uniform field): no state is
  bound, the well's levels are resonances; or
* some region is enclosed by higher potential on both sides, up to an energy
  above the continuum threshold (a well between barriers whose tops rise
  above the lower asymptote): the levels between the threshold and that
  energy are quasi-bound.

The enclosure is measured on V sampled over the features' span (4097 even
points plus both sides of every feature; for a V constant between its
features, both sides of every feature and the middle of every gap sample
every piece, which is all the even points add; where it keeps piece tables, the pieces' values are read from
them in order, which gives the same answer): with L(x), R(x) the highest V to
the left and to the right of x, the region below min(L, R) is enclosed, and
:func:`confined_top` is the highest min(L, R) over the points where V lies
below it.  Repulsive point terms are not counted as barriers here.  Energies
in the case energy unit.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.model.potential import remembered
from fdsolver.numerics.kernels import enclosure_top

#: samples of V over the features' span
SAMPLES = 4097


def falls(potential) -> bool:
    """True if V falls without bound (or is undefined) toward an open end."""
    return any(v == -math.inf or math.isnan(v) for v in (potential.asymptote(-1), potential.asymptote(1)))


def confined_top(potential) -> float | None:
    """The highest energy up to which some region is enclosed by higher V on both sides; None if none is (or V is
    not finite at some sample).  The enclosure of the samples in one compiled pass
    (:func:`fdsolver.numerics.kernels.enclosure_top`)."""
    lo, hi = potential.support()
    if not hi > lo:
        return None
    v = _pieces_in_order(potential, lo, hi)
    if v is None:
        feats = np.asarray(potential.features(), dtype=float)
        d = 1e-9 * max(1.0, hi - lo)
        if potential.piecewise_constant:
            even = potential.piece_midpoints(lo, hi)
        else:
            even = np.linspace(lo, hi, SAMPLES)
        xs = sorted_distinct(np.concatenate([even, feats - d, feats + d, [lo - d, hi + d]]))
        with np.errstate(all="ignore"):
            v = potential.value(xs)
    enclosed, top = enclosure_top(np.ascontiguousarray(v, dtype=float))
    return float(top) if enclosed else None


def _pieces_in_order(potential, lo: float, hi: float) -> np.ndarray | None:
    """V on every piece, left to right, where the potential keeps piece tables
    (:attr:`~fdsolver.model.potential.Potential.piece_table`): the samples of :func:`confined_top` (the middle
    of every piece of [lo, hi], both sides of every feature, both ends) then lie inside the pieces, every
    piece holds at least one, and in the order of x their values are the pieces' values in order, each
    repeated; repeats change neither the enclosure nor its top, so the pieces' values, read from the tables,
    give the same answer.  None (sample V instead) without tables, or where an offset might round back onto
    its feature (a feature farther from 0 than about 4e6 spans)."""
    table = getattr(potential, "piece_table", None)
    if table is None or not table[0].size:
        return None
    d = 1e-9 * max(1.0, hi - lo)
    first, last = float(table[0][0]), float(table[0][-1])
    far = max(abs(first), abs(last))  # the sorted features' largest magnitude: d must exceed an ulp of each
    if not ((lo == first or lo < 0.5 * (lo + first) < first) and (hi == last or last < 0.5 * (last + hi) < hi)
            and far + 0.5 * d > far):
        return None
    return table[1]


def leaks(potential, domain=None) -> bool:
    """True if the open-line solve of ``potential`` has quasi-bound states to add (module docstring); worked out
    once per potential where it keeps such facts (:meth:`~fdsolver.model.potential.Potential.remembered`)."""
    if domain is not None and getattr(domain, "hard", False):
        return False
    return remembered(potential, "leaks on the open line", lambda: _leaks(potential))


def _leaks(potential) -> bool:
    """:func:`leaks` on the open line, worked out."""
    if falls(potential):
        return True
    top = confined_top(potential)
    if top is None:
        return False
    threshold = min(potential.asymptote(-1), potential.asymptote(1))
    return math.isfinite(threshold) and top > threshold + 1e-9 * max(1.0, abs(threshold), abs(top))
