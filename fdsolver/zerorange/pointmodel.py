"""Zero-range point-interaction (delta) model of a 1D array of narrow wells.

The Hamiltonian is

    H = -C d/dx (1/m) d/dx - sum_i alpha_i delta(x - x_i)

with a constant mass ``m`` (in free-electron masses), ``C = hbar^2 / (2 m_e)``
in the caller's units (0.5 hartree bohr^2 in atomic units) and strengths
``alpha_i`` in ``energy * length`` (``alpha_i > 0`` attracts, ``< 0`` repels,
``0`` is allowed and does nothing).  Everything below is analytic; the only
numerics are root finding and a small symmetric eigenproblem.

Notation used throughout
------------------------
``g_i = m alpha_i / hbar^2 = m alpha_i / (2 C)`` (inverse length).  Integrating
H psi = E psi across x_i gives the derivative jump

    psi'(x_i+) - psi'(x_i-) = -2 g_i psi(x_i).

A bound state has E = -hbar^2 kappa^2 / (2 m) = -C kappa^2 / m, kappa > 0, and
is psi(x) = sum_j c_j exp(-kappa |x - x_j|).  Since psi'' = kappa^2 psi -
2 kappa sum_j c_j delta(x - x_j), the jump condition reads
kappa c_i = g_i psi(x_i) = g_i sum_j exp(-kappa |x_i - x_j|) c_j, i.e.

    det(1 - K(kappa)) = 0,   K_ij = g_i exp(-kappa |x_i - x_j|) / kappa

(for all g_i > 0 the diagonal similarity G^(-1/2) K G^(1/2) turns K into
the symmetric sqrt(g_i g_j) exp(-kappa |x_i - x_j|) / kappa).  With
c = |G|^(1/2) z and S = diag(sign g_i) this is the *symmetric* problem

    M(kappa) z = 0,   M(kappa) = kappa S - |G|^(1/2) E(kappa) |G|^(1/2),
    E_ij(kappa) = exp(-kappa |x_i - x_j|),

valid for any mixture of signs; it is used for the coefficient vectors.

Counting bound states (why no root is missed or found twice)
------------------------------------------------------------
For k > 0 let u_k be the solution of H u = -C k^2/m u that decays on the left
(u_k = exp(k (x - x_1)) left of the leftmost point).  By the Sturm oscillation
theorem (valid for point interactions: between and outside the points u_k is
a combination of exp(+-k x), and the jump conditions keep the problem of
Sturm-Liouville type) the number N(k) of bound states with kappa > k, i.e.
with energy below -C k^2/m, equals the number of zeros of u_k on the real line.
Between two points u_k has at most one zero, and it has one iff u_k changes
sign between them; right of the last point it has one iff u'/u < -k there.
So N(k) is an integer obtained by one forward sweep, without root finding.  The
bound states are located by bisecting N(k) until every interval contains
exactly one state, and each is then solved with scipy.optimize.brentq on the
continuous function "coefficient of exp(+k x) right of the last point" (it
vanishes exactly at bound states and changes sign there because N jumps by
one).  Every state is bracketed once, so none is missed or duplicated.

Range of kappa.  Bound states satisfy 0 < kappa <= kappa_max = sum of the
positive g_i.  Proof: for a normalised psi,
psi(x)^2 = int_{-inf}^x 2 psi psi' = -int_x^inf 2 psi psi', so
psi(x)^2 <= int |psi psi'| <= ||psi|| ||psi'|| = s (Cauchy-Schwarz), hence
E = (C/m) s^2 - sum_i alpha_i psi(x_i)^2 >= (C/m) s^2 - (sum_{alpha_i>0} alpha_i) s
(repulsive terms are >= 0 and dropped).  Minimising over s gives
E >= -(m/(4C)) (sum_{alpha_i>0} alpha_i)^2 = -(C/m) kappa_max^2, so
kappa <= kappa_max; equality holds for a single point.  The number of states
is at most the number of attractive points: dropping the repulsive terms only
lowers H, and an attractive term of rank N_+ added to the non-negative kinetic
operator creates at most N_+ negative eigenvalues (min-max principle).

Near a binding threshold the weakly bound kappa is ill-conditioned: its
relative accuracy is about eps / (relative distance of the parameters from the
threshold), as for any method working from rounded inputs.  States with
kappa < 1e-280 kappa_max are not searched for (they are at threshold to
double precision).

The total count N(0+) is taken from the zero-energy solution
(:func:`zero_energy_solution`), the exact k -> 0 limit of u_k.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.optimize import brentq
from scipy.special import lambertw

from fdsolver.errors import CaseError
from fdsolver.zerorange._pointstates import (  # noqa: F401
    _EPS,
    _KAPPA_RTOL,
    _as_points,
    _couplings,
    _kappas,
    _positive,
    _zero_energy,
)
from fdsolver.zerorange._pointstates import (  # noqa: F401
    _evaluate,
    _mirror_symmetric,
    _moments,
    _state_vectors,
)

__all__ = [
    "PointSpectrum",
    "point_spectrum",
    "pair_closed_form",
    "zero_energy_solution",
    "binding_thresholds",
    "critical_separation",
]



# ---------------------------------------------------------------------------
# public API


@dataclass(frozen=True, eq=False)
class PointSpectrum:
    """Bound states of H = -C d/dx (1/m) d/dx - sum_i alpha_i delta(x - x_i).

    ``positions`` (length) and ``strengths`` (energy * length) are kept in the
    caller's order; the columns of ``coefficients`` and ``point_values`` follow
    that order.  ``kappa`` (1/length) is descending, ``energy = -C kappa^2 / m``
    (energy unit of C) ascending, so index 0 is the ground state.

    ``coefficients[n]`` gives psi_n(x) = sum_j c_nj exp(-kappa_n |x - x_j|)
    (units length^-1/2; c_nj = g_j psi_n(x_j) / kappa_n, zero for points of
    zero strength), normalised to int psi_n^2 dx = 1 with the closed-form
    interval integrals of :func:`_moments`.  ``point_values[n, j]`` is
    psi_n(x_j).  Sign rule: psi_n(x_i) > 0 at the leftmost point x_i where
    |psi_n(x_i)| is at least 1e-6 of its largest value at a point (for any
    state whose left tail is not exponentially small this is psi_n > 0 as
    x -> -inf).

    ``parity`` is +1/-1 (even/odd under reflection about the centre) when the
    points and strengths are mirror-symmetric within 1e-12 relative, else 0.
    ``nodes`` counts the sign changes of psi_n (one zero per sign change of
    psi(x_i), none outside); by the oscillation theorem it is n.  Small values
    psi(x_i) are recomputed with relative accuracy (:func:`_refine_small_values`),
    so sign changes in exponentially small tails and valleys are seen; only
    sign changes where |psi| underflows the double range (wells separated by
    kappa d > ~700) can be missed.
    States whose splitting is below double precision (e.g. far-apart wells)
    share one kappa; for mirror-symmetric sets they are still separated by
    parity, otherwise an orthonormal basis of their span is returned.
    """

    positions: np.ndarray
    strengths: np.ndarray
    mass: float
    hbar2_2me: float
    kappa: np.ndarray
    energy: np.ndarray
    coefficients: np.ndarray
    parity: np.ndarray
    nodes: np.ndarray
    point_values: np.ndarray | None = None

    @property
    def n_states(self) -> int:
        """Number of bound states."""
        return int(self.kappa.size)

    @property
    def couplings(self) -> np.ndarray:
        """g_i = m alpha_i / (2 C) in 1/length, caller's order."""
        return self.mass * self.strengths / (2.0 * self.hbar2_2me)

    def _state(self, n) -> int:
        try:
            i = int(n)
        except (TypeError, ValueError) as exc:
            raise CaseError(f"state index must be an integer, got {n!r}", key="state") from exc
        if i != n or not 0 <= i < self.n_states:
            raise CaseError(
                f"state {n!r} does not exist; there are {self.n_states} bound states", key="state"
            )
        return i

    def _active_values(self, i):
        """Sorted active positions and psi_i there."""
        order = np.argsort(self.positions, kind="stable")
        order = order[self.strengths[order] != 0.0]
        if self.point_values is not None:
            v = self.point_values[i, order]
        else:
            k = self.kappa[i]
            e = np.exp(-k * np.abs(self.positions[order][:, None] - self.positions[None, :]))
            v = e @ self.coefficients[i]
        return self.positions[order], v

    def psi(self, n: int, x) -> np.ndarray:
        """psi_n(x) in length^-1/2 at the positions ``x`` (any shape, length unit).

        Evaluated from the point values with the exact piecewise form
        (psi_a sinh(k(b-x)) + psi_b sinh(k(x-a))) / sinh(k(b-a)) between points
        and exponential tails outside, which equals the sum of exponentials but
        keeps full relative accuracy even for states near threshold.
        """
        i = self._state(n)
        xa, va = self._active_values(i)
        return _evaluate(float(self.kappa[i]), xa, va, x)

    def mean_x(self, n: int) -> float:
        """<x> = int x psi_n^2 dx in length units.

        Closed form: exponential tails integrated exactly; on each interval
        between points the integrals of s^p sinh-products are exact closed forms
        (Gauss-Legendre, exact to rounding, for kappa L <= 2).  Relative
        accuracy ~1e-14 of the state's extent.
        """
        i = self._state(n)
        xa, va = self._active_values(i)
        k = float(self.kappa[i])
        centre = 0.5 * (xa[0] + xa[-1])
        m = _moments(k, xa, va, va, centre)
        return float(centre + m[1] / m[0])

    def spread(self, n: int) -> float:
        """sqrt(<x^2> - <x>^2) of psi_n in length units.

        The second moment is taken about <x> itself (no cancellation between
        <x^2> and <x>^2), with the same closed forms as :meth:`mean_x`.
        Relative accuracy ~1e-14.
        """
        i = self._state(n)
        xa, va = self._active_values(i)
        k = float(self.kappa[i])
        m = _moments(k, xa, va, va, self.mean_x(i))
        return math.sqrt(max(m[2] / m[0], 0.0))


