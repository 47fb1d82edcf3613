"""The Jost function of a profile: zero exactly at bound states and at S-matrix poles (resonances).

J(E) = W(psi_L, psi_R) = psi_L u_R - u_L psi_R, the Wronskian of the two
solutions that leave the structure on each side (outgoing waves in open
channels, decaying ones in closed channels; :meth:`Channel.outgoing`).  It is
evaluated at one outer edge: psi_R is marched across all cells from the right
edge to the left one (``at="left"``), or the mirror (``at="right"``).  Both
are the same analytic function of complex E up to a constant factor; the two
evaluations differ only by round-off, which is how the pole finder measures
its noise.  J is returned in log form (m, l), J = m exp(l), for
:mod:`fdsolver.numerics.complexroots`.

J is analytic in E except on the channel cuts (straight down from each
plane-wave threshold); above the real axis (the physical sheet) it has no
zeros, on the real axis below every threshold its zeros are the bound states,
and below the real axis they are the resonances E_r - i Gamma / 2.
"""

from __future__ import annotations

import numpy as np

from fdsolver.numerics.waves import carry_waves


def jost(profile, at: str = "left"):
    """J(E) of ``profile`` as a vectorised function ``f(E) -> (m, l)`` (complex E, case energy unit)."""
    n_last = profile.n_edges - 1
    if at == "left":
        far, near, i_from, i_to = profile.right, profile.left, n_last, 0
    else:
        far, near, i_from, i_to = profile.left, profile.right, 0, n_last

    def f(energy):
        e = np.atleast_1d(np.asarray(energy, dtype=complex))
        p0, u0, l0 = far.outgoing(e)
        psi, u, lg = carry_waves(profile.cells, e, i_from, i_to, p0, u0, heading=-1 if at == "left" else 1)
        pn, un, ln = near.outgoing(e)
        w = pn * u - un * psi
        return (w if at == "left" else -w), lg + l0 + ln

    f.rate = lambda energy: log_rate(profile, energy)
    return f


def log_rate(profile, energy) -> np.ndarray:
    """A bound on |d ln J / dE| (1/energy) at complex energies, for sampling J without losing turns of its phase.

    Each cell contributes L m / (2 C max(|kappa|, 1/L)) (the derivative of
    kappa L, or of (kappa L)^2 / 2 when kappa L is small; kappa^2 at both ends
    of a linear cell), each plane channel 1 / (2 |E - V|) (from its wave
    number), each Airy channel |dz/dE| (1 + sqrt|z|).  Near a zero of J the
    true rate is larger; the adaptive sampling of the contour handles that.
    """
    e = np.atleast_1d(np.asarray(energy, dtype=complex))
    cells = profile.cells
    c = cells.c
    length = np.diff(cells.edges)
    total = np.zeros(e.shape)
    if length.size:
        k2a = cells.mass[None, :] * (cells.v0[None, :] - e[:, None]) / c
        k2b = k2a + cells.mass[None, :] * cells.slope[None, :] * length[None, :] / c
        kap = np.sqrt(np.minimum(np.abs(k2a), np.abs(k2b)))
        total += np.sum(length[None, :] * cells.mass[None, :] / (2.0 * c * np.maximum(kap, 1.0 / length[None, :])), axis=1)
    for ch in (profile.left, profile.right):
        if ch.kind == "plane":
            total += 0.5 / np.maximum(np.abs(e - ch.v), 1e-300)
        elif ch.kind == "airy":
            beta = np.cbrt(ch.mass * ch.field / c)
            z = beta * (ch.v - e) / ch.field
            total += np.abs(beta / ch.field) * (1.0 + np.sqrt(np.abs(z)))
    return total
