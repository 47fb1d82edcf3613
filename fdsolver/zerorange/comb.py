"""The delta comb: the zero-range point model of a periodic lattice, in closed form.

The Hamiltonian is

    H = -C d/dx (1/m) d/dx - sum_k sum_j alpha_j delta(x - x_j - k L)

with N point interactions per period L (any N >= 1), a constant mass ``m`` (m_e), C = hbar^2 / (2 m_e)
in the caller's units and strengths alpha_j in energy * length (alpha_j > 0 attracts, < 0 repels).
Couplings g_j = m alpha_j / hbar^2 = m alpha_j / (2 C) (1/length), as in :mod:`fdsolver.zerorange.pointmodel`.

Closed-form dispersion relation
-------------------------------
Between the points psi'' = -k^2 psi with k^2 = m E / C; a point makes psi' jump by -2 g_j psi(x_j).
In the variables (psi, psi') a free stretch of length d is

    F(d) = [[c(w), d s(w)], [w s(w) / d, c(w)]],   w = -k^2 d^2 = -m E d^2 / C,
    c(w) = cosh sqrt(w), s(w) = sinh sqrt(w) / sqrt(w)      (cos, sin of k d for E > 0),

a point is J_j = [[1, 0], [-2 g_j, 1]], and with the points x_1 < ... < x_N in the period and
d_j = x_{j+1} - x_j (d_N = x_1 + L - x_N) Bloch's condition psi(x + L) = exp(i q L) psi(x) is

    cos(q L) = D(E) = Tr[F(d_N) J_N ... F(d_1) J_1] / 2.

For one point per period this is D = cos(kL) - (g/k) sin(kL) (E > 0) and
D = cosh(kappa L) - (g/kappa) sinh(kappa L) (E = -C kappa^2 / m < 0): the Dirac comb of the textbooks
with their repulsive strength beta = -alpha.  dD/dE is the same product differentiated term by term
(dw/dE = -m d^2 / C, dc/dw = s/2, ds/dw = (c - s)/(2w)), all vectorised over energies with numpy, in
closed form; factors exp(sqrt w) of long forbidden stretches are divided out and kept as logs.  It is
independent of the numerical transfer kernel :mod:`fdsolver.numerics.period`, which the tests compare
with it.

Band edges, none missed, come from the same band index as for any lattice
(:mod:`fdsolver.bloch.edges`): the sign of D and the Dirichlet count, the number of zeros inside a
period of the solution vanishing at its start, counted by the one march
(:mod:`fdsolver.numerics.march`) over the free stretches, exact.  :func:`comb_bands` and
:func:`comb_edges` return the same dataclasses as :func:`fdsolver.bloch.structure.band_structure`;
every number is exact up to round-off, with its error estimate.  Energies in the caller's energy
unit, lengths in its length unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.bloch.cellgrid import PeriodCells, rotate
from fdsolver.bloch.lattice import Lattice, lattice
from fdsolver.bloch.source import Source
from fdsolver.errors import CaseError
from fdsolver.model import shapes as S
from fdsolver.model.potential import Potential
from fdsolver.model.units import kinetic_units
from fdsolver.numerics.march import carry
from fdsolver.numerics.period import COLUMNS, LOG_CAP
from fdsolver.numerics.precision import EPS

__all__ = ["Comb", "comb", "comb_bands", "comb_edges", "comb_of"]


def _cs(w: np.ndarray):
    """c(w), s(w), ds/dw and the dropped log factor r (c, s, ds/dw divided by exp(r); r = sqrt(w) for w > 1)."""
    w = np.asarray(w, dtype=float)
    c, s, sp, r = np.empty_like(w), np.empty_like(w), np.empty_like(w), np.zeros_like(w)
    small = np.abs(w) < 1e-2
    big = w > 1.0
    neg = (w < 0) & ~small
    mid = (w > 0) & ~small & ~big
    ws = w[small]
    c[small] = 1 + ws * (1 / 2 + ws * (1 / 24 + ws * (1 / 720 + ws * (1 / 40320 + ws / 3628800))))
    s[small] = 1 + ws * (1 / 6 + ws * (1 / 120 + ws * (1 / 5040 + ws * (1 / 362880 + ws / 39916800))))
    sp[small] = 1 / 6 + ws * (1 / 60 + ws * (1 / 1680 + ws * (1 / 90720 + ws / 7983360)))
    t = np.sqrt(-w[neg])
    c[neg], s[neg] = np.cos(t), np.sin(t) / t
    t = np.sqrt(w[mid])
    c[mid], s[mid] = np.cosh(t), np.sinh(t) / t
    t = np.sqrt(w[big])
    e = np.exp(-2.0 * t)
    c[big], s[big], r[big] = 0.5 * (1.0 + e), -0.5 * np.expm1(-2.0 * t) / t, t
    rest = ~small
    sp[rest] = (c[rest] - s[rest]) / (2.0 * w[rest])
    return c, s, sp, r


def _edge_form(lam, p, f, d, err_d, kscale):
    """(D - lam, error): -det(M - lam I) / (2 lam) where that is more accurate than the trace (numerics.period)."""
    with np.errstate(over="ignore", invalid="ignore"):
        n11, n12, n21, n22 = p[:, 0, 0] * f - lam, p[:, 0, 1] * f, p[:, 1, 0] * f, p[:, 1, 1] * f - lam
        nrm = np.abs(n11) + np.abs(n12) * kscale + np.abs(n21) / kscale + np.abs(n22)
        err_det = err_d * nrm
        use = (f <= 1e150) & (err_det < err_d)
        det_form = -(n11 * n22 - n12 * n21) / (2.0 * lam)
    return np.where(use, det_form, d - lam), np.where(use, err_det, err_d)


@dataclass(frozen=True)
class Comb:
    """N point interactions per period (module docstring).

    ``positions`` sorted in [start, start + period), ``strengths`` alpha_j in the same order
    (energy * length, > 0 attracts), ``mass`` in m_e, ``hbar2_2me`` = C (energy * length^2).
    """

    positions: tuple
    strengths: tuple
    period: float
    mass: float = 1.0
    hbar2_2me: float = 0.5
    start: float = 0.0

    @property
    def couplings(self) -> np.ndarray:
        """g_j = m alpha_j / hbar^2 (1/length)."""
        return self.mass * np.asarray(self.strengths, dtype=float) / (2.0 * self.hbar2_2me)

    @property
    def gaps(self) -> np.ndarray:
        """Free stretches d_j from point j to point j + 1 (the last wraps around the period)."""
        x = np.asarray(self.positions, dtype=float)
        return np.diff(np.concatenate([x, [x[0] + self.period]]))

    @property
    def zone_energy(self) -> float:
        """E_L = C pi^2 / (m L^2): the free-particle energy at the zone boundary."""
        return self.hbar2_2me * math.pi**2 / (self.mass * self.period**2)

    def discriminant(self, energies):
        """(D, dD/dE, error of D, error of dD/dE, [(D - 1, error), (D + 1, error)]) at ``energies``.

        Closed form (module docstring); D -+ 1 in the more accurate of the trace and determinant forms
        (:mod:`fdsolver.numerics.period`).
        """
        e = np.atleast_1d(np.asarray(energies, dtype=float))
        g = self.couplings
        k2 = -self.mass * e / self.hbar2_2me  # (1/length^2), > 0 below zero energy
        kscale = np.sqrt(np.abs(k2) + float(np.max(np.abs(g))) ** 2 + self.period**-2)
        p = np.zeros((e.size, 2, 2))
        p[:, 0, 0] = p[:, 1, 1] = 1.0
        dp = np.zeros_like(p)
        logs = np.zeros(e.size)
        big = np.ones(e.size)
        dbig = np.zeros(e.size)
        phase = np.zeros(e.size)
        for gj, d in zip(g, self.gaps):
            p[:, 1, :] -= 2.0 * gj * p[:, 0, :]  # J_j: psi' jumps by -2 g psi
            dp[:, 1, :] -= 2.0 * gj * dp[:, 0, :]
            w = k2 * d * d
            c, s, sp, r = _cs(w)
            phase += (1.0 + np.sqrt(np.abs(w))) ** 2
            dw = -self.mass * d * d / self.hbar2_2me
            a = np.stack([np.stack([c, d * s], -1), np.stack([w * s / d, c], -1)], -2)
            da = np.stack([np.stack([0.5 * s * dw, d * sp * dw], -1), np.stack([0.5 * (c + s) * dw / d, 0.5 * s * dw], -1)], -2)
            p, dp = a @ p, da @ p + a @ dp
            logs += r
            er = np.exp(-r)
            big *= er
            dbig *= er
            nrm = np.abs(p[:, 0, 0]) + np.abs(p[:, 0, 1]) * kscale + np.abs(p[:, 1, 0]) / kscale + np.abs(p[:, 1, 1])
            dn = np.abs(dp[:, 0, 0]) + np.abs(dp[:, 0, 1]) * kscale + np.abs(dp[:, 1, 0]) / kscale + np.abs(dp[:, 1, 1])
            big, dbig = np.maximum(big, nrm), np.maximum(dbig, dn)
            p /= nrm[:, None, None]
            dp /= nrm[:, None, None]
            logs += np.log(nrm)
            big /= nrm
            dbig /= nrm
        f = np.exp(np.minimum(logs, LOG_CAP))
        with np.errstate(divide="ignore"):
            grow = 4.0 * EPS * np.sqrt(2.0 + phase)  # roundings of products and phases, in quadrature (numerics.period)
            err = grow * np.exp(np.minimum(logs + np.log(big), LOG_CAP))
            derr = grow * np.exp(np.minimum(logs + np.log(dbig), LOG_CAP))
        d = 0.5 * (p[:, 0, 0] + p[:, 1, 1]) * f
        edge = [_edge_form(lam, p, f, d, err, kscale) for lam in (1.0, -1.0)]
        return d, 0.5 * (dp[:, 0, 0] + dp[:, 1, 1]) * f, err, derr, edge

    def _cells(self):
        """The free stretches as cells (V = 0, point strengths at their edges), and their rotated copy."""
        x = np.asarray(self.positions, dtype=float)
        edges = np.concatenate([[self.start], x[x > self.start], [self.start + self.period]])
        jump = np.zeros(edges.size)
        for xj, a in zip(x, self.strengths):
            jump[int(np.argmin(np.abs(edges - xj)))] += a
        v = np.zeros(edges.size - 1)
        mass = np.full(v.size, float(self.mass))
        return edges, v, mass, jump

    def evaluate(self, energies, count: bool = True) -> np.ndarray:
        """Provider rows (:data:`fdsolver.numerics.period.COLUMNS`; Dirichlet count -1 without ``count``)."""
        e = np.atleast_1d(np.asarray(energies, dtype=float))
        out = np.empty((e.size, len(COLUMNS)))
        out[:, 0], out[:, 1], out[:, 2], out[:, 3], edge = self.discriminant(e)
        (out[:, 5], out[:, 7]), (out[:, 6], out[:, 8]) = edge
        out[:, 4] = -1.0
        if count:
            re, rv, rm, rj = rotate(*self._cells(), self.start, self.period)
            kscale = self.hbar2_2me * math.sqrt(float(np.max(np.abs(self.couplings))) ** 2 + self.period**-2) / self.mass
            for i, ei in enumerate(e):
                k2 = rm * (rv - ei) / self.hbar2_2me
                out[i, 4] = carry(re, k2, rm, rj, self.hbar2_2me, kscale, 0.0, 1.0)[0]
        return out

    def cells(self) -> PeriodCells:
        """The comb as exact period cells of :mod:`fdsolver.bloch.cellgrid` (for Bloch functions)."""
        edges, v, mass, jump = self._cells()
        kscale = self.hbar2_2me * math.sqrt(float(np.max(np.abs(self.couplings))) ** 2 + self.period**-2) / self.mass
        return PeriodCells(0, edges, v, mass, jump, rotate(edges, v, mass, jump, self.start, self.period),
                           self.hbar2_2me, kscale)

    def as_lattice(self) -> Lattice:
        """The comb as a :class:`~fdsolver.bloch.lattice.Lattice` of ``point`` components."""
        shapes = tuple(S.Point(None, float(x), float(a)) for x, a in zip(self.positions, self.strengths))
        pot = Potential(shapes, kinetic_units(self.hbar2_2me), float(self.mass), None)
        return lattice(pot, self.period, self.start)

    def source(self) -> Source:
        """The comb as a band source: one exact level, the closed form."""
        cells = self.cells()
        g = self.couplings
        e_l = self.zone_energy
        attract = float(np.sum(g[g > 0]))
        repel = float(np.sum(-self.strengths_array[self.strengths_array < 0]))

        def first_range(n_bands):
            e_lo = -self.hbar2_2me * attract**2 / self.mass - 0.1 * e_l
            return e_lo, e_l * (n_bands + 1) ** 2 + repel / self.period

        return Source(self.period, self.start, self.hbar2_2me, e_l, first_range,
                      lambda e_lo, e_hi: _OneLevel(self), lambda provider: cells)

    @property
    def strengths_array(self) -> np.ndarray:
        return np.asarray(self.strengths, dtype=float)


class _OneLevel:
    """The comb's single, exact level."""

    compact = True

    def __init__(self, c: Comb):
        self.comb = c

    def at(self, level: int) -> Comb:
        return self.comb


