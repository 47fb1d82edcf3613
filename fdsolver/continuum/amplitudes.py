"""Transmission and reflection amplitudes of one profile at given energies (one level, no error estimate).

For a wave incident from the left, the solution that is purely outgoing on
the right (the right channel's outgoing state, amplitude 1 at x_N) is marched
right to left across the cells (:func:`fdsolver.numerics.waves.sweep_many`)
and split at x_0 into the left channel's incoming and outgoing states,

    psi = A psi_in + B psi_out,   A = W(psi, psi_out) / W(psi_in, psi_out),
                                  B = W(psi_in, psi) / W(psi_in, psi_out),

with W(p, q) = psi_p u_q - u_p psi_q.  Then t = 1 / A and r = B / A (with the
log scales put back), and with the channel fluxes j (C k / m for plane waves,
BenDaniel-Duke: u = (C / m) psi' is continuous)

    T = j_out,R |t|^2 / j_in,L,     R = j_out,L |r|^2 / j_in,L.

Marching from the transmitted side means that across a barrier the solution
grows in the direction of the march: it is the dominant solution, computed to
relative round-off however thick the barrier (T = 1e-600 is returned as such,
and as 0.0 only when it underflows the double range; ``log_transmission``
keeps it).  Incidence from the right is the mirror procedure.  Where the
transmitted channel is closed T = 0 and R = 1; where the incident channel is
closed there is no incident wave and T = R = 0 (``open`` is False).
Energies in the case energy unit, T and R dimensionless.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fdsolver.numerics.waves import carry_waves


@dataclass(frozen=True, eq=False)
class Amplitudes:
    """t, r (complex), T, R, log T (natural log), and where the incident channel is open, at real energies."""

    energy: np.ndarray
    t: np.ndarray
    r: np.ndarray
    transmission: np.ndarray
    reflection: np.ndarray
    log_transmission: np.ndarray
    open: np.ndarray


def _wr(pp, pu, qp, qu):
    return pp * qu - pu * qp


def amplitudes(profile, energies, incident: str = "left") -> Amplitudes:
    """Amplitudes of ``profile`` at the real ``energies`` for a wave incident from ``incident`` ("left" or "right")."""
    e = np.atleast_1d(np.asarray(energies, dtype=float))
    if incident not in ("left", "right"):
        raise ValueError("incident must be 'left' or 'right'")
    src, dst = (profile.left, profile.right) if incident == "left" else (profile.right, profile.left)
    n_last = profile.n_edges - 1
    i_from, i_to = (n_last, 0) if incident == "left" else (0, n_last)
    open_in = np.asarray(src.is_open(e), dtype=bool) & np.ones(e.shape, dtype=bool)
    open_out = np.asarray(dst.is_open(e), dtype=bool) & np.ones(e.shape, dtype=bool)
    t = np.zeros(e.shape, dtype=complex)
    r = np.zeros(e.shape, dtype=complex)
    T = np.zeros(e.shape)
    R = np.zeros(e.shape)
    logT = np.full(e.shape, -np.inf)
    if np.any(open_in):
        eo = e[open_in]
        p0, u0, l0 = dst.outgoing(eo)
        psi, u, lg = carry_waves(profile.cells, eo, i_from, i_to, p0, u0, heading=-1 if incident == "left" else 1)
        lg = lg + l0
        pi_, ui_, li_ = src.incoming(eo)
        po_, uo_, lo_ = src.outgoing(eo)
        w_io = _wr(pi_, ui_, po_, uo_)
        a = _wr(psi, u, po_, uo_) / w_io  # times exp(lg - li_)
        b = _wr(pi_, ui_, psi, u) / w_io  # times exp(lg - lo_)
        with np.errstate(over="ignore", under="ignore", divide="ignore"):
            tt = np.exp(li_ - lg) / a
            rr = (b / a) * np.exp(li_ - lo_)
        j_in = src.flux(eo)
        j_out = dst.flux(eo)
        j_ref = src.flux(eo)
        with np.errstate(divide="ignore", invalid="ignore"):
            lt = np.where(open_out[open_in], np.log(j_out) - np.log(j_in) - 2.0 * (np.log(np.abs(a)) + lg - li_), -np.inf)
        t[open_in] = np.where(open_out[open_in], tt, 0.0)
        r[open_in] = rr
        logT[open_in] = lt
        T[open_in] = np.exp(lt)
        R[open_in] = np.abs(rr) ** 2 * j_ref / j_in
    return Amplitudes(e, t, r, T, R, logT, open_in)
