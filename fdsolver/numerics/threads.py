"""One BLAS thread while a computation runs (threadpoolctl).

Multithreaded BLAS reductions change the last bits of large-grid energies with the thread count, and on a
loaded machine a second BLAS thread competing for a busy core makes small products several times slower in
wall time.  Every solve therefore runs with one BLAS thread, whoever calls it; sweeps pin their worker
processes once (:mod:`fdsolver.parallel.executors`).

threadpoolctl finds the BLAS libraries loaded when it looks (about 7 ms); the finder is kept per process and
renewed only when numpy's or SciPy's linear algebra was imported since, so a limit costs about 0.03 ms.  Where
every library already runs one thread (a pinned sweep worker, ``OPENBLAS_NUM_THREADS=1``), nothing is changed
and the limiter only asks each library its thread count.
"""

from __future__ import annotations

import sys

_CONTROLLER: dict = {}


class _AlreadyOne:
    """The limiter where every library already runs one thread: nothing to set, nothing to restore."""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return None

    def restore_original_limits(self):
        return None


def _loaded() -> tuple[bool, bool]:
    return "numpy" in sys.modules, "scipy.linalg" in sys.modules


def one_blas_thread():
    """A limiter that holds every BLAS/OpenMP library loaded in this process to one thread.

    Use it as a context manager (``with one_blas_thread(): ...``, the limits are restored on exit), or keep it
    and call ``.restore_original_limits()``.
    """
    from threadpoolctl import ThreadpoolController

    key = _loaded()
    controller = _CONTROLLER.get(key)
    if controller is None:
        _CONTROLLER.clear()
        controller = _CONTROLLER[key] = ThreadpoolController()
    if all(lib.num_threads == 1 for lib in controller.lib_controllers):
        return _AlreadyOne()
    return controller.limit(limits=1)
