"""The Airy functions Ai, Ai', Bi, Bi' at real or complex arguments, their exponential growth kept apart.

A value is returned as a mantissa and a real log scale, Ai(z) = m exp(g) and Ai'(z) = m' exp(g), so that
arguments far into the growing sectors (|Ai| = exp(1e4) and beyond, a weak field over a long distance) are
represented without overflow.  Dimensionless (z is the Airy variable).

Method, for Ai and Ai' (DLMF chapter 9, section numbers below):

* |z| >= ``R_FAR`` (12) and |ph z| <= 2 pi / 3: the asymptotic expansions 9.7.5 and 9.7.6,
  Ai(z) ~ exp(-zeta) / (2 sqrt(pi) z^(1/4)) sum_k (-1)^k u_k / zeta^k and
  Ai'(z) ~ -z^(1/4) exp(-zeta) / (2 sqrt(pi)) sum_k (-1)^k v_k / zeta^k, zeta = (2/3) z^(3/2), with u_k and v_k
  from 9.7.2 (u_k = u_{k-1} (6k-5)(6k-3)(6k-1) / ((2k-1) 216 k), v_k = -(6k+1)/(6k-1) u_k).  With |zeta| >= 27.7
  the terms fall below 1e-17 of the sum within about 20 terms, long before the smallest one (near
  k = 2 |zeta|), and the exponentially small solution switched on near the Stokes lines is below
  exp(-2 |zeta|) < 1e-24 of the result.
* |z| >= ``R_FAR`` and 2 pi / 3 < |ph z| <= pi: Ai(z) = -w Ai(w z) - w^2 Ai(w^2 z) and
  Ai'(z) = -w^2 Ai'(w z) - w Ai'(w^2 z), w = exp(2 pi i / 3) (9.2.12 and its derivative); both arguments lie in
  the first region.
* |z| < ``R_FAR``: one Taylor step of at most 0.56 (the series of y'' = z y about the centre, as in
  :mod:`fdsolver.numerics.waves`) from the point of a lattice of spacing 0.5 nearest to z on its right
  (Re z_c >= Re z, |Im(z - z_c)| <= 0.25).  A row of the lattice is filled when first needed, once per process
  (about 0.15 ms): from its first point outside the circle, by the expansion, it is marched leftwards point by
  point with the exact Taylor-series march of a linear cell (:mod:`fdsolver.numerics.waves`: y'' = (z + s) y).
  Going that way Ai grows relative to every other solution (its logarithmic derivative is about -sqrt(z), and
  Re sqrt(z) >= 0), so the march is stable and its error stays at the round-off of its steps; the last step,
  leftwards too, and up or down by at most 0.25, amplifies an error by at most exp(0.5 |sqrt(z)|) < 6.

Bi from Ai: Bi(z) = exp(i pi / 6) Ai(w z) + exp(-i pi / 6) Ai(z / w) (9.2.10); for real x the two terms are
complex conjugates, Bi(x) = 2 Re(exp(i pi / 6) Ai(w x)) and Bi'(x) = 2 Re(exp(i pi / 6) w Ai'(w x)).

Accuracy, measured against mpmath at 40 digits (tests/test_airy.py): inside the circle an error below 2e-14
of the value, or of the local envelope near a zero (as any method in double precision); outside it the error
grows like |zeta| (the rounding of zeta in the phase exp(-i Im zeta): the condition number of Ai there), about
1e-13 at |z| = 50, twice SciPy's.  Cost: about 2.5 microseconds per value inside the circle, 0.6 outside it.
"""

from __future__ import annotations

import cmath
import math
import threading

import numpy as np

from fdsolver.numerics.kernels import njit
from fdsolver.numerics.waves import _linear_cell, _series

#: |z| from which the asymptotic expansion is used directly (see the module docstring)
R_FAR = 12.0
#: most terms of the expansion (never reached for |z| >= R_FAR: about 20 are needed)
EXPANSION_TERMS = 60
#: exp(2 pi i / 3)
OMEGA = complex(-0.5, math.sqrt(3.0) / 2.0)
#: exp(i pi / 6)
SIXTH = complex(math.sqrt(3.0) / 2.0, 0.5)


