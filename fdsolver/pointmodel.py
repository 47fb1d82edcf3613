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

from .errors import CaseError

__all__ = [
    "PointSpectrum",
    "Threshold",
    "point_spectrum",
    "pair_closed_form",
    "zero_energy_solution",
    "binding_thresholds",
    "critical_separation",
]

_EPS = float(np.finfo(float).eps)
#: mirror symmetry is accepted within this relative tolerance
_SYM_RTOL = 1e-12
#: inside the main body of a state, |psi(x_i)| below this fraction of
#: max |psi(x_j)| (underflow) is skipped when counting nodes
_NODE_FLOOR = 1e-300
#: the sign rule looks at the leftmost point with |psi| above this fraction
_SIGN_FLOOR = 1e-6
#: states with kappa below this fraction of kappa_max are not searched for
_KAPPA_FLOOR = 1e-280
#: brentq relative tolerance on kappa (the smallest scipy accepts)
_KAPPA_RTOL = 4.0 * _EPS


# ---------------------------------------------------------------------------
# input checks


def _as_points(positions, strengths) -> tuple[np.ndarray, np.ndarray]:
    """Return float copies of the point positions and strengths, validated."""
    try:
        x = np.atleast_1d(np.asarray(positions, dtype=float)).copy()
        a = np.atleast_1d(np.asarray(strengths, dtype=float)).copy()
    except (TypeError, ValueError) as exc:
        raise CaseError(f"positions and strengths must be real numbers ({exc})", key="point") from exc
    if x.ndim != 1 or a.ndim != 1:
        raise CaseError("positions and strengths must be one-dimensional lists", key="point")
    if x.size == 0:
        raise CaseError("at least one point interaction is needed", key="point")
    if x.size != a.size:
        raise CaseError(
            f"{x.size} positions but {a.size} strengths; give one strength per point", key="point"
        )
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(a))):
        raise CaseError("positions and strengths must be finite", key="point")
    xs = np.sort(x)
    if np.any(np.diff(xs) <= 0.0):
        dup = xs[1:][np.diff(xs) <= 0.0][0]
        raise CaseError(f"two points share the position {float(dup)!r}; positions must be distinct", key="point")
    return x, a


def _positive(value, key: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError) as exc:
        raise CaseError(f"must be a number, got {value!r}", key=key) from exc
    if not (math.isfinite(v) and v > 0.0):
        raise CaseError(f"must be finite and > 0, got {value!r}", key=key)
    return v


def _couplings(x, a, mass, hbar2_2me):
    """Sorted positions and couplings g = m alpha / (2 C), plus the sort order."""
    m = _positive(mass, "mass")
    c = _positive(hbar2_2me, "hbar2_2me")
    order = np.argsort(x, kind="stable")
    xs = x[order]
    gs = m * a[order] / (2.0 * c)
    return xs, gs, order


# ---------------------------------------------------------------------------
# shooting: node counts and tail growth


def _sign_update(value: float, slope: float, sign: float, nodes: int) -> tuple[float, int]:
    """Account for the sign of a solution arriving at a point with ``value``.

    ``sign`` is the sign of the solution just right of the previous point.  A
    change of sign means one zero in between (never more: the solution is a
    combination of two exponentials, or linear at E = 0, there).  A zero exactly
    at the point counts once; the sign on the right is then that of the slope.
    """
    if value == 0.0:
        return (1.0 if slope > 0.0 else -1.0), nodes + 1
    s = 1.0 if value > 0.0 else -1.0
    if s != sign:
        nodes += 1
    return s, nodes


