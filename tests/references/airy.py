"""Exact levels of a piecewise-linear potential between two hard walls, from Airy functions.

What it computes
    The eigenstates of -C d/dx (1/m) d/dx psi + V psi = E psi on [L, R] with psi(L) = psi(R) = 0, where
    each segment has a constant mass m_i and a linear potential V = V_i + F_i (x - x_i) with F_i != 0
    (C = hbar^2/(2 m_e), see :mod:`.constants`).  Across segment boundaries psi and psi'/m are continuous
    (BenDaniel-Duke matching; G. Bastard, Phys. Rev. B 24, 5693 (1981)).

    In a segment, z = alpha (x - x_t) with alpha = (m F / C)^(1/3) (real cube root, of the sign of F)
    and V(x_t) = E turns the equation into the Airy equation psi_zz = z psi, so that
    psi = A Ai(z) + B Bi(z) exactly (Abramowitz & Stegun, Handbook of Mathematical Functions, 10.4;
    Wronskian W{Ai, Bi} = 1/pi, 10.4.10).  The coefficients of each segment follow from (psi, psi') at its
    start; scipy.special.airy, and airye (exponentially scaled Ai, Ai', Bi, Bi') where z > 0, with a
    running logarithmic scale keep every number finite however far the walls are.  E is an eigenvalue when the solution with
    psi(L) = 0, psi'(L) = 1 vanishes at R.

Isolation (Sturm oscillation theorem; Courant & Hilbert, Methods of Mathematical Physics I, ch. VI)
    The number of eigenvalues below E equals the number of zeros in (L, R) of that solution, counted as
    sign changes on samples finer than a twentieth of the local half wavelength (and at R itself).
    Levels are bracketed alone by bisection on the count and refined by Brent's method
    (scipy.optimize.brentq) on psi(R) times a positive continuous scale.

Accuracy: double precision; the coefficients are formed from O(1) scaled values, so a level is found to
a few ulps of the energy scale (the error estimate returned is 64 eps times the largest |V - E| on
[L, R]; checked in tests/test_stark_window.py against a field-free box and a linear well).
Units: those of C (meV and nm for "nm-meV"); masses in m_e.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq
from scipy.special import airy, airye

from .constants import hbar2_2me


@dataclass(frozen=True)
class Segment:
    """[x0, x1] with V(x) = v0 + field * (x - x0) and mass m/m_e; ``name`` for where-it-lives checks."""

    x0: float
    x1: float
    v0: float
    field: float
    mass: float
    name: str = ""


def _scaled_airy(z):
    """(Ai, Ai', Bi, Bi') times exp(zeta), exp(zeta), exp(-zeta), exp(-zeta), zeta as in :func:`_zeta`.

    scipy.special.airye for z > 0; for z <= 0 the scale is 1 and scipy.special.airy is used (airye of a
    negative real argument gives NaN for Ai, whose exponent is then imaginary).
    """
    if np.ndim(z) == 0:
        return tuple(float(v) for v in (airye(z) if z > 0 else airy(z)))
    z = np.asarray(z, dtype=float)
    zp = np.where(z > 0, z, 1.0)
    zn = np.where(z > 0, 0.0, z)
    pos, neg = airye(zp), airy(zn)
    return tuple(np.where(z > 0, p, n) for p, n in zip(pos, neg))


def _zeta(z):
    """The exponent airye scales by: (2/3) z^(3/2) for z > 0, 0 for z <= 0."""
    zp = np.maximum(z, 0.0)
    return (2.0 / 3.0) * zp * np.sqrt(zp)


class LinearBox:
    """Segments between hard walls at the first segment's x0 and the last segment's x1."""

    def __init__(self, segments: list[Segment], units: str = "nm-meV"):
        self.segs = list(segments)
        for a, b in zip(self.segs[:-1], self.segs[1:]):
            assert a.x1 == b.x0, "segments must be contiguous"
        assert all(s.field != 0.0 for s in self.segs), "every segment needs a nonzero field"
        self.c = float(hbar2_2me(units))
        ends = [(s.v0, s.v0 + s.field * (s.x1 - s.x0)) for s in self.segs]
        self.v_min = min(min(e) for e in ends)
        self.v_max = max(max(e) for e in ends)

    # ---------------------------------------------------------------- one solution
    def _segment_coeffs(self, s: Segment, e: float, psi: float, dpsi: float):
        """(alpha, x_t, At, Bt, zeta_a): psi = pi [At eAi(z) e^(zeta_a - zeta) + Bt eBi(z) e^(zeta - zeta_a)] in ``s``."""
        alpha = math.copysign(abs(s.mass * s.field / self.c) ** (1.0 / 3.0), s.field)
        xt = s.x0 + (e - s.v0) / s.field
        za = alpha * (s.x0 - xt)
        ai, aip, bi, bip = _scaled_airy(za)
        zeta_a = (2.0 / 3.0) * za * math.sqrt(za) if za > 0 else 0.0
        d = dpsi / alpha  # dpsi/dz
        at = psi * bip - d * bi  # A = pi e^(zeta_a) At
        bt = d * ai - psi * aip  # B = pi e^(-zeta_a) Bt
        return alpha, xt, at, bt, zeta_a

    def _march(self, e: float, samples: bool = False):
        """(psi(R), log scale, signs at the samples): psi(R) e^(scale) is the true psi(R) of psi(L)=0, psi'(L)=1."""
        psi, dpsi, log_scale = 0.0, 1.0, 0.0
        signs = [1.0]  # just right of L, psi = (x - L) psi'(L) > 0
        for i, s in enumerate(self.segs):
            if i > 0:
                dpsi *= s.mass / self.segs[i - 1].mass  # psi'/m continuous
            alpha, xt, at, bt, zeta_a = self._segment_coeffs(s, e, psi, dpsi)
            if samples:
                zs = alpha * (np.array([s.x0, s.x1]) - xt)
                neg = np.maximum(-zs, 0.0)
                phase = abs((2.0 / 3.0) * (neg[1] ** 1.5 - neg[0] ** 1.5))
                n = int(40 * (phase / math.pi + 1)) + 50
                x = np.linspace(s.x0, s.x1, n + 1)[1:]
                z = alpha * (x - xt)
                ai, _, bi, _ = _scaled_airy(z)
                d = _zeta(z) - zeta_a
                # sign of At eAi e^(-d) + Bt eBi e^(d), without overflow
                val = np.where(d > 0, at * ai * np.exp(-2.0 * np.maximum(d, 0.0)) + bt * bi,
                               at * ai + bt * bi * np.exp(2.0 * np.minimum(d, 0.0)))
                signs.extend(np.sign(val).tolist())
            zb = alpha * (s.x1 - xt)
            ai, aip, bi, bip = _scaled_airy(zb)
            d = ((2.0 / 3.0) * zb * math.sqrt(zb) if zb > 0 else 0.0) - zeta_a
            if d > 0:
                grow, shrink, log_step = 1.0, math.exp(-2.0 * d), d
            else:
                grow, shrink, log_step = math.exp(2.0 * d), 1.0, -d
            psi_b = math.pi * (at * ai * shrink + bt * bi * grow)
            dpsi_b = math.pi * alpha * (at * aip * shrink + bt * bip * grow)
            norm = abs(psi_b) + abs(dpsi_b)
            psi, dpsi = psi_b / norm, dpsi_b / norm
            log_scale += log_step + math.log(norm)
        return psi, log_scale, signs

    def mismatch(self, e: float) -> float:
        """psi(R) divided by a positive scale that is continuous in E: zero exactly at an eigenvalue.

        The scale is exp of the running log scale with the per-segment renormalisation removed (a
        renormalisation by |psi| + |psi'| is continuous in E, so the product stays continuous).
        """
        psi, _, _ = self._march(e)
        return psi

    def count(self, e: float) -> int:
        """Number of eigenvalues below ``e``."""
        _, _, signs = self._march(e, samples=True)
        s = np.array(signs)
        s = s[s != 0]
        return int(np.count_nonzero(s[1:] != s[:-1]))

    def levels_between(self, lo: float, hi: float) -> tuple[list[int], list[float]]:
        """(global indices, energies) of every level in [lo, hi)."""
        c_lo, c_hi = self.count(lo), self.count(hi)
        brackets: dict[int, tuple[float, float]] = {}
        stack = [(lo, c_lo, hi, c_hi)]
        while stack:
            a, ca, b, cb = stack.pop()
            if ca == cb:
                continue
            if cb - ca == 1:
                brackets[ca] = (a, b)
                continue
            if b - a < 1e-13 * max(abs(a), abs(b), 1.0):
                raise AssertionError(f"levels {ca}..{cb - 1} not separated in double precision")
            mid = 0.5 * (a + b)
            cm = self.count(mid)
            stack += [(mid, cm, b, cb), (a, ca, mid, cm)]
        idx = sorted(brackets)
        out = []
        for i in idx:
            a, b = brackets[i]
            out.append(brentq(self.mismatch, a, b, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=300))
        return idx, out

    def error_estimate(self, e: float) -> float:
        return 64.0 * np.finfo(float).eps * max(abs(self.v_max - e), abs(self.v_min - e), abs(e))

    # ---------------------------------------------------------------- where a state lives
    def level(self, index: int, near: float, width: float, check: bool = True) -> float:
        """The level of global ``index`` in [near - width, near + width] (checked by the count if ``check``)."""
        a, b = near - width, near + width
        if check:
            assert self.count(a) == index and self.count(b) == index + 1, "bracket does not hold the level alone"
        return brentq(self.mismatch, a, b, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=300)

    def probabilities(self, index: int, energy: float, delta: float = 1e-4) -> dict[str, float]:
        """Share of |psi|^2 in each named segment, by the Hellmann-Feynman theorem.

        Raising the potential of segment j by delta raises the level by delta * int_j |psi|^2 to first
        order (R. P. Feynman, Phys. Rev. 56, 340 (1939)); a central difference of the exact levels
        (error O(delta^2) from second order, plus the level's round-off over delta) gives the share.
        This needs no wavefunction, so nothing is lost where a one-sided solution is swamped by the
        growing one.
        """
        # the level is alone within 6 delta: the shifted levels (moved by at most delta) stay in their brackets
        assert self.count(energy - 6.0 * delta) == index and self.count(energy + 6.0 * delta) == index + 1
        out: dict[str, float] = {}
        for j, seg in enumerate(self.segs):
            shifted = []
            for sign in (1.0, -1.0):
                segs = list(self.segs)
                segs[j] = Segment(seg.x0, seg.x1, seg.v0 + sign * delta, seg.field, seg.mass, seg.name)
                box = LinearBox.__new__(LinearBox)
                box.segs, box.c, box.v_min, box.v_max = segs, self.c, self.v_min - delta, self.v_max + delta
                shifted.append(box.level(index, energy, 3.0 * delta, check=False))
            out[seg.name] = out.get(seg.name, 0.0) + (shifted[0] - shifted[1]) / (2.0 * delta)
        return out
