"""The march at complex energy: complex (psi, u) carried exactly across constant and linear cells.

This is the scattering companion of :mod:`fdsolver.numerics.march` (same
state, same cells, same point jumps), for the continuum: transmission,
Jost functions, resonance poles.  The state is (psi, u) with u = (C / m) psi'
the flux (C = hbar^2 / 2 m_e, m in m_e), continuous across mass steps
(BenDaniel-Duke); a point term -alpha delta(x - edges[j]) makes u jump by
-alpha psi when the march crosses edges[j] left to right (+alpha psi right to
left).  The energy E may be complex (poles of the S-matrix lie below the real
axis); nothing here takes a square root with a branch choice that matters:
the cell propagators are entire functions of E.

Cell i spans [edges[i], edges[i+1]], has mass m_i and the potential
V(x) = v0[i] + slope[i] (x - edges[i]), so that with s = x - edges[i]

    psi'' = (a + b s) psi,   a = m (v0 - E) / C,   b = m slope / C.

* slope = 0 (constant cell): exact cosh / sinh of kappa L, kappa = sqrt(a)
  (any branch: the propagator is even in kappa).  When Re(kappa L) > 1/2 the
  common factor exp(Re kappa L) is taken out (kept in ``log_scale``), so a
  barrier with exp(kappa L) = 1e1000 is crossed in one step without overflow;
  the dominant solution keeps its relative accuracy.  Below |kappa L| = 1e-3
  sinh(kappa L)/kappa is summed as its series.
* slope != 0 (linear cell): the exact solutions are Airy functions of
  z = b^(1/3) (s + a / b).  They are summed here as their convergent Taylor
  series about the start of each sub-cell, c_{n+2} = (a c_n + b c_{n-1}) /
  ((n + 1)(n + 2)), on sub-cells short enough that |a| h^2 <= 2.25 and
  |b| h^3 <= 2.25 (at most about 30 terms, no cancellation worse than e^3).
  This is exact to round-off for every field strength, including fields so
  weak that z is 1e6 and the asymptotic forms of Ai, Bi would lose the phase;
  it is checked against scipy.special.airy in the tests.

The pair is renormalised after every (sub-)cell to max(|psi|, |u| / kscale) = 1
and the dropped factors are summed in ``log_scale``: the true end state is
exp(log_scale) (psi, u).  Cost: O(cells) per energy for constant cells, O(total
phase) for linear ones.  Lengths in the case length unit, energies in its
energy unit, C in energy * length^2.
"""

from __future__ import annotations

import cmath
import math

import numpy as np

from fdsolver.numerics.kernels import njit

#: sub-cell limit |a| h^2 and |b| h^3 of the series propagator of linear cells
SERIES_STEP = 2.25
#: most terms of one series (never reached: terms fall like (2.25)^(n/2) / n!)
SERIES_TERMS = 80


@njit
def _series_one(aa, bb, d0, d1):
    """Sum of the scaled Taylor series d_n = c_n h^n from (d_0, d_1): returns (y(h), h y'(h))."""
    dm1 = 0.0 + 0.0j
    y = d0 + d1
    dy = d1
    for n in range(1, SERIES_TERMS):
        dn = (aa * d0 + bb * dm1) / (n * (n + 1.0))  # d_{n+1} = (aa d_{n-1} + bb d_{n-2}) / (n (n + 1))
        dm1, d0, d1 = d0, d1, dn
        y += dn
        dy += (n + 1.0) * dn
        if n > 3 and abs(d1) + abs(d0) + abs(dm1) <= 1e-17 * (abs(y) + abs(dy)):
            break
    return y, dy


@njit
def _series(a, b, h):
    """(y1, h y1', y2 / h, y2') at s = h of y'' = (a + b s) y with y1 = (1, 0), y2 = (0, 1) at s = 0."""
    aa = a * h * h
    bb = b * h * h * h
    y1, dy1 = _series_one(aa, bb, 1.0 + 0.0j, 0.0 + 0.0j)
    y2, dy2 = _series_one(aa, bb, 0.0 + 0.0j, 1.0 + 0.0j)  # solution 2 carried as y2 / h
    return y1, dy1, y2, dy2


@njit
def _constant_cell(k2, length, m, c, psi, u, direction):
    """Exact step over a constant cell; returns (psi, u, log factor dropped)."""
    kap = cmath.sqrt(k2)
    if kap.real < 0.0:
        kap = -kap
    kl = kap * length
    lg = 0.0
    if kl.real > 0.5:
        e2 = cmath.exp(-2.0 * kl)
        ph = cmath.exp(1j * kl.imag)
        ch = 0.5 * ph * (1.0 + e2)
        shk = 0.5 * ph * (1.0 - e2) / kap  # sinh / kappa
        ksh = 0.5 * ph * (1.0 - e2) * kap  # kappa sinh
        lg = kl.real
    elif abs(kl) < 1e-3:
        x2 = kl * kl
        ser = 1.0 + x2 / 6.0 * (1.0 + x2 / 20.0 * (1.0 + x2 / 42.0))
        ch = 1.0 + x2 / 2.0 * (1.0 + x2 / 12.0 * (1.0 + x2 / 30.0))
        shk = length * ser
        ksh = k2 * length * ser
    else:
        ch = cmath.cosh(kl)
        sh = cmath.sinh(kl)
        shk = sh / kap
        ksh = sh * kap
    dpsi = m * u / c
    if direction > 0:
        psi_n = ch * psi + shk * dpsi
        dpsi_n = ksh * psi + ch * dpsi
    else:
        psi_n = ch * psi - shk * dpsi
        dpsi_n = -ksh * psi + ch * dpsi
    return psi_n, c * dpsi_n / m, lg


