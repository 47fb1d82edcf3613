"""One period as a 2x2 transfer matrix: the periodic client of the march's cell solutions.

The cells are those of :mod:`fdsolver.numerics.march` (and :mod:`fdsolver.numerics.cells`):
cell i spans [edges[i], edges[i+1]] with constant potential v[i] and mass
mass[i] (m_e); ``jump[j]`` is the strength alpha of a point term
-alpha delta(x - edges[j]).  The march carries one solution (psi, u),
u = (C / m) psi' the flux (C = hbar^2 / 2 m_e); here both fundamental
solutions are carried at once, as the matrix that maps (psi, u) at
edges[0] to (psi, u) at edges[-1] (the monodromy matrix M of the period).

Per cell of length l, with w = k2 l^2 = m (v - E) l^2 / C (dimensionless),

    A = [[c(w),                (m l / C) s(w)],
         [(C / (m l)) w s(w),  c(w)         ]],
    c(w) = cosh sqrt(w),  s(w) = sinh sqrt(w) / sqrt(w)

(cos / sin of sqrt(-w) for w < 0, power series for |w| < 1e-2), det A = 1:
the exact solution of the cell, as in the march.  A point term is
J = [[1, 0], [-alpha, 1]].  M = J_n A_n ... J_1 A_1 J_0 (J_j at edge j).
The Hill discriminant is D(E) = Tr M / 2; Bloch solutions with
psi(x + L) = exp(i q L) psi(x) exist where D(E) = cos(q L).

dD/dE is exact too, by the product rule, with dw/dE = -m l^2 / C and

    dc/dw = s / 2,   ds/dw = (c - s) / (2 w),   d(w s)/dw = (c + s) / 2.

Overflow: in cells with w > 1 the factor exp(sqrt w) is divided out, and the
running product is renormalised every cell (balanced norm
|M11| + |M12| K + |M21| / K + |M22|, K = ``kscale`` in energy / length); the
dropped factors are kept as a natural log.  D and dD/dE are returned with
that factor restored (capped at exp(700): such an energy lies deep in a gap).

Round-off: the returned error of D is 4 eps sqrt(2 + sum_i (1 + t_i)^2) times
the largest norm the running product reached (likewise for dD/dE), with
t_i = sqrt|w_i| the phase (or decay exponent) of cell i.  The computed
product is the exact product of cell matrices with relative perturbations of
about eps (1 + t_i) (the rounding of each entry and of its phase); each
perturbation reaches the end multiplied by the norms of the partial products
on either side, about the largest norm of the running product (which grows
like exp(kappa b) across a barrier of thickness b while D stays of order one
inside a band).  The perturbations are independent, so they add in
quadrature (the worst case, their plain sum, is far too pessimistic for
thousands of cells); the factor 4 covers the few roundings per entry.

Edge functions: D - lambda (lambda = +-1, the band edges are its roots) is also
-det(M - lambda I) / (2 lambda), since det M = 1.  Computed from the entries of
N = M - lambda I its round-off is about eps |N| |M| instead of eps |M|: where a gap
is almost closed M is close to lambda I, |N| is of the order of the gap, and the
determinant form keeps the edges of the narrow gap to full precision, whereas
D - lambda from the trace would have a double root there, conditioned like
sqrt(eps).  Across thick barriers |N| ~ |M| is large and the trace form is the
better one; ``evaluate`` returns whichever has the smaller error estimate.

Accuracy: exact for the piecewise-constant potential the cells describe
(round-off only).  For midpoint cells of a smooth potential (the march's
second-order Magnus cells) D has an O(h^2) error with an even expansion, so
quantities computed on nested cell levels can be Richardson-extrapolated.

Units: edges in the case length unit, v and energies in its energy unit, c = C
in energy * length^2, jump in energy * length; D dimensionless, dD/dE in
1 / energy.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.numerics.kernels import njit
from fdsolver.numerics.march import march
from fdsolver.numerics.precision import EPS

#: largest log factor restored in D and dD/dE (exp(700) ~ 1e304)
LOG_CAP = 700.0
#: columns of the array returned by :func:`evaluate`
COLUMNS = ("D", "dD_dE", "D_error", "dD_dE_error", "dirichlet_count", "D_minus_1", "D_plus_1",
           "D_minus_1_error", "D_plus_1_error")


@njit
def _cs(w):
    """(c, s, ds/dw, r, t) of w: c, s, ds/dw divided by exp(r), r = sqrt(w) for w > 1 (overflow guard) else 0,
    and t = sqrt(|w|), the cell's phase or decay exponent (its relative round-off is about eps * t)."""
    if w > 1.0:
        r = math.sqrt(w)
        e = math.exp(-2.0 * r)
        c = 0.5 * (1.0 + e)
        s = -0.5 * math.expm1(-2.0 * r) / r
        return c, s, (c - s) / (2.0 * w), r, r
    if abs(w) < 1e-2:
        c = 1.0 + w * (1.0 / 2 + w * (1.0 / 24 + w * (1.0 / 720 + w * (1.0 / 40320 + w / 3628800.0))))
        s = 1.0 + w * (1.0 / 6 + w * (1.0 / 120 + w * (1.0 / 5040 + w * (1.0 / 362880 + w / 39916800.0))))
        sp = 1.0 / 6 + w * (1.0 / 60 + w * (1.0 / 1680 + w * (1.0 / 90720 + w / 7983360.0)))
        return c, s, sp, 0.0, math.sqrt(abs(w))
    if w > 0.0:
        t = math.sqrt(w)
        c = math.cosh(t)
        s = math.sinh(t) / t
    else:
        t = math.sqrt(-w)
        c = math.cos(t)
        s = math.sin(t) / t
    return c, s, (c - s) / (2.0 * w), 0.0, t