def comb(positions, strengths, period: float, mass: float = 1.0, hbar2_2me: float = 0.5, start=None) -> Comb:
    """A validated :class:`Comb`; positions are wrapped into [start, start + period) (start: the first point)."""
    x = np.atleast_1d(np.asarray(positions, dtype=float))
    a = np.atleast_1d(np.asarray(strengths, dtype=float))
    if x.size == 0 or x.size != a.size:
        raise CaseError("a comb needs one strength per point and at least one point", key="potential")
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(a))):
        raise CaseError("positions and strengths must be finite", key="potential")
    for name, v in (("period", period), ("mass", mass), ("hbar2_2me", hbar2_2me)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise CaseError(f"{name} must be finite and > 0, got {v!r}", key=name)
    start = float(np.min(x)) if start is None else float(start)
    xr = start + np.mod(x - start, period)
    xr = np.where(xr >= start + period, start, xr)
    order = np.argsort(xr, kind="stable")
    xr, a = xr[order], a[order]
    if np.any(np.diff(xr) <= 1e-12 * period) or (xr[-1] - xr[0] >= period * (1 - 1e-12) and xr.size > 1):
        raise CaseError("two points of the comb coincide (modulo the period); merge them into one strength",
                        key="potential")
    return Comb(tuple(xr.tolist()), tuple(a.tolist()), float(period), float(mass), float(hbar2_2me), start)


def comb_of(lat: Lattice) -> Comb:
    """The comb of a lattice whose components are all point interactions (constant mass, no layer stack)."""
    pot = lat.source
    if pot.stack is not None:
        raise CaseError("the delta comb needs a constant mass and no layer stack; remove the [[layer]] tables",
                        key="layer")
    for i, s in enumerate(pot.shapes, start=1):
        if not isinstance(s, S.Point):
            raise CaseError(f"component {i} is a '{s.kind}', not a point; the delta comb holds point components only",
                            key=f"potential[{i}].shape")
    terms = lat.cell().point_terms()
    if not terms:
        raise CaseError("the lattice has no point components", key="potential")
    x, a = zip(*terms)
    return comb(x, a, lat.period, pot.mass, pot.hbar2_2me, lat.start)


def comb_edges(c: Comb, settings=None):
    """Band edges, widths, gaps and masses of the comb (:class:`~fdsolver.bloch.result.BandEdges`)."""
    from fdsolver.bloch.structure import band_edges

    return band_edges(c.source(), settings)


def comb_bands(c: Comb, settings=None):
    """The comb's band structure (:class:`~fdsolver.bloch.result.Bands`)."""
    from fdsolver.bloch.structure import band_structure

    return band_structure(c.source(), settings)