def _shoot(k: float, xs: np.ndarray, gs: np.ndarray) -> tuple[int, float]:
    """Zeros of the left-decaying solution at E = -C k^2/m, and its tail growth.

    Returns ``(nodes, growth)``.  ``nodes`` is the number of zeros on the real
    line (= number of bound states with kappa > k, oscillation theorem).
    ``growth`` is the coefficient of exp(+k x) right of the last point, scaled by
    a positive continuous factor into [-1, 1]; it is continuous in k and zero
    exactly at bound states.  k in 1/length.

    The state is (u, w) = (u, u'/k) with exp(-k d) factored out of every
    transfer step and renormalised, so nothing overflows.  Over a long step
    (2 k d > 1) the decaying part (u - w) is multiplied by exp(-2 k d) exactly,
    which keeps exponentially small admixtures (far-apart wells); over a short
    step the same map is written as a small correction, which keeps the
    solution accurate for k -> 0 where w = u'/k is large.
    """
    u = 1.0
    w = 1.0
    sign = 1.0
    nodes = 0
    for i in range(len(xs)):
        if i:
            t = 2.0 * k * (xs[i] - xs[i - 1])
            if t > 1.0:
                p = u + w
                # p == 0: purely decaying, keep its direction (only the
                # positive scale is dropped, which is immaterial)
                q = (u - w) * math.exp(-t) if p != 0.0 else (u - w)
                u, w = 0.5 * (p + q), 0.5 * (p - q)
            else:
                r = (u - w) * (-0.5 * math.expm1(-t))
                u, w = u - r, w + r
            sign, nodes = _sign_update(u, w, sign, nodes)
            s = max(abs(u), abs(w))
            u /= s
            w /= s
        w -= 2.0 * gs[i] * u / k
    if u * w < 0.0 and abs(w) > abs(u):
        nodes += 1
    growth = (u + w) / (abs(u) + abs(w))
    return nodes, growth


def _zero_energy(xs: np.ndarray, gs: np.ndarray) -> tuple[int, float, float]:
    """Zero-energy solution psi = 1 on the left: (nodes, psi(x_N), psi'(+inf))."""
    psi = 1.0
    dpsi = 0.0
    sign = 1.0
    nodes = 0
    for i in range(len(xs)):
        if i:
            psi = psi + dpsi * (xs[i] - xs[i - 1])
            sign, nodes = _sign_update(psi, dpsi, sign, nodes)
        dpsi -= 2.0 * gs[i] * psi
    if psi * dpsi < 0.0:
        nodes += 1
    return nodes, psi, dpsi


# ---------------------------------------------------------------------------
# root isolation


def _solve_bracket(a: float, b: float, xs, gs, n_above_b: int) -> float:
    """The single bound state kappa in (a, b]; brentq, count bisection as fallback."""
    fa = _shoot(a, xs, gs)[1]
    fb = _shoot(b, xs, gs)[1]
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if fa * fb < 0.0:
        return brentq(
            lambda k: _shoot(k, xs, gs)[1], a, b, xtol=1e-300, rtol=_KAPPA_RTOL, maxiter=500
        )
    # rounding hid the sign change (only when a and b are already a few ulps
    # from the root): finish by bisecting the exact count
    while True:
        mid = 0.5 * (a + b)
        if not (a < mid < b):
            return mid
        if _shoot(mid, xs, gs)[0] > n_above_b:
            a = mid
        else:
            b = mid


