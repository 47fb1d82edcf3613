"""Array steps every layer uses, done without the import numpy's general form makes on its first call.

:func:`sorted_distinct` is ``numpy.unique`` of floats.  numpy 2's ``unique`` asks on every call whether its
argument is a masked array, and that first question imports ``numpy.ma``: 14 to 25 ms of CPU (measured:
DEVELOPERS.md, session 18), in a solve that never makes a masked array.  (numba's typing of a kernel's first
call asks the same question; fdsolver's kernels ask it without the import: :mod:`fdsolver.compiled`.)
"""

from __future__ import annotations

import numpy as np


def sorted_distinct(values) -> np.ndarray:
    """The distinct values of ``values`` (any shape, as float64), sorted: ``numpy.unique(values)`` for floats.

    numpy's own steps for a float array (numpy 2.4, ``numpy.lib._arraysetops_impl._unique1d``, which sorts
    floats; its hashing form takes integers and strings only): sort a flat copy in place with the default sort,
    keep each value that differs from the one before it, and of the NaNs, which sort last, keep the first.  So
    where +0.0 and -0.0 both occur, the one kept is the one the sort puts first, as numpy's.  A new array.
    """
    aux = np.array(values, dtype=float).ravel()
    aux.sort()
    keep = np.empty(aux.shape, dtype=bool)
    keep[:1] = True
    if aux.size and aux[-1] != aux[-1]:  # NaNs sort last: keep the first of them only
        first_nan = int(np.searchsorted(aux, aux[-1], side="left"))
        if first_nan > 0:
            keep[1:first_nan] = aux[1:first_nan] != aux[: first_nan - 1]
        keep[first_nan] = True
        keep[first_nan + 1:] = False
    else:
        keep[1:] = aux[1:] != aux[:-1]
    return aux[keep]
