"""The error functions of safe expressions, erf and erfc, elementwise on arrays in one compiled loop.

Each value is the C library's ``erf`` / ``erfc`` of the element (what Python's :func:`math.erf` and
:func:`math.erfc` return, a few ulps at most from the exact value; checked against mpmath in the tests).
They are compiled (:data:`fdsolver.compiled.njit`) rather than taken from scipy.special, whose import costs a
cold run about 0.2 s of CPU (scipy.special brings SciPy's array-API layer and, through it, numpy.f2py and
numpy.testing; measured in DEVELOPERS.md) for two functions of one variable.  This module is imported when an
expression first calls one of them, so a case without them loads nothing.  Dimensionless in, dimensionless out.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.compiled import njit


@njit
def _error_function(x, complement):
    """erf (or, with ``complement``, erfc) of every element of a 1-D float array: the C library's erf / erfc (erfc
    keeps its relative accuracy in the far tail, where 1 - erf would be 0)."""
    out = np.empty_like(x)
    for i in range(x.shape[0]):
        out[i] = math.erfc(x[i]) if complement else math.erf(x[i])
    return out


def _elementwise(v, complement: bool):
    """erf or erfc over the elements of ``v`` (any shape; a scalar gives a numpy float, as a ufunc does)."""
    a = np.asarray(v, dtype=float)
    out = _error_function(np.ascontiguousarray(a).reshape(-1), complement).reshape(a.shape)
    return out[()] if out.ndim == 0 else out


def erf(v):
    """The error function erf(v) = 2/sqrt(pi) int_0^v exp(-t^2) dt, elementwise."""
    return _elementwise(v, False)


def erfc(v):
    """The complementary error function erfc(v) = 1 - erf(v), elementwise, accurate where it is tiny."""
    return _elementwise(v, True)
