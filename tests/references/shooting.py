"""Bound states of a smooth mirror-symmetric potential by shooting from the centre (scipy solve_ivp).

What it computes
    The bound states (E < 0) of -C/m psi'' + V(x) psi = E psi on the whole line, for a potential
    symmetric about ``center`` that vanishes at +-infinity, with one constant mass m (C = hbar^2/(2 m_e),
    see :mod:`.constants`).  Even states start at the centre with (psi, psi') = (1, 0), odd states with
    (0, 1); each is integrated outward to a far point U beyond which V is taken as zero
    (scipy.integrate.solve_ivp, DOP853, rtol 1e-12, atol 1e-15 for a start of unit size).  Beyond U
    the decaying solution has psi' = -kappa psi with kappa = sqrt(m (-E) / C), so E is an eigenvalue of
    the sector when F(E) = psi'(U) + kappa psi(U) = 0.  Many energies are shot at once as one vector
    system (the same steps for all of them).

Isolation (Sturm oscillation theorem on the half line; Courant & Hilbert, Methods of Mathematical
Physics I, ch. VI)
    The number of sector eigenvalues below E is the number of zeros of psi in (0, U] (sign changes of the
    dense output on a grid of a tenth of the shortest local wavelength) plus one if the zero-potential
    continuation beyond U has a zero (iff psi(U) F(E) < 0).  Each level is bracketed alone by the count
    on a grid of energies (subdivided where a cell holds more than one), then found by regula falsi on F
    (Anderson-Bjorck variant).  The global Sturm index of the k-th even state is 2k, of the k-th odd
    state 2k + 1 (in a mirror-symmetric potential parities alternate from an even ground state).

Accuracy: about rtol times the energy scale (1e-12 relative).  :func:`levels` repeats the shooting at
rtol 1e-13 and returns the change (doubled, plus a round-off floor) as the reference's own error estimate.
solve_ivp's error norm is the RMS over the components, and all energies of one shot are one system, so
the tolerances hold for the shot as a whole; the rtol 1e-13 comparison measures the result.
Units: those of C (hartree and bohr for "atomic"); masses in m_e.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy.integrate import solve_ivp

ROUND_FLOOR = 1e-13  # round-off floor of a level, relative to the well depth (common practice, no source)


class SymmetricShooter:
    """Shooting in the parity sectors of a potential ``v(x)`` (a float function) symmetric about ``center``."""

    def __init__(self, v: Callable[[float], float], center: float, far: float, v_min: float,
                 c: float = 0.5, mass: float = 1.0, rtol: float = 1e-12):
        self.v, self.center, self.far, self.v_min = v, float(center), float(far), float(v_min)
        self.g = mass / c  # psi'' = g (V - E) psi
        self.rtol = rtol

    def _shoot(self, e: np.ndarray, parity: int, dense: bool = False):
        e = np.asarray(e, dtype=float)
        n = e.size
        g, v, x0 = self.g, self.v, self.center

        def rhs(t, y):
            return np.concatenate([y[n:], g * (v(x0 + t) - e) * y[:n]])

        y0 = np.concatenate([np.ones(n), np.zeros(n)] if parity > 0 else [np.zeros(n), np.ones(n)])
        k_max = math.sqrt(max(g * (float(np.max(e)) - self.v_min), 1e-300))
        return solve_ivp(rhs, (0.0, self.far), y0, method="DOP853", rtol=self.rtol, atol=1e-3 * self.rtol,
                         max_step=math.pi / k_max, dense_output=dense)

    def mismatch(self, e: np.ndarray, parity: int) -> np.ndarray:
        """F(E) for every energy in ``e`` (scaled by a smooth positive factor, so its roots are unchanged)."""
        e = np.asarray(e, dtype=float)
        sol = self._shoot(e, parity)
        n = e.size
        psi, dpsi = sol.y[:n, -1], sol.y[n:, -1]
        kappa = np.sqrt(self.g * np.maximum(-e, 0.0))
        return (dpsi + kappa * psi) * np.exp(-np.minimum(kappa * self.far, 700.0))

    def count(self, e: np.ndarray, parity: int) -> np.ndarray:
        """Sector eigenvalues below each energy in ``e`` (all <= 0)."""
        e = np.asarray(e, dtype=float)
        n = e.size
        sol = self._shoot(e, parity, dense=True)
        k_max = math.sqrt(max(self.g * (float(np.max(e)) - self.v_min), 1e-300))
        t = np.linspace(0.0, self.far, int(self.far * k_max / (0.1 * math.pi)) + 2000)[1:]
        psi = sol.sol(t)[:n]
        s = np.sign(psi)
        zeros = np.count_nonzero(s[:, 1:] * s[:, :-1] < 0, axis=1)
        psi_u, dpsi_u = sol.y[:n, -1], sol.y[n:, -1]
        kappa = np.sqrt(self.g * np.maximum(-e, 0.0))
        return zeros + (psi_u * (dpsi_u + kappa * psi_u) < 0)

    def top(self) -> float:
        return -1e-14 * abs(self.v_min)

    def levels(self, parity: int, n_max: int, grid: int = 256) -> list[float]:
        """The lowest ``n_max`` bound levels of the sector, each isolated by its count."""
        lo, hi = self.v_min, self.top()
        es = np.linspace(lo, hi, grid)
        cs = self.count(es, parity)
        assert cs[0] == 0, "a level below the potential minimum"
        n = min(int(cs[-1]), n_max)
        brackets: dict[int, tuple[float, float]] = {}
        cells = [(es[i], cs[i], es[i + 1], cs[i + 1]) for i in range(grid - 1)]
        while cells:
            split = []
            for a, ca, b, cb in cells:
                if ca >= n or ca == cb:
                    continue
                if cb - ca == 1:
                    brackets[int(ca)] = (a, b)
                elif b - a < 1e-13 * abs(self.v_min):
                    raise AssertionError(f"sector levels {ca}..{cb - 1} not separated")
                else:
                    split.append((a, ca, b, cb))
            if not split:
                break
            mids = np.array([np.linspace(a, b, 9)[1:-1] for a, _, b, _ in split])
            cm = self.count(mids.ravel(), parity).reshape(mids.shape)
            cells = []
            for (a, ca, b, cb), m, c in zip(split, mids, cm):
                pts, cnt = [a, *m, b], [ca, *c, cb]
                cells += [(pts[i], cnt[i], pts[i + 1], cnt[i + 1]) for i in range(len(pts) - 1)]
        a = np.array([brackets[i][0] for i in range(n)])
        b = np.array([brackets[i][1] for i in range(n)])
        return list(self._regula_falsi(a, b, parity)) if n else []

    def _regula_falsi(self, a: np.ndarray, b: np.ndarray, parity: int) -> np.ndarray:
        """Roots of F in the brackets [a, b] (one each), all advanced together by regula falsi
        (Anderson-Bjorck variant)."""
        fa, fb = self.mismatch(a, parity), self.mismatch(b, parity)
        assert np.all(fa * fb <= 0), "a bracket without a sign change of F"
        done = np.zeros(a.shape, dtype=bool)
        for _ in range(100):
            done |= (np.abs(b - a) <= 1e-14 * np.maximum(np.abs(a), np.abs(b))) | (fa == 0) | (fb == 0)
            if np.all(done):
                break
            x = np.where(fb != fa, (a * fb - b * fa) / np.where(fb != fa, fb - fa, 1.0), 0.5 * (a + b))
            x = np.clip(x, np.minimum(a, b), np.maximum(a, b))
            fx = self.mismatch(x, parity)
            # a step that no longer moves the iterate ends that root (F is only known to round-off there)
            done |= np.abs(x - b) <= 1e-15 * np.abs(x)
            x, fx = np.where(done, b, x), np.where(done, fb, fx)
            swap = (fx * fb < 0) & ~done
            # Anderson-Bjorck scaling of the retained end (Illinois would halve it)
            m = np.where(fb != 0, 1.0 - fx / np.where(fb != 0, fb, 1.0), 0.5)
            m = np.where(m > 0, m, 0.5)
            a, fa = np.where(swap, b, a), np.where(swap, fb, np.where(done, fa, m * fa))
            b, fb = x, fx
        return np.where(np.abs(fb) <= np.abs(fa), b, a)

    def bound_count(self, parity: int) -> int:
        return int(self.count(np.array([self.top()]), parity)[0])


def levels(v, center: float, far: float, v_min: float, *, c: float = 0.5, mass: float = 1.0, n_max: int = 40):
    """(energies by global Sturm index, their error estimates, whole-line bound count) of a symmetric potential.

    The error estimate of each level is twice the change when the shooting is repeated with rtol 1e-13,
    plus a round-off floor of ROUND_FLOOR times the well depth |v_min| (the integration sums rounding
    errors of the size of eps * |V - E| per step; checked on the Poeschl-Teller levels in
    tests/test_gaussian_traps.py).
    """
    out = {}
    counts = 0
    coarse = SymmetricShooter(v, center, far, v_min, c, mass, rtol=1e-12)
    fine = SymmetricShooter(v, center, far, v_min, c, mass, rtol=1e-13)
    for parity, first in ((1, 0), (-1, 1)):
        ea = np.array(coarse.levels(parity, (n_max + 1 - first) // 2 + 1))
        counts += coarse.bound_count(parity)
        if ea.size == 0:
            continue
        # the rtol 1e-13 run only refines: secant steps from the coarse levels
        x0, x1 = ea, ea * (1.0 + 1e-9)
        f0, f1 = fine.mismatch(x0, parity), fine.mismatch(x1, parity)
        for _ in range(20):
            moving = f1 != f0
            step = np.where(moving, f1 * (x1 - x0) / np.where(moving, f1 - f0, 1.0), 0.0)
            x0, f0, x1 = x1, f1, x1 - step
            if np.all(np.abs(step) <= 1e-14 * np.abs(x1)):
                break
            f1 = fine.mismatch(x1, parity)
        assert np.all(np.abs(x1 - ea) < 1e-8 * np.abs(ea)), f"the rtol 1e-13 run moved a level by more than 1e-8: {ea} {x1}"
        for k, (e, ef) in enumerate(zip(ea, x1)):
            out[first + 2 * k] = (float(e), 2.0 * abs(float(ef) - float(e)) + ROUND_FLOOR * abs(v_min))
    idx = sorted(out)
    assert idx == list(range(len(idx))), f"sectors do not interleave: {idx}"
    idx = idx[:n_max]
    return [out[i][0] for i in idx], [out[i][1] for i in idx], counts