@njit
def _expansion(z):
    """(m, m', g) with Ai(z) = m exp(g), Ai'(z) = m' exp(g) from DLMF 9.7.5-9.7.6; |z| >= R_FAR, |ph z| <= 2 pi / 3."""
    root = cmath.sqrt(z)
    zeta = (2.0 / 3.0) * z * root
    quarter = cmath.sqrt(root)  # z^(1/4), principal
    step = -1.0 / zeta
    power = 1.0 + 0.0j
    u = 1.0
    sum_u = 1.0 + 0.0j
    sum_v = 1.0 + 0.0j
    for k in range(1, EXPANSION_TERMS):
        u = u * ((6.0 * k - 5.0) * (6.0 * k - 3.0) * (6.0 * k - 1.0)) / ((2.0 * k - 1.0) * 216.0 * k)
        v = -(6.0 * k + 1.0) / (6.0 * k - 1.0) * u
        power = power * step
        term_u = u * power
        term_v = v * power
        sum_u += term_u
        sum_v += term_v
        if abs(term_u) <= 1e-17 * abs(sum_u) and abs(term_v) <= 1e-17 * abs(sum_v):
            break
    phase = cmath.exp(complex(0.0, -zeta.imag))
    c = 0.5 / math.sqrt(math.pi)
    return c * phase * sum_u / quarter, -c * phase * quarter * sum_v, -zeta.real


@njit
def _far(z):
    """(m, m', g) with Ai(z) = m exp(g) and Ai'(z) = m' exp(g) for |z| >= R_FAR (module docstring)."""
    if abs(cmath.phase(z)) <= 2.0 * math.pi / 3.0:
        return _expansion(z)
    m1, d1, g1 = _expansion(z * OMEGA)
    m2, d2, g2 = _expansion(z * OMEGA * OMEGA)
    g = max(g1, g2)
    f1 = math.exp(g1 - g)
    f2 = math.exp(g2 - g)
    return -OMEGA * m1 * f1 - OMEGA * OMEGA * m2 * f2, -OMEGA * OMEGA * d1 * f1 - OMEGA * d2 * f2, g


#: the lattice spacing h of the table of Ai inside the circle (a Taylor step from it is at most 0.56 long)
TABLE_SPACING = 0.5
#: the lattice is (k - K) h + i (j - K) h for k, j = 0 .. 2K
TABLE_HALF = math.ceil(R_FAR / TABLE_SPACING) + 1


@njit
def airy_rows(rows, m, d, g, ready):
    """Fill the rows ``rows`` of the table (m, m', g) of Ai on the lattice (k - K) h + i (j - K) h (h =
    TABLE_SPACING, K = TABLE_HALF; Ai = m exp(g)) in place, and mark them in ``ready``.  Every point right of the
    circle |z| = R_FAR (and every point of a row outside it) from :func:`_far`; the rest of the row marched
    leftwards from the first of those, one lattice step at a time (the stable direction; module docstring).
    """
    h = TABLE_SPACING
    half = TABLE_HALF
    size = m.shape[1]
    for j in rows:
        y = (j - half) * h
        right = 0 if abs(y) >= R_FAR else min(half + math.ceil(math.sqrt(R_FAR * R_FAR - y * y) / h), size - 1)
        for k in range(right, size):
            m[j, k], d[j, k], g[j, k] = _far(complex((k - half) * h, y))
        mm, dd, gg = m[j, right], d[j, right], g[j, right]
        for k in range(right - 1, -1, -1):
            # y'' = (z + s) y on s in [0, h], z this lattice point: the linear cell v0 = 0, slope 1, mass 1, C 1
            # at energy -z, carried from its neighbour on the right (s = h) back to s = 0
            mm, dd, lg = _linear_cell(0.0, 1.0, h, 1.0, 1.0, -complex((k - half) * h, y), mm, dd, -1,
                                      math.sqrt(R_FAR))
            gg += lg
            m[j, k], d[j, k], g[j, k] = mm, dd, gg
        ready[j] = True


@njit
def _near(z, m, d, g, ready):
    """(m, m', g) of Ai at |z| < R_FAR: one Taylor step from the lattice point right of z (module docstring)."""
    h = TABLE_SPACING
    half = TABLE_HALF
    k = math.ceil(z.real / h) + half  # x_k >= Re z
    j = round(z.imag / h) + half
    if not ready[j]:  # the caller fills every row it needs first (_ai); this covers a row it missed
        airy_rows(np.array([j]), m, d, g, ready)
    step = z - complex((k - half) * h, (j - half) * h)
    m0, d0, g0 = m[j, k], d[j, k], g[j, k]
    if step == 0.0:
        return m0, d0, g0
    # y(tau) = Ai(z_c + step tau): y'' = (step^2 z_c + step^3 tau) y, from (Ai, step Ai') at tau = 0 to tau = 1
    y1, dy1, y2, dy2 = _series(step * step * (z - step), step * step * step, 1.0)
    return m0 * y1 + step * d0 * y2, m0 * dy1 / step + d0 * dy2, g0


