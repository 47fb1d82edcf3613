"""Array steps every layer uses, done without the import numpy's general form makes on its first call.

:func:`sorted_distinct` is ``numpy.unique`` of floats (:func:`short_sorted_distinct` the same of a few Python
floats, as a list).  numpy 2's ``unique`` asks on every call whether its
argument is a masked array, and that first question imports ``numpy.ma``: 14 to 25 ms of CPU (measured:
DEVELOPERS.md, session 18), in a solve that never makes a masked array.  (numba's typing of a kernel's first
call asks the same question; fdsolver's kernels ask it without the import: :mod:`fdsolver.compiled`.)
"""

from __future__ import annotations

import math

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


#: :func:`short_sorted_distinct` takes lists up to this long (beyond it numpy's sort is quicker: 6.5 against 9.4 us
#: for 64 floats, 5.3 against 2.1 us for 4, measured; DEVELOPERS.md, session 22)
SHORT = 32


def short_sorted_distinct(values: list) -> list[float] | None:
    """:func:`sorted_distinct` of a short list of floats, as a sorted list of its distinct values, where Python's
    sort gives numpy's answer bit for bit; None where it might not (the caller then uses numpy's form): more than
    :data:`SHORT` values, a NaN (numpy keeps one, last) or a zero (+0.0 and -0.0 compare equal, and which of them
    numpy keeps depends on its sort).  Otherwise equal values have the same bits and distinct ones one order."""
    if len(values) > SHORT:
        return None
    distinct = set(values)
    if 0.0 in distinct or any(map(math.isnan, distinct)):
        return None
    return sorted(distinct)
