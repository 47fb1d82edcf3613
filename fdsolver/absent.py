"""Importing a library while some optional libraries it probes for look absent.

Some libraries probe at import time for optional libraries fdsolver never
uses with them, and import them to ask: numba imports scipy.linalg to learn
whether its ``np.correlate`` may call BLAS; pint imports Dask to support Dask
arrays.  :func:`absent` makes such a library look not installed for the
length of one import, so the probe answers "absent" without paying for it.

Others import a module they never use: SciPy's array-API layer star-imports
numpy, which imports ``numpy.f2py`` (the Fortran wrapper generator, about
0.08 s of CPU).  :func:`deferred` imports such a module so that its code
runs only when it is first used.
"""

from __future__ import annotations

import importlib.util
import sys
from contextlib import contextmanager


@contextmanager
def absent(*names: str):
    """Within the block, ``import NAME`` raises ImportError and ``importlib.util.find_spec(NAME)`` is None.

    Only names not yet imported are hidden (an imported library is never taken
    away).  The mark is ``sys.modules[NAME] = None``, the documented way of
    blocking an import, and it is removed on leaving, so a later import of
    NAME works as usual.  Another thread importing NAME in that instant would
    get the ImportError too.
    """
    hidden = [name for name in names if name not in sys.modules]
    for name in hidden:
        sys.modules[name] = None  # type: ignore[assignment]
    try:
        yield
    finally:
        for name in hidden:
            if sys.modules.get(name, 0) is None:
                del sys.modules[name]


def deferred(name: str) -> None:
    """Import the submodule ``name`` of an imported package so that its code runs when it is first used.

    The standard library's lazy loader (``importlib.util.LazyLoader``): the module is entered in sys.modules
    and on its parent package now, and its body runs at the first access to one of its attributes.  So it pays
    only where the module is reached as an attribute of its package (``from numpy import *`` takes
    ``numpy.f2py`` so): an ``import NAME`` statement reads the module's ``__spec__``, which runs it.  Nothing
    happens where NAME is already imported or its parent is not, or where it cannot be found or its loader
    cannot be made lazy.
    """
    parent, _, child = name.rpartition(".")
    if name in sys.modules or (parent and parent not in sys.modules):
        return
    spec = importlib.util.find_spec(name)
    if spec is None or spec.loader is None or not hasattr(spec.loader, "exec_module"):
        return
    spec.loader = importlib.util.LazyLoader(spec.loader)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    if parent:
        setattr(sys.modules[parent], child, module)
