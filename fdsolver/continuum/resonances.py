"""Resonances (S-matrix poles E_r - i Gamma/2) and bound states in an energy window: none missed, none doubled.

Method.  The poles are the zeros of the Jost function J(E)
(:mod:`fdsolver.continuum.jost`) below the real axis.  The window is cut at
the channel thresholds (J has a branch point there, its cut hanging straight
down) into pieces; in each piece the zeros in the rectangle

    Re E in [a, b],   -max_width/2 <= Im E <= (b - a)/2

are counted by the argument principle and located by
:func:`fdsolver.numerics.complexroots.find_zeros` (recursive halving until
each zero has its own rectangle, Delves-Lyness first guess, Newton).  The top
edge lies on the physical sheet, where J has no zeros, far from the narrow
poles just below the real axis, so a narrow resonance never slips between two
samples: it is counted by the phase of J along a contour that stays at a
distance of the order of the window from it.  Pieces below every threshold
hold only bound states, which are real zeros of J (Gamma = 0 exactly, energy
polished by bisection on the sign of J).

Accuracy.  Newton in the complex plane finds a pole to about the round-off of
J, eps times the energy scale; its error estimate is the distance between the
poles of J evaluated at the left edge and at the right edge (the same
function, different rounding), plus Newton's last step.  For a width below
1e-5 of the distance D to the nearest other pole or threshold the real-axis
formula of :mod:`fdsolver.continuum.narrow` is used as well (error
O((Gamma/D)^2) and eps relative in Gamma, however small Gamma is), and the
estimate with the smaller error is kept.  Smooth potentials repeat the
polish on nested cell levels and Richardson-extrapolate E_r and Gamma.

Units: energies and widths in the case energy unit, lifetimes hbar/Gamma in s.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fdsolver.continuum.jost import jost
from fdsolver.continuum.narrow import narrow_pole
from fdsolver.continuum.profile import ladder
from fdsolver.continuum.si import joule_per_energy_unit, lifetime_seconds
from fdsolver.errors import CaseError
from fdsolver.model.units import HBAR
from fdsolver.numerics.complexroots import find_zeros, polish
from fdsolver.numerics.precision import EPS
from fdsolver.numerics.richardson import Romberg

#: a pole narrower than this fraction of the distance to its neighbours also gets the real-axis formula
NARROW = 1e-5
#: most nested levels for smooth potentials
MAX_LEVELS = 8


@dataclass(frozen=True, eq=False)
class Resonances:
    """Poles found in ``window`` (case energy unit), sorted by energy.

    ``energy`` E_r and ``width`` Gamma (full width; pole at E_r - i Gamma/2)
    in ``energy_unit`` with absolute ``energy_error`` and ``width_error``;
    ``log10_width`` = log10(Gamma / energy_unit), finite even where Gamma
    underflows a double (then ``width`` is 0 but ``bound`` is False);
    ``lifetime`` = hbar / Gamma and ``lifetime_error`` in s (inf for bound
    states), ``log10_lifetime`` = log10(lifetime / s) (finite beyond the double range); ``bound`` marks true bound states (real zeros below every
    threshold); ``method`` names how each pole was obtained.  ``count`` is the
    number of zeros the contours counted, ``max_width`` the largest width
    searched, ``levels`` the cell levels used (1 = exact per segment).
    """

    energy: np.ndarray
    width: np.ndarray
    energy_error: np.ndarray
    width_error: np.ndarray
    log10_width: np.ndarray
    lifetime: np.ndarray
    lifetime_error: np.ndarray
    log10_lifetime: np.ndarray
    bound: np.ndarray
    method: tuple[str, ...]
    window: tuple[float, float]
    max_width: float
    energy_unit: str
    count: int
    levels: int
    notes: tuple[str, ...] = field(default=())

    def __len__(self) -> int:
        return int(self.energy.size)


@dataclass
class _Pole:
    z: complex
    err_e: float
    err_w: float
    bound: bool
    method: str
    log10_width: float = math.nan


def _pieces(lo: float, hi: float, thresholds) -> list[tuple[float, float, bool]]:
    """The window cut at thresholds: (a, b, below every threshold)."""
    finite = sorted(t for t in thresholds if math.isfinite(t))
    cuts = [lo] + [t for t in finite if lo < t < hi] + [hi]
    lowest = min(thresholds) if thresholds else math.inf
    return [(a, b, b <= lowest) for a, b in zip(cuts[:-1], cuts[1:]) if b > a]


def _bound_energy(f, x: float, width: float) -> float:
    """Real zero of J near x (J is real on the real axis below the thresholds): bisection on its sign."""
    def s(e):
        m, _ = f(np.array([e], dtype=complex))
        return float(m[0].real)

    w = max(1e-12 * max(abs(x), width), 1e-300)
    for _ in range(60):
        a, b = x - w, x + w
        fa, fb = s(a), s(b)
        if fa == 0:
            return a
        if fb == 0:
            return b
        if (fa > 0) != (fb > 0):
            # imported here, not with the module: scipy.optimize costs a cold start about 0.4 s
            from scipy.optimize import brentq

            return brentq(s, a, b, xtol=4 * EPS * abs(x) + 1e-300, rtol=4 * EPS)
        w *= 4.0
    return x


#: largest growth exponent |Im k| L of the outgoing waves over a smooth potential's tails (e^12 ~ 1.6e5)
MAX_TAIL_GROWTH = 12.0


def _depth_cap(potential, prof, lo: float, hi: float, depth: float) -> float:
    """Largest depth below the real axis at which the tails amplify round-off by at most exp(MAX_TAIL_GROWTH)."""
    from fdsolver.continuum.channels import wavenumber

    feats = potential.features()
    if feats.size == 0:
        return depth
    tails = (max(float(feats[0] - prof.cells.edges[0]), 0.0), max(float(prof.cells.edges[-1] - feats[-1]), 0.0))

    def growth(h):
        g = 0.0
        for ch, t in zip((prof.left, prof.right), tails):
            if ch.kind != "plane" or t == 0.0:
                continue
            k = wavenumber(np.array([lo - 1j * h, hi - 1j * h]), ch.v, ch.mass, ch.c)
            g += t * float(np.max(np.clip(-k.imag, 0.0, None)))  # only waves that grow outward (Im k < 0)
        return g

    if growth(depth) <= MAX_TAIL_GROWTH:
        return depth
    a, b = 0.0, depth
    for _ in range(60):
        m = 0.5 * (a + b)
        a, b = (m, b) if growth(m) <= MAX_TAIL_GROWTH else (a, m)
    return a


def _refine(profile, p: _Pole, scale: float, dist: float, units) -> _Pole:
    """Polish one pole on ``profile``: Newton on J from both edges, and the real-axis formula if it is narrow."""
    fl, fr = jost(profile, "left"), jost(profile, "right")
    a = polish(fl, p.z, scale=scale)
    b = polish(fr, a.z, scale=scale)
    err = abs(a.z - b.z) + a.error + b.error
    # round-off floor: 64 eps of the energy scale; scipy's complex Airy functions carry about 1e-13 themselves
    airy = profile.left.kind == "airy" or profile.right.kind == "airy"
    err += (1e-13 if airy else 64.0 * EPS) * max(abs(a.z), dist)
    if p.bound:
        return _Pole(complex(a.z.real, 0.0), err, 0.0, True, "bound state: real zero of the Jost function")
    out = _Pole(a.z, err, err, False, "contour count, Newton on the Jost function")
    gamma = -2.0 * a.z.imag
    if gamma < NARROW * dist:
        nb = narrow_pole(profile, a.z.real, dist)
        if nb.ok and nb.width_error < err:
            out = _Pole(complex(nb.energy, -0.5 * nb.width), nb.energy_error, nb.width_error, False,
                        "real-axis formula for a narrow pole (contour count)", nb.log10_width)
    if out.z.imag > 0:  # a round-off sign of a width below the noise
        out = _Pole(complex(out.z.real, 0.0), out.err_e, max(out.err_w, 2 * out.z.imag), False, out.method)
    return out


def find_resonances(potential, window, *, max_width: float | None = None, tol: float = 1e-10,
                    domain=None, lad=None) -> Resonances:
    """Every pole with E_r in ``window`` = (lo, hi) and Gamma <= ``max_width`` (default: the window's width).

    Bound states (real poles below every threshold) in the window are
    included with ``bound`` True.  Energies in the case energy unit.
    """
    lo, hi = (float(v) for v in window)
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise CaseError(f"the window must be two finite energies low < high, got {window!r}", key="window")
    max_width = float(max_width) if max_width is not None else hi - lo
    if not max_width > 0:
        raise CaseError(f"max_width must be positive, got {max_width:g}", key="max_width")
    lad = lad or ladder(potential, lo - 0.5 * max_width, hi + 0.5 * max_width, domain)
    unit = potential.units.energy
    notes = list(lad.notes)
    prof = lad.at(0)
    thresholds = [t for t in prof.thresholds()]
    pieces = _pieces(lo, hi, thresholds)
    poles: list[_Pole] = []
    count = 0
    f = jost(prof)
    depth_cap = _depth_cap(potential, prof, lo, hi, 0.5 * max_width) if not lad.exact else math.inf
    if depth_cap < 0.5 * max_width:
        notes.append(f"poles deeper than Gamma/2 = {depth_cap:.3g} {unit} were not searched: over the smooth "
                     "potential's tails the outgoing waves of deeper poles grow beyond what double precision resolves")
    for a, b, below in pieces:
        d = 1e-9 * (b - a)
        a2 = a + d if a in thresholds else a
        b2 = b - d if b in thresholds else b
        top = min(0.5 * (b - a), max(0.5 * max_width, 0.05 * (b - a)))  # on the physical sheet: no zeros there
        bottom = -min(0.5 * max_width, depth_cap) if not below else -min(0.25 * (b - a), depth_cap)
        found = find_zeros(f, a2, b2, bottom, top)
        count += found.count
        notes.extend(found.notes)
        for zr in found.zeros:
            poles.append(_Pole(zr.z, zr.error, zr.error, below, "contour"))
    # distances to the nearest other pole or threshold set the real-axis step
    centres = np.array([p.z.real for p in poles])
    marks = np.concatenate([centres, [t for t in thresholds if math.isfinite(t)], [lo - (hi - lo), hi + (hi - lo)]])
    refined = []
    for i, p in enumerate(poles):
        others = np.delete(marks, i)
        dist = float(np.min(np.abs(others - p.z.real))) if others.size else hi - lo
        dist = min(dist, hi - lo)
        q = _refine(prof, p, hi - lo, dist, potential.units)
        if q.bound:
            q.z = complex(_bound_energy(f, q.z.real, dist), 0.0)
        refined.append((q, dist))
    levels = 1
    if not lad.exact and refined:
        refined, levels, more = _levels(lad, refined, hi - lo, tol, potential.units)
        notes.extend(more)
    keep = [(q, dist) for q, dist in refined if lo <= q.z.real <= hi and -2.0 * q.z.imag <= max_width]
    keep.sort(key=lambda t: t[0].z.real)
    e = np.array([q.z.real for q, _ in keep])
    w = np.array([max(-2.0 * q.z.imag, 0.0) for q, _ in keep])
    ee = np.array([q.err_e for q, _ in keep])
    we = np.array([0.0 if q.bound else q.err_w for q, _ in keep])
    l10 = np.array([q.log10_width if np.isfinite(q.log10_width) else (math.log10(wi) if wi > 0 else -math.inf)
                    for (q, _), wi in zip(keep, w)])
    bound = np.array([q.bound for q, _ in keep], dtype=bool)
    tau = lifetime_seconds(w, potential.units)
    with np.errstate(invalid="ignore", divide="ignore"):
        tau_err = np.where(w > 0, tau * we / np.where(w > 0, w, 1.0), np.where(bound, 0.0, np.inf))
    if not keep:
        notes.append(f"no resonance with its energy in [{lo:g}, {hi:g}] {unit} and a width up to {max_width:g} {unit}")
    l10_tau = np.where(bound, np.inf, math.log10(HBAR / joule_per_energy_unit(potential.units)) - l10)
    return Resonances(e, w, ee, we, l10, tau, tau_err, l10_tau, bound, tuple(q.method for q, _ in keep), (lo, hi), max_width,
                      unit, count, levels, tuple(dict.fromkeys(notes)))


def _levels(lad, refined, scale, tol, units):
    """Polish every pole on finer levels and Richardson-extrapolate E_r and Gamma (smooth potentials)."""
    notes = []
    re_tab, im_tab = Romberg(), Romberg()
    current = [q for q, _ in refined]
    dists = [d for _, d in refined]
    re_tab.add(np.array([q.z.real for q in current]))
    im_tab.add(np.array([q.z.imag for q in current]))
    level = 0
    ok = False
    for level in range(1, MAX_LEVELS):
        prof = lad.at(level)
        current = [_refine(prof, q, scale, d, units) for q, d in zip(current, dists)]
        re_tab.add(np.array([q.z.real for q in current]))
        im_tab.add(np.array([q.z.imag for q in current]))
        if re_tab.levels >= 3:
            er, ei = re_tab.error(), im_tab.error()
            mag = np.array([abs(q.z) for q in current])
            if np.all(er <= tol * mag) and np.all(ei <= tol * np.maximum(np.abs(im_tab.value()), 1e-300) + tol * 1e-3 * mag):
                ok = True
                break
    er, ei = re_tab.error(), im_tab.error()
    out = []
    for i, (q, d) in enumerate(zip(current, dists)):
        z = complex(re_tab.value()[i], 0.0 if q.bound else im_tab.value()[i])
        out.append((_Pole(z, float(er[i]) + q.err_e, 2.0 * float(ei[i]) + q.err_w, q.bound,
                          q.method + f", Richardson over {re_tab.levels} cell levels"), d))
    if not ok:
        notes.append(f"the poles reached only about {float(np.max(er / np.maximum([abs(q.z) for q in current], 1e-300))):.1e} "
                     f"relative after {re_tab.levels} cell levels (asked {tol:g})")
    return out, re_tab.levels, notes
