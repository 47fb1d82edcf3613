"""Quasi-bound states on the open line: the levels of a well that a field (or low outer band edges) lets leak out.

A potential that falls without bound at an open end (a uniform field) has no
bound state on the whole line; its well levels are resonances.  They are the
zeros of the Jost function with **outgoing-wave conditions written with Airy
functions** in the field regions (Ci+ = Bi + i Ai where V falls, Ai where it
rises; :mod:`fdsolver.continuum.channels`), found, counted and refined exactly
as in :mod:`fdsolver.continuum.resonances`: no hard walls, no box, no wall
states.  Where the field vanishes the same call returns the true bound states
(``bound`` True, width 0), so field sweeps are continuous.  Widths below about
1e-5 of the level spacing use the real-axis formula of
:mod:`fdsolver.continuum.narrow` (relative accuracy about 1e-10, no lower
limit: ``log10_width`` and ``log10_lifetime`` stay finite where a double
underflows); larger ones Newton on the Jost function (error about 1e-15 of
the energy scale).  The error estimates are those of
:func:`~fdsolver.continuum.resonances.find_resonances`.

Energies in the case energy unit, lifetimes hbar / Gamma in s.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.continuum.resonances import Resonances, find_resonances


def default_window(potential) -> tuple[float, float]:
    """From the lowest to the highest value of V over the features' span (with the points' binding floor below)."""
    lo, hi = potential.support()
    feats = potential.features()
    xs = np.concatenate([np.linspace(lo, hi, 2049) if hi > lo else np.array([lo]), feats])
    with np.errstate(all="ignore"):
        v = potential.value(np.concatenate([xs, xs + 1e-9 * max(1.0, abs(hi - lo)), xs - 1e-9 * max(1.0, abs(hi - lo))]))
    v = v[np.isfinite(v)]
    vmin, vmax = float(np.min(v)), float(np.max(v))
    strong = sum(a for _, a in potential.point_terms() if a > 0)
    if strong > 0:
        m = float(np.max(potential.mass_at(xs)))
        vmin -= m * strong**2 / (4.0 * potential.hbar2_2me)  # deepest point-bound level (Cauchy-Schwarz bound)
    if not vmax > vmin:
        vmax = vmin + 1.0
    return vmin, vmax


def quasi_bound_states(potential, window=None, *, max_width: float | None = None, tol: float = 1e-10,
                       domain=None) -> Resonances:
    """Quasi-bound (and bound) states with energies in ``window`` (default :func:`default_window`).

    ``max_width`` (default a quarter of the window) keeps the well's levels and
    leaves out the broad poles of the field continuum.
    """
    lo, hi = window if window is not None else default_window(potential)
    width = float(max_width) if max_width is not None else 0.25 * (hi - lo)
    if not math.isfinite(width):
        width = 0.25 * (hi - lo)
    return find_resonances(potential, (lo, hi), max_width=width, tol=tol, domain=domain)
