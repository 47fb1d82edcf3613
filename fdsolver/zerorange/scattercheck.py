"""Zero-range check for scattering: T(E) and the resonances of finite wells or barriers against point interactions.

Each point component (x_j, alpha_j) is replaced by a ``shape`` profile of the
same integrated strength int V dx = -alpha_j at the same centroid (a well for
alpha > 0, a barrier for alpha < 0), for a ladder of widths, on whatever else
the case holds.  The reference is

* on a plain background (point components only, constant mass, open line):
  the closed forms of :mod:`fdsolver.zerorange.pointscatter` (products of
  2 x 2 transfer matrices; exact);
* otherwise: the same case with its exact point terms, by the transfer march
  of :mod:`fdsolver.continuum.transmission` (exact per segment where V is
  piecewise linear; point jumps exact).

T of the finite model comes from the same transfer march (exact per
segment for square wells/barriers, Richardson on nested cells for smooth
shapes, with its error estimate).  For every width: the largest |T - T_point|
over the energies (T is a probability, so the deviation is absolute) and, for
every pole of the reference in the energy range, the shift of E_r (energy
unit, and relative to E_r minus the incident asymptote) and the relative
change of the full width Gamma, the finite pole being the one nearest in the
complex plane.  Without a count of energies the grid is DEFAULT_POINTS even
energies plus RESONANCE_POINTS across E_r +- 3 Gamma of every reference
resonance, so no peak falls between samples.  The law max |dT| = a * width^p is fitted on the three
narrowest widths; the validity width is the largest width up to which
max |dT| and every |dE_r|/(E_r - V_in) and |dGamma|/Gamma stay below the
tolerance (log-linear interpolation at the crossing).  Energies in the case
energy unit, lengths in its length unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.errors import CaseError
from fdsolver.model import shapes as S
from fdsolver.model.potential import Potential
from fdsolver.zerorange.background import (
    LADDER_SIZE,
    LADDER_SPAN,
    _points,
    auto_widths,
    has_background,
)

#: energies of the comparison when the range gives no count
DEFAULT_POINTS = 201
#: energies added across each resonance of the reference when the range gives no count
RESONANCE_POINTS = 25
#: widths fitted for the law
LAW_POINTS = 3


@dataclass(frozen=True)
class ScatterCheck:
    """One scattering check (module docstring): arrays over (width,), (energy,), (resonance,) and their products."""

    shape: str
    tolerance: float
    reference: str  # "closed form" or "transfer march"
    widths: np.ndarray
    names: tuple
    positions: np.ndarray
    strengths: np.ndarray
    decay_length: np.ndarray
    depth: np.ndarray  # (width, point)
    incident_edge: float  # V_in, the incident asymptote
    energy: np.ndarray
    transmission_limit: np.ndarray
    transmission: np.ndarray  # (width, energy)
    transmission_error: np.ndarray
    resonance_energy_limit: np.ndarray
    resonance_width_limit: np.ndarray
    resonance_energy: np.ndarray  # (width, resonance)
    resonance_width: np.ndarray
    law_coefficient: float
    law_exponent: float
    validity: float
    notes: tuple

    @property
    def transmission_deviation(self) -> np.ndarray:
        """max over E of |T - T_point| per width."""
        return np.nanmax(np.abs(self.transmission - self.transmission_limit[None, :]), axis=1)

    @property
    def resonance_energy_deviation(self) -> np.ndarray:
        return self.resonance_energy - self.resonance_energy_limit[None, :]

    @property
    def resonance_relative_shift(self) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            return self.resonance_energy_deviation / np.abs(self.resonance_energy_limit - self.incident_edge)[None, :]

    @property
    def resonance_width_deviation(self) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            return self.resonance_width / self.resonance_width_limit[None, :] - 1.0

    @property
    def width_in_decay_lengths(self) -> np.ndarray:
        return self.widths[:, None] / self.decay_length[None, :]


def _plain(case) -> bool:
    return not has_background(case) and case.potential.stack is None


def run_scatter_check(case, shape: str, widths, tolerance: float, energies, progress=None) -> ScatterCheck:
    """The scattering check of ``case`` (module docstring).  ``widths`` (lo, hi, n) or None; ``energies``
    (lo, hi, n or None) in the case energy unit."""
    from fdsolver.continuum.resonances import find_resonances
    from fdsolver.continuum.transmission import transmission
    from fdsolver.zerorange.pointscatter import point_resonances, point_transmission

    if case.domain.boundary != "open":
        raise CaseError('scattering needs open ends; use boundary = "open" in [domain]', file=case.path,
                        key="domain.boundary")
    names, xs, alphas = _points(case)
    pot = case.potential
    c = pot.hbar2_2me
    decay = 2.0 * c / (pot.mass_at(xs) * np.abs(alphas))
    if widths is None:
        w = auto_widths(case, xs, decay)
        if xs.size == 1 and _plain(case):  # nothing nearby: one decay length 1/kappa down to LADDER_SPAN of it
            w = np.geomspace(LADDER_SPAN * decay[0], decay[0], LADDER_SIZE)
    else:
        lo_w, hi_w, n_w = widths
        w = np.geomspace(lo_w, hi_w, n_w) if n_w > 1 else np.array([float(lo_w)])
    lo, hi, n = energies
    e = np.linspace(lo, hi, int(n) if n else DEFAULT_POINTS)
    v_in = pot.asymptote(-1)
    if math.isfinite(v_in) and not lo > v_in:
        e = e[e > v_in]
        if e.size < 2:
            raise CaseError(f"the energies {lo:g}:{hi:g} {pot.units.energy} lie below the incident asymptote "
                            f"{v_in:g} {pot.units.energy}; give energies above it", key="--energies")
    notes: list[str] = []
    plain = _plain(case)
    if plain:
        res0 = point_resonances(xs, alphas, (float(e[0]), float(e[-1])), mass=pot.mass, hbar2_2me=c)
        ref_name = "closed form"
    else:
        res0 = find_resonances(pot, (float(e[0]), float(e[-1])), domain=case.domain)
        ref_name = "transfer march"
    keep = ~np.asarray(res0.bound, bool)
    er0, g0 = np.asarray(res0.energy, float)[keep], np.asarray(res0.width, float)[keep]
    if not n:  # without a count: the even grid plus RESONANCE_POINTS across every resonance (E_r +- 3 Gamma)
        extra = [r + g * np.linspace(-3.0, 3.0, RESONANCE_POINTS) for r, g in zip(er0, g0) if g > 0]
        e = sorted_distinct(np.concatenate([e] + extra))
        e = e[(e >= lo) & (e <= hi) & (e > (v_in if math.isfinite(v_in) else -math.inf))]
    if plain:
        t0 = point_transmission(xs, alphas, e, mass=pot.mass, hbar2_2me=c).transmission
    else:
        t0 = transmission(pot, e, domain=case.domain).transmission
    make = S.FINITE_REPLACEMENTS[shape]
    others = tuple(s for s in pot.shapes if not isinstance(s, S.Point))
    tw, terr = np.full((w.size, e.size), np.nan), np.full((w.size, e.size), np.nan)
    erw, gw = np.full((w.size, er0.size), np.nan), np.full((w.size, er0.size), np.nan)
    depth = np.zeros((w.size, xs.size))
    span = float(e[-1] - e[0])
    for i, wi in enumerate(w):
        wells = tuple(make(nm, float(x), float(a), float(wi)) for nm, x, a in zip(names, xs, alphas))
        depth[i] = [-float(wl.amplitude) for wl in wells]
        fin = Potential(others + wells, pot.units, pot.mass, pot.stack)
        try:
            tr = transmission(fin, e, domain=case.domain)
            tw[i], terr[i] = tr.transmission, tr.transmission_error
            if er0.size:
                lo_r = max(float(e[0]), float(er0.min()) - 0.25 * span) if not math.isfinite(v_in) else \
                    max(v_in + 1e-9 * max(1.0, abs(v_in)), float(er0.min()) - 0.25 * span)
                res = find_resonances(fin, (lo_r, float(er0.max()) + 0.25 * span),
                                      max_width=max(4.0 * float(g0.max()), 1e-300), domain=case.domain)
                pe, pg = np.asarray(res.energy, float), np.asarray(res.width, float)
                for k in range(er0.size):
                    if pe.size:
                        j = int(np.argmin(np.abs((pe - er0[k]) + 0.5j * (g0[k] - pg))))
                        erw[i, k], gw[i, k] = pe[j], pg[j]
        except CaseError as err:
            notes.append(f"width {wi:.4g} {pot.units.length}: {err.message}")
        if progress is not None:
            progress(1)  # one more width done (the progress convention: points added)
    chk = ScatterCheck(shape, float(tolerance), ref_name, w, names, xs, alphas, decay, depth,
                       float(v_in) if math.isfinite(v_in) else float("nan"), e, np.asarray(t0, float), tw, terr,
                       er0, g0, erw, gw, math.nan, math.nan, math.nan, ())
    return _finish(chk, notes)


def _finish(chk: ScatterCheck, notes) -> ScatterCheck:
    from dataclasses import replace

    dev = chk.transmission_deviation
    ok = np.flatnonzero(np.isfinite(dev) & (dev > 0))[:LAW_POINTS]
    coef = expo = math.nan
    if ok.size >= 2:
        expo = float(np.polyfit(np.log(chk.widths[ok]), np.log(dev[ok]), 1)[0])
        coef = float(np.median(dev[ok] / chk.widths[ok]))
    worst = dev.copy()
    if chk.resonance_energy_limit.size:
        worst = np.fmax(worst, np.nanmax(np.abs(chk.resonance_relative_shift), axis=1))
        worst = np.fmax(worst, np.nanmax(np.abs(chk.resonance_width_deviation), axis=1))
    valid = _validity(chk.widths, worst, chk.tolerance)
    return replace(chk, law_coefficient=coef, law_exponent=expo, validity=valid, notes=tuple(dict.fromkeys(notes)))


def _validity(w, d, tol) -> float:
    if not np.isfinite(d[0]):
        return math.nan
    bad = np.flatnonzero(~(d < tol))
    if not bad.size:
        return float(w[-1])
    k = int(bad[0])
    if k == 0:
        return float(w[0])
    a, b = d[k - 1], d[k]
    if a > 0 and np.isfinite(b) and b > a:
        t = (math.log(tol) - math.log(a)) / (math.log(b) - math.log(a))
        return math.exp(math.log(w[k - 1]) + t * (math.log(w[k]) - math.log(w[k - 1])))
    return float(w[k - 1])
