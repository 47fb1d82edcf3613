"""Bloch bands of periodic potentials: one period's transfer matrix, band edges none missed, error bars.

Pipeline: :mod:`~fdsolver.bands.lattice` (one period from a Potential) -> :mod:`~fdsolver.bands.cellgrid`
(cells of the period on nested levels) -> :mod:`~fdsolver.bands.edges` (band edges by the band index,
:mod:`~fdsolver.bands.roots`) -> :mod:`~fdsolver.bands.dispersion` (E_n(q)) ->
:mod:`~fdsolver.bands.structure` (the driver: masses, Richardson, density of states) ->
:mod:`~fdsolver.bands.result` (frozen dataclasses; :mod:`~fdsolver.bands.model` answers later questions:
density of states anywhere, Bloch functions).  :mod:`~fdsolver.bands.finite` sets N-period stacks
beside the bands.  The delta comb lives in :mod:`fdsolver.zerorange.comb`.

Public names (imported on first use; the lattice constructor lives in its module, whose name it shares)::

    from fdsolver.bands.lattice import lattice
    lat = lattice(potential, period)                  # CaseError on bad input
    b = band_structure(lat, BandSettings(n_bands=10, n_wavevectors=201))
    b.energy, b.energy_error, b.edges.band_bottom, b.edges.effective_mass_bottom, b.dos(E), b.bloch(0, q)
    e = band_edges(lat)                               # edges, widths, gaps, masses only (for scans)
    s = stack_bands(lat, (2, 4, 8), "hard")           # N-period stacks beside the bands

The package is also the command: ``fdsolver.bands(case, ...)`` is :func:`fdsolver.api.bands` whether the
name resolves to that function or to this package (once a submodule is imported, Python binds
``fdsolver.bands`` to the package; calling the package forwards to the function).
"""

from __future__ import annotations

import importlib
import sys
import types
from typing import Any

_LAZY = {
    "Lattice": "fdsolver.bands.lattice",
    "one_period": "fdsolver.bands.lattice",
    "BandSettings": "fdsolver.bands.structure",
    "band_structure": "fdsolver.bands.structure",
    "band_edges": "fdsolver.bands.structure",
    "BandEdges": "fdsolver.bands.result",
    "Bands": "fdsolver.bands.result",
    "BlochFunction": "fdsolver.bands.result",
    "VARIABLES": "fdsolver.bands.result",
    "StackBands": "fdsolver.bands.finite",
    "stack_bands": "fdsolver.bands.finite",
    "BandStudy": "fdsolver.bands.study",
    "band_study": "fdsolver.bands.study",
    "lattice_of": "fdsolver.bands.study",
}

__all__ = sorted(_LAZY)


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'fdsolver.bands' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))


class _Command(types.ModuleType):
    """This package, callable as :func:`fdsolver.api.bands` (module docstring)."""

    def __call__(self, *args, **kwargs):
        from fdsolver.api import bands

        return bands(*args, **kwargs)


sys.modules[__name__].__class__ = _Command
