"""numba's ``njit`` as every compiled loop of fdsolver uses it: cached on disk, no GIL, a lean first load.

:data:`njit` is ``numba.njit(cache=True, nogil=True)``, with the compilation cache in a folder that is always
writable (the package's, the user's, or the temp folder for a read-only install with no writable home), and
with numba's numpy-array typing loaded without scipy.linalg (below).  Importing this module imports numba; the
modules that define kernels import it, and a module that compiles a loop only when it is first called (a
table's cubic spline) imports it then.
"""

from __future__ import annotations

import os
import tempfile


def _jit():
    """numba.njit with an on-disk cache wherever one is writable (never raising at import)."""
    here = os.path.join(os.path.dirname(__file__), "__pycache__")
    writable = os.access(here if os.path.isdir(here) else os.path.dirname(__file__), os.W_OK)
    home_cache = os.path.join(os.path.expanduser("~"), ".cache")
    if not writable and not os.environ.get("NUMBA_CACHE_DIR") and not os.access(
        home_cache if os.path.isdir(home_cache) else os.path.expanduser("~"), os.W_OK
    ):
        # read-only install and no writable home: cache in the temp folder (must be set before numba loads)
        os.environ["NUMBA_CACHE_DIR"] = os.path.join(tempfile.gettempdir(), "fdsolver-numba-cache")
    import numba

    _load_numpy_typing_without_scipy_linalg()
    return numba.njit(cache=True, nogil=True)


def _load_numpy_typing_without_scipy_linalg():
    """Import numba's numpy-array typing (``numba.np.arraymath``) without importing scipy.linalg.

    numba imports ``numba.np.arraymath`` when the first kernel is loaded, and that module imports
    ``scipy.linalg.cython_blas`` only to decide whether the inner products of its ``np.correlate`` and
    ``np.convolve`` may call BLAS.  The whole of scipy.linalg comes with it: about 0.25 s of CPU, a quarter of
    a cold ``fdsolver solve`` (measured in DEVELOPERS.md).  No kernel here calls those, so the module is
    imported once here with scipy.linalg hidden (:func:`fdsolver.absent.absent`); numba then computes those
    inner products (in any later kernel of the process) as a plain loop, with the same result to round-off.
    ``np.dot``, ``@`` and ``np.linalg`` are not affected: ``numba.np.linalg`` imports scipy.linalg when a
    kernel using them compiles.  Where scipy.linalg is already loaded (the sweep workers load it first on
    purpose) nothing is hidden.  The hiding lasts only while this one import runs, when fdsolver's kernels are
    first imported; another thread of the same process importing scipy.linalg in that instant would get an
    ImportError.  fdsolver's own threads (a threaded Dask cluster) start after this: reading a case imports
    the kernels.
    """
    import sys

    from fdsolver.absent import absent

    if "numba.np.arraymath" not in sys.modules:
        with absent("scipy.linalg"):
            import numba.np.arraymath  # noqa: F401


#: numba.njit(cache=True, nogil=True) with a cache folder that is always writable
njit = _jit()
