"""xarray, imported so that building a Dataset does not import array libraries nobody uses.

When it first turns data into a Dataset, xarray asks of every value whether it
is a Dask, pint, CuPy, sparse or cubed array, and to answer it imports each of
those libraries that is installed.  pint is a dependency of fdsolver and Dask
comes with the cluster extra; with the Dask scheduler the write imported (below)
they made a cold ``fdsolver solve -o run.nc`` cost 4.2-4.8 s of CPU instead of
2.2-2.7 s when that command still wrote through xarray (measured 2026-12-02,
see DEVELOPERS.md, "Benchmark: start-up, per-solve overhead, many states").

An array of a library can only exist once that library has been imported.
:func:`xarray` therefore gives xarray, for each such library not yet imported,
an answer that is computed when it is asked: "no array type" while the library
is absent from ``sys.modules``, and xarray's own answer (which imports the
library) as soon as it is there.  For Dask the module that counts is
``dask.array``, where Dask's array class is defined: a Dask cluster imports
``dask`` but not its arrays, and the first Dataset built after a cluster had
started imported ``dask.array`` for the check (0.32-0.33 s of CPU, three runs of
``import dask.array`` after ``import numpy, xarray, dask.distributed``).  The result of every type check is the one
xarray itself would give; only the imports are saved.  If xarray's private
cache moves in a later release nothing is installed and xarray behaves as
shipped (only slower to start).

xarray also asks of every value whether it is a Dask collection, and imports
Dask to ask.  Dask's own answer is False for any object without a callable
``__dask_graph__`` attribute (``dask.base.is_dask_collection``), so that test
is made first and Dask is consulted only for an object that has one.

Archives are written without xarray (:mod:`fdsolver.io.netcdf`); xarray is
loaded to read one back, to build the Dataset of a command that returns one
(sweeps, the API), and to draw a figure.
"""

from __future__ import annotations

import sys
from types import ModuleType
from typing import Any

#: the optional array libraries xarray checks values against (xarray.namedarray.pycompat)
ARRAY_LIBRARIES = ("dask", "pint", "cupy", "sparse", "cubed")

#: the module that defines a library's array class, where it is not the library's top module
ARRAY_MODULES = {"dask": "dask.array"}


def _absent(name: str) -> bool:
    """No array of library ``name`` can exist yet: the module of its array class was never imported."""
    return sys.modules.get(ARRAY_MODULES.get(name, name)) is None

_installed = False


class _Deferred:
    """xarray's record of one array library, made only once the library is imported."""

    def __init__(self, name: str, cache: dict, maker) -> None:
        self._name, self._cache, self._maker = name, cache, maker

    def _real(self) -> Any:
        real = self._maker(self._name)  # imports the library, as xarray would have
        self._cache[self._name] = real
        return real

    @property
    def type(self) -> tuple:
        if _absent(self._name):
            return ()  # nothing can be an instance of a class that was never imported
        return self._real().type

    def __getattr__(self, attr: str) -> Any:
        return getattr(self._real(), attr)


def xarray() -> ModuleType:
    """The xarray module, with the array-library checks deferred as described above (idempotent)."""
    global _installed
    import xarray as xr

    if not _installed:
        _installed = True
        try:
            from xarray.namedarray import pycompat

            cache = pycompat._cached_duck_array_modules
            maker = pycompat.DuckArrayModule
        except (ImportError, AttributeError):  # a later xarray: behave as shipped
            return xr
        if isinstance(cache, dict):
            for name in ARRAY_LIBRARIES:
                if name not in cache and _absent(name):
                    cache[name] = _Deferred(name, cache, maker)
        _check_graph_first()
    return xr


def _check_graph_first() -> None:
    """Ask Dask whether a value is a Dask collection only when the value has a callable ``__dask_graph__``."""
    try:
        from xarray.namedarray import utils
    except ImportError:
        return
    shipped = getattr(utils, "is_dask_collection", None)
    if shipped is None or getattr(shipped, "_graph_first", False):
        return

    def is_dask_collection(x: object) -> bool:
        if isinstance(x, type) or not callable(getattr(x, "__dask_graph__", None)):
            return False  # what dask.base.is_dask_collection answers for such an object
        return shipped(x)

    is_dask_collection._graph_first = True  # type: ignore[attr-defined]
    utils.is_dask_collection = is_dask_collection
