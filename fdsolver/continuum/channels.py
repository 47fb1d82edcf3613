"""What lies beyond the outer edges of a scattering profile: the channels and their boundary conditions.

A channel is the half-line beyond one outer edge x_e, where the potential is
one of

* ``plane``: constant V (a band edge or an asymptote) and mass m.  Waves
  exp(+-i k (x - x_e)) with

      k(E) = exp(i pi/4) sqrt(-i m (E - V) / C),

  the branch of sqrt(m (E - V) / C) whose cut hangs straight down from the
  threshold E = V.  For real E > V, k > 0 (open); for E < V, k = i kappa and
  the "outgoing" wave decays (closed); just below the real axis above the
  threshold, k lies in the fourth quadrant (the resonance sheet).  The flux
  of exp(i k s) (s the distance from x_e away from the structure) is
  K = C k / m outward.
* ``airy``: a uniform field, V = V_e + F (x - x_e).  With beta = (m F / C)^(1/3)
  (the real cube root, sign of F) the solutions are Ai and Bi of
  z = beta (x - x_e) + beta (V_e - E) / F, and u = (C beta / m) dpsi/dz.  If V
  rises away from the structure the channel is closed and the boundary
  condition is Ai (decaying); if it falls, the channel is open and the
  outgoing wave is Ci+ = Bi + i Ai ~ exp(i (zeta + pi/4)) / (sqrt(pi) |z|^(1/4)),
  zeta = (2/3) |z|^(3/2) (DLMF 9.7.9, 9.7.11), whose phase grows away from the
  structure; its flux is C |beta| / (pi m) outward (Wronskian Ai Bi' - Ai' Bi = 1/pi).
  Ai and Bi come from :mod:`fdsolver.numerics.airy` with the exponential scale
  kept apart; at complex E the waves Bi +- i Ai are evaluated as one rotated Ai
  (DLMF 9.2.11).
* ``wall``: V grows without bound (a harmonic or Morse wall): closed, with the
  decaying exponential of the local kappa at the end of a tail long enough
  that the WKB decay integral is at least 20 (see :mod:`fdsolver.numerics.cells`).

Each boundary condition is returned as a state (psi, u) at x_e with a real
log scale: the true state is exp(log) (psi, u).  ``real_pair`` splits the
outgoing condition at real E into two real states c + i s (s = 0 for closed
channels) with their exact Wronskian W(c, s) = psi_c u_s - u_c psi_s: the
narrow-resonance formula of :mod:`fdsolver.continuum.narrow` is built on it.
Energies in the case energy unit, lengths in its length unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.numerics.airy import ai_scaled, airy

ROT = np.exp(0.25j * np.pi)


def wavenumber(energy, v: float, mass: float, c: float) -> np.ndarray:
    """k(E) = exp(i pi/4) sqrt(-i m (E - V) / C) (1/length): positive above V, i kappa below, 4th quadrant on the resonance sheet."""
    e = np.asarray(energy)
    return ROT * np.sqrt(-1j * mass * (e - v) / c)


def _rotated_ai(z, sign: int, gamma: float):
    """Bi(z) +- i Ai(z) = 2 exp(+-i pi/6) Ai(z exp(+-2 pi i/3)) (DLMF 9.2.11) as (psi, u = gamma d/dz, log).

    Bi + i Ai is recessive in part of the lower half plane (|Bi| 1e13 times
    larger than the sum at z = 3 - 13i), where adding the two loses every
    digit; the single rotated Ai keeps full relative accuracy there.
    """
    rot = np.exp(sign * 2j * np.pi / 3)
    ai, aip, log = ai_scaled(np.asarray(z, dtype=complex) * rot)
    pre = 2.0 * np.exp(sign * 1j * np.pi / 6)
    return pre * ai, gamma * pre * rot * aip, log


@dataclass(frozen=True)
class Channel:
    """One outer half-line (``side`` -1 left of ``edge``, +1 right of it); see the module docstring."""

    side: int
    kind: str
    edge: float
    v: float
    mass: float
    c: float
    field: float = 0.0

    # ----------------------------------------------------------- properties
    @property
    def falling(self) -> bool:
        """An Airy channel whose potential falls away from the structure (open at every energy)."""
        return self.kind == "airy" and self.field * self.side < 0

    @property
    def threshold(self) -> float:
        """Lowest energy at which the channel is open: V for plane waves, -inf for a falling field, +inf if closed."""
        if self.kind == "plane":
            return self.v
        return -math.inf if self.falling else math.inf

    def is_open(self, energy) -> np.ndarray:
        e = np.real(np.asarray(energy))
        return e > self.threshold

    def _beta(self) -> float:
        return math.copysign(abs(self.mass * self.field / self.c) ** (1.0 / 3.0), self.field)

    def _z(self, energy):
        beta = self._beta()
        return beta * (self.v - np.asarray(energy)) / self.field

    # ------------------------------------------------------ boundary states
    def outgoing(self, energy):
        """The state at the edge of the wave leaving the structure (decaying if closed): (psi, u, log)."""
        e = np.asarray(energy)
        if self.kind == "plane":
            k = wavenumber(e, self.v, self.mass, self.c)
            return np.ones_like(k), 1j * self.side * self.c * k / self.mass, np.zeros(k.shape)
        if self.kind == "wall":
            kap = np.sqrt(self.mass * (self.v - e.astype(complex)) / self.c)
            kap = np.where(kap.real < 0, -kap, kap)
            return np.ones_like(kap), -self.side * self.c * kap / self.mass, np.zeros(kap.shape)
        gamma = self.c * self._beta() / self.mass
        z = self._z(e)
        if not self.falling:
            ai, aip, la = ai_scaled(z)
            return ai, gamma * aip, la
        if np.iscomplexobj(z):
            return _rotated_ai(z, +1, gamma)
        ai, aip, la, bi, bip, lb = airy(z)
        w = 1j * np.exp(la - lb)  # i Ai / Bi scale
        return bi + w * ai, gamma * (bip + w * aip), lb

    def incoming(self, energy):
        """The state at the edge of the wave coming in from this side (open channels only): (psi, u, log)."""
        e = np.asarray(energy)
        if self.kind == "plane":
            k = wavenumber(e, self.v, self.mass, self.c)
            return np.ones_like(k), -1j * self.side * self.c * k / self.mass, np.zeros(k.shape)
        if self.falling:
            gamma = self.c * self._beta() / self.mass
            z = self._z(e)
            if np.iscomplexobj(z):
                return _rotated_ai(z, -1, gamma)
            ai, aip, la, bi, bip, lb = airy(z)
            w = -1j * np.exp(la - lb)
            return bi + w * ai, gamma * (bip + w * aip), lb
        raise ValueError("a closed channel has no incoming wave")

    def flux(self, energy) -> np.ndarray:
        """Outward flux Im(conj(psi) u) of :meth:`outgoing` at real energies, per |psi|^2 scale exp(2 log); 0 if closed."""
        e = np.real(np.asarray(energy, dtype=complex))
        if self.kind == "plane":
            k = np.sqrt(np.clip(self.mass * (e - self.v) / self.c, 0.0, None))
            return self.c * k / self.mass
        if self.falling:
            return np.full(e.shape, self.c * abs(self._beta()) / (math.pi * self.mass))
        return np.zeros(e.shape)

    def real_pair(self, energy: float):
        """Outgoing condition at real E as c + i s: ((psi_c, u_c, log_c), (psi_s, u_s, log_s), W(c, s)).

        s is None for a closed channel.  W is exact: C k / m * side for plane
        waves, -C beta / (pi m) for a falling field.
        """
        e = float(energy)
        if self.kind == "plane":
            if e > self.v:
                kk = self.c * math.sqrt(self.mass * (e - self.v) / self.c) / self.mass
                return (1.0, 0.0, 0.0), (0.0, self.side * kk, 0.0), self.side * kk
            kap = math.sqrt(self.mass * (self.v - e) / self.c)
            return (1.0, -self.side * self.c * kap / self.mass, 0.0), None, 0.0
        if self.kind == "wall":
            kap = math.sqrt(max(self.mass * (self.v - e) / self.c, 0.0))
            return (1.0, -self.side * self.c * kap / self.mass, 0.0), None, 0.0
        gamma = self.c * self._beta() / self.mass
        vals = airy(np.array([float(self._z(e))]))
        ai, aip, la, bi, bip, lb = (float(np.real(v[0])) for v in vals)
        if not self.falling:
            return (ai, gamma * aip, la), None, 0.0
        return (bi, gamma * bip, lb), (ai, gamma * aip, la), -gamma / math.pi
