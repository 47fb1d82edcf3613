"""Zero-range check, part 2: one comparison of the finite wells with their point model.

The finite model is solved with :func:`fdsolver.solver.solve_potential` between hard walls placed where the
shallowest wanted state has decayed so far that they shift it by less than a hundredth of the tolerance (that
bound is added to the error bar); each finite energy is *resolved* when its error estimate is at most a tenth of
|E_finite - E_point|.  See :mod:`fdsolver.deltacheck`.  Energies and lengths in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from fdsolver.zerorange.models import EPS, STUDY_MEMORY_MB, Model
from fdsolver.errors import CaseError
from fdsolver.zerorange.pointmodel import point_spectrum
from fdsolver.model.potential import Potential
from fdsolver.boundstates.driver import solve_potential
from fdsolver.zerorange.narrow import first_order, zero_energy_count


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
    # between walls the solver measures energies from the lowest V and its tolerance is relative to E - V_min;
    # the tolerances here are relative to |E|, the binding energy below the background
    depth = max(-min(float(w.amplitude) for w in model.wells), 0.0)
    for _ in range(4):
        t = float(np.clip(max(tol, _floor(abs(e_top), vmax)), 1e-13, 1e-2))
        t_solver = t * abs(e_top) / (abs(e_top) + depth) if abs(e_top) > 0 else t
        window = None if lo is None else (lo, abs(e_top))
        count = j1 if lo is None else j1 - j0 + 2
        domain, reach = _walls(model, math.sqrt(m_c * abs(e_top)), t)
        sol = _solve(pot, domain, replace(base, tolerance=t_solver, max_states=count, energy_window=window), notes)
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
    from fdsolver.model.domain import Domain

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
            return solve_potential(pot, domain, settings, wavefunctions=False)  # energies are all it compares
    except CaseError as err:  # budget exhausted and the like: the point is reported unresolved
        notes.append(f"solve failed: {err.message}")
        return None


