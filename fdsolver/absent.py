"""Importing a library while some optional libraries it probes for look absent.

Some libraries probe at import time for optional libraries fdsolver never
uses with them, and import them to ask: numba imports scipy.linalg to learn
whether its ``np.correlate`` may call BLAS; pint imports Dask to support Dask
arrays.  :func:`absent` makes such a library look not installed for the
length of one import, so the probe answers "absent" without paying for it.
"""

from __future__ import annotations

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
