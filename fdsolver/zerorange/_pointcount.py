"""Point-interaction model, part 1: input checks, the node count N(k) of the decaying solution, and the root brackets.

See :mod:`fdsolver.pointmodel` for the physics and the public API.  Lengths in the caller's unit, kappa in 1/length."""

from __future__ import annotations
import math
import numpy as np
from scipy.optimize import brentq
from fdsolver.errors import CaseError


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


def _step(u: float, w: float, t: float) -> tuple[float, float]:
    """Carry the pair (u, w) across a gap of decay exponent t = 2 k d, with the growing part divided out.

    For t > 1 the exponential is applied directly; for small t the expm1 form
    keeps full precision.  A purely decaying pair (u + w == 0) keeps its
    direction (only its positive scale is dropped, which is immaterial).
    """
    if t > 1.0:
        p = u + w
        q = (u - w) * math.exp(-t) if p != 0.0 else (u - w)
        return 0.5 * (p + q), 0.5 * (p - q)
    r = (u - w) * (-0.5 * math.expm1(-t))
    return u - r, w + r


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
            u, w = _step(u, w, 2.0 * k * (xs[i] - xs[i - 1]))
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
