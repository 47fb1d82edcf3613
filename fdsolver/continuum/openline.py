"""A solve on the open line that leaks: quasi-bound states with energies, widths and lifetimes, beside the bound ones.

Two cases reach here (:mod:`fdsolver.continuum.confinement`):

* **V falls without bound at an open end** (a field): nothing is bound.  The
  well's levels are the S-matrix poles E_r - i Gamma/2 in the window of the
  structure's values (``[solve] energy_window`` if given), widths up to a
  quarter of the window (the broad poles of the field continuum stay out):
  zeros of the Jost function with outgoing Airy conditions,
  :func:`fdsolver.continuum.quasibound.quasi_bound_states` (no box, no hard
  walls, no wall states).
* **A well enclosed by barriers above the continuum threshold**: the
  finite-difference solver returns the true bound states, unchanged; the
  quasi-bound states between the threshold and the enclosing barriers' top
  are the poles found there and are appended above them with
  ``[solve] quasi_bound = true`` (otherwise a note says they may exist, so
  the bound-state contract of ``solve`` is unchanged).

Each quasi-bound state gets a wavefunction for display: the solution at the
complex pole energy, marched exactly (:func:`fdsolver.numerics.waves.trace_waves`)
from both outer ends inward to the edge where it lives and joined there,
turned by one global phase to be real at its largest value, its real part
normalised to 1 over the grid (the outgoing tail beyond the grid is not
included).  Its ``index`` (= ``nodes`` in the archive) is its order above the
bound states: a resonance has no node count.  Widths, their errors and
lifetimes hbar/Gamma come from the pole finder (error estimates as in
:mod:`fdsolver.continuum.resonances`); bound states have width 0.  Energies
in the case energy unit, lengths in its length unit, psi in length^-1/2,
lifetimes in s.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.boundstates.result import Solution, home_regions
from fdsolver.continuum.confinement import confined_top, falls
from fdsolver.continuum.narrow import match_edge
from fdsolver.continuum.profile import Profile, ladder
from fdsolver.continuum.quasibound import default_window
from fdsolver.continuum.resonances import find_resonances
from fdsolver.errors import CaseError
from fdsolver.numerics.waves import WaveCells, trace_waves

#: quasi-bound states are the poles narrower than this fraction of the window
WIDTH_FRACTION = 0.25
#: points of the display grid of a potential that falls without bound
GRID_POINTS = 2001

def solve_open_line(potential, domain, settings) -> Solution:
    """The solve of a leaking potential on the open line (module docstring)."""
    from fdsolver.boundstates.driver import solve_potential

    if falls(potential):
        if confined_top(potential) is None and not any(a > 0 for _, a in potential.point_terms()):
            raise CaseError("V falls without bound at an open end and encloses no well, so nothing is bound or "
                            "quasi-bound on the open line (every energy is in the field's continuum); add a well, or "
                            'put the case between hard walls with [domain] boundary = "hard"', key="domain.boundary")
        return _quasi_only(potential, domain, settings)
    sol = solve_potential(potential, domain, settings)
    return _with_quasi(potential, domain, settings, sol)


# ------------------------------------------------------------------ the poles
def _poles(potential, domain, settings, lo: float, hi: float):
    """The poles in [lo, hi] narrower than a quarter of it, that live in the structure: (resonances, their
    indices, the finest profile, how many broad poles outside the structure were left out)."""
    width = WIDTH_FRACTION * (hi - lo)
    lad = ladder(potential, lo - 0.5 * width, hi + 0.5 * width, domain)
    res = find_resonances(potential, (lo, hi), max_width=width, tol=min(settings.tolerance, 1e-10), lad=lad)
    prof = lad.at(max(res.levels - 1, 0))
    keep = np.flatnonzero(~np.asarray(res.bound, bool))
    home = np.array([_share_inside(potential, prof, res, k) >= HOME_SHARE for k in keep], dtype=bool)
    return res, keep[home] if keep.size else keep, prof, int(np.count_nonzero(~home))


#: a pole is a state of the structure when at least this share of it (over the structure and five decay lengths
#: around it) lies within the features' span widened by its shortest decay length; broad poles of a field's
#: continuum live outside it
HOME_SHARE = 0.5


def _share_inside(potential, prof, res, k: int) -> float:
    s_lo, s_hi = potential.support()
    pad = _pad(potential, res, [k], s_lo, s_hi)
    x = _display_grid(potential, s_lo - pad, s_hi + pad, 801)
    w = _weights(x)
    psi = np.abs(wave_on(prof, _pole_energy(res, k), x)) ** 2
    total = float(np.sum(w * psi))
    near = min(_decay_lengths(potential, res, [k], s_lo, s_hi) or [0.0])  # a point's state lives in its tails
    inside = (x >= s_lo - near) & (x <= s_hi + near)
    return float(np.sum((w * psi)[inside])) / total if total > 0 else 0.0


def _pole_energy(res, k: int) -> complex:
    g = float(res.width[k])
    return complex(float(res.energy[k]), -0.5 * g if g > 0 else 0.0)


# --------------------------------------------------------- wavefunctions
def _extended(profile, x_lo: float, x_hi: float) -> Profile:
    """The profile with its channels' own potential continued as cells out to [x_lo, x_hi] (walls are not)."""
    cells = profile.cells
    edges, v0, slope, mass, jump = (list(a) for a in (cells.edges, cells.v0, cells.slope, cells.mass, cells.jump))
    left, right = profile.left, profile.right
    if x_lo < edges[0] and left.kind != "wall":
        f = left.field if left.kind == "airy" else 0.0
        v_new = left.v + f * (x_lo - left.edge)
        edges.insert(0, x_lo)
        v0.insert(0, v_new)
        slope.insert(0, f)
        mass.insert(0, left.mass)
        jump.insert(0, 0.0)
        left = replace(left, edge=x_lo, v=v_new)
    if x_hi > edges[-1] and right.kind != "wall":
        f = right.field if right.kind == "airy" else 0.0
        edges.append(x_hi)
        v0.append(right.v)
        slope.append(f)
        mass.append(right.mass)
        jump.append(0.0)
        right = replace(right, edge=x_hi, v=right.v + f * (x_hi - right.edge))
    return Profile(WaveCells(edges, v0, slope, mass, jump, cells.c, cells.kscale), left, right, profile.exact,
                   profile.level)


