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
is :mod:`fdsolver.deltamap`.  Energies and lengths are in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from . import shapes as S
from .errors import CaseError
from .pointmodel import point_spectrum
from .potential import Potential
from .solver import solve_potential
from .zerorange import WELL_SHAPES, first_order, mean_distance, width_of, zero_energy_count

TABLE_KEYS = ("shape", "widths", "tolerance", "map", "from_finite")
SHAPE_NAMES = tuple(S.FINITE_REPLACEMENTS)
#: full width at half maximum of each replacement, in units of its width parameter
FWHM = {"square": 1.0, "smooth_square": 1.0, "gaussian": 2.0 * math.sqrt(2.0 * math.log(2.0)),
        "sech2": 2.0 * math.acosh(math.sqrt(2.0))}
#: memory budget of one study solve (MB): a point that needs more is reported as not resolved
STUDY_MEMORY_MB = 200.0
EPS = float(np.finfo(float).eps)


# ------------------------------------------------------------------ options
@dataclass(frozen=True)
class Options:
    """What to compare: replacement ``shape``, ``widths`` (lo, hi, n) or None (automatic), ``tolerance``."""

    shape: str = "square"
    widths: tuple | None = None
    tolerance: float = 1e-2
    from_finite: bool = False
    maps: tuple[str, ...] = ()
    widths_key: tuple = (None, "--widths")  # (file, key) the widths came from, for messages