def _kappas(xs: np.ndarray, gs: np.ndarray) -> np.ndarray:
    """All bound-state decay constants, descending (see module docstring)."""
    n_b = _zero_energy(xs, gs)[0]
    if n_b == 0:
        return np.zeros(0)
    kmax = float(np.sum(gs[gs > 0.0]))

    def count(k, lo_n, hi_n):
        return min(max(_shoot(k, xs, gs)[0], lo_n), hi_n)

    hi = kmax * (1.0 + 1e-6)
    n_hi = _shoot(hi, xs, gs)[0]
    for _ in range(64):  # never taken in exact arithmetic (kappa <= kmax)
        if n_hi == 0:
            break
        hi *= 2.0
        n_hi = _shoot(hi, xs, gs)[0]
    # walk down geometrically until every state lies above the current k
    samples = [(hi, 0)]
    k, n = hi, 0
    floor = kmax * _KAPPA_FLOOR
    while n < n_b:
        k_new = k / 16.0
        if k_new < floor:
            break  # remaining states are bound by less than floor: not resolvable
        n = count(k_new, n, n_b)
        k = k_new
        samples.append((k, n))
    samples.reverse()

    kappa = np.full(n, np.nan)
    stack = [(samples[i][0], samples[i][1], samples[i + 1][0], samples[i + 1][1])
             for i in range(len(samples) - 1)]
    while stack:
        a, na, b, nb = stack.pop()
        if na == nb:
            continue
        if na - nb == 1:
            kappa[nb] = _solve_bracket(a, b, xs, gs, nb)
            continue
        mid = math.sqrt(a * b) if b > 4.0 * a else 0.5 * (a + b)
        if not (a < mid < b):
            # several states inside one floating-point interval: their splitting
            # is below double precision; they share one kappa
            kappa[nb:na] = mid
            continue
        nm = count(mid, nb, na)
        stack.append((a, na, mid, nm))
        stack.append((mid, nm, b, nb))
    return kappa


# ---------------------------------------------------------------------------
# stable piecewise representation of a bound state
#
# Between two neighbouring (active) points a < b, L = b - a, a bound state is
#     psi(a + L s) = psi_a A(s) + psi_b B(s),  s in [0, 1],
#     A(s) = sinh(x (1 - s)) / sinh(x),  B(s) = sinh(x s) / sinh(x),  x = kappa L,
# and outside it is psi_1 exp(kappa (x - x_1)) / psi_N exp(-kappa (x - x_N)).
# Built from the values psi(x_i) this form has no cancellation, unlike the sum
# of exponentials when kappa |x_i - x_j| << 1 (states close to threshold).

_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(32)
_GL_NODES = 0.5 * (_GL_NODES + 1.0)
_GL_WEIGHTS = 0.5 * _GL_WEIGHTS


def _sinh_ratio(x: float, s):
    """sinh(x s) / sinh(x) for 0 <= s <= 1, x > 0, without overflow."""
    return np.exp(-x * (1.0 - s)) * np.expm1(-2.0 * x * s) / math.expm1(-2.0 * x)


def _interval_integrals(x: float) -> np.ndarray:
    """int_0^1 s^p {A^2, A B, B^2} ds for p = 0, 1, 2 -> array (3, 3).

    For x <= 2 by 32-point Gauss-Legendre (the integrands are entire and of
    exponential type <= 4, so the rule is exact to rounding); for x > 2 from the
    closed forms with m_p(a) = int_0^1 u^p e^{-a u} du, a = 2 x, which are well
    conditioned there.  Relative accuracy ~1e-15.
    """
    if x <= 2.0:
        s = _GL_NODES
        aa = _sinh_ratio(x, 1.0 - s)
        bb = _sinh_ratio(x, s)
        out = np.empty((3, 3))
        for p in range(3):
            w = _GL_WEIGHTS * s**p
            out[p] = (w @ (aa * aa), w @ (aa * bb), w @ (bb * bb))
        return out
    a = 2.0 * x
    ea = math.exp(-a)
    m0 = -math.expm1(-a) / a
    m1 = (1.0 - ea * (1.0 + a)) / a**2
    m2 = (2.0 - ea * (2.0 + 2.0 * a + a * a)) / a**3
    m = (m0, m1, m2)
    big_m = (m0, m0 - m1, m0 - 2.0 * m1 + m2)  # int_0^1 (1-u)^p e^{-a u} du
    den = math.expm1(-a) ** 2
    e1 = math.exp(-x)
    out = np.empty((3, 3))
    for p in range(3):
        inv = 1.0 / (p + 1)
        aa = m[p] + ea * big_m[p] - 2.0 * ea * inv
        ab = (e1 + e1 * ea) * inv - e1 * m[p] - e1 * big_m[p]
        bb = big_m[p] + ea * m[p] - 2.0 * ea * inv
        out[p] = (aa / den, ab / den, bb / den)
    return out


