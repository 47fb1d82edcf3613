"""V and m of a potential constant between its features, read from its piece tables
(:attr:`~fdsolver.model.potential.Potential.piece_table`) instead of evaluated, where that gives the potential's
own numbers.

A table entry is the potential's evaluation at one position of its piece, and V and m are constant on the
open piece, so a lookup anywhere inside it returns the same numbers, except within a few ulps of a feature,
where the shape's own comparison (say |x - c| < w / 2 for a square well) may round to the other side.  A
position that close to a feature without being on it is therefore not read: :func:`apart_tolerance` is
1e-9 of the largest of one length unit, the features' span and their largest magnitude, far beyond that
rounding, and where some position falls inside it the caller evaluates instead.  Lengths in
the case length unit, V in its energy unit, m in m_e.
"""

from __future__ import annotations

import numpy as np

from fdsolver.numerics.kernels import piece_values_apart


def apart_tolerance(feats: np.ndarray) -> float:
    """The distance from a feature within which a position is not read from the tables (length unit)."""
    first, last = float(feats[0]), float(feats[-1])
    return 1e-9 * max(1.0, last - first, abs(first), abs(last))


def table_values(potential, x: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """(V, m) at the positions ``x`` read from the potential's piece tables: the numbers its own evaluation
    gives; None where it keeps no tables (or has no features) or some position lies within
    :func:`apart_tolerance` of a feature without being on it.  One compiled call, O(N log K)."""
    table = getattr(potential, "piece_table", None)
    if table is None or not table[0].size:
        return None
    done, v, m = piece_values_apart(np.ascontiguousarray(x, dtype=float), *table, apart_tolerance(table[0]))
    return (v, m) if done else None


def potential_at(potential, x: np.ndarray) -> np.ndarray:
    """V at the positions ``x`` (energy unit): read from the piece tables where that gives the potential's own
    numbers (:func:`table_values`), evaluated (:meth:`~fdsolver.model.potential.Potential.value`) otherwise."""
    read = table_values(potential, x)
    return potential.value(x) if read is None else read[0]
