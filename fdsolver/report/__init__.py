"""Plain-text tables of archives, units in every column header.

:func:`format_archive` picks the table of any archive by its kind:
:mod:`.solve` (one solve), :mod:`.sweep` (sweeps and threshold searches),
:mod:`.delta` (zero-range checks and validity maps), :mod:`.bands` (periodic
cases: band structures, band sweeps, delta-comb checks); :mod:`._common` holds
the unit labels they share.
"""

from __future__ import annotations

#: archive kind -> "module:function" that formats it (modules imported on demand)
FORMATTERS = {
    "solve": "fdsolver.report.solve:format_solve",
    "delta_check": "fdsolver.report.delta:format_delta",
    "sweep": "fdsolver.report.sweep:format_sweep",
    "threshold": "fdsolver.report.sweep:format_sweep",
    "bands": "fdsolver.report.bands:format_bands",
    "band_sweep": "fdsolver.report.bands:format_band_sweep",
    "comb_check": "fdsolver.report.bands:format_comb_check",
    "absorption": "fdsolver.report.optics:format_absorption",
    "interband": "fdsolver.report.optics:format_interband",
    "transmission": "fdsolver.report.continuum:format_transmission",
    "resonances": "fdsolver.report.continuum:format_resonances",
    "current": "fdsolver.report.continuum:format_current",
    "delta_background": "fdsolver.report.background:format_background",
    "delta_transmission": "fdsolver.report.background:format_scatter_check",
}


def format_archive(ds) -> str:
    """The table of any fdsolver archive, chosen by its ``fdsolver_kind``."""
    import importlib

    from fdsolver.errors import ArchiveError

    mod, func = FORMATTERS[ds.attrs["fdsolver_kind"]].split(":")
    try:
        return getattr(importlib.import_module(mod), func)(ds)
    except (KeyError, AttributeError, IndexError, TypeError, ValueError) as exc:
        raise ArchiveError(
            f"archive is damaged or incomplete ({type(exc).__name__}: {str(exc)[:80]})", file=ds.encoding.get("source")
        ) from None

