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
def _erf_flat(x):
    """erf of every element of a 1-D float array (C library erf)."""
    out = np.empty_like(x)
    for i in range(x.shape[0]):
        out[i] = math.erf(x[i])
    return out


@njit
def _erfc_flat(x):
    """erfc of every element of a 1-D float array (C library erfc: relative accuracy kept in the far tail)."""
    out = np.empty_like(x)
    for i in range(x.shape[0]):
        out[i] = math.erfc(x[i])
    return out


def _elementwise(kernel, v):
    """``kernel`` over the elements of ``v`` (any shape; a scalar gives a numpy float, as a ufunc does)."""
    a = np.asarray(v, dtype=float)
    out = kernel(np.ascontiguousarray(a).reshape(-1)).reshape(a.shape)
    return out[()] if out.ndim == 0 else out


def erf(v):
    """The error function erf(v) = 2/sqrt(pi) int_0^v exp(-t^2) dt, elementwise."""
    return _elementwise(_erf_flat, v)


def erfc(v):
    """The complementary error function erfc(v) = 1 - erf(v), elementwise, accurate where it is tiny."""
    return _elementwise(_erfc_flat, v)
