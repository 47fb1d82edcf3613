"""Scattering by N point interactions: T(E), r(E), t(E) and the resonances, in closed form.

H = -C d/dx (1/m) d/dx - sum_i alpha_i delta(x - x_i), constant mass m (m_e),
C = hbar^2 / (2 m_e), strengths alpha_i in energy * length (> 0 attracts,
< 0 repels), g_i = m alpha_i / (2 C) (1/length), E = C k^2 / m.

Between the points psi = A exp(i k x) + B exp(-i k x).  Continuity of psi and
the jump psi'(x_i+) - psi'(x_i-) = -2 g_i psi(x_i) give the transfer matrix

    (A', B') = M_i (A, B),   M_i = [[1 + i g/k,        (i g/k) e^(-2 i k x_i)],
                                    [-(i g/k) e^(2 i k x_i), 1 - i g/k      ]],

det M_i = 1.  With M = M_N ... M_1 and a wave incident from the left,
(t, 0) = M (1, r): t = 1 / M_22 and r = -M_21 / M_22, T = |t|^2, R = |r|^2
(one point: T = 1 / (1 + g^2 / k^2) = 1 / (1 + m alpha^2 / (2 hbar^2 E)),
Griffiths sec. 2.5.2).  These are exact; the only numerics is the product of
N 2 x 2 matrices.

Resonances and bound states are the zeros of M_22(k(E)), i.e. the poles of t,
with k(E) on the branch whose cut hangs straight down from E = 0 (bound
states on the negative real axis, resonances E_r - i Gamma / 2 below the
positive axis).  They are counted and located by the argument principle and
Newton (:mod:`fdsolver.numerics.complexroots`); the error estimate is the
distance to the zero of the second closed form, det(i k 1 + G E(k)) with
G = diag(g_i) and E_ij = exp(i k |x_i - x_j|) (the outgoing-wave condition on
psi = sum_j c_j exp(i k |x - x_j|)).  Energies in the energy unit of C, lengths
in its length unit.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.numerics.complexroots import find_zeros, polish

ROT = np.exp(0.25j * np.pi)


@dataclass(frozen=True, eq=False)
class PointTransmission:
    """t, r (complex) and T, R at real energies E > 0 (energy unit of C) for a wave incident from the left."""

    energy: np.ndarray
    t: np.ndarray
    r: np.ndarray
    transmission: np.ndarray
    reflection: np.ndarray


@dataclass(frozen=True, eq=False)
class PointResonances:
    """Poles E_r - i Gamma/2 of t (energy unit of C) in a window, sorted; ``bound`` marks real poles below 0."""

    energy: np.ndarray
    width: np.ndarray
    energy_error: np.ndarray
    width_error: np.ndarray
    bound: np.ndarray
    count: int
    notes: tuple[str, ...] = field(default=())

    def __len__(self) -> int:
        return int(self.energy.size)


def _setup(positions, strengths, mass, hbar2_2me):
    x = np.atleast_1d(np.asarray(positions, dtype=float))
    a = np.atleast_1d(np.asarray(strengths, dtype=float))
    if x.shape != a.shape or x.size == 0:
        raise CaseError("give one strength per position (at least one point)", key="points")
    if not (mass > 0 and hbar2_2me > 0):
        raise CaseError("mass and hbar^2/2m_e must be positive", key="mass")
    order = np.argsort(x, kind="stable")
    return x[order], mass * a[order] / (2.0 * hbar2_2me)


def _m22_m21(x, g, k):
    """M_22 and M_21 of the product at wave numbers k (complex array)."""
    k = np.asarray(k, dtype=complex)
    m11 = np.ones_like(k)
    m12 = np.zeros_like(k)
    m21 = np.zeros_like(k)
    m22 = np.ones_like(k)
    for xi, gi in zip(x, g):
        q = 1j * gi / k
        ph = np.exp(2j * k * xi)
        a11, a12, a21, a22 = 1.0 + q, q / ph, -q * ph, 1.0 - q
        m11, m12, m21, m22 = a11 * m11 + a12 * m21, a11 * m12 + a12 * m22, a21 * m11 + a22 * m21, a21 * m12 + a22 * m22
    return m22, m21


def point_transmission(positions, strengths, energies, *, mass: float = 1.0, hbar2_2me: float = 0.5) -> PointTransmission:
    """T(E), R(E), t(E), r(E) of the point interactions at real energies E > 0 (closed form)."""
    x, g = _setup(positions, strengths, mass, hbar2_2me)
    e = np.atleast_1d(np.asarray(energies, dtype=float))
    if np.any(e <= 0):
        raise CaseError("scattering energies must be above the background (E > 0)", key="energies")
    k = np.sqrt(mass * e / hbar2_2me).astype(complex)
    m22, m21 = _m22_m21(x, g, k)
    t = 1.0 / m22
    r = -m21 / m22
    return PointTransmission(e, t, r, np.abs(t) ** 2, np.abs(r) ** 2)


def _k_of(e, mass, c):
    return ROT * np.sqrt(-1j * mass * np.asarray(e, dtype=complex) / c)


def _green_det(x, g, k):
    """det(i k 1 + G E(k)) for every k (small N)."""
    k = np.atleast_1d(np.asarray(k, dtype=complex))
    d = np.abs(x[:, None] - x[None, :])
    out = np.empty(k.shape, dtype=complex)
    for n, kk in enumerate(k):
        mat = 1j * kk * np.eye(x.size) + g[:, None] * np.exp(1j * kk * d)
        out[n] = np.linalg.det(mat)
    return out


def point_resonances(positions, strengths, window, *, mass: float = 1.0, hbar2_2me: float = 0.5,
                     max_width: float | None = None) -> PointResonances:
    """Every pole of t with E_r in ``window`` = (lo, hi) and Gamma <= ``max_width`` (default: the window's width).

    A window reaching below 0 also returns the bound states (``bound``).
    """
    x, g = _setup(positions, strengths, mass, hbar2_2me)
    lo, hi = (float(v) for v in window)
    if not lo < hi:
        raise CaseError(f"the window must be low < high, got {window!r}", key="window")
    max_width = float(max_width) if max_width is not None else hi - lo
    c = hbar2_2me

    def f1(e):
        k = _k_of(e, mass, c)
        m22, _ = _m22_m21(x, g, k)
        return m22 * k ** x.size, np.zeros(k.shape)  # k^N M_22 is entire in k

    def f2(e):
        k = _k_of(e, mass, c)
        return _green_det(x, g, k), np.zeros(k.shape)

    scale = hi - lo
    zeros, notes, count = [], [], 0
    pieces = [(lo, min(hi, 0.0), True), (max(lo, 0.0), hi, False)]
    for a, b, below in pieces:
        if not b > a:
            continue
        d = 1e-9 * (b - a)
        a2 = a + d if a == 0.0 else a
        b2 = b - d if b == 0.0 else b
        bottom = -0.25 * (b - a) if below else -0.5 * max_width
        found = find_zeros(f1, a2, b2, bottom, 0.5 * (b - a))
        count += found.count
        notes.extend(found.notes)
        for zr in found.zeros:
            other = polish(f2, zr.z, scale=scale)
            err = abs(other.z - zr.z) + zr.error + other.error
            z = complex(zr.z.real, 0.0) if below else zr.z
            zeros.append((z, err, below))
    zeros = [z for z in zeros if lo <= z[0].real <= hi and -2.0 * z[0].imag <= max_width]
    zeros.sort(key=lambda t: t[0].real)
    e = np.array([z.real for z, _, _ in zeros])
    w = np.array([max(0.0, -2.0 * z.imag) for z, _, _ in zeros])
    err = np.array([er for _, er, _ in zeros])
    bound = np.array([b for _, _, b in zeros], dtype=bool)
    return PointResonances(e, w, err, np.where(bound, 0.0, 2.0 * err), bound, count, tuple(dict.fromkeys(notes)))
