"""Bit-for-bit comparison of two results, for the tests that check a compiled form of a step against the general
path: every field of a :class:`~fdsolver.boundstates.result.Solution` (or of the solution inside a wrapper)."""

from __future__ import annotations

import dataclasses

import numpy as np


def fields_of(sol) -> dict:
    """Every field of ``sol`` (the ``solution`` it wraps, where it wraps one), by name."""
    inner = getattr(sol, "solution", sol)
    return {f.name: getattr(inner, f.name) for f in dataclasses.fields(inner)}


def same(a, b) -> bool:
    """True if ``a`` and ``b`` are equal to the last bit: arrays of the same shape and values (NaN equal to NaN),
    sequences element by element, anything else by ``==``."""
    if isinstance(a, (tuple, list)) and isinstance(b, (tuple, list)):
        return len(a) == len(b) and all(same(x, y) for x, y in zip(a, b))
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        a, b = np.asarray(a), np.asarray(b)
        return a.shape == b.shape and np.array_equal(a, b, equal_nan=a.dtype.kind in "fc")
    return a == b