def parse_widths(text, key: str, file=None) -> tuple[float, float, int]:
    """'LO:HI:N' (N geometric widths) or a single width 'W' -> (lo, hi, n)."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        text = repr(float(text))
    if not isinstance(text, str):
        raise CaseError(f"must be 'LO:HI:N' or a single width, got {text!r}", file=file, key=key)
    parts = [p.strip() for p in text.split(":")]
    try:
        if len(parts) == 1:
            lo = hi = float(parts[0])
            n = 1
        elif len(parts) == 3:
            lo, hi, n = float(parts[0]), float(parts[1]), int(parts[2])
        else:
            raise ValueError
    except ValueError:
        raise CaseError(f"'{text}' is not LO:HI:N (two widths and a count) or a single width", file=file, key=key) from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo > 0 and hi > 0):
        raise CaseError(f"widths must be finite and > 0, got '{text}'", file=file, key=key)
    if n > 1 and not lo < hi:
        raise CaseError(f"LO must be below HI in '{text}'", file=file, key=key)
    if not 1 <= n <= 400:
        raise CaseError(f"the count must be from 1 to 400 (or 2 to 400 for a range), got {n}", file=file, key=key)
    if n == 1 and lo != hi:
        raise CaseError(f"a range needs at least 2 widths, got '{text}'", file=file, key=key)
    return lo, hi, n


def read_options(case, *, shape=None, widths=None, tolerance=None, from_finite=None, maps=None) -> Options:
    """Options from the case's [delta_check] table, overridden by the given (command-line) values."""
    table = case.data.get("delta_check", {}) or {}
    f = case.path
    for k in table:
        if k not in TABLE_KEYS:
            import difflib

            close = difflib.get_close_matches(k, TABLE_KEYS, n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise CaseError(f"unknown key '{k}'{hint} (allowed: {', '.join(TABLE_KEYS)})", file=f, key=f"delta_check.{k}")
    src = lambda k, v: (v, None, "--" + k.replace("_", "-")) if v is not None else (table.get(k), f, f"delta_check.{k}")  # noqa: E731
    sh, sf, sk = src("shape", shape)
    sh = "square" if sh is None else sh
    if sh not in SHAPE_NAMES:
        raise CaseError(f"'{sh}' is not a replacement shape; use one of {', '.join(SHAPE_NAMES)}", file=sf, key=sk)
    wv, wf, wk = src("widths", widths)
    ws = parse_widths(wv, wk, wf) if wv is not None else None
    tv, tf, tk = src("tolerance", tolerance)
    tv = 1e-2 if tv is None else tv
    if isinstance(tv, bool) or not isinstance(tv, (int, float)) or not (math.isfinite(tv) and 1e-9 <= tv <= 0.5):
        raise CaseError(f"must be a relative deviation from 1e-9 to 0.5, got {tv!r}", file=tf, key=tk)
    ff, ffile, fk = src("from_finite", from_finite)
    if ff is not None and not isinstance(ff, bool):
        raise CaseError(f"must be true or false, got {ff!r}", file=ffile, key=fk)
    mv, mf, mk = src("map", list(maps) if maps else None)
    mv = [] if mv is None else mv
    if not isinstance(mv, list) or not all(isinstance(m, str) for m in mv):
        raise CaseError('must be a list of "NAME=LO:HI:N" strings', file=mf, key=mk)
    return Options(sh, ws, float(tv), bool(ff), tuple(mv), (wf, wk))


# ------------------------------------------------------------------- models
@dataclass(frozen=True)
class Model:
    """One comparison: the finite wells and their zero-range model (same order, sorted by position)."""

    wells: tuple
    names: tuple
    positions: np.ndarray
    strengths: np.ndarray
    lengths: np.ndarray  # mean distance l_j of each well profile (length unit)
    widths: np.ndarray  # width parameter of each well (length unit)


def _plain(case):
    if case.potential.stack is not None:
        raise CaseError("the zero-range check needs a constant mass and no layer stack; remove the [[layer]] tables",
                        file=case.path, key="layer")
    if case.domain.boundary != "open":
        raise CaseError('the point model lives on the open line; use boundary = "open" in [domain]', file=case.path,
                        key="domain.boundary")


def point_terms(case) -> tuple[tuple, np.ndarray, np.ndarray]:
    """Names, positions and strengths of the case's point components (all attractive, nothing else)."""
    _plain(case)
    names, xs, alphas = [], [], []
    for i, s in enumerate(case.potential.shapes, start=1):
        if not isinstance(s, S.Point):
            raise CaseError(
                f"component {i} is a '{s.kind}', not a point; the replacement check needs a case of point components only "
                "(for finite wells use --from-finite)", file=case.path, key=f"potential[{i}].shape")
        if not s.alpha > 0:
            raise CaseError(f"strength must be > 0 (attractive) to be replaced by a well, got {s.alpha:g}",
                            file=case.path, key=f"potential[{i}].strength")
        names.append(s.name or f"point {i}")
        xs.append(float(s.center))
        alphas.append(float(s.alpha))
    if not xs:
        raise CaseError("the case has no point components to compare with; add [[potential]] shape = \"point\" entries "
                        "or use --from-finite for a case of finite wells", file=case.path, key="potential")
    order = np.argsort(xs, kind="stable")
    return tuple(names[i] for i in order), np.asarray(xs)[order], np.asarray(alphas)[order]


def replacement(case, shape: str, width: float, names=None, xs=None, alphas=None) -> Model:
    """The finite model of a point case: every point a ``shape`` well of width parameter ``width``."""
    if names is None:
        names, xs, alphas = point_terms(case)
    make = S.FINITE_REPLACEMENTS[shape]
    wells = tuple(make(n, float(x), float(a), float(width)) for n, x, a in zip(names, xs, alphas))
    return Model(wells, tuple(names), np.asarray(xs, float), np.asarray(alphas, float),
                 np.array([mean_distance(w) for w in wells]), np.full(len(wells), float(width)))


def from_finite(case) -> Model:
    """The zero-range model of a case of narrow wells: alpha_j = int |V_j| dx, x_j = centroid of each."""
    if any(isinstance(s, S.Point) for s in case.potential.shapes):
        i = next(i for i, s in enumerate(case.potential.shapes, 1) if isinstance(s, S.Point))
        raise CaseError("--from-finite needs finite wells only; this component is already a point interaction "
                        "(drop --from-finite to replace points by wells)", file=case.path, key=f"potential[{i}].shape")
    _plain(case)
    wells = []
    for i, s in enumerate(case.potential.shapes, start=1):
        if not isinstance(s, WELL_SHAPES):
            raise CaseError(f"a '{s.kind}' component has no zero-range model; use square, smooth_square, gaussian or "
                            "sech2 wells", file=case.path, key=f"potential[{i}].shape")
        if not s.amplitude < 0:
            raise CaseError(f"a zero-range model needs attractive wells (depth > 0), got V = {s.amplitude:+g} "
                            f"{case.units.energy}", file=case.path, key=f"potential[{i}].depth")
        wells.append(s)
    order = sorted(range(len(wells)), key=lambda j: wells[j].centroid())
    wells = tuple(wells[j] for j in order)
    names = tuple(w.name or f"well {order[k] + 1}" for k, w in enumerate(wells))
    return Model(wells, names, np.array([w.centroid() for w in wells]), np.array([w.strength() for w in wells]),
                 np.array([mean_distance(w) for w in wells]), np.array([width_of(w) for w in wells]))


def overlap_of(model: Model) -> float:
    """Largest overlap of neighbouring wells' half-maximum regions (length; <= 0: separated)."""
    regions = [w.region() for w in model.wells]
    return max([a[1] - b[0] for a, b in zip(regions[:-1], regions[1:])] or [-math.inf])


def check_separated(model: Model, key: str, file=None) -> None:
    """CaseError when neighbouring wells overlap (their half-maximum regions meet)."""
    over = overlap_of(model)
    if over >= 0:
        spacing = float(np.min(np.diff(model.positions)))
        raise CaseError(f"wells of width {float(np.max(model.widths)):.4g} overlap at a separation of {spacing:.4g} "
                        "(their half-maximum regions meet); give widths below "
                        f"{spacing / _fwhm_ratio(model):.4g}", file=file, key=key)


def _fwhm_ratio(model: Model) -> float:
    w = model.wells[0]
    r = w.region()
    return (r[1] - r[0]) / width_of(w)


# ------------------------------------------------------------ one comparison
@dataclass(frozen=True)
class Comparison:
    """Finite model vs zero-range model at one configuration (arrays over states, by node count)."""

    energy: np.ndarray  # finite model, nan where not found
    energy_error: np.ndarray
    resolved: np.ndarray  # bool: error <= |E_finite - E_point| / 10 (or converged when no point state)
    count: int  # finite model's bound-state count (zero-energy count, box free)
    energy_limit: np.ndarray  # point model
    predicted: np.ndarray  # first-order predicted deviation per point state
    tolerance: float  # relative tolerance of the main solve
    notes: tuple


def limit_of(model: Model, case):
    """The point spectrum of ``model`` and its first-order predicted deviations."""
    spec = point_spectrum(model.positions, model.strengths, mass=case.mass, hbar2_2me=case.units.hbar2_2me)
    return spec, first_order(spec, model.lengths)[1]


def deviation(energy, limit) -> np.ndarray:
    """(E_finite - E_point) / |E_point| for the states both arrays hold (nan elsewhere)."""
    n = max(len(energy), len(limit))
    e = np.full(n, np.nan)
    p = np.full(n, np.nan)
    e[: len(energy)] = energy
    p[: len(limit)] = limit
    with np.errstate(invalid="ignore", divide="ignore"):
        return (e - p) / np.abs(p)


def compare(case, model: Model, spec=None, predicted=None) -> Comparison:
    """Solve the finite model and set it beside the point model (module docstring).

    Guesses: the point energies shifted by the first-order deviation, or, where
    that is no guide (|predicted| >= 0.3, or the counts differ), a rough solve
    at tolerance 1e-4.  Tolerances (relative to |E_n|): predicted_n / 30, at
    most 1e-8 for states bound within a factor 1000 of the ground state, never
    below the round-off floor 256 eps (|E_n| + max|V|) / |E_n|.  The deep
    states are solved together; the weakly bound ones in an energy window above
    them, so their long tails do not size a fine grid for all.  A state whose
    error still exceeds a tenth of its measured deviation is solved alone at the
    tolerance that deviation asks for; one whose predicted deviation is below
    ten times its round-off floor is reported as not resolved without trying.
    """
    if spec is None:
        spec, predicted = limit_of(model, case)
    predicted = np.asarray(predicted, float)
    limit = np.asarray(spec.energy, float)
    n = zero_energy_count(model.wells, case.mass, case.units.hbar2_2me)[0]
    notes: list[str] = []
    energy, error = np.full(n, np.nan), np.full(n, np.nan)
    resolved = np.zeros(n, bool)
    if n == 0:
        return Comparison(energy, error, resolved, 0, limit, predicted, math.nan, ())
    pot = Potential(tuple(model.wells), case.units, case.mass, None)
    vmax = float(sum(abs(w.amplitude) for w in model.wells))
    k = min(n, limit.size)
    lim, guess, pred = np.full(n, np.nan), np.full(n, np.nan), np.full(n, np.nan)
    lim[:k] = limit[:k]
    guess[:k] = limit[:k] * (1.0 - np.clip(predicted[:k], 0.0, 0.9))
    pred[:k] = np.abs(predicted[:k])
    base = replace(case.settings, memory_mb=min(case.settings.memory_mb, STUDY_MEMORY_MB), energy_window=None)
    if n != limit.size or not np.all(np.abs(predicted[:k]) < 0.3):
        # first order is no guide here (or a state has no point partner): a coarse solve gives the guesses
        rough, rough_err = np.full(n, np.nan), np.full(n, np.nan)
        start = guess[n - 1] if np.isfinite(guess[n - 1]) else (guess[0] if np.isfinite(guess[0]) else -1e-3 * vmax)
        weak_from = _walled(pot, case, model, base, 0, n, start, 1e-4, None, rough, rough_err, [], vmax)
        guess = np.where(np.isfinite(rough), rough, guess)
        guess[weak_from:] = np.minimum(np.nan_to_num(guess[weak_from:], nan=-1e-4 * abs(guess[0])), -1e-6 * abs(guess[0]))
    else:
        weak_from = n
    size = np.abs(guess)
    shallow = (np.isfinite(size) & (size < 1e-3 * size[0]) & (np.arange(n) > 0)) | (np.arange(n) >= max(weak_from, 1))
    first = int(np.argmax(shallow)) if shallow.any() else n
    tol_n = _tolerances(pred, size, vmax, first)
    tol = float(np.max(tol_n[:first]))
    top = lambda j: guess[j] if np.isfinite(guess[j]) else -1e-3 * size[0]  # noqa: E731
    split = _walled(pot, case, model, base, 0, first, top(first - 1), tol, None, energy, error, notes, vmax)
    if split < first:  # a state came out far more weakly bound than guessed: it joins the weak group
        first = split
        energy[first:], error[first:] = np.nan, np.nan
        tol_n = _tolerances(pred, size, vmax, first)
    if first < n:  # weakly bound states alone: the window keeps the deep ones from setting the grid
        lo = 0.5 * (energy[first - 1] + top(first)) if np.isfinite(energy[first - 1]) else None
        if lo is not None and not lo > energy[first - 1]:
            lo = energy[first - 1] * (1.0 - 1e-6)
        _walled(pot, case, model, base, first, n, top(n - 1), float(np.max(tol_n[first:])), lo, energy, error, notes, vmax)
    for j in range(n):
        if _accurate(energy[j], error[j], lim[j], tol_n[j]):
            resolved[j] = True
            continue
        floor_j = float(_floor(abs(guess[j]), vmax)) if np.isfinite(guess[j]) else 0.0
        if np.isfinite(pred[j]) and 10.0 * floor_j > pred[j]:  # hopeless: the deviation is below the round-off floor
            notes.append(f"state {j}: the predicted deviation {pred[j]:.1e} is below ten times the solver's round-off "
                         f"floor {floor_j:.1e} for wells this narrow and deep; not resolved")
            continue
        t = tol_n[j]
        if np.isfinite(energy[j]) and np.isfinite(lim[j]):
            t = float(np.clip(max(abs(energy[j] - lim[j]) / abs(energy[j]) / 30.0, _floor(abs(energy[j]), vmax)), 1e-13, 1e-2))
        e_j = energy[j] if np.isfinite(energy[j]) else top(j)
        lo = None
        if j > 0 and np.isfinite(energy[j - 1]):
            lo = 0.5 * (energy[j - 1] + e_j) if e_j > energy[j - 1] else energy[j - 1] * (1.0 - 1e-6)
        e_old, err_old = energy[j], error[j]
        _walled(pot, case, model, base, j, j + 1, e_j, t, lo, energy, error, notes, vmax)
        if np.isfinite(err_old) and not error[j] <= err_old:
            energy[j], error[j] = e_old, err_old
        resolved[j] = _accurate(energy[j], error[j], lim[j], 1e-6)
        if not resolved[j]:
            what = "not found by the solver" if not np.isfinite(energy[j]) else (
                f"error {error[j]:.2e} {case.units.energy} is above a tenth of the deviation it measures")
            notes.append(f"state {j}: {what}")
    return Comparison(energy, error, resolved, n, limit, predicted, tol, tuple(notes))


def _tolerances(pred, size, vmax, first) -> np.ndarray:
    """Relative solve tolerance per state: predicted/30 (at most 1e-8 below index ``first``), above the round-off floor."""
    need = np.where(np.isfinite(pred), pred / 30.0, 1e-8)
    need[:first] = np.minimum(need[:first], 1e-8)
    floor = np.where(np.isfinite(size), _floor(size, vmax), 0.0)
    return np.clip(np.maximum(need, floor), 1e-13, 1e-2)


def _walled(pot, case, model, base, j0, j1, e_top, tol, lo, energy, error, notes, vmax) -> int:
    """States j0..j1-1 (node counts) between hard walls sized for the shallowest, ``e_top``; into energy/error.

    With ``lo`` only states above lo are solved (energy window).  When the
    shallowest comes out less bound than the walls allow for (or not below
    zero) they move out and the solve is repeated, at most three times.  The
    wall shift bound 4 |E| exp(-2 kappa L) is added to each error estimate.
    """
    m_c = case.mass / case.units.hbar2_2me
    for _ in range(4):
        t = float(np.clip(max(tol, _floor(abs(e_top), vmax)), 1e-13, 1e-2))
        window = None if lo is None else (lo, abs(e_top))
        count = j1 if lo is None else j1 - j0 + 2
        domain, reach = _walls(model, math.sqrt(m_c * abs(e_top)), t)
        sol = _solve(pot, domain, replace(base, tolerance=t, max_states=count, energy_window=window), notes)
        if sol is None:
            return j1
        got = {int(nd): (float(e), float(err)) for nd, e, err in zip(sol.nodes, sol.energy, sol.energy_error)}
        if sol.nodes.size and (lo is None and int(sol.nodes[0]) != 0 or int(np.max(sol.nodes)) > j1 + 4):
            notes.append("the finite-difference states have the wrong node counts: the wells are too narrow and deep "
                         "for the grid's precision")
            return j1
        if lo is None and 0 in got:  # a state far more weakly bound than the ground state: leave it to the weak group
            weak = [j for j in range(max(j0, 1), j1) if not (j in got and got[j][0] < 1e-3 * got[0][0])]
            if weak:
                j1 = weak[0]
                if j1 <= j0:
                    return j1
        for j in range(j0, j1):
            if j in got and got[j][0] < 0.0:
                e = got[j][0]
                energy[j] = e
                error[j] = got[j][1] + 4.0 * abs(e) * math.exp(-2.0 * math.sqrt(m_c * abs(e)) * reach)
        last = got.get(j1 - 1)
        if last is not None and last[0] < 0.0:
            if math.sqrt(m_c * abs(last[0])) * reach >= 0.999 * _reach(t):
                return j1
            e_top = last[0]
        else:
            e_top = e_top / 16.0
    return j1


def _reach(tol: float) -> float:
    return 0.5 * math.log(400.0 / tol) + 2.0


def _walls(model: Model, kappa: float, tol: float):
    """Hard walls L = (ln(400/tol)/2 + 2)/kappa beyond the outer wells, and L.

    A wall at distance L from the wells shifts a level of decay constant kappa
    by about 4 |E| exp(-2 kappa L): below tol/100 relative here.
    """
    from .solver import Domain

    lo = min(w.region()[0] for w in model.wells)
    hi = max(w.region()[1] for w in model.wells)
    reach = _reach(tol) / max(kappa, 1e-300)
    mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo) + reach
    return Domain("hard", mid - half, mid + half), reach


