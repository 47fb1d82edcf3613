"""The zero-range point model's private machinery: input checks, node counts and root brackets, and the states as functions of x.

Counting.  The number N(k) of bound states with kappa > k is the number of
zeros of the solution that decays on the left at E = -C k^2/m, carried across
the points by the one march (:mod:`fdsolver.numerics.march`); bisecting N(k)
isolates every state in its own bracket.

States.  Between two neighbouring (active) points a < b, L = b - a, a bound state is
    psi(a + L s) = psi_a A(s) + psi_b B(s),  s in [0, 1],
    A(s) = sinh(x (1 - s)) / sinh(x),  B(s) = sinh(x s) / sinh(x),  x = kappa L,
and outside it is psi_1 exp(kappa (x - x_1)) / psi_N exp(-kappa (x - x_N)).
Built from the values psi(x_i) this form has no cancellation, unlike the sum
of exponentials when kappa |x_i - x_j| << 1 (states close to threshold).
Moments and norms are closed forms of these pieces (Gauss-Legendre for the
few integrals without one, exact to round-off).

See :mod:`fdsolver.zerorange.pointmodel` for the physics and the public API.
Lengths in the caller's unit, kappa in 1/length.
"""

from __future__ import annotations
import math

import numpy as np
from scipy.optimize import brentq
from fdsolver.errors import CaseError
from fdsolver.numerics.march import carry


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
# shooting: node counts and tail growth, carried by the one march


def _march_points(k: float, xs: np.ndarray, gs: np.ndarray, record: bool = False):
    """The solution decaying on the left (psi = 1, psi' = k at x_1) marched across the points at E = -C k^2/m.

    In the march's units C = m = 1, so the flux is psi' and a point of
    coupling g makes it jump by -2 g psi.  Returns the march's
    ``(nodes, psi, psi', log_scale[, signs, log|psi|])``.
    """
    n = len(xs)
    return carry(xs, np.full(n - 1, k * k), np.ones(n - 1), 2.0 * gs, 1.0, k, 1.0, k, record=record)


def _shoot(k: float, xs: np.ndarray, gs: np.ndarray) -> tuple[int, float]:
    """Zeros of the left-decaying solution at E = -C k^2/m, and its tail growth.

    Returns ``(nodes, growth)``.  ``nodes`` is the number of zeros on the real
    line (= number of bound states with kappa > k, oscillation theorem).
    ``growth`` is the coefficient of exp(+k x) right of the last point, scaled by
    a positive continuous factor into [-1, 1]; it is continuous in k and zero
    exactly at bound states.  k in 1/length.  The march keeps growing and
    decaying parts apart (:mod:`fdsolver.numerics.march`), so exponentially
    small admixtures (far-apart wells) and k -> 0 both keep their accuracy.
    """
    nodes, u, dpsi, _ = _march_points(k, xs, gs)
    w = dpsi / k
    if u == 0.0:  # a zero exactly on the last point
        nodes += 1
    elif u * w < 0.0 and abs(w) > abs(u):  # the tail crosses zero once more
        nodes += 1
    growth = (u + w) / (abs(u) + abs(w))
    return nodes, growth


def _zero_energy(xs: np.ndarray, gs: np.ndarray) -> tuple[int, float, float]:
    """Zero-energy solution psi = 1 on the left: (nodes, psi(x_N), psi'(+inf)), psi dimensionless."""
    n = len(xs)
    span = max(float(xs[-1] - xs[0]), 1e-300) if n > 1 else 1.0
    nodes, psi, dpsi, log_scale = carry(xs, np.zeros(n - 1), np.ones(n - 1), 2.0 * gs, 1.0, 1.0 / span, 1.0, 0.0)
    if psi == 0.0:
        nodes += 1
    elif psi * dpsi < 0.0:
        nodes += 1
    f = math.exp(log_scale)
    return nodes, psi * f, dpsi * f


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
# states as functions of x


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

    The march of :func:`_shoot`, recording every point with the dropped
    positive factors kept in a logarithm, so that values far below the double
    range keep their sign and relative accuracy.
    """
    out = _march_points(k, xs, gs, record=True)
    return out[4], out[5]


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