def cell_constants(edges, mass, c: float):
    """Per-cell (length l, m l / C, m l^2 / C) of cells with ``edges`` and ``mass``: the inputs of :func:`evaluate`."""
    length = np.diff(np.asarray(edges, dtype=float))
    ml = np.asarray(mass, dtype=float) * length / c
    return np.ascontiguousarray(length), np.ascontiguousarray(ml), np.ascontiguousarray(ml * length)


@njit
def _product(length, ml, wl, v, jump, kscale, energy, out):
    """Monodromy M and dM/dE of one period at ``energy`` (cells given by :func:`cell_constants` and ``v``).

    ``out`` receives [M11, M12, M21, M22, dM11, dM12, dM21, dM22, log_scale,
    log of the largest norm of the product, log of the largest norm of its
    derivative, sum over cells of (1 + sqrt|w|)^2]; the true matrices are exp(log_scale)
    times the stored ones.  The product is renormalised only when its norm
    leaves [1e-100, 1e100].
    With w = wl (v - E):  A12 = ml s,  A21 = (v - E) l s,  dA11/dE = -wl s / 2,
    dA12/dE = -ml wl ds/dw,  dA21/dE = -l (c + s) / 2.
    """
    n = v.shape[0]
    p11, p12, p21, p22 = 1.0, 0.0, 0.0, 1.0
    q11, q12, q21, q22 = 0.0, 0.0, 0.0, 0.0
    logs = 0.0
    big = 1.0
    dbig = 0.0
    phase = 0.0
    for i in range(n):
        a = jump[i]
        if a != 0.0:
            p21 -= a * p11
            p22 -= a * p12
            q21 -= a * q11
            q22 -= a * q12
        dv = v[i] - energy
        w = wl[i] * dv
        cw, sw, spw, r, t = _cs(w)
        phase += (1.0 + t) * (1.0 + t)
        a11 = cw
        a12 = ml[i] * sw
        a21 = dv * length[i] * sw
        d11 = -0.5 * sw * wl[i]
        d12 = -ml[i] * wl[i] * spw
        d21 = -0.5 * (cw + sw) * length[i]
        n11 = a11 * p11 + a12 * p21
        n12 = a11 * p12 + a12 * p22
        n21 = a21 * p11 + a11 * p21
        n22 = a21 * p12 + a11 * p22
        q11, q12, q21, q22 = (d11 * p11 + d12 * p21 + a11 * q11 + a12 * q21,
                              d11 * p12 + d12 * p22 + a11 * q12 + a12 * q22,
                              d21 * p11 + d11 * p21 + a21 * q11 + a11 * q21,
                              d21 * p12 + d11 * p22 + a21 * q12 + a11 * q22)
        p11, p12, p21, p22 = n11, n12, n21, n22
        if r > 0.0:  # the cell's dropped factor exp(r): rescale the running maxima to the new scale
            logs += r
            er = math.exp(-r)
            big *= er
            dbig *= er
        nrm = abs(p11) + abs(p12) * kscale + abs(p21) / kscale + abs(p22)
        dn = abs(q11) + abs(q12) * kscale + abs(q21) / kscale + abs(q22)
        big = max(big, nrm)
        dbig = max(dbig, dn)
        if (nrm > 1e100 or nrm < 1e-100) and nrm > 0.0 and math.isfinite(nrm):
            p11, p12, p21, p22 = p11 / nrm, p12 / nrm, p21 / nrm, p22 / nrm
            q11, q12, q21, q22 = q11 / nrm, q12 / nrm, q21 / nrm, q22 / nrm
            logs += math.log(nrm)
            big /= nrm
            dbig /= nrm
    a = jump[n]
    if a != 0.0:
        p21 -= a * p11
        p22 -= a * p12
        q21 -= a * q11
        q22 -= a * q12
    out[0], out[1], out[2], out[3] = p11, p12, p21, p22
    out[4], out[5], out[6], out[7] = q11, q12, q21, q22
    out[8] = logs
    out[9] = logs + math.log(big) if big > 0.0 else -math.inf
    out[10] = logs + math.log(dbig) if dbig > 0.0 else -math.inf
    out[11] = phase


