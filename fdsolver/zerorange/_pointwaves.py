"""Point-interaction model, part 2: the bound states as functions of x.

Between two neighbouring (active) points a < b, L = b - a, a bound state is
    psi(a + L s) = psi_a A(s) + psi_b B(s),  s in [0, 1],
    A(s) = sinh(x (1 - s)) / sinh(x),  B(s) = sinh(x s) / sinh(x),  x = kappa L,
and outside it is psi_1 exp(kappa (x - x_1)) / psi_N exp(-kappa (x - x_N)).
Built from the values psi(x_i) this form has no cancellation, unlike the sum
of exponentials when kappa |x_i - x_j| << 1 (states close to threshold).
Moments and norms are closed forms of these pieces (Gauss-Legendre for the
few integrals without one, exact to round-off).  See :mod:`fdsolver.pointmodel`."""

from __future__ import annotations
import math
import numpy as np
from fdsolver.zerorange._pointcount import (
    _step,
    _EPS,
    _NODE_FLOOR,
    _SIGN_FLOOR,
    _SYM_RTOL,
)


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
            u, w = _step(u, w, 2.0 * k * d)
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
