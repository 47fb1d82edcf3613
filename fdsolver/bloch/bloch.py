"""Bloch functions psi_{n,q}(x) of one period from its transfer matrix.

At a band energy E with D(E) = cos(q L) the monodromy matrix M has the eigenvalue lambda = exp(i q L);
its eigenvector v = (psi, u) at the start of the period (from the row of M - lambda with the larger
balanced norm: v = (M12, lambda - M11) or (lambda - M22, M21)) combines the two fundamental solutions
of :func:`fdsolver.numerics.period.fundamentals`:  psi(x) = v_1 f_1(x) + v_2 f_2(x).  Outside the
window [start, start + L) Bloch's theorem psi(x + j L) = exp(i q j L) psi(x) is applied.
Normalisation int_period |psi|^2 dx = 1 by the trapezoid rule on 4096 uniform intervals of the period
(exact to round-off for smooth periodic |psi|^2, second order where psi' has kinks); the phase makes
psi real and positive where |psi| is largest on that grid.  Accuracy: exact cells (compact lattices)
to round-off, which grows like eps exp(kappa b) across a barrier of decay constant kappa and
thickness b; midpoint cells of a smooth potential to O(h^2) (the finest level, not extrapolated).
Units: x in length, psi in length^-1/2.
"""

from __future__ import annotations

import numpy as np

NORM_INTERVALS = 4096


def _raw(cells, start: float, period: float, energy: float, q: float, x: np.ndarray) -> np.ndarray:
    m, _, logs = cells.monodromy(energy)
    mu = np.exp(1j * q * period - logs)  # eigenvalue of the stored (scaled) matrix
    k = cells.kscale
    a, b, c, d = m[0, 0] - mu, m[0, 1], m[1, 0], m[1, 1] - mu
    if abs(a) + abs(b) * k >= abs(c) + abs(d) / k:
        v = (b, -a) if abs(a) + abs(b) > 0 else (1.0, 0.0)
    else:
        v = (d, -c)
    j = np.floor((x - start) / period)
    xr = np.clip(x - j * period, start, start + period)
    order = np.argsort(xr, kind="stable")
    vals, lx = cells.fundamentals(energy, xr[order])
    psi = np.empty(x.size, dtype=complex)
    psi[order] = (v[0] * vals[:, 0] + v[1] * vals[:, 2]) * np.exp(lx - np.max(lx))
    return psi * np.exp(1j * q * period * j)


def bloch_values(cells, start: float, period: float, energy: float, q: float, x) -> np.ndarray:
    """Normalised psi_{n,q} at ``x`` (module docstring)."""
    grid = np.linspace(start, start + period, NORM_INTERVALS + 1)
    x = np.asarray(x, dtype=float)
    both = _raw(cells, start, period, energy, q, np.concatenate([grid, x]))
    g, psi = both[: grid.size], both[grid.size:]
    w = np.full(grid.size, period / NORM_INTERVALS)
    w[[0, -1]] *= 0.5
    norm = np.sqrt(np.sum(w * np.abs(g) ** 2))
    peak = g[int(np.argmax(np.abs(g)))]
    return psi * (np.abs(peak) / peak) / norm