def _moments(kappa: float, xa: np.ndarray, va: np.ndarray, vb: np.ndarray, centre: float):
    """int (x - centre)^p psi_a(x) psi_b(x) dx, p = 0, 1, 2, from point values.

    ``va``/``vb`` are the two states' values at the sorted points ``xa`` (both
    with decay constant ``kappa``).  Tails in closed form, intervals from
    :func:`_interval_integrals`.  Relative accuracy ~1e-14.
    """
    k = kappa
    m = np.zeros(3)
    # left tail: int_{-inf}^0 (y + t)^p e^{2 k y} dy with t = x_1 - centre
    t = xa[0] - centre
    w = va[0] * vb[0]
    m += w * np.array([1.0 / (2 * k), t / (2 * k) - 1.0 / (4 * k * k),
                       t * t / (2 * k) - t / (2 * k * k) + 1.0 / (4 * k**3)])
    t = xa[-1] - centre
    w = va[-1] * vb[-1]
    m += w * np.array([1.0 / (2 * k), t / (2 * k) + 1.0 / (4 * k * k),
                       t * t / (2 * k) + t / (2 * k * k) + 1.0 / (4 * k**3)])
    for i in range(len(xa) - 1):
        length = xa[i + 1] - xa[i]
        ints = _interval_integrals(k * length)
        j = ints @ np.array([va[i] * vb[i], va[i] * vb[i + 1] + va[i + 1] * vb[i], va[i + 1] * vb[i + 1]])
        t = xa[i] - centre  # x - centre = t + L s
        m += length * np.array([j[0], t * j[0] + length * j[1],
                                t * t * j[0] + 2.0 * t * length * j[1] + length**2 * j[2]])
    return m


def _evaluate(kappa: float, xa: np.ndarray, va: np.ndarray, x) -> np.ndarray:
    """psi(x) from its values ``va`` at the sorted points ``xa`` (stable form)."""
    x = np.asarray(x, dtype=float)
    out = np.empty(x.shape)
    left = x <= xa[0]
    right = x >= xa[-1]
    out[left] = va[0] * np.exp(kappa * (x[left] - xa[0]))
    out[right] = va[-1] * np.exp(-kappa * (x[right] - xa[-1]))
    inner = ~(left | right)
    if np.any(inner):
        xi = x[inner]
        i = np.clip(np.searchsorted(xa, xi, side="right") - 1, 0, len(xa) - 2)
        length = xa[i + 1] - xa[i]
        s = (xi - xa[i]) / length
        xx = kappa * length
        a = np.exp(-xx * s) * np.expm1(-2.0 * xx * (1.0 - s)) / np.expm1(-2.0 * xx)
        b = np.exp(-xx * (1.0 - s)) * np.expm1(-2.0 * xx * s) / np.expm1(-2.0 * xx)
        out[inner] = va[i] * a + va[i + 1] * b
    return out


# ---------------------------------------------------------------------------
# state vectors


def _exp_matrix(kappa: float, xs: np.ndarray) -> np.ndarray:
    return np.exp(-kappa * np.abs(xs[:, None] - xs[None, :]))


