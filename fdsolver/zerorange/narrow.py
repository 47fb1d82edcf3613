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
that is constant left of all wells (oscillation theorem), counting the zero
of the straight tail when psi psi' < 0 beyond the last well.  Each well acts
on (psi, psi') through a 2 x 2 transfer matrix over its core (where
|V| > 1e-17 of its peak): exact cos/sin for a square well, the fourth-order
Magnus method (relative error ~1e-10) for the smooth profiles, whose zeros
inside the core are counted on the Magnus nodes (spacing far below pi / q_max).
Between cores psi is linear.  Cores that overlap are merged and integrated together.
Used for "does state n exist" in a finite-width model, independent of any
box, and for the critical separation at which it binds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from fdsolver.model import shapes as S
from fdsolver.errors import CaseError

#: well shapes the zero-range comparison handles (a closed form or a quadrature for l)
WELL_SHAPES = (S.Square, S.SmoothSquare, S.Gaussian, S.Sech2)
#: how far each profile's core extends beyond its centre, in units of its width parameter
_CORE = {S.Gaussian: 9.0, S.Sech2: 21.0}


# --------------------------------------------------------------- mean distance
def width_of(shape) -> float:
    """The width parameter of a well (square/smooth_square/sech2 width, gaussian sigma), length unit."""
    return float(shape.sigma if isinstance(shape, S.Gaussian) else shape.width)


def mean_distance(shape) -> float:
    """l = mean |x - x'| of two points drawn from the well profile |V| (length unit); see module docstring."""
    if isinstance(shape, (S.Square, S.Gaussian)):
        return float(shape.mean_distance())
    if isinstance(shape, S.Sech2):
        return float(shape.width)
    if isinstance(shape, S.SmoothSquare):
        return _smooth_square_distance(float(shape.width), float(shape.edge))
    raise CaseError(f"no mean distance for a '{shape.kind}' component; use square, smooth_square, gaussian or sech2",
                    key="potential")


@lru_cache(maxsize=256)
def _smooth_square_distance(width: float, edge: float) -> float:
    from scipy.integrate import quad

    h = 0.5 * width

    def lncosh(a):
        a = abs(a)
        return a + math.log1p(math.exp(-2.0 * a)) - math.log(2.0)

    def f1mf(x):
        cdf = 0.5 + edge / (2.0 * width) * (lncosh((x + h) / edge) - lncosh((x - h) / edge))
        return cdf * (1.0 - cdf)

    reach = h + 40.0 * edge
    pts = sorted({p for p in (-h - edge, -h, -h + edge, h - edge, h, h + edge) if -reach < p < reach})
    total, _ = quad(f1mf, -reach, reach, points=pts, limit=400, epsabs=0.0, epsrel=1e-13)
    return 2.0 * total


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


# ------------------------------------------------------ zero-energy transfer
@dataclass(frozen=True)
class _Core:
    """Transfer of (psi, psi') at E = 0 across [lo, hi]; u1, u2 sampled for zero counting."""

    lo: float
    hi: float
    matrix: np.ndarray
    u1: np.ndarray
    u2: np.ndarray


def core_extent(shape) -> tuple[float, float]:
    """Interval outside which the well's |V| is below 1e-17 of its peak (exactly its edges for a square)."""
    c = float(shape.center)
    if isinstance(shape, S.Square):
        half = 0.5 * shape.width
    elif isinstance(shape, S.SmoothSquare):
        half = 0.5 * shape.width + 20.0 * shape.edge
    else:
        half = _CORE[type(shape)] * width_of(shape)
    return c - half, c + half


def _integrate(shapes, lo, hi, k2) -> _Core:
    """Transfer across [lo, hi] of psi'' = k2 V(x) psi (k2 = m / C) by the fourth-order Magnus method.

    Cells of h <= min(0.01 / q_max, scale / 40) (q_max = sqrt(k2 max|V|)),
    split at the shapes' features; on each cell Omega = h/2 (A1 + A2) +
    sqrt(3) h^2 / 12 [A2, A1] with A = [[0, 1], [k2 V, 0]] at the two Gauss
    points, exp(Omega) in closed form (trace-free 2 x 2), and the prefix
    products by recursive doubling.  Global error O((q h)^4), about 1e-10
    relative here.
    """
    scale = min(float(s.scale()) for s in shapes)
    probe = np.linspace(lo, hi, 2049)
    vmax = float(np.max(np.abs(sum(s.value(probe) for s in shapes)))) + max(abs(s.amplitude) for s in shapes)
    h_max = min(0.01 / math.sqrt(k2 * vmax), scale / 40.0)
    breaks = sorted({lo, hi, *[f for s in shapes for f in s.features() if lo < f < hi]})
    edges = [np.linspace(a, b, max(2, int(math.ceil((b - a) / h_max)) + 1))[:-1] for a, b in zip(breaks[:-1], breaks[1:])]
    x = np.concatenate(edges + [np.array([hi])])
    if x.size > 400001:
        raise CaseError("a merged well region needs more than 4e5 integration cells; the wells are too wide for "
                        "a zero-range comparison", key="potential")
    h = np.diff(x)
    r = math.sqrt(3.0) / 6.0
    f1 = k2 * sum(s.value(x[:-1] + h * (0.5 - r)) for s in shapes)
    f2 = k2 * sum(s.value(x[:-1] + h * (0.5 + r)) for s in shapes)
    a = math.sqrt(3.0) / 12.0 * h**2 * (f1 - f2)
    g = 0.5 * h * (f1 + f2)
    mu2 = a * a + h * g
    mu = np.sqrt(np.abs(mu2))
    small = mu < 1e-4
    safe = np.where(small, 1.0, mu)
    ch = np.where(mu2 >= 0, np.cosh(mu), np.cos(mu))
    sh = np.where(small, 1.0 + mu2 / 6.0, np.where(mu2 >= 0, np.sinh(mu), np.sin(mu)) / safe)
    m = np.empty((h.size, 2, 2))
    m[:, 0, 0], m[:, 0, 1] = ch + sh * a, sh * h
    m[:, 1, 0], m[:, 1, 1] = sh * g, ch - sh * a
    shift = 1
    while shift < m.shape[0]:  # prefix products P_k = M_k ... M_0 (Hillis-Steele)
        m[shift:] = m[shift:] @ m[:-shift]
        shift *= 2
    u1 = np.concatenate([[1.0], m[:, 0, 0]])
    u2 = np.concatenate([[0.0], m[:, 0, 1]])
    return _Core(lo, hi, m[-1].copy(), u1, u2)