def _frozen(a) -> np.ndarray:
    a = np.array(a)
    a.flags.writeable = False
    return a


def point_spectrum(positions, strengths, *, mass=1.0, hbar2_2me=0.5) -> PointSpectrum:
    """All bound states of a set of delta interactions (see module docstring).

    ``positions`` in length units, ``strengths`` alpha_i in energy*length
    (positive attracts), ``mass`` in m_e, ``hbar2_2me`` = C in energy*length^2.
    Raises :class:`CaseError` (key ``"point"``) for unequal lengths, an empty
    set, non-finite values or repeated positions (``"mass"``/``"hbar2_2me"`` for
    non-positive constants).  A set without attractive points has no bound
    state (valid result with empty arrays).

    Accuracy: kappa to a few ulps (brentq with relative tolerance 4 eps on an
    exact node-count bracket); wavefunctions to about eps times the condition
    of the state, which degrades as 1/(relative splitting) for nearly
    degenerate states of asymmetric sets.
    """
    x, a = _as_points(positions, strengths)
    xs, gs, order = _couplings(x, a, mass, hbar2_2me)
    m = float(mass)
    c = float(hbar2_2me)
    kappa = _kappas(xs, gs)
    active = gs != 0.0
    xa, ga = xs[active], gs[active]
    symmetric = _mirror_symmetric(xs, gs)
    va, nodes, parity = _state_vectors(kappa, xa, ga, symmetric)
    n_states = len(kappa)
    coef_sorted = np.zeros((n_states, len(xs)))
    vals_sorted = np.zeros((n_states, len(xs)))
    for n in range(n_states):
        coef_sorted[n, active] = ga * va[n] / kappa[n]
        vals_sorted[n, active] = va[n]
        if not np.all(active):
            vals_sorted[n, ~active] = _evaluate(kappa[n], xa, va[n], xs[~active])
    coef = np.zeros_like(coef_sorted)
    coef[:, order] = coef_sorted
    vals = np.zeros_like(vals_sorted)
    vals[:, order] = vals_sorted
    return PointSpectrum(
        positions=_frozen(x),
        strengths=_frozen(a),
        mass=m,
        hbar2_2me=c,
        kappa=_frozen(kappa),
        energy=_frozen(-c * kappa**2 / m),
        coefficients=_frozen(coef),
        parity=_frozen(parity),
        nodes=_frozen(nodes),
        point_values=_frozen(vals),
    )