@njit
def _normalise(psi, u, kscale):
    r = max(abs(psi), abs(u) / kscale)
    if r > 0.0 and r != 1.0:
        return psi / r, u / r, math.log(r)
    return psi, u, 0.0


@njit
def _linear_cell(v0, slope, length, m, c, energy, psi, u, direction, kscale):
    """Exact step over a linear cell by Taylor series on sub-cells; returns (psi, u, log factor dropped)."""
    a_start = m * (v0 - energy) / c
    b = m * slope / c
    a_end = a_start + b * length
    amax = max(abs(a_start), abs(a_end))
    n_sub = int(math.ceil(length * max(math.sqrt(amax / SERIES_STEP), (abs(b) / SERIES_STEP) ** (1.0 / 3.0))))
    if n_sub < 1:
        n_sub = 1
    h = length / n_sub
    lg = 0.0
    for j in range(n_sub):
        k = j if direction > 0 else n_sub - 1 - j
        a = a_start + b * (k * h)
        y1, hdy1, y2h, dy2 = _series(a, b, h)
        # y1 = value of solution (1, 0); hdy1 = h y1'; y2h = y2 / h (y2 has y2'(0) = 1) ; dy2 = y2'
        y2 = y2h * h
        dy1 = hdy1 / h
        dpsi = m * u / c
        if direction > 0:
            psi_n = y1 * psi + y2 * dpsi
            dpsi_n = dy1 * psi + dy2 * dpsi
        else:  # inverse of [[y1, y2], [dy1, dy2]] (unit Wronskian)
            psi_n = dy2 * psi - y2 * dpsi
            dpsi_n = -dy1 * psi + y1 * dpsi
        psi = psi_n
        u = c * dpsi_n / m
        psi, u, d = _normalise(psi, u, kscale)
        lg += d
    return psi, u, lg


@njit
def _cell_step(edges, v0, slope, mass, c, energy, cell, psi, u, direction, kscale):
    """One cell crossed in ``direction``: exact constant or Airy (linear) solution, then normalised; returns
    (psi, u, ln of the scale removed)."""
    length = edges[cell + 1] - edges[cell]
    m = mass[cell]
    if slope[cell] == 0.0:
        psi, u, d = _constant_cell(m * (v0[cell] - energy) / c, length, m, c, psi, u, direction)
        psi, u, d2 = _normalise(psi, u, kscale)
        return psi, u, d + d2
    return _linear_cell(v0[cell], slope[cell], length, m, c, energy, psi, u, direction, kscale)


@njit
def sweep(edges, v0, slope, mass, jump, c, energy, i_from, i_to, psi, u, kscale, jump_start, jump_end, rec_log,
          heading=0):
    """Carry (psi, u) from edges[i_from] to edges[i_to] (either direction); returns (psi, u, log_scale).

    ``heading`` (+1 right, -1 left) says which way a jump is crossed when
    i_from == i_to (0: rightward unless i_to < i_from).  The point jump at the start edge is applied if ``jump_start``, the one at
    the end edge if ``jump_end``; every edge in between is crossed.  If
    ``rec_log`` has one entry per edge, log|psi| (with the dropped factors)
    is stored at every edge visited (before the jump there).
    """
    direction = 1 if i_to > i_from else (-1 if i_to < i_from else (heading if heading != 0 else 1))
    record = rec_log.shape[0] == edges.shape[0]
    log_scale = 0.0
    energy = complex(energy)
    psi = complex(psi)
    u = complex(u)
    i = i_from
    while True:
        if record:
            ap = abs(psi)
            rec_log[i] = (math.log(ap) if ap > 0.0 else -math.inf) + log_scale
        if (i != i_from or jump_start) and (i != i_to or jump_end) and jump[i] != 0.0:
            u = u - direction * jump[i] * psi
        if i == i_to:
            break
        psi, u, d = _cell_step(edges, v0, slope, mass, c, energy, i if direction > 0 else i - 1, psi, u, direction,
                               kscale)
        log_scale += d
        i += direction
    return psi, u, log_scale


_NO_RECORD = np.zeros(0)


