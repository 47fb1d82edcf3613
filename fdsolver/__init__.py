"""fdsolver: bound states of 1D wells on adaptive finite-difference grids.

Public API (every name is imported on first use, so ``import fdsolver`` stays light)::

    case = fdsolver.load_case("cases/pair.toml", d=4.0)   # params may be overridden
    ds = fdsolver.solve(case)                             # xarray.Dataset
    fdsolver.write_dataset(ds, "run.nc")
    ds2 = fdsolver.open_run("run.nc")
    sw = fdsolver.sweep(case, ["d=1:6:50"], output="sw.nc")   # checkpointed; resume=True goes on
    th = fdsolver.threshold(case, "d=0.1:6")               # where a state binds, no box
    dc = fdsolver.delta_check(case)                       # finite wells vs point model, over widths
    dm = fdsolver.delta_map(case, ["width=0.01:1:20", "d=5:15:20"])
    b = fdsolver.bands("cases/superlattice.toml", stacks="2,4,8")   # Bloch bands of a periodic case
    bs = fdsolver.band_sweep("cases/superlattice.toml", ["barrier=1:6:100"])   # band edges over a param
    tr = fdsolver.transmit(case, "0:300")                 # T(E), every resonance in the range resolved
    rs = fdsolver.resonances(case, "0:300")               # S-matrix poles: energies, widths, lifetimes
    iv = fdsolver.current(case, "0:0.5:51", fermi_level=10.0)   # Tsu-Esaki J(V)

Every call returns the Dataset the command line writes (see :mod:`fdsolver.api`).
Cases can also be built in code with :func:`case_from_dict` (the TOML schema
as Python data) or :func:`case_from_text`.  The pipeline reads from the
subpackages: ``input`` (case files) -> ``model`` (potential) -> ``numerics``
(grids, operators, marches) -> ``boundstates`` (bound states with error bars) ->
``zerorange`` / ``scans`` (studies) -> ``io`` (archives) -> ``report`` /
``plot`` / ``cli``.
"""

from __future__ import annotations

import importlib
from typing import Any

from fdsolver._version import __version__

#: public name -> module that defines it
_LAZY = {
    "FdsolverError": "fdsolver.errors",
    "CaseError": "fdsolver.errors",
    "BudgetError": "fdsolver.errors",
    "ArchiveError": "fdsolver.errors",
    "Case": "fdsolver.input.case",
    "load_case": "fdsolver.input.case",
    "case_from_dict": "fdsolver.input.case",
    "case_from_text": "fdsolver.input.case",
    "open_run": "fdsolver.io.archive",
    "write_dataset": "fdsolver.io.archive",
    "solve": "fdsolver.api",
    "solve_case": "fdsolver.api",
    "case_of_run": "fdsolver.api",
    "sweep": "fdsolver.api",
    "threshold": "fdsolver.api",
    "delta_check": "fdsolver.api",
    "delta_map": "fdsolver.api",
    "bands": "fdsolver.api",
    "band_sweep": "fdsolver.api",
    "solve_optics": "fdsolver.api",
    "absorption": "fdsolver.api",
    "interband": "fdsolver.api",
    "materials": "fdsolver.api",
    "export_csv": "fdsolver.report.export",
    "transmit": "fdsolver.api",
    "resonances": "fdsolver.api",
    "current": "fdsolver.api",
}

__all__ = sorted(_LAZY) + ["__version__"]


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'fdsolver' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))