@njit
def _edge_form(lam, p11, p12, p21, p22, f, d, err_d, kscale, grow_big):
    """(D - lam, its error) from -det(M - lam I) / (2 lam) or from the trace, whichever is more accurate."""
    if f > 1e150:
        return d - lam, err_d
    n11, n12, n21, n22 = p11 * f - lam, p12 * f, p21 * f, p22 * f - lam
    nrm = abs(n11) + abs(n12) * kscale + abs(n21) / kscale + abs(n22)
    err_det = grow_big * nrm
    if err_det < err_d:
        return -(n11 * n22 - n12 * n21) / (2.0 * lam), err_det
    return d - lam, err_d


@njit
def evaluate(length, ml, wl, v, jump, redges, rv, rmass, rjump, c, kscale, energies, count, out):
    """The rows :data:`COLUMNS` at every energy: D, dD/dE, their round-off, the Dirichlet count, D -+ 1.

    The Dirichlet count is the number of zeros in the open period of the
    solution with psi = 0, u = 1 at its start, carried by the one march over
    the *rotated* cells (``redges``..., the same period started at another
    point): by the oscillation theorem it is the number of eigenvalues below E
    of the period with psi = 0 at both ends of the rotated period.  Without
    ``count`` that column is -1.  D - 1 and D + 1 (and their errors) are the
    edge functions of the module docstring.
    """
    nr = rv.shape[0]
    buf = np.empty(12)
    k2 = np.empty(nr)
    none = np.zeros(0)
    for ie in range(energies.shape[0]):
        e = energies[ie]
        _product(length, ml, wl, v, jump, kscale, e, buf)
        f = math.exp(min(buf[8], LOG_CAP))
        d = 0.5 * (buf[0] + buf[3]) * f
        out[ie, 0] = d
        out[ie, 1] = 0.5 * (buf[4] + buf[7]) * f
        grow = 4.0 * EPS * math.sqrt(2.0 + buf[11])
        grow_big = grow * math.exp(min(buf[9], LOG_CAP))
        out[ie, 2] = grow_big
        out[ie, 3] = grow * math.exp(min(buf[10], LOG_CAP))
        out[ie, 5], out[ie, 7] = _edge_form(1.0, buf[0], buf[1], buf[2], buf[3], f, d, grow_big, kscale, grow_big)
        out[ie, 6], out[ie, 8] = _edge_form(-1.0, buf[0], buf[1], buf[2], buf[3], f, d, grow_big, kscale, grow_big)
        if count:
            for i in range(nr):
                k2[i] = rmass[i] * (rv[i] - e) / c
            nodes, _, _, _ = march(redges, k2, rmass, rjump, c, kscale, 0.0, 1.0, none, none)
            out[ie, 4] = nodes
        else:
            out[ie, 4] = -1.0