@njit
def sweep_many(edges, v0, slope, mass, jump, c, energies, i_from, i_to, psi0, u0, kscale, jump_start, jump_end,
               heading=0):
    """:func:`sweep` for an array of energies (start states ``psi0``, ``u0`` per energy)."""
    n = energies.shape[0]
    psi = np.empty(n, dtype=np.complex128)
    u = np.empty(n, dtype=np.complex128)
    lg = np.empty(n)
    rec = np.zeros(0)
    for k in range(n):
        p, q, s = sweep(edges, v0, slope, mass, jump, c, energies[k], i_from, i_to, psi0[k], u0[k], kscale,
                        jump_start, jump_end, rec, heading)
        psi[k] = p
        u[k] = q
        lg[k] = s
    return psi, u, lg


def carry_waves(cells, energies, i_from: int, i_to: int, psi0, u0, *, jump_start: bool = True, jump_end: bool = True,
                heading: int = 0):
    """Array front end of :func:`sweep_many` for a cell set ``cells`` (any object with edges, v0, slope, mass, jump, c, kscale)."""
    e = np.atleast_1d(np.asarray(energies, dtype=np.complex128))
    p0 = np.broadcast_to(np.asarray(psi0, dtype=np.complex128), e.shape).copy()
    q0 = np.broadcast_to(np.asarray(u0, dtype=np.complex128), e.shape).copy()
    return sweep_many(cells.edges, cells.v0, cells.slope, cells.mass, cells.jump, float(cells.c), e.ravel(),
                      int(i_from), int(i_to), p0.ravel(), q0.ravel(), float(cells.kscale), bool(jump_start), bool(jump_end),
                      int(heading))


def record_waves(cells, energy, i_from: int, i_to: int, psi0, u0, heading: int = 0):
    """One sweep that also returns log|psi| at every edge (nan where not visited)."""
    rec = np.full(cells.edges.size, np.nan)
    psi, u, lg = sweep(cells.edges, cells.v0, cells.slope, cells.mass, cells.jump, float(cells.c), complex(energy),
                       int(i_from), int(i_to), complex(psi0), complex(u0), float(cells.kscale), True, True, rec,
                       int(heading))
    return psi, u, lg, rec


class WaveCells:
    """Cells for :func:`sweep`: edges, v0 (V at each cell's left edge), slope (dV/dx), mass, jump per edge, C, kscale.

    Arrays are contiguous float64; ``edges`` has one entry more than the cell
    arrays, ``jump`` one per edge.  Lengths in the case length unit, energies in
    its energy unit, C = hbar^2 / 2 m_e in energy * length^2.
    """

    __slots__ = ("edges", "v0", "slope", "mass", "jump", "c", "kscale")

    def __init__(self, edges, v0, slope, mass, jump, c: float, kscale: float):
        self.edges = np.ascontiguousarray(edges, dtype=float)
        self.v0 = np.ascontiguousarray(v0, dtype=float)
        self.slope = np.ascontiguousarray(slope, dtype=float)
        self.mass = np.ascontiguousarray(mass, dtype=float)
        self.jump = np.ascontiguousarray(jump, dtype=float)
        self.c = float(c)
        self.kscale = float(kscale)
        n = self.edges.size - 1
        if not (self.v0.size == self.slope.size == self.mass.size == n and self.jump.size == n + 1):
            raise ValueError("cell arrays must have one entry per cell and jump one per edge")

    @property
    def n_cells(self) -> int:
        return self.edges.size - 1

    def value_at_edges(self) -> tuple[np.ndarray, np.ndarray]:
        """V just right of each edge but the last, and just left of each edge but the first."""
        length = np.diff(self.edges)
        return self.v0, self.v0 + self.slope * length


@njit
def _trace(edges, v0, slope, mass, jump, c, energy, i_from, i_to, psi, u, kscale, out_psi, out_log):
    """:func:`sweep` that stores psi (complex, before the jump) and its log scale at every edge it visits."""
    direction = 1 if i_to >= i_from else -1
    log_scale = 0.0
    energy = complex(energy)
    psi = complex(psi)
    u = complex(u)
    i = i_from
    while True:
        out_psi[i] = psi
        out_log[i] = log_scale
        if i != i_from and jump[i] != 0.0:
            u = u - direction * jump[i] * psi
        if i == i_to:
            break
        psi, u, d = _cell_step(edges, v0, slope, mass, c, energy, i if direction > 0 else i - 1, psi, u, direction,
                               kscale)
        log_scale += d
        i += direction


def trace_waves(cells, energy, i_from: int, i_to: int, psi0, u0):
    """psi at every edge from ``i_from`` to ``i_to`` (the jump at ``i_from`` not applied): (psi, log) arrays over
    the edges, psi the complex value times exp(-log) (nan where not visited)."""
    out_psi = np.full(cells.edges.size, np.nan + 0j)
    out_log = np.full(cells.edges.size, np.nan)
    _trace(cells.edges, cells.v0, cells.slope, cells.mass, cells.jump, float(cells.c), complex(energy), int(i_from),
           int(i_to), complex(psi0), complex(u0), float(cells.kscale), out_psi, out_log)
    return out_psi, out_log