def _floor(size, vmax):
    """Relative round-off floor of a finite-difference energy of magnitude ``size`` with wells of total depth vmax."""
    return 256.0 * EPS * (size + vmax) / np.maximum(size, 1e-300)


def _accurate(e, err, limit, rel) -> bool:
    if not (np.isfinite(e) and np.isfinite(err)):
        return False
    if np.isfinite(limit):
        return err <= abs(e - limit) / 10.0
    return err <= rel * abs(e)


def _solve(pot, domain, settings, notes):
    import warnings

    try:
        with warnings.catch_warnings(), np.errstate(over="ignore", under="ignore"):
            warnings.simplefilter("ignore", RuntimeWarning)
            return solve_potential(pot, domain, settings)
    except CaseError as err:  # budget exhausted and the like: the point is reported unresolved
        notes.append(f"solve failed: {err.message}")
        return None


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
        models, results = (model,), (res,)
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
        results = []
        for w, m in zip(ladder_w, models):
            results.append(compare(case, m, spec, coef * w))
            if progress:
                progress(1)
        results = tuple(results)
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
    from .zerorange import critical_scale, point_critical_scales, scaled

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


# ------------------------------------------------------------------ archive
def _inverse_length(u) -> dict:
    unit = u.length_udunits
    return {"units": f"1/({unit})" if " " in unit else f"1/{unit}", "units_name": f"1/{u.length}"}


