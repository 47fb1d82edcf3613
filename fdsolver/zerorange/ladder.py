"""Zero-range check: finite-width wells against the analytic point-interaction model.

Two directions, one comparison:

* **replace** - a case of ``point`` components defines the zero-range model;
  each point (x_j, alpha_j) becomes a finite well of a chosen shape
  (``shapes.FINITE_REPLACEMENTS``) with the same integrated strength
  int |V| dx = alpha_j and the same centroid x_j, for a ladder of widths;
* **from_finite** - a case of narrow wells defines the finite model; its zero-range
  model has alpha_j = int |V_j| dx and x_j = the centroid of each component.

For every configuration the finite model is solved with
:func:`fdsolver.solver.solve_potential` (second order in the grid step,
Richardson-extrapolated, with an error estimate) between hard walls placed
where the shallowest wanted state has decayed far enough that the walls shift
it by less than a hundredth of the tolerance (that bound is added to the
error bar); the tolerance comes from the predicted deviation
(:mod:`fdsolver.zerorange`) and is checked afterwards: a finite energy is
*resolved* when its error estimate is at most a tenth of |E_finite - E_point|,
and a state that misses it is solved again alone (see :func:`compare`).  Its
bound-state count comes from the box-free zero-energy count, the point model
from :func:`fdsolver.pointmodel.point_spectrum`.  States are matched by node count
(index 0 = ground state in both models).  The relative deviation is
(E_finite - E_point) / |E_point| (dimensionless, > 0 when the finite wells bind
less).  :func:`run_ladder` walks a ladder of widths and fits the leading-order
law, the validity width and the critical separations; the two-parameter map
is :mod:`fdsolver.scans.maps`, the archive :func:`fdsolver.io.datasets.ladder_dataset`.  Energies and
lengths are in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from fdsolver.zerorange.compare import Comparison, compare, deviation, limit_of  # noqa: F401  (public names of the study)
from fdsolver.zerorange.models import (  # noqa: F401  (public names of the study)
    EPS,
    FWHM,
    SHAPE_NAMES,
    Model,
    Options,
    check_separated,
    from_finite,
    point_terms,
    replacement,
)
from fdsolver.zerorange.narrow import zero_energy_count


# ------------------------------------------------------------------- ladder
#: meanings of Ladder.validity_flag (and the archive's flag_values 0..5)
VALIDITY_FLAGS = ("crossing", "holds_over_ladder", "fails_at_smallest_width", "no_point_state",
                  "lower_bound_state_missing", "not_walked", "not_resolved")
LADDER_SIZE = 12


@dataclass(frozen=True)
class Ladder:
    """A delta check over widths: per width a :class:`Comparison`, per state the fitted law and validity width.

    ``widths`` ascending (length unit; the width parameter of the wells:
    square/smooth_square/sech2 width, gaussian sigma).  ``law_coefficient``
    a_n (1/length) of deviation = a_n * width fitted on the narrowest
    widths, ``law_exponent`` the log-log slope there (1 for the leading-order
    law), ``predicted_coefficient`` the first-order a_n of
    :func:`fdsolver.zerorange.first_order`.  ``validity`` is the largest width
    up to which |deviation| < tolerance (meaning set by ``validity_flag``,
    :data:`VALIDITY_FLAGS`).  ``binding_width`` is where a state binds or
    unbinds in the finite model along the ladder, ``critical`` /
    ``critical_limit`` the nearest-neighbour separation above which state n is
    bound with all separations scaled together (finite per width / point model).
    """

    mode: str
    shape: str
    tolerance: float
    widths: np.ndarray
    models: tuple
    results: tuple
    energy_limit: np.ndarray
    predicted_coefficient: np.ndarray
    law_coefficient: np.ndarray
    law_exponent: np.ndarray
    validity: np.ndarray
    validity_flag: np.ndarray
    binding_width: np.ndarray
    critical: np.ndarray
    critical_limit: np.ndarray
    notes: tuple

    @property
    def n_states(self) -> int:
        return self.validity.size

    def table(self, name: str) -> np.ndarray:
        """(width, state) array of a Comparison field or of ``deviation`` / ``exists`` / ``predicted``."""
        out = np.full((self.widths.size, self.n_states), np.nan)
        for i, r in enumerate(self.results):
            if name == "deviation":
                row = deviation(r.energy, r.energy_limit)
            elif name == "exists":
                row = np.ones(r.count)
            elif name == "predicted":
                row = r.predicted
            else:
                row = np.asarray(getattr(r, name), float)
            k = min(row.size, self.n_states)
            out[i, :k] = row[:k]
            if name in ("exists", "resolved"):
                out[i, k:] = 0.0
        return out


def auto_widths(model1: Model, spec, coef, shape: str, tol: float, n: int = LADDER_SIZE) -> np.ndarray:
    """Geometric widths from about one decay length 1/kappa_0 down to 1e-4 of it.

    Widened so the predicted validity widths tol / a_n (first-order law) lie
    inside with room (at least 3x above and 10x below), and capped at 3/4 of
    the nearest-neighbour spacing over the shape's FWHM ratio so the wells do
    not overlap.
    """
    star = tol / np.asarray(coef)[np.isfinite(coef) & (np.asarray(coef) > 0)]
    hi = 1.0 / float(spec.kappa[0])
    if star.size:
        hi = max(hi, 3.0 * float(np.max(star)))
    if model1.positions.size > 1:
        hi = min(hi, 0.75 * float(np.min(np.diff(model1.positions))) / FWHM[shape])
    lo = 1e-4 * hi
    if star.size:
        lo = min(lo, 0.1 * float(np.min(star)))
    return np.geomspace(max(lo, 3.0 * resolution_limit(model1, spec, coef)), hi, n)


def resolution_limit(model1: Model, spec, coef) -> float:
    """Narrowest width (length) at which a deviation a_n w is still 10x above the solver's round-off floor.

    The floor is 256 eps (|E| + max|V|) / |E| relative with max|V| ~ sum alpha_j / w,
    so a_n w / 10 >= 256 eps sum(alpha) / (w |E_n|) gives w >= sqrt(2560 eps sum(alpha) / (a_n |E_n|)).
    """
    a = np.asarray(coef, float)
    e = np.abs(np.asarray(spec.energy, float))
    ok = np.isfinite(a) & (a > 0) & (e > 0)
    if not ok.any():
        return 0.0
    return float(np.max(np.sqrt(2560.0 * EPS * float(np.sum(model1.strengths)) / (a[ok] * e[ok]))))


def run_ladder(case, options: Options, progress=None) -> Ladder:
    """The delta check of ``case`` over a ladder of widths (or, with from_finite, at the case's own wells)."""
    notes: list[str] = []
    if options.from_finite:
        model = from_finite(case)
        check_separated(model, "potential", case.path)
        spec, pred = limit_of(model, case)
        res = compare(case, model, spec, pred)
        ladder_w = np.array([float(np.max(model.widths))])
        models: tuple[Model, ...] = (model,)
        results: tuple[Comparison, ...] = (res,)
        coef = np.full(spec.n_states, np.nan)
    else:
        names, xs, alphas = point_terms(case)
        unit = replacement(case, options.shape, 1.0, names, xs, alphas)
        spec, coef = limit_of(unit, case)  # first-order deviation is linear in the width: its coefficient
        if options.widths is None:
            ladder_w = auto_widths(unit, spec, coef, options.shape, options.tolerance)
        else:
            lo, hi, n = options.widths
            ladder_w = np.geomspace(lo, hi, n)
        models = tuple(replacement(case, options.shape, w, names, xs, alphas) for w in ladder_w)
        check_separated(models[-1], options.widths_key[1], options.widths_key[0])
        compared: list[Comparison] = []
        for w, m in zip(ladder_w, models):
            compared.append(compare(case, m, spec, coef * w))
            if progress:
                progress(1)
        results = tuple(compared)
    n_s = max([spec.n_states] + [r.count for r in results])
    for w, r in zip(ladder_w, results):
        notes.extend(f"width {w:.4g} {case.units.length}: {t}" for t in r.notes)
    pc = np.full(n_s, np.nan)
    pc[: spec.n_states] = coef
    lad = Ladder("from_finite" if options.from_finite else "replace", options.shape, options.tolerance, ladder_w,
                 models, results, np.asarray(spec.energy, float), pc, np.full(n_s, np.nan), np.full(n_s, np.nan),
                 np.full(n_s, np.nan), np.full(n_s, 5 if options.from_finite else 0, dtype=np.int8),
                 np.full(n_s, np.nan), np.full((ladder_w.size, n_s), np.nan), np.full(n_s, np.nan), ())
    _critical(case, lad, spec)
    if not options.from_finite:
        _fit_law(lad)
        _validity(case, lad, spec, coef, names, xs, alphas)
        _binding_widths(case, lad, names, xs, alphas)
    return replace(lad, notes=tuple(notes))


def _fit_law(lad: Ladder) -> None:
    """a_n and the log-log slope from the narrowest widths in the linear regime (|predicted| < 0.05, >= 3 points)."""
    dev, res, pred = lad.table("deviation"), lad.table("resolved"), lad.table("predicted")
    for n in range(min(lad.n_states, lad.energy_limit.size)):
        ok = np.flatnonzero(np.isfinite(dev[:, n]) & (res[:, n] > 0) & (dev[:, n] != 0))
        if ok.size < 3:
            continue
        lin = ok[np.abs(pred[ok, n]) < 0.05] if np.isfinite(pred[ok, n]).all() else ok
        use = lin if lin.size >= 3 else ok[:4]
        w, d = lad.widths[use], dev[use, n]
        lad.law_exponent[n] = np.polyfit(np.log(w), np.log(np.abs(d)), 1)[0]
        # d / w = a + b w, weighted so each point counts by its relative size
        a_b = np.linalg.lstsq(np.column_stack([np.ones_like(w), w]) * (w / np.abs(d))[:, None], (d / w) * (w / np.abs(d)), rcond=None)[0]
        lad.law_coefficient[n] = a_b[0]


def _validity(case, lad: Ladder, spec, coef, names, xs, alphas) -> None:
    """Largest width with |deviation| < tolerance there and at every narrower judged width; crossings by brentq.

    Unresolved points are not judged (skipped); a width where the finite wells
    do not bind the state counts as a failure of the point model.
    """
    from scipy.optimize import brentq

    dev, res, ex = lad.table("deviation"), lad.table("resolved"), lad.table("exists")
    tol = lad.tolerance
    for n in range(lad.n_states):
        if n >= spec.n_states:
            lad.validity_flag[n] = 3
            continue
        judged = np.flatnonzero((res[:, n] > 0) | (ex[:, n] == 0))
        if judged.size == 0:
            lad.validity_flag[n] = 6
            continue
        good = (ex[judged, n] > 0) & (np.abs(dev[judged, n]) < tol)
        if not good[0]:
            lad.validity_flag[n] = 2
            continue
        if good.all():
            lad.validity[n], lad.validity_flag[n] = lad.widths[judged[-1]], 1
            continue
        i, b = judged[int(np.argmin(good)) - 1], judged[int(np.argmin(good))]
        if not (ex[b, n] > 0 and np.isfinite(dev[b, n])):
            lad.validity[n], lad.validity_flag[n] = lad.widths[i], 4
            continue

        def h(logw):
            w = math.exp(logw)
            r = compare(case, replacement(case, lad.shape, w, names, xs, alphas), spec, coef * w)
            d = deviation(r.energy, r.energy_limit)
            return math.log(abs(d[n]) / tol) if n < d.size and np.isfinite(d[n]) and d[n] != 0 else 1.0

        try:
            lad.validity[n] = math.exp(brentq(h, math.log(lad.widths[i]), math.log(lad.widths[b]), xtol=1e-3, rtol=1e-6))
        except ValueError:
            lad.validity[n], lad.validity_flag[n] = lad.widths[i], 4


def _binding_widths(case, lad: Ladder, names, xs, alphas) -> None:
    """Where the finite model's count passes state n along the ladder: bisection of the zero-energy count in ln w."""
    counts = np.array([r.count for r in lad.results])
    for n in range(lad.n_states):
        has = counts > n
        change = np.flatnonzero(has[1:] != has[:-1])
        if change.size == 0:
            continue
        a, b = lad.widths[change[0]], lad.widths[change[0] + 1]
        side = has[change[0]]
        for _ in range(60):
            mid = math.sqrt(a * b)
            m = replacement(case, lad.shape, mid, names, xs, alphas)
            if (zero_energy_count(m.wells, case.mass, case.units.hbar2_2me)[0] > n) == side:
                a = mid
            else:
                b = mid
            if b - a <= 1e-9 * b:
                break
        lad.binding_width[n] = 0.5 * (a + b)


def _critical(case, lad: Ladder, spec) -> None:
    """Critical nearest-neighbour separations of states n >= 1 (point model, and the finite model per width)."""
    from fdsolver.zerorange.narrow import critical_scale, point_critical_scales, scaled

    model0 = lad.models[0]
    if model0.positions.size < 2:
        return
    spacing = float(np.min(np.diff(model0.positions)))
    centre = float(np.mean(model0.positions))
    m, c = case.mass, case.units.hbar2_2me
    s_lim = point_critical_scales(model0.positions, model0.strengths, m, c, lad.n_states)
    lad.critical_limit[:] = s_lim * spacing
    for n in range(1, lad.n_states):
        guess = s_lim[n] if np.isfinite(s_lim[n]) else 1.0
        for i, model in enumerate(lad.models):
            s = critical_scale(lambda f, wells=model.wells: scaled(wells, f, centre), n, guess, m, c)
            lad.critical[i, n] = s * spacing