@njit
def airy_ai(z, m, d, g, ready):
    """Ai and Ai' at every complex z (a 1-D array), inside the circle from the table (m, d, g, ready) of
    :func:`airy_rows`: arrays (m, m', g) with Ai = m exp(g), Ai' = m' exp(g); NaN where z is not finite."""
    n = z.shape[0]
    out_m = np.empty(n, np.complex128)
    out_d = np.empty(n, np.complex128)
    out_g = np.empty(n)
    for i in range(n):
        if not (math.isfinite(z[i].real) and math.isfinite(z[i].imag)):
            out_m[i], out_d[i], out_g[i] = complex(math.nan, math.nan), complex(math.nan, math.nan), math.nan
        elif abs(z[i]) >= R_FAR:
            out_m[i], out_d[i], out_g[i] = _far(z[i])
        else:
            out_m[i], out_d[i], out_g[i] = _near(z[i], m, d, g, ready)
    return out_m, out_d, out_g


#: the table of Ai inside the circle: (m, m', g, ready), its rows filled when first needed
_TABLE = []
_TABLE_LOCK = threading.Lock()


def _ai(z):
    """:func:`airy_ai` of a 1-D complex array, with the rows of the table it needs filled first (each row about
    0.1-0.2 ms, once per process; under a lock, so that threads never fill the same row at once)."""
    if not _TABLE:
        size = 2 * TABLE_HALF + 1
        _TABLE.append((np.zeros((size, size), np.complex128), np.zeros((size, size), np.complex128),
                       np.zeros((size, size)), np.zeros(size, np.bool_)))
    m, d, g, ready = _TABLE[0]
    inside = np.isfinite(z) & (np.abs(z) < R_FAR)
    if inside.any():
        rows = np.round(z.imag[inside] / TABLE_SPACING).astype(np.int64) + TABLE_HALF
        needed = np.flatnonzero((np.bincount(rows, minlength=ready.size) > 0) & ~ready)
        if needed.size:
            with _TABLE_LOCK:
                airy_rows(needed[~ready[needed]], m, d, g, ready)
    return airy_ai(z, m, d, g, ready)


def ai_scaled(z):
    """(Ai, Ai', log) at z (real or complex, any shape): Ai(z) = Ai exp(log), Ai'(z) = Ai' exp(log), the log real
    and the mantissas complex.  Dimensionless; see the module docstring."""
    z = np.asarray(z)
    m, d, g = _ai(np.ascontiguousarray(z, dtype=np.complex128).ravel())
    return np.reshape(m, z.shape), np.reshape(d, z.shape), np.reshape(g, z.shape)


def airy(z):
    """(Ai, Ai', log_a, Bi, Bi', log_b) at z (real or complex, any shape): Ai(z) = Ai exp(log_a), Ai'(z) = Ai'
    exp(log_a), the same for Bi with log_b; the logs are real.  Real z give real values; complex z complex
    mantissas (the phase of the growth is in them).  Dimensionless; see the module docstring.
    """
    z = np.asarray(z)
    real = not np.iscomplexobj(z)
    flat = np.ascontiguousarray(z, dtype=np.complex128).ravel()
    ai, aip, log_a = _ai(flat)
    up_m, up_d, up_g = _ai(flat * OMEGA)
    if real:  # the two terms of DLMF 9.2.10 are complex conjugates
        bi = 2.0 * np.real(SIXTH * up_m)
        bip = 2.0 * np.real(SIXTH * OMEGA * up_d)
        log_b = up_g
        ai, aip = np.real(ai), np.real(aip)
    else:
        dn_m, dn_d, dn_g = _ai(flat / OMEGA)
        log_b = np.maximum(up_g, dn_g)
        f_up, f_dn = np.exp(up_g - log_b), np.exp(dn_g - log_b)
        bi = SIXTH * up_m * f_up + np.conj(SIXTH) * dn_m * f_dn
        bip = SIXTH * OMEGA * up_d * f_up + np.conj(SIXTH) * np.conj(OMEGA) * dn_d * f_dn
    shape = z.shape
    return tuple(np.reshape(v, shape) for v in (ai, aip, log_a, bi, bip, log_b))