def _flags(meanings) -> dict:
    return {"flag_values": np.arange(len(meanings), dtype=np.int8), "flag_meanings": " ".join(meanings), "units": "1"}


def ladder_dataset(case, lad: Ladder, action: str):
    """The archive Dataset of a ladder (coordinates width, state, well; see README for the variables)."""
    import xarray as xr

    from .archive import base_attrs, energy_attrs, length_attrs

    u = case.units
    la = lambda name: length_attrs(u, name)  # noqa: E731
    ea = lambda name: energy_attrs(u, name)  # noqa: E731
    one = lambda name: {"units": "1", "long_name": name}  # noqa: E731
    ws, st = ("width", "state"), ("state",)
    n_s = lad.n_states
    lim = np.full(n_s, np.nan)
    lim[: lad.energy_limit.size] = lad.energy_limit
    exists_lim = (np.arange(n_s) < lad.energy_limit.size).astype(np.int8)
    m0 = lad.models[0]
    width_name = "width parameter of the wells (square/smooth_square/sech2: width, gaussian: sigma)"
    data = {
        "energy": (ws, lad.table("energy"), ea("bound-state energy of the finite-width wells")),
        "energy_error": (ws, lad.table("energy_error"), ea("estimated absolute error of energy")),
        "resolved": (ws, lad.table("resolved").astype(np.int8),
                     {**_flags(("not_resolved", "resolved")), "long_name": "1 if energy_error <= |energy - energy_limit| / 10"}),
        "exists": (ws, lad.table("exists").astype(np.int8),
                   {**_flags(("absent", "bound")), "long_name": "1 if the finite-width wells bind this state (zero-energy count)"}),
        "energy_limit": (st, lim, ea("bound-state energy of the zero-range point model")),
        "exists_limit": (st, exists_lim, {**_flags(("absent", "bound")), "long_name": "1 if the point model binds this state"}),
        "deviation": (ws, lad.table("deviation"), one("relative deviation (energy - energy_limit) / |energy_limit|")),
        "predicted_deviation": (ws, lad.table("predicted"), one("first-order predicted relative deviation")),
        "solve_tolerance": (("width",), np.array([r.tolerance for r in lad.results]), one("relative tolerance of the finite-width solve")),
        "law_coefficient": (st, lad.law_coefficient, {**_inverse_length(u), "long_name": "fitted a in deviation = a * width"}),
        "law_exponent": (st, lad.law_exponent, one("fitted log-log slope of |deviation| against width")),
        "predicted_coefficient": (st, lad.predicted_coefficient, {**_inverse_length(u), "long_name": "first-order a in deviation = a * width"}),
        "validity_width": (st, lad.validity, la("largest width with |deviation| below the tolerance")),
        "validity_flag": (st, lad.validity_flag, {**_flags(VALIDITY_FLAGS), "long_name": "how validity_width was found"}),
        "binding_width": (st, lad.binding_width, la("width at which the finite-width wells bind or unbind the state")),
        "critical_separation": (ws, lad.critical, la("nearest-neighbour separation above which the finite-width wells bind the state")),
        "critical_separation_limit": (st, lad.critical_limit, la("nearest-neighbour separation above which the point model binds the state")),
        "well_name": (("well",), np.array(m0.names, dtype=object), {"long_name": "name of the well or point"}),
        "well_center": (("well",), m0.positions, la("centroid of each well (position of the point)")),
        "well_strength": (("well",), m0.strengths, {"units": f"{u.energy_udunits} {u.length_udunits}", "units_name": f"{u.energy} {u.length}",
                                                    "long_name": "integrated strength int |V| dx of each well"}),
        "well_mean_distance": (("well",), m0.lengths, la("mean distance |x - x'| over the well profile (first model)")),
    }
    coords = {
        "width": ("width", lad.widths, la(width_name)),
        "state": ("state", np.arange(n_s, dtype=np.int32), {"long_name": "bound state index = node count (0 = ground state)", "units": "1"}),
        "well": ("well", np.arange(m0.positions.size, dtype=np.int32), {"long_name": "well index, left to right", "units": "1"}),
    }
    attrs = base_attrs(case, "delta_check", action)
    attrs.update({"delta_mode": lad.mode, "replacement_shape": lad.shape if lad.mode == "replace" else "",
                  "tolerance": float(lad.tolerance), "messages": "\n".join(lad.notes),
                  "well_shapes": ", ".join(w.kind for w in m0.wells)})
    return xr.Dataset(data, coords=coords, attrs=attrs)
