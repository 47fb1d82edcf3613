"""Tunnelling current density of a layer stack under bias (Tsu-Esaki), in A/m^2 with an error estimate.

With the emitter on the left (mass m* = the first layer's mass, band edge E_c),
chemical potentials mu_L = E_F and mu_R = E_F - e V, and the bias dropping
linearly across the inner layers (outer layers flat; the collector band edge
lowered by e V), the current density is (Tsu and Esaki, Appl. Phys. Lett. 22,
562 (1973); parabolic bands, transverse momentum conserved with the emitter mass)

    J = (e m* m_e / (2 pi^2 hbar^3)) int T(E) S(E) dE,
    S(E) = k_B T ln[(1 + exp((mu_L - E)/k_B T)) / (1 + exp((mu_R - E)/k_B T))],

S(E) = (mu_L - E)_+ - (mu_R - E)_+ at T = 0.  T(E) is the exact transmission
of the biased stack (:mod:`fdsolver.continuum.amplitudes`: constant and Airy
cells).  The integral runs from the higher of the two outer band edges to
max(mu_L, mu_R) + 40 k_B T (the supply is below exp(-40) beyond).  Every
resonance in that range (width up to a quarter of it) is found first (:func:`find_resonances`) and its
neighbourhood E_r +- 30 Gamma is integrated in the phase variable
theta = atan(2 (E - E_r) / Gamma), where the Lorentzian is flat; the rest in E.
Each piece is halved until a 20-point and a 10-point Gauss-Legendre rule agree
to ``tol`` of the total; the error estimate is the sum of those differences plus
the supply left beyond the upper limit.  Energies in the case energy unit,
bias in V, temperature in K.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdsolver.continuum.amplitudes import amplitudes
from fdsolver.continuum.profile import ladder
from fdsolver.continuum.resonances import find_resonances
from fdsolver.continuum.si import joule_per_energy_unit
from fdsolver.errors import CaseError
from fdsolver.model.potential import Potential
from fdsolver.model.shapes import Table
from fdsolver.model.units import BOLTZMANN, ELECTRON_MASS, ELEMENTARY_CHARGE, HBAR

_X10, _W10 = np.polynomial.legendre.leggauss(10)
_X20, _W20 = np.polynomial.legendre.leggauss(20)
#: most rounds of interval halving
MAX_ROUNDS = 40


@dataclass(frozen=True, eq=False)
class CurrentVoltage:
    """J(V): ``bias`` in V, ``current_density`` and ``current_error`` in A/m^2, at ``temperature`` (K) and
    emitter ``fermi_level`` (case energy unit); ``resonances`` the poles found at each bias; ``evaluations`` the
    transmissions computed per bias."""

    bias: np.ndarray
    current_density: np.ndarray
    current_error: np.ndarray
    temperature: float
    fermi_level: float
    energy_unit: str
    resonances: tuple
    evaluations: np.ndarray
    notes: tuple[str, ...] = field(default=())


def biased_potential(potential: Potential, bias: float) -> Potential:
    """The stack with e V (bias in V) dropping linearly across its inner layers (a linear table shape)."""
    if potential.stack is None or len(potential.stack.layers) < 3:
        raise CaseError("a bias needs a layer stack with at least one inner layer ([[layer]] tables)", key="layer")
    x = potential.stack.interfaces
    drop = float(bias) * ELEMENTARY_CHARGE / joule_per_energy_unit(potential.units)
    if not math.isfinite(drop):
        raise CaseError("the current needs named units (nm-meV or atomic)", key="units")
    ramp = Table("bias", (float(x[0]), float(x[-1])), (0.0, -drop), "linear", "bias")
    return Potential(potential.shapes + (ramp,), potential.units, potential.mass, potential.stack)


def _supply(e, mu_l, mu_r, kt):
    if kt == 0.0:
        return np.clip(mu_l - e, 0.0, None) - np.clip(mu_r - e, 0.0, None)
    return kt * (np.logaddexp(0.0, (mu_l - e) / kt) - np.logaddexp(0.0, (mu_r - e) / kt))


def current_density(potential: Potential, bias: float, *, temperature: float, fermi_level: float,
                    tol: float = 1e-6):
    """(J, error) in A/m^2 and the resonances of the biased stack, for one bias in V."""
    if not temperature >= 0:
        raise CaseError(f"temperature must be >= 0 K, got {temperature!r}", key="--temperature")
    biased = biased_potential(potential, bias)
    unit_j = joule_per_energy_unit(potential.units)
    kt = BOLTZMANN * temperature / unit_j
    drop = float(bias) * ELEMENTARY_CHARGE / unit_j
    mu_l, mu_r = float(fermi_level), float(fermi_level) - drop
    lad = ladder(biased, mu_r - 1.0, mu_l + 1.0)
    prof = lad.at(0)
    e_lo = max(prof.left.threshold, prof.right.threshold)
    e_hi = max(mu_l, mu_r) + 40.0 * kt
    mass = prof.left.mass
    pref = ELEMENTARY_CHARGE * mass * ELECTRON_MASS / (2.0 * math.pi**2 * HBAR**3) * unit_j**2
    if not e_hi > e_lo:
        return 0.0, 0.0, None, 0
    # poles broader than a quarter of the range are smooth on it: the plain quadrature takes them
    res = find_resonances(biased, (e_lo, e_hi), max_width=0.25 * (e_hi - e_lo), lad=ladder(biased, e_lo, e_hi))
    marks = [e_lo, e_hi] + [m for m in (mu_l, mu_r) if e_lo < m < e_hi]
    pieces = []  # (a, b, centre, half-width) ; centre None for plain pieces
    lor = []
    for e_r, g in zip(res.energy, res.width):
        if g > 0 and e_lo < e_r < e_hi:
            a, b = max(e_lo, e_r - 30 * g), min(e_hi, e_r + 30 * g)
            lor.append((a, b, e_r, 0.5 * g))
    lor.sort()
    merged = []
    for a, b, c, h in lor:  # overlapping neighbourhoods stay plain
        if merged and a < merged[-1][1]:
            pa, pb, _, _ = merged.pop()
            merged.append((pa, max(pb, b), None, None))
        else:
            merged.append((a, b, c, h))
    cuts = sorted(set(marks + [p for m in merged for p in m[:2]]))
    for a, b in zip(cuts[:-1], cuts[1:]):
        inside = [m for m in merged if m[2] is not None and m[0] <= a and b <= m[1]]
        if inside:
            _, _, c, h = inside[0]
            pieces.append((math.atan((a - c) / h), math.atan((b - c) / h), c, h))
        else:
            pieces.append((a, b, None, None))

    def integrand(t, c, h):
        if c is None:
            e = t
            jac = np.ones_like(t)
        else:
            e = c + h * np.tan(t)
            jac = h / np.cos(t) ** 2
        return e, jac

    evals = 0
    done_val, done_err = 0.0, 0.0
    active = pieces
    for _ in range(MAX_ROUNDS):
        if not active:
            break
        nodes = []
        for i, (a, b, c, h) in enumerate(active):
            mid, half = 0.5 * (a + b), 0.5 * (b - a)
            nodes.append(mid + half * _X20)
            nodes.append(mid + half * _X10)
        pts = np.concatenate(nodes)
        e_all = np.empty_like(pts)
        jac_all = np.empty_like(pts)
        k = 0
        for a, b, c, h in active:
            for _n in (20, 10):
                seg = pts[k:k + _n]
                e_all[k:k + _n], jac_all[k:k + _n] = integrand(seg, c, h)
                k += _n
        trans = amplitudes(prof if lad.exact else lad.at(0), e_all).transmission
        evals += e_all.size
        f = trans * _supply(e_all, mu_l, mu_r, kt) * jac_all
        k = 0
        vals, errs = [], []
        for a, b, c, h in active:
            half = 0.5 * (b - a)
            g20 = half * float(np.dot(_W20, f[k:k + 20]))
            g10 = half * float(np.dot(_W10, f[k + 20:k + 30]))
            k += 30
            vals.append(g20)
            errs.append(abs(g20 - g10))
        total = done_val + sum(vals)
        nxt = []
        for (a, b, c, h), v, er in zip(active, vals, errs):
            if er <= tol * abs(total) * (b - a) / max(1e-300, _span(pieces)) + 1e-300 or (b - a) < 1e-14 * max(1.0, abs(a)):
                done_val += v
                done_err += er
            else:
                m = 0.5 * (a + b)
                nxt += [(a, m, c, h), (m, b, c, h)]
        active = nxt
    for a, b, c, h in active:
        done_err += abs(b - a)  # unfinished pieces (never reached in practice): a loud error bar
    tail = kt * math.exp(-40.0) * (e_hi - e_lo) if kt > 0 else 0.0
    return pref * done_val, pref * (done_err + tail), res, evals


def _span(pieces) -> float:
    return float(sum(b - a for a, b, _, _ in pieces))


def _one(args):
    potential, bias, temperature, fermi_level, tol = args
    j, err, res, n = current_density(potential, bias, temperature=temperature, fermi_level=fermi_level, tol=tol)
    return j, err, res, n


def current_voltage(potential: Potential, biases, *, temperature: float, fermi_level: float, tol: float = 1e-6,
                    executor=None) -> CurrentVoltage:
    """J at every bias (V).  ``executor`` may be any object with ``map(fn, iterable)`` (e.g. a process pool)."""
    v = np.atleast_1d(np.asarray(biases, dtype=float))
    jobs = [(potential, float(b), float(temperature), float(fermi_level), tol) for b in v]
    out = list(executor.map(_one, jobs)) if executor is not None else [_one(j) for j in jobs]
    notes = []
    for b, (_, _, res, _) in zip(v, out):
        if res is not None:
            notes.extend(f"at {b:g} V: {n}" for n in res.notes)
    return CurrentVoltage(v, np.array([o[0] for o in out]), np.array([o[1] for o in out]), float(temperature),
                          float(fermi_level), potential.units.energy, tuple(o[2] for o in out),
                          np.array([o[3] for o in out]), tuple(notes))
