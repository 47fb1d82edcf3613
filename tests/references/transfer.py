"""Exact bound states of piecewise-constant potentials with a position-dependent mass, in extended precision.

What it computes
    The bound states of  -C d/dx (1/m(x)) d/dx psi + V(x) psi = E psi  on the whole line, where V and m
    are constant in each layer of a stack (the first and last layers are semi-infinite claddings) and
    C = hbar^2/(2 m_e) (see :mod:`.constants`).  At every interface psi and psi'/m are continuous
    (BenDaniel-Duke matching; G. Bastard, Phys. Rev. B 24, 5693 (1981)).

Method (textbook transfer matrices)
    The state vector (psi, u) with u = psi'/m is carried across each layer in closed form:
    cos/sin where E > V (k^2 = m (E - V)/C), cosh/sinh where E < V (q^2 = m (V - E)/C), linear where
    E = V.  The solution starts as exp(q_L x) in the left cladding (decaying towards -infinity); E is an
    eigenvalue when it also decays in the right cladding, i.e. when F(E) = u + (q_R/m_R) psi = 0 at the
    last interface.

Isolation of every multiplet member (Sturm oscillation theorem; Courant & Hilbert, Methods of
Mathematical Physics I, ch. VI)
    For E below the continuum threshold, the number of eigenvalues below E equals the number of zeros,
    on the whole line, of the solution that decays at -infinity.  The zeros are counted exactly, layer
    by layer, from the closed forms (the sign changes of the solution), including the one zero the
    continuation into the right cladding may have (there iff psi * F < 0 at the last interface).
    Each eigenvalue is isolated by bisection on that count until its bracket holds it alone, then refined
    by bisection on the sign of F and then safeguarded secant steps inside the bracket.

Accuracy
    Every operation is done in mpmath with a working precision chosen from the structure: 35 digits
    plus the decimal digits of exp(2 * sum of q d over the layers), the largest growth of the unwanted
    solution, so that F keeps about 35 digits near its roots.  Eigenvalues are converged to 1e-30
    relative, so differences of members of a multiplet (tunnel splittings far below double precision)
    are exact to many digits down to splittings of about 1e-23 of E.

Units: whatever the caller's C is in (meV and nm for "nm-meV", hartree and bohr for "atomic"); masses in m_e.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import mpmath as mp

from .constants import hbar2_2me

BISECT_DIGITS = 4  # bracket width, in digits of E, below which secant steps take over


@dataclass(frozen=True)
class Layer:
    """One layer: ``thickness`` (None for the two semi-infinite claddings), ``band_edge`` V and ``mass`` m/m_e."""

    thickness: float | None
    band_edge: float
    mass: float


class Stack:
    """A layer stack: ``layers[0]`` and ``layers[-1]`` are the claddings; the rest have thicknesses."""

    def __init__(self, layers: list[Layer], units: str = "nm-meV", extra_digits: int = 30):
        if len(layers) < 2:
            raise ValueError("a stack needs at least its two claddings")
        self.layers = list(layers)
        self.units = units
        self.extra_digits = extra_digits
        inner = self.layers[1:-1]
        vmin = min(l.band_edge for l in self.layers)
        self.threshold_float = min(self.layers[0].band_edge, self.layers[-1].band_edge)
        # growth of the unwanted exponential across the stack, at the lowest possible energy
        c = float(hbar2_2me(units))
        growth = sum(math.sqrt(l.mass * max(l.band_edge - vmin, 0.0) / c) * l.thickness for l in inner)
        self.dps = int(extra_digits + 2.0 * growth / math.log(10.0)) + 5
        with mp.workdps(self.dps):
            self.c = hbar2_2me(units)
            self._edge = [mp.mpf(l.band_edge) for l in self.layers]
            self._mass = [mp.mpf(l.mass) for l in self.layers]
            self._thick = [mp.mpf(l.thickness) for l in inner]
            self.vmin = mp.mpf(vmin)
            self.threshold = mp.mpf(self.threshold_float)

    # ------------------------------------------------------------------ the decaying-from-the-left solution
    def _march(self, e, count: bool):
        """(psi, u, zeros) at the last interface for the solution exp(q_L (x - x_0)) of the left cladding.

        ``zeros`` (only if ``count``) is the number of zeros of psi in the inner layers.  In an oscillating
        layer of phase k d it is floor(k d / pi) or one more, whichever has the parity of the sign change of
        psi across the layer; in an evanescent or flat layer it is 0 or 1 (the closed form is monotone
        in the ratio psi'/psi there).
        """
        c = self.c
        m0, v0 = self._mass[0], self._edge[0]
        q0 = mp.sqrt(max(m0 * (v0 - e) / c, mp.mpf(0)))
        psi, u = mp.mpf(1), q0 / m0
        zeros = 0
        for d, v, m in zip(self._thick, self._edge[1:-1], self._mass[1:-1]):
            s = m * (e - v) / c  # k^2 (> 0: oscillating) or -q^2
            dpsi = m * u  # psi' inside this layer
            if s > 0:
                k = mp.sqrt(s)
                z = mp.expj(k * d)
                cs, sn = z.real, z.imag
                new_psi, new_dpsi = psi * cs + dpsi * sn / k, -psi * k * sn + dpsi * cs
                if count:
                    if psi != 0 and new_psi != 0:
                        full = int(mp.floor(k * d / mp.pi))
                        change = 1 if (psi > 0) != (new_psi > 0) else 0
                        zeros += full if full % 2 == change else full + 1
                    else:  # psi(t) = R cos(k t - phi): zeros where k t - phi = pi/2 + n pi, 0 < t <= d
                        phi = mp.atan2(dpsi / k, psi)
                        zeros += int(mp.floor((k * d - phi - mp.pi / 2) / mp.pi) - mp.floor((-phi - mp.pi / 2) / mp.pi))
                psi, dpsi = new_psi, new_dpsi
            elif s < 0:
                q = mp.sqrt(-s)
                ex = mp.exp(q * d)
                ch, sh = (ex + 1 / ex) / 2, (ex - 1 / ex) / 2
                # psi(t) = psi cosh(q t) + psi'/q sinh(q t): one zero iff tanh(q t) = -psi q / psi' in (0, tanh(q d)]
                if count and dpsi != 0:
                    r = -psi * q / dpsi
                    if 0 < r <= sh / ch:
                        zeros += 1
                psi, dpsi = psi * ch + dpsi * sh / q, psi * q * sh + dpsi * ch
            else:
                if count and dpsi != 0 and 0 < -psi / dpsi <= d:
                    zeros += 1
                psi = psi + dpsi * d
            u = dpsi / m
            # no rescaling: mpmath's exponent range is unbounded, and F must stay an analytic function of E
            # (a rescaled F is close to a step function near its root, which defeats the secant steps)
        return psi, u, zeros

    def mismatch(self, e) -> mp.mpf:
        """F(E) = u + (q_R/m_R) psi at the last interface: zero exactly at an eigenvalue."""
        with mp.workdps(self.dps):
            e = mp.mpf(e)
            psi, u, _ = self._march(e, count=False)
            mr, vr = self._mass[-1], self._edge[-1]
            qr = mp.sqrt(max(mr * (vr - e) / self.c, mp.mpf(0)))
            return u + qr / mr * psi

    def count(self, e) -> int:
        """Number of eigenvalues strictly below ``e`` (``e`` at most the continuum threshold)."""
        with mp.workdps(self.dps):
            e = mp.mpf(e)
            if e > self.threshold:
                raise ValueError("the count is defined below the continuum threshold only")
            psi, u, zeros = self._march(e, count=True)
            mr, vr = self._mass[-1], self._edge[-1]
            qr = mp.sqrt(max(mr * (vr - e) / self.c, mp.mpf(0)))
            f = u + qr / mr * psi
            return zeros + (1 if psi * f < 0 else 0)

    def bound_count(self) -> int:
        """Number of bound states (strictly below the threshold)."""
        return self.count(self.threshold)

    # ------------------------------------------------------------------ eigenvalues
    def levels(self, n_max: int | None = None) -> list[mp.mpf]:
        """The lowest ``n_max`` bound-state energies (all of them if None), each isolated by its Sturm index.

        Brackets come from one bisection tree on the count: an interval whose end counts differ by more
        than one is halved, and both halves are searched, so the members of a multiplet share the
        bisections down to their common bracket.
        """
        with mp.workdps(self.dps):
            lo, hi = self.vmin, self.threshold
            c_lo, c_hi = self.count(lo), self.count(hi)
            assert c_lo == 0, "no state lies below the lowest band edge"
            n = c_hi if n_max is None else min(n_max, c_hi)
            brackets: dict[int, tuple] = {}
            stack = [(lo, c_lo, hi, c_hi)]
            width_floor = (abs(hi) + abs(lo)) * mp.mpf(10) ** (-(self.dps - 5))
            while stack:
                a, ca, b, cb = stack.pop()
                if ca >= n or cb == ca:
                    continue
                if cb - ca == 1:
                    brackets[ca] = (a, b)
                    continue
                if b - a < width_floor:
                    raise AssertionError(f"levels {ca}..{cb - 1} not separated at {self.dps} digits")
                mid = (a + b) / 2
                cm = self.count(mid)
                stack.append((mid, cm, b, cb))
                stack.append((a, ca, mid, cm))
            return [self._refine(*brackets[i]) for i in range(n)]

    def _refine(self, a, b):
        fa, fb = self.mismatch(a), self.mismatch(b)
        if fa == 0:
            return a
        if fb == 0:
            return b
        if fa * fb > 0:  # an eigenvalue at the top of the window with F of one sign: bisect on the count
            idx = self.count(a)
            for _ in range(4 * self.dps):
                mid = (a + b) / 2
                if self.count(mid) > idx:
                    b = mid
                else:
                    a = mid
            return (a + b) / 2
        tol = (abs(a) + abs(b)) * mp.mpf(10) ** -self.extra_digits  # F is exact to about 10^-(extra + 5)
        # F grows like exp(sum q d) away from the root: bisect on its sign until it is near linear in the
        # bracket, then safeguarded secant steps converge superlinearly
        near = (abs(a) + abs(b)) * mp.mpf(10) ** -BISECT_DIGITS
        while b - a > near:
            mid = (a + b) / 2
            fm = self.mismatch(mid)
            if fm == 0:
                return mid
            if (fm > 0) == (fa > 0):
                a, fa = mid, fm
            else:
                b, fb = mid, fm
        # secant steps from the two bracket ends, kept inside the bracket (a bisection where a step leaves it)
        x0, f0, x1, f1 = a, fa, b, fb
        for _ in range(200):
            x2 = x1 - f1 * (x1 - x0) / (f1 - f0) if f1 != f0 else (a + b) / 2
            if not a < x2 < b:
                x2 = (a + b) / 2
            f2 = self.mismatch(x2)
            if f2 == 0:
                return x2
            if (f2 > 0) == (fa > 0):
                a, fa = x2, f2
            else:
                b, fb = x2, f2
            if abs(x2 - x1) < tol or b - a < tol:
                return x2
            x0, f0, x1, f1 = x1, f1, x2, f2
        raise AssertionError("the secant steps did not converge")
