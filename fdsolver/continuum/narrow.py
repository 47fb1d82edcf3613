"""Narrow poles from real energies only: widths with full relative accuracy, down to any size.

A pole E_r - i Gamma/2 with Gamma far below the spacing of the levels is
ill-conditioned in the complex plane: every evaluation of the Jost function
rounds V - E, i.e. moves E by about eps |E|, so a complex Newton search finds
Gamma only to about eps |E| absolute.  Here the pole is instead built from
quantities computed at *real* energies, where rounding is a real perturbation
of the problem that can shift E_r by eps |E| but cannot create an imaginary
part.

At real E each channel's outgoing condition is split into two real states,
c + i s (s = 0 if closed; :meth:`Channel.real_pair`), with their exact
Wronskian W_cs.  Both are marched (real, dominant direction) to a matching
edge x_m inside the region where the resonance lives (where the solutions
from both sides have grown most).  There, in the scaled plane (psi, u/K),
let "lead" be the larger of the two (c, or s with c -> -s) and
g = lead / |lead| (real, unit), d = g turned by 90 degrees.  Then exactly

    c + i s  ~  g + eps d,   eps = i W_cs / (K (|lead|^2 + i lead.other)),

because the component of the other state across g is fixed by the conserved
Wronskian: it is never taken from the (cancelling) march.  eps ~ exp(-2
kappa L) carries the tunnelling; it is computed to relative round-off in
log form however small.  The pole condition W(psi_L, psi_R) = 0 becomes

    F(E) = det[g_L, g_R] + eps_R det[g_L, d_R] + eps_L det[d_L, g_R]
           + eps_L eps_R det[d_L, d_R] = 0,

F analytic, real part O(1) with a simple zero near E_r, the rest tiny.  F is
sampled at five real energies x0 + j h (j = -2..2), the degree-4 polynomial
through them is solved for its complex root delta near 0 (Newton), and the
pole is x0 + delta; x0 is moved to Re(pole) and the step repeated.  Errors:
interpolation O((h / D)^5) with D the distance to the nearest other pole or
threshold (h = 1e-3 D), round-off eps D in E_r and eps (Gamma / h) D in
Gamma; the estimate is the change between h and h/2.  When eps underflows
(Gamma < 1e-280 of the energy scale) the first-order form
Gamma = 2 Im F(x0) / F'(x0) is evaluated in logarithms and returned as
``log10_width``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.numerics.waves import carry_waves, record_waves

LOG_TINY = -600.0


@dataclass(frozen=True)
class NarrowPole:
    """E_r, Gamma (full width) and errors, in the case energy unit; log10_width = log10(Gamma)."""

    energy: float
    width: float
    energy_error: float
    width_error: float
    log10_width: float
    match_edge: int
    ok: bool


def _march(profile, state, i_from, i_to, e, jump_start, jump_end, heading):
    psi, u, lg = carry_waves(profile.cells, np.array([e]), i_from, i_to, np.array([state[0]]), np.array([state[1]]),
                             jump_start=jump_start, jump_end=jump_end, heading=heading)
    return float(psi[0].real), float(u[0].real), float(lg[0]) + state[2]


def match_edge(profile, energy: float) -> int:
    """The interior edge where the dominant solutions from both sides have grown most (the resonance's home)."""
    n = profile.n_edges
    if n <= 2:
        return 0
    cl = profile.left.real_pair(energy)[0]
    cr = profile.right.real_pair(energy)[0]
    _, _, _, rec_l = record_waves(profile.cells, energy, 0, n - 1, cl[0], cl[1], 1)
    _, _, _, rec_r = record_waves(profile.cells, energy, n - 1, 0, cr[0], cr[1], -1)
    grow = np.minimum(rec_l - rec_l[0], rec_r - rec_r[-1])
    grow[0] = grow[-1] = -np.inf
    return int(np.argmax(grow))


def _side(profile, e: float, side: int, i_m: int, pivot):
    """(g, eps_mantissa, eps_log, pivot) of one side at the matching edge (scaled coordinates)."""
    ch = profile.left if side < 0 else profile.right
    c_state, s_state, w_cs = ch.real_pair(e)
    i_from = 0 if side < 0 else profile.n_edges - 1
    K = profile.cells.kscale
    pc, uc, lc = _march(profile, c_state, i_from, i_m, e, True, side > 0, -side)
    vc = np.array([pc, uc / K])
    if s_state is None:
        return vc / np.linalg.norm(vc), 0.0 + 0.0j, LOG_TINY * 4, 0
    ps, us, ls = _march(profile, s_state, i_from, i_m, e, True, side > 0, -side)
    vs = np.array([ps, us / K])
    if pivot is None:
        pivot = 0 if math.log(np.linalg.norm(vc)) + lc >= math.log(np.linalg.norm(vs)) + ls else 1
    if pivot == 0:
        lead, ll, other, lo = vc, lc, vs, ls
    else:
        lead, ll, other, lo = vs, ls, -vc, lc
    nl2 = float(lead @ lead)
    den = K * (nl2 + 1j * math.exp(min(lo - ll, 700.0)) * float(lead @ other))
    mant = 1j * w_cs / den
    return lead / math.sqrt(nl2), mant, -2.0 * ll, pivot


def _turn(g):
    return np.array([-g[1], g[0]])


def _det(p, q):
    return p[0] * q[1] - p[1] * q[0]


def _f_parts(profile, e, i_m, pivots):
    gl, ml, ll, pl = _side(profile, e, -1, i_m, pivots[0])
    gr, mr, lr, pr = _side(profile, e, 1, i_m, pivots[1])
    return (_det(gl, gr), _det(gl, _turn(gr)), _det(_turn(gl), gr), _det(_turn(gl), _turn(gr)),
            ml, ll, mr, lr, (pl, pr))


def _f_value(parts):
    """F at one energy (module docstring)."""
    w0, wgd, wdg, wdd, ml, ll, mr, lr, _ = parts
    el = ml * math.exp(ll) if ll > -745 else 0.0
    er = mr * math.exp(lr) if lr > -745 else 0.0
    return w0 + er * wgd + el * wdg + el * er * wdd


def _f_imag_scaled(parts, shift: float) -> float:
    """Im F exp(-shift): the imaginary part comes from the eps terms only (w0 is real)."""
    w0, wgd, wdg, wdd, ml, ll, mr, lr, _ = parts
    total = 0.0
    for mant, lg, w in ((mr, lr, wgd), (ml, ll, wdg), (ml * mr, ll + lr, wdd)):
        if lg - shift > -745:
            total += float(np.imag(mant * w)) * math.exp(lg - shift)
    return total


def _root(x, fx):
    """Complex root near 0 of the polynomial through (x_j, f_j) (x real, centred)."""
    coef = np.polyfit(x, fx, len(x) - 1)
    d = np.polyder(coef)
    z = -np.polyval(coef, 0.0) / np.polyval(d, 0.0)
    for _ in range(50):
        step = -np.polyval(coef, z) / np.polyval(d, z)
        z = z + step
        if abs(step) <= 1e-16 * (abs(z) + abs(x[-1])):
            break
    return complex(z)


def _pole_once(profile, x0: float, h: float, i_m: int):
    pivots = _f_parts(profile, x0, i_m, (None, None))[-1]
    js = np.arange(-2, 3)
    parts = [_f_parts(profile, x0 + j * h, i_m, pivots) for j in js]
    vals = np.array([_f_value(p) for p in parts])
    delta = _root(js * h, vals)
    # the tunnelling scale of this pole, for the log form when eps underflows
    lmax = max(parts[2][5], parts[2][7])
    return delta, pivots, lmax


def narrow_pole(profile, x0: float, scale: float) -> NarrowPole:
    """The pole near the real energy ``x0``; ``scale`` is the distance to the nearest other pole or threshold.

    ``ok`` is False when the construction does not apply (eps not small, or
    an overflow): the caller keeps its complex-plane pole then.
    """
    try:
        with np.errstate(over="raise", invalid="raise", divide="raise", under="ignore"):
            return _narrow_pole(profile, x0, scale)
    except (OverflowError, FloatingPointError, ZeroDivisionError, np.linalg.LinAlgError):
        return NarrowPole(x0, math.nan, math.inf, math.inf, math.nan, 0, False)


def _narrow_pole(profile, x0: float, scale: float) -> NarrowPole:
    i_m = match_edge(profile, x0)
    results = []
    for h in (1e-3 * scale, 5e-4 * scale):
        x = x0
        delta = 0j
        pivots = (None, None)
        lmax = 0.0
        for _ in range(4):
            delta, pivots, lmax = _pole_once(profile, x, h, i_m)
            if not np.isfinite(delta):
                return NarrowPole(x0, math.nan, math.inf, math.inf, math.nan, i_m, False)
            x_new = x + delta.real
            moved = abs(delta.real)
            x = x_new
            if moved < 1e-2 * h:
                delta = delta - delta.real
                break
        width = -2.0 * delta.imag
        log10w = math.log10(width) if width > 0 else -math.inf
        if lmax < LOG_TINY or width <= 0:
            # first-order width in logs: Gamma = 2 Im F(x) / F'(x) with the eps terms scaled by exp(-lmax)
            js = np.arange(-2, 3)
            vals = np.array([_f_value(p) for p in [_f_parts(profile, x + j * h, i_m, pivots) for j in js]])
            slope = float(np.real(np.polyder(np.polyfit(js * h, vals, 4))[-1]))
            im_scaled = _f_imag_scaled(_f_parts(profile, x, i_m, pivots), lmax)
            if slope != 0 and im_scaled != 0:
                log10w = (math.log(2.0 * abs(im_scaled / slope)) + lmax) / math.log(10.0)
                width = 10.0**log10w if log10w > -300 else 0.0
        results.append((x, width, log10w))
    (x1, w1, l1), (x2, w2, l2) = results
    e_err = abs(x1 - x2) + 8.0 * 2.2e-16 * abs(x1)
    # the change between the two steps, taken four times over, and a round-off floor of 32 eps
    w_err = 4.0 * (abs(w1 - w2) if math.isfinite(l1) and l1 > -280 else abs(l1 - l2) * math.log(10.0) * w1)
    ok = math.isfinite(x1) and (w1 >= 0)
    return NarrowPole(x2, w2, 4.0 * e_err, w_err + 32.0 * 2.2e-16 * w2, l2, i_m, ok)
