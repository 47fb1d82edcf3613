"""The table of a solve archive: one row per bound state, units in every column header."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import xarray as xr

    from fdsolver.io.record import Record

import json
import math

import numpy as np

from fdsolver.report._common import case_notes, name_of, notes_of, run_header, title_of, units_of

#: a region holding at least this fraction of the main region's probability is named beside it
SHARED = 0.8
#: at most this many regions are named for one state
MAX_NAMED = 3


def format_solve(ds: xr.Dataset | Record, transitions: bool = True) -> str:
    """The bound-state table of a solve archive, and (``transitions``) its strongest intersubband transitions."""
    eu, lu = units_of(ds, "energy"), units_of(ds, "x")
    a = ds.attrs
    lines = [title_of(ds), run_header(ds)]
    thr = a.get("continuum_threshold", math.inf)
    thr_s = "none (every state bound)" if not np.isfinite(thr) else f"{thr:.10g} {eu}"
    if thr == -math.inf:
        thr_s = "none: V falls without bound at an open end (every level is quasi-bound)"
    lines.append(
        f"continuum threshold: {thr_s}; box [{a.get('box_left'):.6g}, {a.get('box_right'):.6g}] {lu}, "
        f"{a.get('boundary')} ends"
    )
    if "band_reference" in a:
        sign = "+" if a.get("carrier", "electron") == "electron" else "-"
        lines.append(f"energies are confinement energies from the stack's band extremum; absolute band energy = "
                     f"{float(a['band_reference']):.10g} {sign} energy [{eu}]")
    params = json.loads(a.get("params", "{}"))
    if params:
        lines.append("params: " + ", ".join(_param_text(a, k, v) for k, v in params.items()))
    n = ds.sizes.get("state", 0)
    count = int(a.get("bound_state_count", n))
    if n == 0 and count == 0:
        lines.append("no bound state: the potential binds nothing below the continuum threshold")
    elif n == 0:
        lines.append(f"no state resolved (the potential binds {count}; see the notes)")
    else:
        lines.extend(_state_table(ds, eu, lu))
    if transitions and n >= 2 and "oscillator_strength" in ds:
        lines.extend(transition_lines(ds))
    elif transitions and n < 2:
        lines.append(f"no intersubband transition: {n} state(s) solved, a transition needs two")
    lev = ds.level_nodes.values
    if lev.size:
        lines.append(f"grid: {lev.size} nested levels, {int(lev[0])} to {int(lev[-1])} nodes; tolerance {a.get('tolerance'):.1e} relative")
    if "log10_width" in ds and np.isfinite(ds.log10_width.values).any():
        lines.append("width, lifetime: quasi-bound states on the open line are S-matrix poles E - i width/2 (zeros of "
                     "the Jost function with outgoing-wave conditions, no box); lifetime = hbar/width")
    shown = set(case_notes(ds))
    lines.extend(case_notes(ds))
    lines.extend(f"note: {m}" for m in notes_of(ds, "messages") if f"note: {m}" not in shown)
    return "\n".join(lines)


#: transitions listed by ``fdsolver solve --transitions`` and ``fdsolver show``
TRANSITIONS_SHOWN = 10


def strongest_pairs(ds, count: int = TRANSITIONS_SHOWN) -> list[tuple[int, int]]:
    """(i, j) positions of the ``count`` upward transitions with the largest oscillator strength."""
    f = np.asarray(ds.oscillator_strength.values, dtype=float)
    de = np.asarray(ds.transition_energy.values, dtype=float)
    pairs = [(i, j) for i in range(f.shape[0]) for j in range(f.shape[1]) if de[i, j] > 0 and np.isfinite(f[i, j])]
    pairs.sort(key=lambda p: -f[p])
    return pairs[:count]


def transition_lines(ds, count: int = TRANSITIONS_SHOWN) -> list[str]:
    """The table of the strongest upward intersubband transitions, with error bars and units."""
    eu, lu = units_of(ds, "energy"), units_of(ds, "x")
    states = ds.state.values
    has_err = "oscillator_strength_error" in ds
    out = [f"strongest intersubband transitions (light polarised along x; f in velocity form, referred to the "
           f"mass m_r = 1/<0|1/m|0> = {float(ds.reference_mass.values):.5g} m_e):",
           f"{'from':>5} {'to':>4}  {'energy [' + eu + ']':>16}  {'error':>9}  {'|dipole| [' + lu + ']':>16}  "
           f"{'error':>9}  {'f':>11}  {'error':>9}  {'wavelength [um]':>15}"]
    for i, j in strongest_pairs(ds, count):
        e = float(ds.transition_energy.values[i, j])
        wl = _wavelength_um(e, ds)
        err = lambda name: f"{float(ds[name].values[i, j]):9.1e}" if name in ds else f"{'-':>9}"  # noqa: E731
        out.append(f"{int(states[i]):>5} {int(states[j]):>4}  {e:16.8g}  {err('transition_energy_error')}  "
                   f"{abs(float(ds.dipole.values[i, j])):16.6g}  {err('dipole_error')}  "
                   f"{float(ds.oscillator_strength.values[i, j]):11.6f}  "
                   f"{err('oscillator_strength_error') if has_err else '-':>9}  {wl:>15}")
    if len(out) == 2:
        out.append("  (no upward transition with f > 0)")
    sr = ds.sum_rule.values if "sum_rule" in ds else None
    if sr is not None and sr.size:
        got = float(np.sum(np.clip(ds.oscillator_strength.values[0], None, None)))
        out.append(f"sum of f from state {int(states[0])} over the {states.size} states solved: {got:.6f} "
                   f"(over every final state, continuum included: {float(sr[0]):.6f})")
    return out


def _wavelength_um(energy: float, ds) -> str:
    """Vacuum wavelength of a photon of ``energy`` (case unit) in micrometres, as text."""
    from fdsolver.model.units import ELEMENTARY_CHARGE, HBAR, HARTREE_ENERGY

    si = {"nm-meV": 1e-3 * ELEMENTARY_CHARGE, "atomic": HARTREE_ENERGY}.get(ds.attrs.get("units_system"))
    if si is None or not energy > 0:
        return "-"
    return f"{2 * math.pi * HBAR * 299792458.0 / (energy * si) * 1e6:.5g}"


def _where(ds: xr.Dataset | Record, k: int) -> str:
    """The named region a state lives in, or where it sits (a hard wall), or '-'."""
    if "wall_state" in ds and int(ds.wall_state.values[k]) != 0:
        return "left wall" if int(ds.wall_state.values[k]) < 0 else "right wall"
    if "lives_in" in ds and "region_name" in ds:
        r = int(ds.lives_in.values[k])
        if 0 <= r < ds.sizes.get("region", 0):
            share = ds.probability_inside.values[k]
            # regions holding nearly as much as the main one (the wells of a symmetric doublet) are named too,
            # largest share first; shares equal to 1e-6 (mirror images, apart by round-off) in the case's order
            near = sorted((j for j in range(share.size) if share[j] >= SHARED * share[r]),
                          key=lambda j: (-round(float(share[j] / share[r]), 6), j))
            return " + ".join(name_of(ds.region_name.values[j]) for j in near[:MAX_NAMED])
    return "-"


def _splitting(ds: xr.Dataset | Record, k: int) -> str:
    """E[k+1] - E[k] with its error, '< bound' below double precision, blank for the last state."""
    if "splitting" not in ds or k + 1 >= ds.sizes["state"] or not np.isfinite(ds.splitting.values[k]):
        return ""
    if "splitting_is_bound" in ds and int(ds.splitting_is_bound.values[k]):
        return f"< {ds.splitting.values[k]:.2e}"
    return f"{ds.splitting.values[k]:.6g} +- {ds.splitting_error.values[k]:.1e}"


def _state_table(ds: xr.Dataset | Record, eu: str, lu: str) -> list[str]:
    """One row per state: its number (Sturm index = nodes), energy, error, parity, <x>, spread, where it lives,
    the splitting to the next state and whether it converged."""
    n = ds.sizes["state"]
    where = [_where(ds, k) for k in range(n)]
    split = [_splitting(ds, k) for k in range(n)]
    ww = max([8] + [len(w) for w in where])
    sw = max([16] + [len(x) for x in split])
    head = (f"{'state':>5}  {'energy [' + eu + ']':>22}  {'error [' + eu + ']':>12}  {'parity':>6}  "
            f"{'<x> [' + lu + ']':>12}  {'dx [' + lu + ']':>11}  {'lives in':<{ww}}  {'to next [' + eu + ']':<{sw}}  conv")
    quasi = _quasi_columns(ds, eu)
    if quasi:
        head += "  " + quasi[0]
    rows = [head]
    for k in range(n):
        par = int(ds.parity.values[k])
        rows.append(
            f"{int(ds.state.values[k]):5d}  {ds.energy.values[k]:22.12g}  {ds.energy_error.values[k]:12.2e}  "
            f"{('+1' if par > 0 else '-1' if par < 0 else '0'):>6}  {ds.mean_x.values[k]:12.6g}  "
            f"{ds.spread.values[k]:11.5g}  {where[k]:<{ww}}  {split[k]:<{sw}}  "
            f"{'yes' if int(ds.converged.values[k]) else 'NO'}" + (f"   {quasi[k + 1]}" if quasi else "")
        )
    return rows


def _param_text(attrs, name: str, value: float) -> str:
    """``name = value``, in the unit the case gave the param in (``F = 20 kV/cm``), else in the case units."""
    try:
        given = json.loads(attrs.get("param_units", "{}") or "{}").get(name)
    except (ValueError, AttributeError):  # an archive is untrusted input: a damaged note is not shown
        given = None
    if not given or not isinstance(given, str):
        return f"{name_of(name)} = {value:.10g}"
    from fdsolver.errors import FdsolverError
    from fdsolver.input.quantities import dimension_of_unit, factor
    from fdsolver.model.units import UNIT_SYSTEMS

    try:
        size = factor(given, dimension_of_unit(given), UNIT_SYSTEMS[attrs.get("units_system", "nm-meV")],
                      str(attrs.get("carrier", "electron")))
    except (FdsolverError, KeyError, ValueError):
        return f"{name_of(name)} = {value:.10g}"
    return f"{name_of(name)} = {value / size + 0.0:.10g} {name_of(given)}"  # + 0.0: no "-0" where holes flip a zero


def _quasi_columns(ds: xr.Dataset, eu: str) -> list[str]:
    """Header and one cell per state of width and lifetime, when any state is quasi-bound (else nothing)."""
    if "log10_width" not in ds or not np.isfinite(ds.log10_width.values).any():
        return []
    out = [f"{'width [' + eu + ']':>14}  {'lifetime [s]':>12}"]
    for k in range(ds.sizes["state"]):
        l10 = float(ds.log10_width.values[k])
        if not np.isfinite(l10):
            out.append(f"{'0 (bound)':>14}  {'bound':>12}")
            continue
        w = float(ds.width.values[k])
        tau, l10t = float(ds.lifetime.values[k]), float(ds.log10_lifetime.values[k])
        w_s = f"{w:.4e}" if w > 0 else f"1e{l10:.1f}"
        t_s = f"{tau:.4e}" if np.isfinite(tau) and tau > 0 else f"1e{l10t:.1f}"
        out.append(f"{w_s:>14}  {t_s:>12}")
    return out