def _mirror_symmetric(xs: np.ndarray, gs: np.ndarray) -> bool:
    n = len(xs)
    span = xs[-1] - xs[0]
    tol_x = _SYM_RTOL * span + 4.0 * _EPS * float(np.max(np.abs(xs)))
    tol_g = _SYM_RTOL * float(np.max(np.abs(gs)))
    centre2 = xs[0] + xs[-1]
    for i in range(n // 2 + 1):
        j = n - 1 - i
        if abs(xs[i] + xs[j] - centre2) > tol_x:
            return False
        if abs(gs[i] - gs[j]) > tol_g or ((gs[i] == 0.0) != (gs[j] == 0.0)):
            return False
    return True


def _parity_bases(n_a: int) -> tuple[np.ndarray, np.ndarray]:
    """Orthonormal bases (columns) of mirror-even and mirror-odd vectors."""
    even, odd = [], []
    for i in range(n_a // 2):
        j = n_a - 1 - i
        e = np.zeros(n_a)
        e[i] = e[j] = math.sqrt(0.5)
        o = np.zeros(n_a)
        o[i], o[j] = math.sqrt(0.5), -math.sqrt(0.5)
        even.append(e)
        odd.append(o)
    if n_a % 2:
        e = np.zeros(n_a)
        e[n_a // 2] = 1.0
        even.append(e)

    def as_cols(vs):
        return np.array(vs).T if vs else np.zeros((n_a, 0))

    return as_cols(even), as_cols(odd)


def _sweep_log_values(k: float, xs: np.ndarray, gs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Left-decaying solution at E = -C k^2/m at the points, as (sign, log|u|).

    Same forward sweep as :func:`_shoot`, with the dropped positive factors
    accumulated in a logarithm so that values far below the double range keep
    their sign and relative accuracy.
    """
    n = len(xs)
    sign = np.ones(n)
    logabs = np.zeros(n)
    u, w, log_scale = 1.0, 1.0, 0.0
    for i in range(n):
        if i:
            d = xs[i] - xs[i - 1]
            t = 2.0 * k * d
            if t > 1.0:
                p = u + w
                q = (u - w) * math.exp(-t) if p != 0.0 else (u - w)
                u, w = 0.5 * (p + q), 0.5 * (p - q)
            else:
                r = (u - w) * (-0.5 * math.expm1(-t))
                u, w = u - r, w + r
            log_scale += k * d
            s = max(abs(u), abs(w))
            u /= s
            w /= s
            log_scale += math.log(s)
        sign[i] = 1.0 if u > 0 else (-1.0 if u < 0 else 0.0)
        logabs[i] = (math.log(abs(u)) if u != 0.0 else -math.inf) + log_scale
        w -= 2.0 * gs[i] * u / k
    return sign, logabs


def _refine_small_values(kappa: float, xa: np.ndarray, ga: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Recompute the small entries of ``v`` = psi(x_i) with relative accuracy.

    The eigenvector gives psi(x_i) to an absolute accuracy ~eps max|psi|, so the
    signs of exponentially small values (tails, valleys between far-apart
    lobes) are lost.  With B the points where |psi| >= 1e-3 max and S the rest,
    the rows i in S of psi = E G psi / kappa give the linear system
        (kappa 1 - E_SS G_S) psi_S = E_SB G_B psi_B,
    whose right side is built from accurate values and whose matrix is well
    conditioned unless a point of S is itself near resonance (then psi is not
    small there).  Outside the first/last point of B the state is the solution
    decaying towards the outside, which grows towards B; it is recomputed by
    the forward and mirrored sweeps (log-scaled, so values below the double
    range keep their sign) and matched to psi at the boundary point of B.
    """
    vmax = float(np.max(np.abs(v)))
    big = np.abs(v) >= 1e-3 * vmax
    out = v.copy()
    small = ~big
    if np.any(small):
        e = _exp_matrix(kappa, xa)
        a_ss = kappa * np.eye(int(small.sum())) - e[np.ix_(small, small)] * ga[small][None, :]
        rhs = e[np.ix_(small, big)] @ (ga[big] * v[big])
        try:
            sol = np.linalg.solve(a_ss, rhs)
        except np.linalg.LinAlgError:
            sol = None
        if sol is not None and np.all(np.isfinite(sol)):
            out[small] = sol
    idx = np.flatnonzero(big)
    first, last = int(idx[0]), int(idx[-1])
    if first > 0:
        sg, lg = _sweep_log_values(kappa, xa, ga)
        ratio = np.exp(lg[:first] - lg[first])
        out[:first] = v[first] * sg[first] * sg[:first] * ratio
    if last < len(v) - 1:
        sg, lg = _sweep_log_values(kappa, -xa[::-1], ga[::-1])
        sg, lg = sg[::-1], lg[::-1]
        ratio = np.exp(lg[last + 1:] - lg[last])
        out[last + 1:] = v[last] * sg[last] * sg[last + 1:] * ratio
    return out


def _count_nodes(v: np.ndarray) -> int:
    """Sign changes of psi(x_i) (psi has no zero outside, one per sign change).

    The values come from :func:`_refine_small_values`, so small ones carry a
    meaningful sign.  Outside the main body (first to last point with
    |psi| >= 1e-3 max) values that underflowed keep the sign bit of zero and
    are used; inside, values below 1e-300 max (underflowed) are skipped.
    """
    vmax = float(np.max(np.abs(v)))
    big = np.flatnonzero(np.abs(v) >= 1e-3 * vmax)
    first, last = int(big[0]), int(big[-1])
    signs = []
    for i, vi in enumerate(v):
        if first <= i <= last:
            if abs(vi) > _NODE_FLOOR * vmax:
                signs.append(1 if vi > 0 else -1)
        else:
            signs.append(-1 if math.copysign(1.0, vi) < 0 else 1)
    return int(sum(1 for s0, s1 in zip(signs, signs[1:]) if s0 != s1))


def _fix_sign(v: np.ndarray) -> float:
    """+1 or -1 making psi positive at the leftmost point where |psi| >= 1e-6 max."""
    vmax = float(np.max(np.abs(v)))
    for vi in v:
        if abs(vi) >= _SIGN_FLOOR * vmax:
            return 1.0 if vi > 0 else -1.0
    return 1.0


def _state_vectors(kappa, xa, ga, symmetric):
    """Point values psi_n(x_i) at the active sorted points, nodes and parity.

    Each state is the null vector of the symmetric matrix M(kappa_n) (module
    docstring); psi(x_i) = kappa c_i / g_i follows from the jump condition.
    For a mirror-symmetric set the n-th state is taken from the parity-(-1)^n
    block (the n-th state of a symmetric 1D potential has n nodes and parity
    (-1)^n), which separates states whose splitting is below rounding.
    """
    n_states = len(kappa)
    n_a = len(xa)
    values = np.zeros((n_states, n_a))
    nodes = np.zeros(n_states, dtype=int)
    parity = np.zeros(n_states, dtype=int)
    if n_states == 0:
        return values, nodes, parity
    root_g = np.sqrt(np.abs(ga))
    sgn = np.sign(ga)
    q_even, q_odd = _parity_bases(n_a) if symmetric else (None, None)

    # states needing a joint basis: same parity block and identical kappa
    groups: dict[tuple[int, float], list[int]] = {}
    for n in range(n_states):
        sector = (1 if n % 2 == 0 else -1) if symmetric else 0
        groups.setdefault((sector, float(kappa[n])), []).append(n)

    for (sector, kap), members in groups.items():
        m_full = kap * np.diag(sgn) - root_g[:, None] * _exp_matrix(kap, xa) * root_g[None, :]
        scale = kap + float(np.max(np.abs(ga)))
        z = None
        if sector:
            q = q_even if sector > 0 else q_odd
            if q.shape[1] >= len(members):
                w, v = np.linalg.eigh(q.T @ m_full @ q)
                pick = np.argsort(np.abs(w))[: len(members)]
                if np.max(np.abs(w[pick])) <= 1e-6 * scale:
                    z = q @ v[:, pick]
        if z is None:
            w, v = np.linalg.eigh(m_full)
            pick = np.argsort(np.abs(w))[: len(members)]
            z = v[:, pick]
        # psi(x_i) = kappa c_i / g_i with c = |G|^(1/2) z
        vals = (kap * sgn / root_g)[:, None] * z
        for j in range(vals.shape[1]):
            vals[:, j] = _refine_small_values(kap, xa, ga, vals[:, j])
        # orthonormalise in L2 (Gram-Schmidt, overlaps from point values)
        for j in range(vals.shape[1]):
            for i in range(j):
                vals[:, j] -= _moments(kap, xa, vals[:, i], vals[:, j], 0.0)[0] * vals[:, i]
            vals[:, j] /= math.sqrt(_moments(kap, xa, vals[:, j], vals[:, j], 0.0)[0])
        info = sorted((_count_nodes(vals[:, j]), j) for j in range(vals.shape[1]))
        for n, (nd, j) in zip(members, info):
            values[n] = _fix_sign(vals[:, j]) * vals[:, j]
            nodes[n] = nd
            if symmetric:
                parity[n] = 1 if values[n] @ values[n][::-1] > 0.0 else -1
    return values, nodes, parity


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


@dataclass(frozen=True)
class Threshold:
    """A parameter value at which the number of bound states changes.

    ``param_value`` is in the family parameter's unit, ``state_index`` the
    index of the state that appears/disappears (the smaller of the counts on
    the two sides), ``direction`` +1 if it binds as the parameter increases,
    -1 if it unbinds.
    """

    param_value: float
    state_index: int
    direction: int


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
) -> list[Threshold]:
    """Parameter values in [lo, hi] where a state binds or unbinds.

    ``positions_fn(p)`` and ``strengths_fn(p)`` give the point set of a family
    that is continuous in p with a fixed number of points.  A state reaches
    E = 0 exactly when the zero-energy solution's tail slope psi'(+inf) passes
    through zero: the zeros of the piecewise-linear solution are simple and
    move continuously, so the count can only change through the tail zero
    coming in from infinity, i.e. when the slope (equivalently the inverse
    scattering length) changes sign.  The slope is scanned on ``n_scan`` equal
    cells, cells whose counts and slope signs disagree are bisected, and each
    sign change is solved with brentq to relative ``rtol`` (>= 4 eps) in p.

    Returns the thresholds sorted by ``param_value``.  A bind/unbind pair that
    falls inside one scan cell without changing the count at the cell ends is
    not seen; refine ``n_scan`` if that matters.
    """
    lo = float(lo)
    hi = float(hi)
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise CaseError(f"need finite lo < hi, got lo={lo!r}, hi={hi!r}", key="range")
    rtol = max(float(rtol), _KAPPA_RTOL)
    n_scan = int(n_scan)
    if n_scan < 1:
        raise CaseError("n_scan must be >= 1", key="n_scan")
    _positive(mass, "mass")
    _positive(hbar2_2me, "hbar2_2me")

    def evaluate(p):
        x, a = _as_points(positions_fn(p), strengths_fn(p))
        xs, gs, _ = _couplings(x, a, mass, hbar2_2me)
        nodes, _, slope = _zero_energy(xs, gs)
        return nodes, slope

    def slope(p):
        return evaluate(p)[1]

    found: list[Threshold] = []

    def record(p, na, nb):
        found.append(Threshold(float(p), int(min(na, nb)), 1 if nb > na else -1))

    def refine(pa, va, pb, vb, depth):
        (na, sa), (nb, sb) = va, vb
        pos_a, pos_b = sa > 0.0, sb > 0.0
        if pos_a == pos_b and na == nb:
            return
        if pos_a != pos_b and abs(na - nb) == 1:
            xtol = max(1e-3 * rtol * max(abs(pa), abs(pb)), 1e-300)
            record(brentq(slope, pa, pb, xtol=xtol, rtol=rtol, maxiter=500), na, nb)
            return
        pm = 0.5 * (pa + pb)
        if depth >= 60 or not (pa < pm < pb):
            step = 1 if nb > na else -1
            for n in range(na, nb, step):
                record(pm, n, n + step)
            return
        vm = evaluate(pm)
        refine(pa, va, pm, vm, depth + 1)
        refine(pm, vm, pb, vb, depth + 1)

    grid = np.linspace(lo, hi, n_scan + 1)
    vals = [evaluate(p) for p in grid]
    for i in range(n_scan):
        refine(grid[i], vals[i], grid[i + 1], vals[i + 1], 0)
    found.sort(key=lambda th: th.param_value)
    return found