def zero_energy_solution(positions, strengths, *, mass=1.0, hbar2_2me=0.5) -> tuple[int, float]:
    """Bound-state count and tail slope from the zero-energy solution.

    The solution of H psi = 0 with psi = 1, psi' = 0 left of all points is
    piecewise linear; at x_i its slope jumps by -2 g_i psi(x_i).  Returns
    ``(count, slope)``: ``count`` is its number of zeros on the real line,
    including the zero of the straight tail beyond the last point when psi and
    psi' have opposite signs there, and ``slope`` = psi'(+inf) in 1/length
    (psi dimensionless).  By the oscillation theorem (zero-energy form) the
    count equals the number of bound states (E < 0).  Exact up to rounding in
    the slope; the count is exact unless the configuration is within rounding
    of a binding threshold (slope ~ 0).
    """
    x, a = _as_points(positions, strengths)
    xs, gs, _ = _couplings(x, a, mass, hbar2_2me)
    nodes, _, slope = _zero_energy(xs, gs)
    return nodes, float(slope)


def pair_closed_form(g: float, d: float) -> tuple[float, float | None]:
    """Decay constants of a symmetric pair of equal attractive deltas.

    ``g`` (1/length) is the coupling of each point, ``d`` the separation.  With
    t = g d the even and odd states obey kappa/g = 1 +- exp(-kappa d), whose
    solutions are kappa d = t + W0(+- t e^{-t}) (W0 = principal Lambert W,
    scipy.special.lambertw).  The odd state exists only for t > 1; ``None`` is
    returned otherwise.  Returns ``(kappa_even, kappa_odd)`` in 1/length.

    Accuracy: a few ulps.  The Lambert-W value is polished by Newton steps on
    the well-conditioned forms y - t(1 + e^{-y}) = 0 (even) and
    (1 - e^{-y})/y = 1/t (odd, the trivial root y = 0 divided out), which
    removes the sqrt(eps) loss of W0 near its branch point -1/e (t -> 1); for
    large t, t e^{-t} underflows harmlessly to W0(0) = 0.
    """
    g = _positive(g, "g")
    d = _positive(d, "d")
    t = g * d

    # even: F(y) = y - t (1 + e^{-y}), F' = 1 + t e^{-y} >= 1
    y = t + float(lambertw(t * math.exp(-t)).real)
    for _ in range(4):
        step = (y - t * (1.0 + math.exp(-y))) / (1.0 + t * math.exp(-y))
        y -= step
        if abs(step) <= 2.0 * _EPS * y:
            break
    kappa_even = y / d
    if not t > 1.0:
        return kappa_even, None

    # odd: y = t (1 - e^{-y}).  Dividing out the trivial root y = 0 gives
    # t phi(y) = 1 with phi(y) = (1 - e^{-y})/y = 1 - chi(y); written as
    # H(y) = (t - 1) phi(y) - chi(y) = 0 it keeps full relative accuracy in y
    # when t -> 1+ (y ~ 2 (t - 1)), and H'(y) = t phi'(y), phi' < 0.
    tm1 = t - 1.0

    def chi(y):  # (e^{-y} - 1 + y) / y = sum_{n>=2} (-1)^n y^(n-1) / n!
        if y < 0.5:
            term = 0.5 * y
            total = term
            for n in range(3, 24):
                term *= -y / n
                total += term
            return total
        return (math.expm1(-y) + y) / y

    def dphi(y):  # phi'(y) = -chi'(y) = -sum_{n>=2} (-1)^n (n-1) y^(n-2) / n!
        if y < 0.5:
            total, fact, yp = 0.0, 1.0, 1.0
            for n in range(2, 24):
                fact *= n
                total += (-1) ** n * (n - 1) * yp / fact
                yp *= y
            return -total
        return (math.exp(-y) * (1.0 + y) - 1.0) / (y * y)

    def big_h(y):
        return tm1 * (1.0 - chi(y)) - chi(y)

    y = t + float(lambertw(-t * math.exp(-t)).real)
    if not 0.0 < y <= t:
        y = 2.0 * tm1 / t  # small-y expansion
    ok = False
    for _ in range(12):
        step = big_h(y) / (t * dphi(y))
        y_new = y - step
        if not 0.0 < y_new <= t:
            break
        y = y_new
        if abs(step) <= 2.0 * _EPS * y:
            ok = True
            break
    if not ok:
        def h(yy):  # h(0+) = t - 1 > 0, h(t) = -exp(-t) < 0 exactly
            if yy <= 0.0:
                return tm1
            if yy >= t:
                return -math.exp(-t)
            return big_h(yy)

        y = brentq(h, 0.0, t, xtol=1e-300, rtol=_KAPPA_RTOL, maxiter=500)
    return kappa_even, y / d


