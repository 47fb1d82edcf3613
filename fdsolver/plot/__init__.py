"""Figures of archives (matplotlib on the Agg backend; imported only when a figure is asked for).

:func:`plot_archive` draws any archive by its kind: :mod:`.solve` (levels and
wavefunctions), :mod:`.sweep` (sweeps and threshold searches), :mod:`.delta`
(zero-range checks and validity maps), :mod:`.bands` (band diagrams, fan
charts of band sweeps, delta-comb checks); :mod:`._common` holds the figure
factory and the axis labels they share.
"""

from __future__ import annotations

import importlib

PLOTTERS = {
    "solve": "fdsolver.plot.solve:plot_solve",
    "delta_check": "fdsolver.plot.delta:plot_delta",
    "sweep": "fdsolver.plot.sweep:plot_sweep",
    "threshold": "fdsolver.plot.sweep:plot_sweep",
    "bands": "fdsolver.plot.bands:plot_bands",
    "band_sweep": "fdsolver.plot.bands:plot_band_sweep",
    "comb_check": "fdsolver.plot.bands:plot_comb_check",
    "absorption": "fdsolver.plot.optics:plot_absorption",
    "interband": "fdsolver.plot.optics:plot_interband",
    "transmission": "fdsolver.plot.continuum:plot_transmission",
    "resonances": "fdsolver.plot.continuum:plot_resonances",
    "current": "fdsolver.plot.continuum:plot_current",
    "delta_background": "fdsolver.plot.background:plot_background",
    "delta_transmission": "fdsolver.plot.background:plot_scatter_check",
}


def plot_archive(ds, path) -> None:
    """Draw archive ``ds`` to the image file ``path``."""
    from fdsolver.errors import ArchiveError

    mod, func = PLOTTERS[ds.attrs["fdsolver_kind"]].split(":")
    try:
        getattr(importlib.import_module(mod), func)(ds, path)
    except (KeyError, AttributeError, IndexError, TypeError) as exc:
        raise ArchiveError(
            f"archive is damaged or incomplete ({type(exc).__name__}: {str(exc)[:80]})", file=ds.encoding.get("source")
        ) from None
