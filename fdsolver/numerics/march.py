"""The one march: a solution of the 1D Schroedinger equation carried across cells, exactly per cell.

Every box-free question fdsolver asks of a potential goes through here: the
number of bound states below an energy (oscillation theorem), binding
thresholds, the zero-range point model's node counts and wavefunction values,
and the zero-energy counts of separated wells.

The state is the pair (psi, u) with u = (C / m) psi' the flux (C = hbar^2 / 2 m_e,
m the mass in m_e); u is continuous across mass steps (BenDaniel-Duke).  Cell i
spans [edges[i], edges[i+1]] with constant

    k2[i] = m_i (V_i - E) / C          (1/length^2)

and mass m_i; ``jump[j]`` is the strength alpha of a point term
-alpha delta(x - edges[j]), which makes the flux jump: u -> u - alpha psi.
Across a cell the solution is propagated *exactly* for that constant k2:

* k2 < 0 (classically allowed): cos / sin of k L, k = sqrt(-k2); the zeros inside
  are counted from the phase atan2(psi, psi'/k), which advances by k L;
* k2 > 0 (forbidden): with w = psi'/k the growing and decaying parts
  p = psi + w, q = (psi - w) exp(-2 k L) are carried separately and the
  common factor exp(k L) is dropped (kept in ``log_scale``), so nothing
  overflows and an exponentially small decaying admixture keeps its relative
  accuracy (for 2 k L <= 1 the same map is written with expm1);
* k2 = 0: psi is linear.

A potential that is constant between its features (square wells, layer
stacks, point terms) is therefore marched exactly with one cell per segment.
A smooth potential uses its midpoint value on each cell: the symmetric
second-order Magnus propagator, error O(h^2) with an even-power expansion,
so results on nested cell levels can be Richardson-extrapolated
(:mod:`fdsolver.numerics.richardson`).  The pair is renormalised every cell;
signs and node counts are exact.

Units: lengths in the case length unit, k2 in 1/length^2, u in energy * length^-1
times psi's unit (any consistent scale).

The same state carried at complex energy, with complex (psi, u), linear
(Airy) cells and both directions, for transmission and S-matrix poles, is
:mod:`fdsolver.numerics.waves`.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.numerics.kernels import (
    even_samples,
    njit,
    piece_values_apart,
    search_sorted,
)

PI = math.pi


@njit
def _sign(x):
    return 1.0 if x > 0.0 else (-1.0 if x < 0.0 else 0.0)


@njit
def march(edges, k2, mass, jump, c, kscale, psi, u, rec_sign, rec_log):
    """Carry (psi, u) from edges[0] to edges[-1]; return (nodes, psi, u, log_scale).

    ``nodes`` is the number of zeros of psi in (edges[0], edges[-1]] (a zero
    exactly at an edge is counted once, when psi leaves it with the other
    sign).  ``log_scale`` is the natural log of the positive factor dropped by
    the renormalisations: the true end values are exp(log_scale) * (psi, u).
    ``kscale`` (1/length times C/m, any positive flux scale) sets the relative
    weight of psi and u in the renormalisation only.  If ``rec_sign`` and
    ``rec_log`` have one entry per edge, the sign of psi and log|psi| (with
    the dropped factors included) are stored at every edge, so that values
    far below the double range keep their sign.  ``jump`` has one entry per
    edge (the last is applied at the end).
    """
    n = k2.shape[0]
    record = rec_sign.shape[0] == n + 1
    nodes = 0
    log_scale = 0.0
    s = _sign(psi)
    if s == 0.0:
        s = _sign(u)
    if s == 0.0:
        s = 1.0
    for i in range(n):
        if record:
            rec_sign[i] = _sign(psi)
            rec_log[i] = (math.log(abs(psi)) if psi != 0.0 else -math.inf) + log_scale
        if jump[i] != 0.0:
            u = u - jump[i] * psi
        m = mass[i]
        length = edges[i + 1] - edges[i]
        dpsi = m * u / c
        if psi == 0.0:  # leaving a zero that sits on an edge: psi takes the sign of its slope
            t = _sign(dpsi)
            if t != 0.0 and t != s:
                nodes += 1
                s = t
        kk = k2[i]
        if kk < 0.0:
            k = math.sqrt(-kk)
            phi0 = math.atan2(s * psi, s * dpsi / k)
            if phi0 < 0.0:  # round-off just past a node
                phi0 = 0.0 if s * dpsi > 0.0 else PI
            kl = k * length
            cs, sn = math.cos(kl), math.sin(kl)
            psi_n = psi * cs + dpsi * sn / k
            dpsi_n = -psi * k * sn + dpsi * cs
            total = (phi0 + kl) / PI
            cross = int(math.floor(total))
            s_new = s if cross % 2 == 0 else -s
            if s_new * psi_n < 0.0:  # keep the count consistent with the sign reached
                cross += 1 if total - cross > 0.5 else -1
                s_new = -s_new
            nodes += cross
            s = s_new
        elif kk > 0.0:
            k = math.sqrt(kk)
            w = dpsi / k
            t2 = 2.0 * k * length
            if t2 > 1.0:
                p = psi + w
                if p != 0.0:
                    q = (psi - w) * math.exp(-t2)
                    log_scale += k * length
                else:  # a purely decaying solution keeps its direction
                    q = psi - w
                    log_scale -= k * length
                psi_n = 0.5 * (p + q)
                w_n = 0.5 * (p - q)
            else:
                r = (psi - w) * (-0.5 * math.expm1(-t2))
                psi_n = psi - r
                w_n = w + r
                log_scale += k * length
            dpsi_n = w_n * k
            if s * psi_n < 0.0:
                nodes += 1
                s = -s
        else:
            psi_n = psi + dpsi * length
            dpsi_n = dpsi
            if s * psi_n < 0.0:
                nodes += 1
                s = -s
        psi = psi_n
        u = c * dpsi_n / m
        r = max(abs(psi), abs(u) / kscale)
        if r > 0.0:
            psi = psi / r
            u = u / r
            log_scale += math.log(r)
    if record:
        rec_sign[n] = _sign(psi)
        rec_log[n] = (math.log(abs(psi)) if psi != 0.0 else -math.inf) + log_scale
    if jump[n] != 0.0:
        u = u - jump[n] * psi
    return nodes, psi, u, log_scale


_NO_RECORD = np.zeros(0)


def carry(edges, k2, mass, jump, c: float, kscale: float, psi: float = 1.0, u: float = 0.0, record: bool = False):
    """:func:`march` with array conversion; with ``record`` also returns (signs, log|psi|) at every edge."""
    edges = np.ascontiguousarray(edges, dtype=float)
    k2 = np.ascontiguousarray(k2, dtype=float)
    mass = np.ascontiguousarray(mass, dtype=float)
    jump = np.ascontiguousarray(jump, dtype=float)
    if record:
        rs, rl = np.empty(edges.size), np.empty(edges.size)
        out = march(edges, k2, mass, jump, float(c), float(kscale), float(psi), float(u), rs, rl)
        return out + (rs, rl)
    return march(edges, k2, mass, jump, float(c), float(kscale), float(psi), float(u), _NO_RECORD, _NO_RECORD)


@njit
def margin(edges, k2, mass, jump, c, kscale, u0, u_end):
    """The zero-energy phase margin Phi of cells ``edges`` (k2, mass and point strengths ``jump`` as for
    :func:`march`, k2 at the continuum threshold): the solution that decays to the left (flux ``u0`` for psi = 1
    at edges[0]) carried to edges[-1], where its Pruefer angle (taken with the sign that makes psi >= 0, of
    (psi, u / kscale)) is compared with that of the solution decaying to the right (flux ``u_end`` for psi = 1):
    Phi = nodes + (angle - decaying angle) / pi, the state with N nodes bound iff Phi > N
    (:mod:`fdsolver.boundstates.counting`).  The difference is taken from the cross and dot products of the two
    phase vectors, with full relative accuracy where the angles nearly agree (a state at its binding threshold,
    a very light particle).  Exact per cell where k2 is constant on it; O(cells).  Dimensionless."""
    none = np.empty(0)
    nodes, psi, u, _ = march(edges, k2, mass, jump, c, kscale, 1.0, u0, none, none)
    sign = 1.0 if nodes % 2 == 0 else -1.0
    alpha = math.atan2(sign * psi, sign * u / kscale)  # the Pruefer angle in [0, pi]
    if alpha < 0.0:
        alpha = 0.0 if sign * u > 0.0 else PI
    u_dec = u_end / kscale
    theta_dec = math.atan2(1.0, u_dec)
    p, q = sign * psi, sign * u / kscale
    delta = math.atan2(u_dec * p - q, u_dec * q + p)
    if abs(delta - (alpha - theta_dec)) > 1e-6:  # the branch of the direct difference is the right one
        delta = alpha - theta_dec
    return nodes + delta / PI


@njit
def tabled_margin(samples, feats, v_piece, m_piece, v_feat, m_feat, pos, alpha, vt, c, inv_scale2, u0, u_end, tol):
    """(done, Phi, kscale) of a potential constant between its features, from its piece tables, in one call: the
    steps of :func:`fdsolver.numerics.cells.make_layout` (the flux scale from V and m at ``samples`` even samples
    of the features' span, those of ``numpy.linspace``: :func:`fdsolver.numerics.kernels.even_samples`) and of
    :func:`fdsolver.boundstates.counting.phase_margin` on that compact layout
    (one cell per piece between the outer features, each outer feature a cell of zero width, the point terms
    ``alpha`` at ``pos`` on their nearest edges) with the same numbers.  V and m at a sample are read from the
    tables (:func:`fdsolver.numerics.kernels.piece_values_apart`): exactly the values an evaluation gives inside
    a piece, but not within a few ulps of a feature, so where a sample lies within ``tol`` of a feature without
    being on it, nothing is computed (done False: evaluate instead).  ``vt`` the continuum threshold (energy),
    ``c`` = hbar^2 / 2 m_e, ``inv_scale2`` the potential's largest length to the power -2, ``u0`` and ``u_end``
    the decaying fluxes of :func:`margin`.  O(samples log K + K)."""
    nf = feats.shape[0]
    xs = even_samples(feats[0], feats[nf - 1], samples)
    done, v, m = piece_values_apart(xs, feats, v_piece, m_piece, v_feat, m_feat, tol)
    if not done:
        return False, 0.0, 0.0
    vspan = 0.0
    m_max = -math.inf
    for i in range(xs.shape[0]):
        dv = abs(v[i] - vt)
        if math.isfinite(dv):
            vspan = max(vspan, dv)
        m_max = max(m_max, m[i])
    kscale = c * math.sqrt(m_max * vspan / c + inv_scale2) / m_max
    edges = np.empty(nf + 2)  # the outer features twice: the end cells of zero width
    edges[0] = feats[0]
    edges[1:-1] = feats
    edges[-1] = feats[-1]
    jump = np.zeros(nf + 2)
    for j in range(pos.shape[0]):  # each point term on its nearer edge (points are features: exactly on one)
        i = min(max(search_sorted(edges, pos[j], False), 1), nf + 1)
        if (pos[j] - edges[i - 1]) < (edges[i] - pos[j]):
            i -= 1
        jump[i] += alpha[j]
    k2 = np.empty(nf + 1)
    mass = np.empty(nf + 1)
    for i in range(nf + 1):  # the end cells at the outer features, the pieces between them
        vi = v_feat[0] if i == 0 else (v_feat[nf - 1] if i == nf else v_piece[i])
        mass[i] = m_feat[0] if i == 0 else (m_feat[nf - 1] if i == nf else m_piece[i])
        k2[i] = mass[i] * ((vi if math.isfinite(vi) else 1e300) - vt) / c
    return True, margin(edges, k2, mass, jump, c, kscale, u0, u_end), kscale
