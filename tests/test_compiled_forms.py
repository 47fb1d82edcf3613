"""Compiled forms of steps the solver once took in numpy give the numpy form's numbers, to the last bit.

Each step below was written in numpy first; the compiled form replaced it to cut the per-solve overhead.  The
reference for each is the numpy form itself, written out here (and, for the extrapolation, fdsolver's Romberg
table, whose own tests check it against closed forms): a compiled step that rounds differently would change
results by round-off without any test of the physics noticing.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fdsolver.numerics import kernels
from fdsolver.numerics.richardson import Romberg


@pytest.mark.parametrize("seed", range(40))
def test_newest_romberg_row_is_the_python_tables(seed):
    """romberg_newest (the all-levels call's splittings) against Romberg.add / value / error."""
    rng = np.random.default_rng(seed)
    levels, n = int(rng.integers(1, 8)), int(rng.integers(0, 5))
    limit = rng.normal(0.0, 10.0, n)
    h2 = 4.0 ** -np.arange(levels)
    rows = limit + rng.normal(0.0, 1.0, n) * h2[:, None] + rng.normal(0.0, 0.3, n) * h2[:, None] ** 2
    table = Romberg()
    for row in rows:
        table.add(row)
    value, error = kernels.romberg_newest(np.ascontiguousarray(rows))
    assert np.array_equal(value, table.value())
    assert np.array_equal(error, table.error())


def _unfold_numpy(row, u, w, parity, neumann):
    """The numpy form of fdsolver.boundstates.result.unfold_into before it was compiled."""
    psi = u / np.sqrt(w)
    if parity == 0:
        row[1:-1] = psi
        return
    size = row.size
    centre = (size - 1) // 2
    start = centre if neumann else centre + 1
    row[start:start + psi.size] = psi / math.sqrt(2.0)
    row[:centre] = parity * row[size - 1:centre:-1]


@pytest.mark.parametrize("seed", range(30))
def test_unfolded_rows_are_the_numpy_forms(seed):
    rng = np.random.default_rng(seed)
    half = int(rng.integers(2, 60))
    size = 2 * half + 1  # whole-grid nodes, centre node in the middle
    for parity, neumann, unknowns in ((0, False, size - 2), (1, True, half), (-1, False, half - 1)):
        u = rng.normal(size=unknowns)
        w = 10.0 ** rng.uniform(-3, 1, unknowns)
        want, got = np.zeros(size), np.zeros(size)
        _unfold_numpy(want, u, w, parity, neumann)
        kernels.unfold_row(got, u, w, parity, neumann)
        assert np.array_equal(got, want), (parity, neumann)


@pytest.mark.parametrize("seed", range(30))
def test_cell_values_from_tables_are_the_numpy_forms(seed):
    """cell_piece_values against the numpy on-node test and the midpoints' table lookup of cell_constants."""
    rng = np.random.default_rng(seed)
    feats = np.sort(rng.uniform(-10.0, 10.0, int(rng.integers(1, 6))))
    v_piece, m_piece = rng.normal(size=feats.size + 1), rng.uniform(0.05, 1.0, feats.size + 1)
    v_feat, m_feat = rng.normal(size=feats.size), rng.uniform(0.05, 1.0, feats.size)
    nodes = np.unique(np.concatenate([np.linspace(-12.0, 12.0, int(rng.integers(3, 40))), feats]))
    if seed % 3 == 0:  # a feature off the nodes: refused
        nodes = np.setdiff1d(nodes, feats[:1])
    i = np.searchsorted(nodes, feats, side="right") - 1
    inside = (i >= 0) & (i < nodes.size - 1)
    i, f = i[inside], feats[inside]
    on_nodes = not np.any(np.minimum(f - nodes[i], nodes[i + 1] - f) > 1e-9 * (nodes[i + 1] - nodes[i]))
    ok, v, m = kernels.cell_piece_values(nodes, feats, 1e-9, feats, v_piece, m_piece, v_feat, m_feat)
    assert ok == on_nodes
    if ok:
        want_v, want_m = kernels.piece_values(0.5 * (nodes[:-1] + nodes[1:]), feats, v_piece, m_piece, v_feat, m_feat)
        assert np.array_equal(v, want_v) and np.array_equal(m, want_m)