def critical_separation(g: float) -> float:
    """Separation (length) above which a symmetric equal pair binds an odd state.

    d_c = 1/g = hbar^2 / (m alpha) for couplings g (1/length); exact.
    """
    return 1.0 / _positive(g, "g")


def binding_thresholds(
    positions_fn: Callable[[float], object],
    strengths_fn: Callable[[float], object],
    lo: float,
    hi: float,
    *,
    mass: float = 1.0,
    hbar2_2me: float = 0.5,
    rtol: float = 1e-12,
    n_scan: int = 200,
) -> list:
    """Parameter values in [lo, hi] where a state binds or unbinds.

    ``positions_fn(p)`` and ``strengths_fn(p)`` give the point set of a family
    that is continuous in p with a fixed number of points.  A state reaches
    E = 0 exactly when the zero-energy phase margin Phi of the point set
    passes through its node count (:mod:`fdsolver.boundstates.counting`; for
    points the march is exact).  Phi is scanned at ``n_scan`` + 1 equal steps
    and every crossing is solved with brentq to relative ``rtol`` (>= 4 eps)
    in p.

    Returns :class:`~fdsolver.boundstates.counting.Threshold` objects (``state``
    is the node count of the state that binds, ``direction`` +1 if it binds as
    p increases) sorted by ``value``.  A bind/unbind pair that falls inside one
    scan step is not seen; raise ``n_scan`` if that matters.
    """
    from fdsolver.boundstates.counting import find_thresholds
    from fdsolver.model import shapes as S
    from fdsolver.model.potential import Potential
    from fdsolver.model.units import kinetic_units

    lo = float(lo)
    hi = float(hi)
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise CaseError(f"need finite lo < hi, got lo={lo!r}, hi={hi!r}", key="range")
    rtol = max(float(rtol), _KAPPA_RTOL)
    n_scan = int(n_scan)
    if n_scan < 1:
        raise CaseError("n_scan must be >= 1", key="n_scan")
    m = _positive(mass, "mass")
    units = kinetic_units(_positive(hbar2_2me, "hbar2_2me"))

    def family(p):
        x, a = _as_points(positions_fn(p), strengths_fn(p))
        return Potential(tuple(S.Point(None, float(xi), float(ai)) for xi, ai in zip(x, a)), units, m, None)

    return list(find_thresholds(family, "p", lo, hi, scan=n_scan + 1, rtol=rtol).thresholds)
