"""Narrow wells near the zero-range limit: first-order width correction and zero-energy counts.

Conventions as in :mod:`fdsolver.pointmodel`: constant mass ``m`` (m_e),
``C = hbar^2 / (2 m_e)`` (energy * length^2), a well of integrated strength
alpha = int |V| dx (energy * length) has coupling g = m alpha / (2 C)
(1/length) and profile p(x) = |V(x)| / alpha (int p = 1); E = -C kappa^2 / m.

First-order width correction
----------------------------
With G(x) = exp(-kappa |x|) / (2 kappa) the Green function of
kappa^2 - d^2/dx^2, a bound state of V = -sum_j alpha_j p_j obeys

    psi(x) = sum_j (g_j / kappa) int exp(-kappa |x - x'|) p_j(x') psi(x') dx'.

Project on each profile, P_i = int p_i psi.  For i != j (separated wells,
x_j the centroid of p_j) the first-order terms in the well widths vanish
because int p_j (x' - x_j) dx' = 0; for i = j the expansion
exp(-kappa |x - x'|) = 1 - kappa |x - x'| + O(w^2) gives P_i (1 - kappa l_i),
with l_i = int int p_i(x) p_i(x') |x - x'| dx dx' the mean distance of two
points drawn from the profile.  So to first order in the widths the point
model's symmetric matching matrix (pointmodel docstring)

    M(kappa) = kappa - G^(1/2) E(kappa) G^(1/2),  E_ij = exp(-kappa |x_i - x_j|)

gains the diagonal term dM_ii = kappa g_i l_i.  The shift of a simple root
kappa_n with null vector z (z_i = sqrt(g_i) psi_n(x_i) / kappa_n) is
dkappa_n = -z^T dM z / z^T M'(kappa_n) z, i.e.

    dkappa_n = -kappa_n sum_i g_i^2 l_i psi_i^2
               / (sum_i g_i psi_i^2 + sum_ij g_i g_j r_ij exp(-kappa_n r_ij) psi_i psi_j),

r_ij = |x_i - x_j|, psi_i = psi_n(x_i).  One well: dkappa = -g^2 l, the
known kappa ~ g (1 - g l) (checked in the tests against the exact
square-well equation).  The relative energy deviation is first order

    (E_finite - E_point) / |E_point| = -2 dkappa_n / kappa_n + O(w^2),

positive: finite wells bind less.  Error O(w^2) relative; near a binding
threshold (kappa_n -> 0) the relative deviation grows like 1/kappa_n.

Mean distance l (length unit), from E|X - X'| = 2 int F (1 - F) dx with F the
cumulative profile: square w/3, Gaussian 2 sigma / sqrt(pi) (closed forms on
the shapes), sech^2((x-c)/w): F = (1 + tanh)/2, F (1 - F) = sech^2 / 4, so
l = w; smooth_square: F in closed form (ln cosh), l by scipy quad of
2 F (1 - F) (relative accuracy ~1e-12).

Zero-energy count of separated wells
------------------------------------
The number of bound states equals the number of zeros of the E = 0 solution
that is bounded at the left (oscillation theorem), counted as the phase
margin of :mod:`fdsolver.boundstates.counting` (the one march: exact for square
wells, midpoint cells far below the local wavelength for smooth profiles).
Used for "does state n exist" in a finite-width model, independent of any
box, and for the critical separation at which it binds.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import cast

import numpy as np

from fdsolver.model import shapes as S
from fdsolver.errors import CaseError

#: well shapes the zero-range comparison handles (those that can replace a point, with a mean distance l)
#: the shapes that can stand in for a point interaction (all of them wells or barriers with a centre)
WELL_SHAPES: tuple[type[S.Localised], ...] = tuple(
    cast("type[S.Localised]", cls) for cls in S.SHAPES.values() if cls.replaces_points)


# --------------------------------------------------------------- mean distance
def width_of(shape) -> float:
    """The width parameter of a well (square/smooth_square/sech2 width, gaussian sigma), length unit."""
    return float(shape.width_parameter)


def mean_distance(shape) -> float:
    """l = mean |x - x'| of two points drawn from the well profile |V| (length unit); see the shapes' docstrings."""
    if isinstance(shape, WELL_SHAPES):
        return float(shape.mean_distance())
    raise CaseError(f"no mean distance for a '{shape.kind}' component; use square, smooth_square, gaussian or sech2",
                    key="potential")


# ------------------------------------------------------------ first order
def first_order(spectrum, lengths) -> tuple[np.ndarray, np.ndarray]:
    """First-order shifts of the point model's states when point i becomes a well of mean distance l_i.

    ``spectrum`` is a :class:`~fdsolver.pointmodel.PointSpectrum`, ``lengths``
    the l_i (length unit) in the spectrum's point order.  Returns
    ``(dkappa, deviation)`` per state: dkappa (1/length) and the predicted
    relative energy deviation (E_finite - E_point)/|E_point| = -2 dkappa/kappa.
    Error O(w^2) relative (module docstring).
    """
    g = np.asarray(spectrum.couplings, dtype=float)
    x = np.asarray(spectrum.positions, dtype=float)
    ell = np.asarray(lengths, dtype=float)
    r = np.abs(x[:, None] - x[None, :])
    n = spectrum.n_states
    dk = np.zeros(n)
    for k in range(n):
        kap = float(spectrum.kappa[k])
        psi = np.asarray(spectrum.point_values[k], dtype=float)
        num = np.sum(g**2 * ell * psi**2)
        den = np.sum(g * psi**2) + float(psi @ ((g[:, None] * g[None, :]) * r * np.exp(-kap * r)) @ psi)
        dk[k] = -kap * num / den
    return dk, -2.0 * dk / np.asarray(spectrum.kappa, dtype=float)


# ------------------------------------------------------ zero-energy counts
def wells_potential(shapes, mass: float, hbar2_2me: float):
    """The wells as a :class:`~fdsolver.model.potential.Potential` of constant ``mass`` with kinetic constant C."""
    from fdsolver.model.potential import Potential
    from fdsolver.model.units import kinetic_units

    return Potential(tuple(shapes), kinetic_units(hbar2_2me), float(mass), None)


def zero_energy_count(shapes, mass: float, hbar2_2me: float) -> tuple[int, float]:
    """Bound-state count of separated wells and their zero-energy phase margin Phi.

    The count is the number of states N < Phi (oscillation theorem, see
    :mod:`fdsolver.boundstates.counting`): exact for square wells, and for smooth
    profiles from the midpoint march on cells far below the local wavelength.
    Phi is continuous in the wells' parameters; the count changes where it
    passes an integer.
    """
    from fdsolver.boundstates.counting import count_from_margin, layout_for, phase_margin

    pot = wells_potential(shapes, mass, hbar2_2me)
    layout = layout_for([pot])
    phi = phase_margin(pot, layout, level=0 if layout.compact else 1)
    return count_from_margin(phi), float(phi)


def critical_scale(make_shapes, state: int, guess: float, mass: float, hbar2_2me: float,
                   rtol: float = 1e-10, span: float = 100.0) -> float:
    """Factor s at which ``make_shapes(s)`` starts to bind state ``state`` as s grows (nan if not found).

    ``make_shapes(s)`` returns the wells with every separation scaled by s
    (s = 1: as given).  From ``guess`` (e.g. the point model's value) the
    bracket is widened by factors of 1.25 (at most ``span`` either way) until
    the count changes; the threshold inside is then found as a root of the
    phase margin (:func:`fdsolver.boundstates.counting.find_thresholds`, Richardson
    over cell levels for smooth wells) to relative ``rtol``.  Assumes one
    threshold per state near ``guess`` (true for equal couplings; otherwise the
    one found is reported).
    """
    from fdsolver.boundstates.counting import find_thresholds

    def bound(s):
        return zero_energy_count(make_shapes(s), mass, hbar2_2me)[0] > state

    a = b = float(guess)
    inside = bound(a)
    while True:
        if inside:
            a /= 1.25
            if a < guess / span:
                return math.nan
            if not bound(a):
                break
            b = a
        else:
            b *= 1.25
            if b > guess * span:
                return math.nan
            if bound(b):
                break
            a = b
    found = find_thresholds(lambda s: wells_potential(make_shapes(s), mass, hbar2_2me), "scale", a, b, state=state,
                            scan=3, rtol=rtol)
    ups = [t for t in found.thresholds if t.direction > 0]
    return float(ups[0].value) if ups else 0.5 * (a + b)


def scaled(shapes, s: float, centre: float) -> list:
    """The wells with every distance from ``centre`` multiplied by ``s`` (shape and width unchanged)."""
    return [replace(w, center=centre + s * (w.center - centre)) for w in shapes]


def point_critical_scales(positions, strengths, mass: float, hbar2_2me: float, n_states: int) -> np.ndarray:
    """Factor s_n by which all separations must be scaled for point-model state n to bind (nan: no threshold).

    Thresholds of the zero-energy slope in ln s on [ln 1e-3, ln 1e3]
    (:func:`fdsolver.pointmodel.binding_thresholds`); state 0 of attractive
    points is bound at every scale (nan).
    """
    from fdsolver.zerorange.pointmodel import binding_thresholds

    x = np.asarray(positions, float)
    a = np.asarray(strengths, float)
    c = float(np.mean(x))
    found = binding_thresholds(lambda p: c + math.exp(p) * (x - c), lambda p: a, math.log(1e-3), math.log(1e3),
                               mass=mass, hbar2_2me=hbar2_2me, n_scan=240)
    out = np.full(n_states, np.nan)
    for th in found:
        if th.direction > 0 and th.state < n_states and not np.isfinite(out[th.state]):
            out[th.state] = math.exp(th.value)
    return out