def monodromy(edges, v, mass, jump, c: float, kscale: float, energy: float):
    """(M, dM/dE, log_scale) at one energy: 2x2 arrays, the true matrices being exp(log_scale) times these."""
    buf = np.empty(12)
    length, ml, wl = cell_constants(edges, mass, c)
    _product(length, ml, wl, np.ascontiguousarray(v, dtype=float), np.ascontiguousarray(jump, dtype=float),
             float(kscale), float(energy), buf)
    return buf[0:4].reshape(2, 2).copy(), buf[4:8].reshape(2, 2).copy(), float(buf[8])


@njit
def fundamentals(edges, v, mass, jump, c, kscale, energy, xs, out, logs):
    """The two fundamental solutions (psi, u) = (1, 0) and (0, 1) at edges[0], sampled at sorted ``xs``.

    ``out[k]`` = [psi_1, u_1, psi_2, u_2] at xs[k] (right limits at point
    terms), each exp(logs[k]) times the stored value.  Exact per cell as in
    :func:`_product`.
    """
    n = v.shape[0]
    p11, p12, p21, p22 = 1.0, 0.0, 0.0, 1.0
    ls = 0.0
    k = 0
    nx = xs.shape[0]
    for i in range(n):
        a = jump[i]
        if a != 0.0:
            p21 -= a * p11
            p22 -= a * p12
        x0 = edges[i]
        x1 = edges[i + 1]
        while k < nx and (xs[k] < x1 or (i == n - 1 and xs[k] <= x1)):
            t = xs[k] - x0
            if t <= 0.0:
                out[k, 0], out[k, 1], out[k, 2], out[k, 3] = p11, p21, p12, p22
                logs[k] = ls
            else:
                ml = mass[i] * t / c
                w = mass[i] * (v[i] - energy) * t * t / c
                cw, sw, _, r, _ = _cs(w)
                out[k, 0] = cw * p11 + ml * sw * p21
                out[k, 1] = (w * sw / ml) * p11 + cw * p21
                out[k, 2] = cw * p12 + ml * sw * p22
                out[k, 3] = (w * sw / ml) * p12 + cw * p22
                logs[k] = ls + r
            k += 1
        length = x1 - x0
        ml = mass[i] * length / c
        w = mass[i] * (v[i] - energy) * length * length / c
        cw, sw, _, r, _ = _cs(w)
        a12 = ml * sw
        a21 = w * sw / ml
        n11 = cw * p11 + a12 * p21
        n12 = cw * p12 + a12 * p22
        n21 = a21 * p11 + cw * p21
        n22 = a21 * p12 + cw * p22
        nrm = abs(n11) + abs(n12) * kscale + abs(n21) / kscale + abs(n22)
        if nrm == 0.0 or not math.isfinite(nrm):
            nrm = 1.0
        p11, p12, p21, p22 = n11 / nrm, n12 / nrm, n21 / nrm, n22 / nrm
        ls += r + math.log(nrm)
