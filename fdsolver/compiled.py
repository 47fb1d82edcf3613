"""numba's ``njit`` as every compiled loop of fdsolver uses it: cached on disk, no GIL, a lean first load.

:data:`njit` is ``numba.njit(cache=True, nogil=True)``, with the compilation cache in fdsolver's own folder of
the user's cache (:func:`cache_folder`), each kernel loaded from it without numba's compile set-up, and numba's
numpy array-math module, where a kernel needs it, imported without scipy.linalg (below).
Importing this module imports numba; the modules that define kernels import it, and a module that compiles a
loop only when it is first called (a table's cubic spline) imports it then.
"""

from __future__ import annotations

import os
import tempfile


def cache_folder() -> str | None:
    """The folder fdsolver's compiled kernels are cached in, or None where the user chose one for numba.

    ``NUMBA_CACHE_DIR`` set by the user: numba's own rule (None here).  Otherwise ``fdsolver/numba`` in the
    user's cache folder (``XDG_CACHE_HOME`` if it is an absolute path, else ``~/.cache``), or, where that
    cannot be made or written (or the process has no home), ``fdsolver-UID/numba`` in the temp folder: made
    private to the user (mode 0700) and used only if the user owns it and nobody else may write to it, since
    the cache holds machine code the process will run.  Not numba's default, the ``__pycache__`` beside the
    installed source: pip removes only the files it installed, so the cache files kept an uninstalled
    package's folder alive in site-packages, and that folder then shadowed a later editable install (``import
    fdsolver`` found a namespace package with nothing in it; seen in development).  numba names each source
    folder's cache by its path, so two installs never share entries.
    """
    if os.environ.get("NUMBA_CACHE_DIR"):
        return None
    home = os.path.expanduser("~")  # "~" itself where the process has no home: never a folder under the cwd
    base = os.environ.get("XDG_CACHE_HOME", "")
    if not os.path.isabs(base):  # unset, empty or relative: the XDG base directory rule says ~/.cache
        base = os.path.join(home, ".cache")
    uid = os.getuid() if hasattr(os, "getuid") else None
    shared = os.path.join(tempfile.gettempdir(), "fdsolver" if uid is None else f"fdsolver-{uid}")
    for top in (os.path.join(base, "fdsolver"), shared):
        if not os.path.isabs(top):
            continue
        folder = os.path.join(top, "numba")
        try:
            os.makedirs(top, mode=0o700, exist_ok=True)
            os.makedirs(folder, exist_ok=True)
            if top == shared and uid is not None:
                st = os.stat(top)
                if st.st_uid != uid or st.st_mode & 0o022:
                    continue  # another user's folder, or one others may write to: not trusted
        except OSError:
            continue
        if os.access(folder, os.W_OK):
            return folder
    return None  # nowhere usable: numba's own locators (beside the source, then its user-wide folder)


def _jit():
    """numba.njit(cache=True, nogil=True), each kernel's cache in :func:`cache_folder` (never raising at import).

    numba takes a function's cache folder from ``numba.core.config.CACHE_DIR`` when the function is
    decorated; it is set to fdsolver's folder only for the length of each decoration, so the caches of other
    numba users in the same process, and the environment child processes inherit, are left as they were.
    (A thread of the same process decorating its own cached function in that instant would put its cache
    in fdsolver's folder; nothing else changes for it.)
    """
    import numba
    from numba.core import config

    decorate = numba.njit(cache=True, nogil=True)
    folder = cache_folder()

    def njit(fn):
        saved = config.CACHE_DIR
        if folder is not None:
            config.CACHE_DIR = folder
        try:
            dispatcher = decorate(fn)
        finally:
            config.CACHE_DIR = saved
        if not _lean_cache_loads(dispatcher):
            _load_numpy_typing_without_scipy_linalg()  # numba's own first load sets its compiler up
        return dispatcher

    return njit


def _lean_cache_loads(dispatcher) -> bool:
    """Let ``dispatcher`` load its cached machine code without numba's compile set-up; False where it cannot.

    numba's cache refreshes the whole compile context before it loads a kernel: it imports and installs every
    lowering registry numba has (its numpy, random, polynomial, typed containers ...), 0.1 to 0.2 s of CPU on
    the first kernel a process loads.  Loading needs none of it: the cached library is linked machine code,
    and only numba's runtime (array allocation) must be ready, which ``rtsys.initialize`` does.  A load does
    import the modules the kernel's numba helpers were defined in (to rebuild their environments); numba's
    numpy array-math module among them is imported without scipy.linalg (:func:`_without_scipy_linalg`).
    Where the kernel is not in the cache, numba compiles it, and its compiler refreshes the context itself,
    after the same import (:func:`_load_numpy_typing_without_scipy_linalg`).  Only this dispatcher's cache is
    changed (other numba users in the process keep numba's own).  False, and nothing changed, where numba's
    cache does not have the two methods this relies on (another numba version).
    """
    from numba.core.runtime import rtsys

    cache = getattr(dispatcher, "_cache", None)
    load = getattr(cache, "_load_overload", None)
    guard = getattr(cache, "_guard_against_spurious_io_errors", None)
    if load is None or guard is None:
        return False

    def load_overload(sig, target_context):
        rtsys.initialize(target_context)
        found = None
        with _without_scipy_linalg(), guard():  # the guard swallows an error of the cache files
            found = load(sig, target_context)
        if found is None:  # numba compiles it next
            _load_numpy_typing_without_scipy_linalg()
        return found

    cache.load_overload = load_overload
    return True


def _without_scipy_linalg():
    """A context in which scipy.linalg cannot be imported, while numba's numpy array-math module
    (``numba.np.arraymath``) is not imported yet and no other thread runs; otherwise one that hides nothing.

    ``numba.np.arraymath`` imports ``scipy.linalg.cython_blas`` only to decide whether the inner products of its
    ``np.correlate`` and ``np.convolve`` may call BLAS.  The whole of scipy.linalg comes with it: about 0.25 s
    of CPU, a quarter of a cold ``fdsolver solve`` (measured in DEVELOPERS.md).  No kernel here calls those, so
    the module is imported with scipy.linalg hidden (:func:`fdsolver.absent.absent`); numba then computes those
    inner products (in any later kernel of the process) as a plain loop, with the same result to round-off.
    ``np.dot``, ``@`` and ``np.linalg`` are not affected: ``numba.np.linalg`` imports scipy.linalg when a
    kernel using them compiles.  Where scipy.linalg is already loaded (the sweep workers load it first on
    purpose) nothing is hidden.  Never while other threads run: one of them importing scipy.linalg in that
    instant would get an ImportError (with threads, numba's import brings scipy.linalg along).
    """
    import contextlib
    import sys
    import threading

    from fdsolver.absent import absent

    if "numba.np.arraymath" in sys.modules or threading.active_count() > 1:
        return contextlib.nullcontext()
    return absent("scipy.linalg")


def _load_numpy_typing_without_scipy_linalg():
    """Import numba's numpy array-math module (``numba.np.arraymath``) without scipy.linalg
    (:func:`_without_scipy_linalg`), before numba sets its compiler up (which imports it)."""
    with _without_scipy_linalg():
        import numba.np.arraymath  # noqa: F401


#: numba.njit(cache=True, nogil=True), cached in fdsolver's folder of the user's cache (cache_folder)
njit = _jit()
