"""Density of states per unit length from the Hill discriminant, in closed form.

With D(E) = cos(q L) inside a band, the states of one band per unit length with wavevector in dq are
dq / (2 pi) for each of +q and -q (one spin orientation), so the density of states is

    g(E) = (1 / pi) |dq/dE| = |D'(E)| / (pi L sqrt(1 - D(E)^2))   for |D| < 1,   0 in the gaps,

with inverse-square-root (van Hove) singularities at the band edges.  The number of states per unit
length below E (integrated density of states) is exact from the band index idx of
:mod:`fdsolver.bloch.edges`: inside band n it is (n + f) / L with f = arccos(D) / pi for even n and
1 - arccos(D) / pi for odd n (f runs from 0 at the bottom to 1 at the top); in gap n it is n / L.
Error of g: |dg/dD| dD + |dg/dD'| dD' = g (|D| dD / (1 - D^2) + dD' / |D'|).  Units: g in
1 / (energy * length), the integrated density in 1 / length.
"""

from __future__ import annotations

import numpy as np

from fdsolver.bloch.edges import band_index


def density(d, dd, period: float) -> np.ndarray:
    """g(E) from D and dD/dE (arrays), zero outside the bands."""
    d = np.asarray(d, dtype=float)
    inside = np.abs(d) < 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.abs(dd) / (np.pi * period * np.sqrt(np.where(inside, 1.0 - d * d, 1.0)))
    return np.where(inside, g, 0.0)


def density_error(d, dd, d_err, dd_err, period: float) -> np.ndarray:
    """Propagated error of :func:`density` (module docstring); zero outside the bands."""
    d = np.asarray(d, dtype=float)
    g = density(d, dd, period)
    inside = np.abs(d) < 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.abs(d) * d_err / np.where(inside, 1.0 - d * d, 1.0) + dd_err / np.abs(dd)
    return np.where(inside, g * np.where(np.isfinite(rel), rel, np.inf), 0.0)


def states_below(rows, period: float) -> np.ndarray:
    """Integrated density of states per unit length from provider rows (module docstring)."""
    rows = np.atleast_2d(rows)
    idx = band_index(rows)
    n = np.floor(idx)
    inside = idx != n
    f = np.arccos(np.clip(rows[:, 0], -1.0, 1.0)) / np.pi
    f = np.where(np.mod(n, 2) == 0, f, 1.0 - f)
    return (n + np.where(inside, f, 0.0)) / period