@lru_cache(maxsize=512)
def _centred_core(shape, k2: float) -> _Core:
    """Core of one well centred at 0 (cached: identical wells share it)."""
    lo, hi = core_extent(shape)
    if isinstance(shape, S.Square):
        q = math.sqrt(k2 * abs(shape.amplitude))
        s = np.linspace(0.0, shape.width, int(min(20001, max(17, math.ceil(shape.width * q * 8 / math.pi) + 1))))
        u1, u2 = np.cos(q * s), np.sin(q * s) / q
        qw = q * shape.width
        mat = np.array([[math.cos(qw), math.sin(qw) / q], [-q * math.sin(qw), math.cos(qw)]])
        return _Core(lo, hi, mat, u1, u2)
    return _integrate((shape,), lo, hi, k2)


def _cores(shapes, k2: float) -> list[_Core]:
    items = sorted(((core_extent(s), s) for s in shapes), key=lambda t: t[0][0])
    groups: list[list] = []
    for (lo, hi), s in items:
        if groups and lo < groups[-1][1]:
            groups[-1][1] = max(groups[-1][1], hi)
            groups[-1][2].append(s)
        else:
            groups.append([lo, hi, [s]])
    out = []
    for lo, hi, members in groups:
        if len(members) == 1:
            s = members[0]
            base = _centred_core(replace(s, center=0.0, name=None), k2)
            out.append(replace(base, lo=base.lo + s.center, hi=base.hi + s.center))
        else:
            out.append(_integrate(tuple(members), lo, hi, k2))
    return out


def zero_energy_count(shapes, mass: float, hbar2_2me: float) -> tuple[int, float]:
    """Bound-state count of separated wells (module docstring) and the normalised tail slope.

    Returns ``(count, slope)``: ``slope`` = L psi' sgn(psi) / |(psi, L psi')|
    beyond the last well (L = the wells' total extent), in [-1, 1]; the count
    changes where it passes through zero.  Exact up to the 1e-12 integration
    tolerance (square wells: rounding).
    """
    k2 = float(mass) / float(hbar2_2me)
    cores = _cores(shapes, k2)
    length = max(cores[-1].hi - cores[0].lo, 1e-300)
    v = np.array([1.0, 0.0])
    nodes = 0
    sign = 1.0
    x = cores[0].lo
    for core in cores:
        psi_in = v[0] + v[1] * (core.lo - x)
        v = np.array([psi_in, v[1]])
        vals = v[0] * core.u1 + v[1] * core.u2
        signs = np.where(vals >= 0.0, 1.0, -1.0)
        nodes += int(signs[0] != sign) + int(np.count_nonzero(signs[1:] != signs[:-1]))
        sign = signs[-1]
        v = core.matrix @ v
        v = v / max(abs(v[0]), abs(v[1]) * length, 1e-300)
        x = core.hi
    psi, dpsi = v
    if psi * dpsi < 0.0:
        nodes += 1
    slope = length * dpsi * (1.0 if psi >= 0.0 else -1.0) / max(math.hypot(psi, length * dpsi), 1e-300)
    return nodes, float(slope)


def critical_scale(make_shapes, state: int, guess: float, mass: float, hbar2_2me: float,
                   rtol: float = 1e-10, span: float = 100.0) -> float:
    """Factor s at which ``make_shapes(s)`` starts to bind state ``state`` as s grows (nan if not found).

    ``make_shapes(s)`` returns the wells with every separation scaled by s
    (s = 1: as given).  From ``guess`` (e.g. the point model's value) the
    bracket is widened by factors of 1.25 (at most ``span`` either way) until
    the count changes, then the change is bisected on the integer count to
    relative ``rtol``.  Assumes one threshold per state near ``guess`` (true
    for equal couplings; otherwise the one found is reported).
    """
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
    from scipy.optimize import brentq

    def slope(s):
        return zero_energy_count(make_shapes(s), mass, hbar2_2me)[1]

    # the count changes where the tail slope passes through zero (continuous there)
    if slope(a) > 0.0 > slope(b):
        root = brentq(slope, a, b, rtol=max(rtol, 4.0 * np.finfo(float).eps), xtol=1e-300, maxiter=200)
        lo_s, hi_s = root * (1.0 - 4.0 * rtol), root * (1.0 + 4.0 * rtol)
        if not bound(lo_s) and bound(hi_s):
            return float(root)
    while b - a > rtol * b:  # fallback: bisect the integer count
        mid = math.sqrt(a * b)
        if not a < mid < b:
            break
        if bound(mid):
            b = mid
        else:
            a = mid
    return 0.5 * (a + b)


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
        if th.direction > 0 and th.state_index < n_states and not np.isfinite(out[th.state_index]):
            out[th.state_index] = math.exp(th.param_value)
    return out
