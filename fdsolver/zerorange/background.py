"""Zero-range check on a background: thin sheets inside layer stacks, fields, hard walls or any other components.

The reference ("point model") is the case itself, its point components kept
as exact zero-range terms: the finite-difference solver puts the derivative
jump psi'(x_j+) - psi'(x_j-) = -(m alpha_j / (hbar^2/2m_e)) psi(x_j) at a
node (:func:`fdsolver.boundstates.driver.solve_potential`, second order,
Richardson-extrapolated, with an error bar).  The finite model replaces each
point by a well (alpha > 0) or barrier (alpha < 0) of the chosen shape, the
same integrated strength int V dx = -alpha_j and centroid x_j, on the same
background, domain and settings, for a ladder of widths.  The analytic closed
forms of :mod:`fdsolver.zerorange.ladder` stay for plain backgrounds.

States are matched by their Sturm number (index 0 = ground state).  For each
width and state: the deviation E_finite - E_point (energy unit) and the
relative deviation (E_finite - E_point) / |E_point - E_ref|, with E_ref the
solver's reference energy (the continuum threshold, or the lowest V where
every state is bound, e.g. between hard walls).  A deviation is *resolved*
when both error bars together are at most a tenth of it.  The first-order
law is fitted on the three narrowest resolved widths (deviation = a * width,
a in 1/length, and the log-log slope) and predicted: to first order in the
width dE_j = sum_p m(x_p) alpha_p^2 psi_j(x_p)^2 l_p / (2 hbar^2/2m_e), with
psi_j the normalised state of the point model and l_p the mean distance
|x - x'| over the replacement profile (w/3 for a square well); this is the
isolated point's exact expansion (relative deviation 2 kappa l) carried by
the local kink of psi_j.  The validity width is the largest
width up to which |relative deviation| stays below the tolerance, log-linearly
interpolated at the crossing.  Widths are also given in units of each point's
own decay length 1/kappa_j = 2 (hbar^2/2m_e) / (m(x_j) |alpha_j|), the bound
state of the point alone; the replacement depth is -alpha_j / width for a
square well (the shape's amplitude).  Energies and lengths in the case units.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.model import shapes as S
from fdsolver.model.potential import Potential
from fdsolver.zerorange.narrow import mean_distance

#: widths of the automatic ladder, and its span below the largest width
LADDER_SIZE = 10
LADDER_SPAN = 1e-3
#: relative tolerance of every solve of the study (reference and finite models)
STUDY_TOLERANCE = 1e-10
#: widths fitted for the first-order law
LAW_POINTS = 3


@dataclass(frozen=True)
class BackgroundCheck:
    """One zero-range check on a background (module docstring); arrays (width, state), (width, point), (state,)."""

    shape: str
    tolerance: float
    widths: np.ndarray
    names: tuple
    positions: np.ndarray
    strengths: np.ndarray
    decay_length: np.ndarray  # (point,) 1/kappa_j of the point alone
    depth: np.ndarray  # (width, point) replacement amplitude: > 0 deep for a well, < 0 a barrier's height
    energy_limit: np.ndarray  # (state,) the case with exact point terms
    energy_limit_error: np.ndarray
    reference: float  # E_ref of the relative deviation
    predicted: np.ndarray  # (width, state) first-order relative deviation
    energy: np.ndarray  # (width, state) the finite model
    energy_error: np.ndarray
    count: np.ndarray  # (width,) states the finite model returned
    law_coefficient: np.ndarray  # (state,) a of relative deviation = a * width (1/length)
    law_exponent: np.ndarray  # (state,) log-log slope on the narrowest widths
    validity: np.ndarray  # (state,)
    validity_flag: np.ndarray  # (state,) index into fdsolver.zerorange.ladder.VALIDITY_FLAGS
    notes: tuple

    @property
    def energy_deviation(self) -> np.ndarray:
        return self.energy - self.energy_limit[None, :]

    @property
    def deviation(self) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            return self.energy_deviation / np.abs(self.energy_limit - self.reference)[None, :]

    @property
    def resolved(self) -> np.ndarray:
        total = self.energy_error + self.energy_limit_error[None, :]
        return np.isfinite(self.energy) & (total <= 0.1 * np.abs(self.energy_deviation))

    @property
    def width_in_decay_lengths(self) -> np.ndarray:
        return self.widths[:, None] / self.decay_length[None, :]


def has_background(case) -> bool:
    """True if the case holds more than point components on the open line (a stack, other shapes, walls)."""
    pot = case.potential
    return (pot.stack is not None or case.domain.boundary != "open"
            or any(not isinstance(s, S.Point) for s in pot.shapes))


def _points(case):
    pts = [(i, s) for i, s in enumerate(case.potential.shapes, start=1) if isinstance(s, S.Point)]
    if not pts:
        raise CaseError("the case has no point components to check; add [[potential]] shape = \"point\" entries "
                        "(the sheets the finite wells replace)", file=case.path, key="potential")
    for i, s in pts:
        if s.alpha == 0:
            raise CaseError("a point of strength 0 has nothing to replace; remove it or give it a strength",
                            file=case.path, key=f"potential[{i}].strength")
    pts.sort(key=lambda p: p[1].center)
    return (tuple(s.name or f"point {i}" for i, s in pts), np.array([s.center for _, s in pts], float),
            np.array([s.alpha for _, s in pts], float))


def auto_widths(case, positions, decay) -> np.ndarray:
    """LADDER_SIZE geometric widths from the largest that fits (a decay length, half the distance to the nearest
    other feature) down to LADDER_SPAN of it."""
    feats = np.asarray(case.potential.features(), float)
    hi = float(np.min(decay))
    for x in positions:
        others = feats[np.abs(feats - x) > 1e-12 * max(1.0, abs(x))]
        if case.domain.boundary == "hard":
            others = np.concatenate([others, [case.domain.left, case.domain.right]])
        if others.size:
            hi = min(hi, 0.5 * float(np.min(np.abs(others - x))))
    return np.geomspace(LADDER_SPAN * hi, hi, LADDER_SIZE)


def _solve(potential, case, settings, notes, what):
    from fdsolver.boundstates.driver import solve_potential

    try:
        with warnings.catch_warnings(), np.errstate(over="ignore", under="ignore"):
            warnings.simplefilter("ignore", RuntimeWarning)
            # the reference's wavefunctions predict the first-order shifts; the ladder needs energies only
            return solve_potential(potential, case.domain, settings, wavefunctions=what == "reference")
    except CaseError as err:
        if what == "reference":
            raise err.located(file=case.path) from None
        notes.append(f"{what}: solve failed ({err.message})")
        return None


def run_background(case, shape: str, widths, tolerance: float, progress=None) -> BackgroundCheck:
    """The zero-range check of ``case`` on its background (module docstring); ``widths`` (lo, hi, n) or None."""
    names, xs, alphas = _points(case)
    pot = case.potential
    c = pot.hbar2_2me
    decay = 2.0 * c / (pot.mass_at(xs) * np.abs(alphas))
    if widths is None:
        w = auto_widths(case, xs, decay)
    else:
        lo, hi, n = widths
        w = np.geomspace(lo, hi, n) if n > 1 else np.array([float(lo)])
    settings = replace(case.settings, tolerance=min(case.settings.tolerance, STUDY_TOLERANCE))
    notes: list[str] = []
    ref = _solve(pot, case, settings, notes, "reference")
    n_s = ref.energy.size
    if n_s == 0:
        raise CaseError("the case with exact point interactions binds no state to compare (widen [solve] "
                        "energy_window or max_states, or deepen the background)", file=case.path, key="potential")
    by_index = lambda sol: {int(k): j for j, k in enumerate(sol.index)}  # noqa: E731
    ref_at = by_index(ref)
    order = sorted(ref_at)
    e_lim = np.array([ref.energy[ref_at[k]] for k in order])
    e_lim_err = np.array([ref.energy_error[ref_at[k]] for k in order])
    # first order: dE_j = sum_p m(x_p) alpha_p^2 psi_j(x_p)^2 l_p / (2 hbar^2/2m_e), l_p the well's mean distance
    psi2 = np.array([[np.interp(x, ref.x, ref.psi[ref_at[k]]) ** 2 for x in xs] for k in order])  # (state, point)
    scale = np.abs(e_lim - ref.reference)
    make = S.FINITE_REPLACEMENTS[shape]
    others = tuple(s for s in pot.shapes if not isinstance(s, S.Point))
    energy, error = np.full((w.size, n_s), np.nan), np.full((w.size, n_s), np.nan)
    depth = np.zeros((w.size, xs.size))
    count = np.zeros(w.size, int)
    predicted = np.full((w.size, n_s), np.nan)
    for i, wi in enumerate(w):
        wells = tuple(make(nm, float(x), float(a), float(wi)) for nm, x, a in zip(names, xs, alphas))
        depth[i] = [-float(wl.amplitude) for wl in wells]
        lengths = np.array([mean_distance(wl) for wl in wells])
        with np.errstate(divide="ignore", invalid="ignore"):
            predicted[i] = (psi2 @ (pot.mass_at(xs) * alphas**2 * lengths)) / (2.0 * c) / scale
        sol = _solve(Potential(others + wells, pot.units, pot.mass, pot.stack), case, settings, notes,
                     f"width {wi:.4g} {pot.units.length}")
        if progress is not None:
            progress(1)  # one more width done (the progress convention: points added)
        if sol is None:
            continue
        count[i] = sol.energy.size
        at = by_index(sol)
        for j, k in enumerate(order):
            if k in at:
                energy[i, j], error[i, j] = sol.energy[at[k]], sol.energy_error[at[k]]
    chk = BackgroundCheck(shape, float(tolerance), w, names, xs, alphas, decay, depth, e_lim, e_lim_err,
                          float(ref.reference), predicted, energy, error, count, *(np.full(n_s, np.nan) for _ in range(3)),
                          np.zeros(n_s, int), ())
    coef, expo = _law(chk)
    valid, flag = _validity(chk)
    lost = [f"{wi:.4g}" for wi, n in zip(w, count) if n < n_s]
    if lost:
        notes.append(f"the models disagree on the states returned at widths {', '.join(lost)} {pot.units.length}: the "
                     f"finite model has fewer than the {n_s} of the point model there")
    return replace(chk, law_coefficient=coef, law_exponent=expo, validity=valid, validity_flag=flag,
                   notes=tuple(dict.fromkeys(notes)))


def _law(chk: BackgroundCheck):
    """a (1/length) of relative deviation = a * width, and the log-log slope, on the narrowest resolved widths."""
    dev, ok = chk.deviation, chk.resolved
    n_s = chk.energy_limit.size
    coef, expo = np.full(n_s, np.nan), np.full(n_s, np.nan)
    for j in range(n_s):
        sel = np.flatnonzero(ok[:, j] & (dev[:, j] != 0))[:LAW_POINTS]
        if sel.size >= 2:
            w, d = chk.widths[sel], dev[sel, j]
            coef[j] = float(np.median(d / w))
            expo[j] = float(np.polyfit(np.log(w), np.log(np.abs(d)), 1)[0])
    return coef, expo


def _validity(chk: BackgroundCheck):
    """Largest width up to which |relative deviation| < tolerance, and its flag (ladder.VALIDITY_FLAGS)."""
    from fdsolver.zerorange.ladder import VALIDITY_FLAGS

    flags = {name: i for i, name in enumerate(VALIDITY_FLAGS)}
    dev = np.abs(chk.deviation)
    tol = chk.tolerance
    n_s = chk.energy_limit.size
    valid, flag = np.full(n_s, np.nan), np.full(n_s, flags["not_resolved"], int)
    w = chk.widths
    for j in range(n_s):
        d = dev[:, j]
        if not np.isfinite(d[0]):
            flag[j] = flags["not_resolved"]
            continue
        bad = np.flatnonzero(~(d < tol))
        if not bad.size:
            valid[j], flag[j] = w[-1], flags["holds_over_ladder"]
        elif bad[0] == 0:
            valid[j], flag[j] = w[0], flags["fails_at_smallest_width"]
        else:
            k = bad[0]
            a, b = d[k - 1], d[k]
            if np.isfinite(b) and a > 0 and b > a:
                t = (math.log(tol) - math.log(a)) / (math.log(b) - math.log(a))
                valid[j] = math.exp(math.log(w[k - 1]) + t * (math.log(w[k]) - math.log(w[k - 1])))
            else:
                valid[j] = w[k - 1]
            flag[j] = flags["crossing"]
    return valid, flag


def on_background(case) -> bool:
    """True if ``delta-check`` of ``case`` runs this study: point components plus a background."""
    return has_background(case) and any(isinstance(s, S.Point) for s in case.potential.shapes)
