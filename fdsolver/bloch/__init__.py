"""Bloch bands of periodic potentials: one period's transfer matrix, band edges none missed, error bars.

Pipeline: :mod:`~fdsolver.bloch.lattice` (one period from a Potential) -> :mod:`~fdsolver.bloch.cellgrid`
(cells of the period on nested levels) -> :mod:`~fdsolver.bloch.edges` (band edges by the band index,
:mod:`~fdsolver.bloch.roots`) -> :mod:`~fdsolver.bloch.dispersion` (E_n(q)) ->
:mod:`~fdsolver.bloch.structure` (the driver: masses, Richardson, density of states) ->
:mod:`~fdsolver.bloch.result` (frozen dataclasses; :mod:`~fdsolver.bloch.model` answers later questions:
density of states anywhere, Bloch functions).  :mod:`~fdsolver.bloch.finite` sets N-period stacks
beside the bands.  The delta comb lives in :mod:`fdsolver.zerorange.comb`.

Public names (imported on first use; the lattice constructor lives in its module, whose name it shares)::

    from fdsolver.bloch.lattice import lattice
    lat = lattice(potential, period)                  # CaseError on bad input
    b = band_structure(lat, BandSettings(n_bands=10, n_wavevectors=201))
    b.energy, b.energy_error, b.edges.band_bottom, b.edges.effective_mass_bottom, b.dos(E), b.bloch(0, q)
    e = band_edges(lat)                               # edges, widths, gaps, masses only (for scans)
    s = stack_bands(lat, (2, 4, 8), "hard")           # N-period stacks beside the bands

The command is :func:`fdsolver.api.bands` (``fdsolver.bands``); this package has its own name so that
importing it never rebinds that public function.
"""

from __future__ import annotations

import importlib
from typing import Any

_LAZY = {
    "Lattice": "fdsolver.bloch.lattice",
    "one_period": "fdsolver.bloch.lattice",
    "BandSettings": "fdsolver.bloch.structure",
    "band_structure": "fdsolver.bloch.structure",
    "band_edges": "fdsolver.bloch.structure",
    "BandEdges": "fdsolver.bloch.result",
    "Bands": "fdsolver.bloch.result",
    "BlochFunction": "fdsolver.bloch.result",
    "VARIABLES": "fdsolver.bloch.result",
    "StackBands": "fdsolver.bloch.finite",
    "stack_bands": "fdsolver.bloch.finite",
    "BandStudy": "fdsolver.bloch.study",
    "band_study": "fdsolver.bloch.study",
    "lattice_of": "fdsolver.bloch.study",
}

__all__ = sorted(_LAZY)


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'fdsolver.bloch' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))