def _subdivided(profile: Profile, x: np.ndarray) -> tuple[Profile, np.ndarray]:
    """The profile with every point of ``x`` inside it made an edge; the edge index of each point (-1 outside)."""
    cells = profile.cells
    inside = (x >= cells.edges[0]) & (x <= cells.edges[-1])
    edges = sorted_distinct(np.concatenate([cells.edges, x[inside]]))
    cell = np.clip(np.searchsorted(cells.edges, edges[:-1], side="right") - 1, 0, cells.n_cells - 1)
    v0 = cells.v0[cell] + cells.slope[cell] * (edges[:-1] - cells.edges[cell])
    jump = np.zeros(edges.size)
    at = np.searchsorted(edges, cells.edges)
    jump[at] = cells.jump
    sub = WaveCells(edges, v0, cells.slope[cell], cells.mass[cell], jump, cells.c, cells.kscale)
    where = np.where(inside, np.searchsorted(edges, x), -1)
    return Profile(sub, profile.left, profile.right, profile.exact, profile.level), where


def wave_on(profile, energy: complex, x) -> np.ndarray:
    """The pole's solution at the points ``x`` (complex, 1 at the joining edge; 0 beyond a wall channel's edge)."""
    x = np.asarray(x, dtype=float)
    prof, where = _subdivided(_extended(profile, float(x[0]), float(x[-1])), x)
    n = prof.n_edges
    m = match_edge(prof, float(energy.real))
    m = min(max(m, 0), n - 1)
    pl, ul, _ = prof.left.outgoing(np.array([energy]))
    pr, ur, _ = prof.right.outgoing(np.array([energy]))
    psi_l, log_l = trace_waves(prof.cells, energy, 0, m, pl[0], ul[0])
    psi_r, log_r = trace_waves(prof.cells, energy, n - 1, m, pr[0], ur[0])
    out = np.zeros(n, dtype=complex)
    with np.errstate(all="ignore"):
        out[: m + 1] = psi_l[: m + 1] * np.exp(np.clip(log_l[: m + 1] - log_l[m], -745.0, 700.0)) / psi_l[m]
        out[m:] = psi_r[m:] * np.exp(np.clip(log_r[m:] - log_r[m], -745.0, 700.0)) / psi_r[m]
    out = np.where(np.isfinite(out), out, 0.0)
    return np.where(where >= 0, out[np.clip(where, 0, n - 1)], 0.0)


