"""Energy-dependent (non-parabolic) mass, solved state by state as a fixed point.

Two-band Kane model: the conduction-band mass at energy E in a layer with band edge E_edge and gap
E_g is

    m(E) = m_edge [1 + (E - E_edge)/E_g]          (m in m_e, energies in one unit),

so a state of energy E sees the mass profile m(x, E) and E must solve E = F(E), where F(E') is the
energy of the same state (same index) computed with the profile m(x, E').  The model is valid for
|E - E_edge| well below E_g; :func:`kane_mass` refuses a factor 1 + (E - E_edge)/E_g below 0.05.
For holes in the hole picture the same formula applies to light holes (the two-band partner of the
conduction band); heavy holes are not coupled in this model.

The iteration (:func:`solve_nonparabolic`) takes two callables: ``mass_at_energy(E)`` builds the
mass profile for E (any object, e.g. per-layer masses from :func:`kane_mass`), and
``solve_at_mass(profile)`` returns ``(energy, energy_error, payload)`` of the wanted state with that
profile (payload: anything, e.g. the whole solve, handed back with the result).  Steps: one plain
step E1 = F(E0) from the parabolic energy E0, then secant steps on G(E) = F(E) - E.

Convergence criterion and error.  With the secant slope s = G'(E) (so F' = 1 + s; the Kane mass
gives -1 < F' < 0, a heavier mass lowers the energy), the last solved energy F(E_k) differs from the
fixed point E* by about G_k F'/(1 - F') = -G_k (1 + s)/s (first order in G_k; conservative once
the secant converges superlinearly).  The iteration stops when this is <= ``tolerance`` (absolute,
energy unit), or when |G_k| is within twice the solver's own error (noise floor).  The solver's
error delta of F(E_k) propagates into the fixed point as delta/|1 - F'| = delta/|s|.  The returned
``error`` = iteration estimate + propagated solver error is the error bar to report for the state.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from fdsolver.errors import CaseError

#: smallest allowed factor 1 + (E - E_edge)/E_g of the Kane mass
MIN_KANE_FACTOR = 0.05


def kane_mass(m_edge, band_edge, gap, energy):
    """m(E) = m_edge [1 + (E - E_edge)/E_g], element-wise over layers or positions (m in m_e).

    ``band_edge``, ``gap`` and ``energy`` in one energy unit.  Raises :class:`CaseError` (key
    ``nonparabolicity``) where the factor falls below :data:`MIN_KANE_FACTOR`.
    """
    m0 = np.asarray(m_edge, dtype=float)
    g = np.asarray(gap, dtype=float)
    if np.any(~(g > 0)):
        raise CaseError("the band gap of every layer must be positive for the energy-dependent mass", key="nonparabolicity")
    factor = 1.0 + (float(energy) - np.asarray(band_edge, dtype=float)) / g
    if np.any(factor < MIN_KANE_FACTOR):
        k = int(np.argmin(factor))
        raise CaseError(f"the energy-dependent mass at E = {float(energy):g} is outside the two-band model "
                        f"(1 + (E - E_edge)/E_g = {float(np.ravel(factor)[k]):.3g} in layer {k + 1}); "
                        "switch nonparabolicity off for this stack or check the band edges and gaps",
                        key="nonparabolicity")
    return m0 * factor


@dataclass(frozen=True)
class NonparabolicState:
    """Result of :func:`solve_nonparabolic`; energies in the caller's unit."""

    energy: float  # F(E_k): the state's energy solved with the mass profile at E_k
    error: float  # iteration_error + solver_error: the error bar of ``energy``
    iteration_error: float
    solver_error: float  # the solver's error of F(E_k), propagated to the fixed point
    mass_energy: float  # E_k, the energy at which the final mass profile was evaluated
    slope: float  # estimate of dF/dE at the fixed point
    iterations: int  # solves done
    converged: bool
    payload: Any  # the third item returned by the final solve
    history: tuple[tuple[float, float], ...]  # (E_in, F(E_in)) of every solve


def solve_nonparabolic(solve_at_mass: Callable[[Any], tuple[float, float, Any]],
                       mass_at_energy: Callable[[float], Any], start: float, *, tolerance: float,
                       max_iterations: int = 30) -> NonparabolicState:
    """Fixed point E = F(E) of one state with an energy-dependent mass (see the module doc).

    ``start`` is the first guess (the parabolic energy), ``tolerance`` the absolute target of the
    iteration error in the energy unit.
    """
    if not tolerance > 0:
        raise ValueError("tolerance must be positive")
    history: list[tuple[float, float]] = []

    def step(e_in: float):
        e_out, err, payload = solve_at_mass(mass_at_energy(e_in))
        history.append((float(e_in), float(e_out)))
        return float(e_out), float(err), payload

    e_prev = float(start)
    f_prev, err, payload = step(e_prev)
    g_prev = f_prev - e_prev
    if g_prev == 0.0:
        return NonparabolicState(f_prev, err, 0.0, err, e_prev, math.nan, 1, True, payload, tuple(history))
    e_cur = f_prev
    slope = math.nan
    for _ in range(max_iterations - 1):
        f_cur, err, payload = step(e_cur)
        g_cur = f_cur - e_cur
        s = (g_cur - g_prev) / (e_cur - e_prev) if e_cur != e_prev else math.nan
        if not math.isfinite(s) or s == 0.0:
            s = -1.0  # no slope information: treat as a plain fixed-point step (F' = 0)
        slope = 1.0 + s
        iter_err = abs(g_cur * (1.0 + s) / s)
        solver_err = err / abs(s)
        if iter_err <= tolerance or abs(g_cur) <= 2.0 * err or g_cur == 0.0:
            return NonparabolicState(f_cur, iter_err + solver_err, iter_err, solver_err, e_cur, slope,
                                     len(history), True, payload, tuple(history))
        e_next = e_cur - g_cur / s
        if not math.isfinite(e_next):
            e_next = f_cur
        e_prev, g_prev, e_cur = e_cur, g_cur, e_next
    iter_err = abs(g_cur * slope / (1.0 - slope)) if slope != 1.0 else math.inf
    return NonparabolicState(f_cur, iter_err + solver_err, iter_err, solver_err, e_cur, slope, len(history), False,
                             payload, tuple(history))