def _weights(x: np.ndarray) -> np.ndarray:
    h = np.diff(x)
    w = np.zeros(x.size)
    w[:-1] += 0.5 * h
    w[1:] += 0.5 * h
    return w


def _display(profile, energy: complex, x, w, norm_range) -> np.ndarray:
    """Real wavefunction for display: one global phase, kept and normalised over ``norm_range`` of x, zero beyond
    (the outgoing tail is not a normalisable part of the state)."""
    sel = (x >= norm_range[0]) & (x <= norm_range[1])
    psi = np.where(sel, wave_on(profile, energy, x), 0.0)
    k = int(np.argmax(np.abs(psi)))
    psi = psi * np.exp(-1j * np.angle(psi[k])) if abs(psi[k]) > 0 else psi
    real = psi.real
    norm = math.sqrt(float(np.sum(w[sel] * real[sel] ** 2)))
    return real / norm if norm > 0 else real


def _overlap(x: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Length of each point's dual cell inside [lo, hi]."""
    h = np.diff(x)
    a = np.concatenate([[x[0]], x[1:] - 0.5 * h])
    b = np.concatenate([x[:-1] + 0.5 * h, [x[-1]]])
    return np.clip(np.minimum(b, hi) - np.maximum(a, lo), 0.0, None)


def _observables(potential, x, w, psi):
    """<x>, spread, probability inside every named region and the region holding most, per state."""
    dens = psi**2
    total = np.maximum(dens @ w, 1e-300)
    mean = (dens @ (w * x)) / total
    spread = np.sqrt(np.maximum(0.0, (dens * (x[None, :] - mean[:, None]) ** 2) @ w / total))
    regions = potential.regions()
    inside = np.zeros((psi.shape[0], len(regions)))
    for j, (_, lo, hi) in enumerate(regions):
        inside[:, j] = (dens @ _overlap(x, lo, hi)) / total
    home = home_regions(inside) if regions and psi.shape[0] else np.full(psi.shape[0], -1)
    return mean, spread, inside, home.astype(int), tuple(r[0] for r in regions)


def _parity(x, psi, center) -> np.ndarray:
    if center is None or not psi.size:
        return np.zeros(psi.shape[0], dtype=int)
    mirrored = np.array([np.interp(2.0 * center - x, x, p) for p in psi])
    w = _weights(x)
    s = np.sum(w * psi * mirrored, axis=1)
    return np.where(np.abs(s) > 0.5, np.sign(s), 0).astype(int)


# ------------------------------------------------------------------ the solves
def _quasi_only(potential, domain, settings) -> Solution:
    """Every level is quasi-bound: V falls without bound at an open end."""
    lo, hi = settings.energy_window or _field_window(potential)
    res, keep, prof, outside = _poles(potential, domain, settings, lo, hi)
    unit = potential.units.energy
    messages = [n for n in res.notes if not n.startswith("no resonance")] + _outside_note(outside)
    if keep.size > settings.max_states:
        messages.append(f"{keep.size - settings.max_states} more quasi-bound state(s) lie in the window (raise "
                        "[solve] max_states)")
        keep = keep[: settings.max_states]
    if not keep.size:
        messages.append(f"no quasi-bound state with its energy in [{lo:.6g}, {hi:.6g}] {unit} and a width up to "
                        f"{WIDTH_FRACTION * (hi - lo):.4g} {unit}")
    s_lo, s_hi = potential.support()
    vmin = default_window(potential)[0]
    pad = _pad(potential, res, keep, s_lo, s_hi)
    x = _display_grid(potential, s_lo - pad, s_hi + pad)
    w = _weights(x)
    psi = np.array([_display(prof, _pole_energy(res, k), x, w, (x[0], x[-1])) for k in keep]).reshape(keep.size, x.size)
    e = np.asarray(res.energy)[keep]
    err = np.asarray(res.energy_error)[keep]
    scale = np.maximum(np.abs(e - vmin), 1e-300)
    index = np.arange(keep.size)
    mean, spread, inside, home, names = _observables(potential, x, w, psi)
    with np.errstate(all="ignore"):
        v = potential.value(x)
    return Solution(
        x=x, potential=v, mass=potential.mass_at(x), weights=w, energy=e, energy_error=err,
        converged=err <= settings.tolerance * scale, psi=psi, nodes=index.copy(), parity=np.zeros(keep.size, int),
        mean_x=mean, spread=spread, inside=inside, region_names=names, threshold=-math.inf,
        box=(float(x[0]), float(x[-1])), boundary="open", mirror_center=None, level_energies=e[None, :].copy(),
        level_sizes=np.array([x.size]), box_error=np.zeros(keep.size), bound_count=0,
        messages=tuple(dict.fromkeys(messages)), index=index, home=home, wall=np.zeros(keep.size, int),
        splitting=np.diff(e), splitting_error=err[1:] + err[:-1], splitting_bound=np.zeros(max(keep.size - 1, 0), bool),
        resolved_count=int(keep.size), whole_line_count=0, reference=float(vmin),
        **_widths(res, keep))


def _display_grid(potential, lo: float, hi: float, points: int = GRID_POINTS) -> np.ndarray:
    """``points`` even points on [lo, hi] and every feature inside."""
    feats = np.asarray(potential.features(), dtype=float)
    return sorted_distinct(np.concatenate([np.linspace(lo, hi, points), feats[(feats > lo) & (feats < hi)]]))


def _field_window(potential) -> tuple[float, float]:
    """From the lowest V of the structure to the top of the barriers that enclose its well (else its highest V)."""
    lo, hi = default_window(potential)
    top = confined_top(potential)
    return lo, (top if top is not None and top > lo else hi)


def _decay_lengths(potential, res, keep, s_lo, s_hi) -> list[float]:
    """1/kappa of each pole in ``keep`` into the values just outside the features' span, on each side where the
    pole lies below them (length unit)."""
    span = max(s_hi - s_lo, 1e-300)
    c = potential.hbar2_2me
    with np.errstate(all="ignore"):
        v_out = potential.value(np.array([s_lo - 1e-9 * max(span, 1.0), s_hi + 1e-9 * max(span, 1.0)]))
    out = []
    for k in keep:
        for v, m in zip(v_out, (potential.asymptotic_mass(-1), potential.asymptotic_mass(1))):
            gap = v - float(res.energy[k])
            if np.isfinite(gap) and gap > 0 and np.isfinite(m):
                out.append(1.0 / math.sqrt(m * gap / c))
    return out


def _pad(potential, res, keep, s_lo, s_hi) -> float:
    """How far beyond the features' span to show the states: five decay lengths into the outer values, or half
    the span; at most three spans, or five of the shortest decay lengths where the span is shorter (a point)."""
    span = max(s_hi - s_lo, 0.0)
    decay = _decay_lengths(potential, res, keep, s_lo, s_hi)
    pad = max([0.5 * span] + [5.0 * d for d in decay])
    cap = max(3.0 * span, 5.0 * min(decay) if decay else 0.0)
    return min(pad, cap) if cap > 0 else 1.0


def _outside_note(n: int) -> list[str]:
    return [f"{n} broad pole(s) in the window live outside the structure (continuum resonances, not its states); "
            "fdsolver resonances lists them"] if n else []


def _bound_widths(n: int) -> dict:
    """The width fields of n true bound states: width 0, log10 width -inf, lifetime inf."""
    return {"width": np.zeros(n), "width_error": np.zeros(n), "log10_width": np.full(n, -np.inf),
            "lifetime": np.full(n, np.inf), "log10_lifetime": np.full(n, np.inf)}


def _widths(res, keep, n_bound: int = 0) -> dict:
    """The width fields of n_bound bound states followed by the poles ``keep`` of ``res``."""
    bound = _bound_widths(n_bound)
    return {name: np.concatenate([bound[name], np.asarray(getattr(res, name), float)[keep]]) for name in bound}


def _with_quasi(potential, domain, settings, sol: Solution) -> Solution:
    """The bound states of the finite-difference solve, and the quasi-bound states above the threshold."""
    zero = _bound_widths(sol.energy.size)
    top = confined_top(potential)
    lo, hi = sol.threshold, top if top is not None else sol.threshold
    if settings.energy_window is not None:
        lo, hi = max(lo, settings.energy_window[0]), min(hi, settings.energy_window[1])
    n_b = sol.energy.size
    if not hi > lo or not math.isfinite(lo):
        return replace(sol, **zero)
    if settings.quasi_bound is not True:  # the bound states stay the solver's alone unless asked
        msg = (f"quasi-bound states may lie between the continuum threshold and the enclosing barriers' top "
               f"({hi:.6g} {potential.units.energy}); [solve] quasi_bound = true lists them (or fdsolver resonances)")
        return replace(sol, messages=sol.messages + (msg,), **zero)
    if n_b >= settings.max_states or sol.bound_count > n_b:
        msg = "quasi-bound states above the continuum threshold were not searched: the bound states fill max_states"
        return replace(sol, messages=sol.messages + (msg + " (raise [solve] max_states)",), **zero)
    res, keep, prof, outside = _poles(potential, domain, settings, lo, hi)
    keep = keep[: settings.max_states - n_b]
    if not keep.size:
        return replace(sol, **zero)
    s_lo, s_hi = potential.support()
    pad = _pad(potential, res, keep, s_lo, s_hi)
    if n_b == 0:  # nothing bound: the quasi-bound states get a display grid of their own
        x = _display_grid(potential, s_lo - pad, s_hi + pad)
        with np.errstate(all="ignore"):
            sol = replace(sol, x=x, potential=potential.value(x), mass=potential.mass_at(x), weights=_weights(x),
                          psi=np.zeros((0, x.size)), box=(float(x[0]), float(x[-1])))
    x = sol.x
    psi_q = np.array([_display(prof, _pole_energy(res, k), x, _weights(x), (s_lo - pad, s_hi + pad)) for k in keep])
    e = np.asarray(res.energy)[keep]
    err = np.asarray(res.energy_error)[keep]
    mean, spread, inside, home, _ = _observables(potential, x, _weights(x), psi_q)
    scale = np.maximum(np.abs(e - sol.reference), 1e-300)
    index = n_b + np.arange(keep.size)
    n_lev = sol.level_energies.shape[0]
    cat = np.concatenate
    messages = list(sol.messages) + [f"{keep.size} quasi-bound state(s) between the continuum threshold and the "
                                     f"enclosing barriers' top ({hi:.6g} {potential.units.energy})"]
    messages += [n for n in res.notes if not n.startswith("no resonance")] + _outside_note(outside)
    gap = [np.nan] if n_b else []
    return replace(
        sol, energy=cat([sol.energy, e]), energy_error=cat([sol.energy_error, err]),
        converged=cat([sol.converged, err <= settings.tolerance * scale]), psi=np.vstack([sol.psi, psi_q]),
        nodes=cat([sol.nodes, index]), parity=cat([sol.parity, _parity(x, psi_q, sol.mirror_center)]),
        mean_x=cat([sol.mean_x, mean]), spread=cat([sol.spread, spread]), inside=np.vstack([sol.inside, inside]),
        home=cat([sol.home, home]), wall=cat([sol.wall, np.zeros(keep.size, int)]),
        level_energies=np.hstack([sol.level_energies, np.full((n_lev, keep.size), np.nan)]),
        box_error=cat([sol.box_error, np.zeros(keep.size)]),
        splitting=cat([sol.splitting, gap, np.diff(e)]),
        splitting_error=cat([sol.splitting_error, gap, err[1:] + err[:-1]]),
        splitting_bound=cat([sol.splitting_bound, [False] * len(gap), np.zeros(keep.size - 1, bool)]).astype(bool),
        index=cat([sol.index, index]), messages=tuple(dict.fromkeys(messages)),
        **_widths(res, keep, n_b))
