"""The table of a solve archive: one row per bound state, units in every column header."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import xarray as xr

import json
import math

import numpy as np

from fdsolver.report._common import units_of

#: a region holding at least this fraction of the main region's probability is named beside it
SHARED = 0.8
#: at most this many regions are named for one state
MAX_NAMED = 3


def format_solve(ds: xr.Dataset) -> str:
    """The bound-state table of a solve archive."""
    eu, lu = units_of(ds, "energy"), units_of(ds, "x")
    a = ds.attrs
    lines = [a.get("title", "")]
    thr = a.get("continuum_threshold", math.inf)
    thr_s = "none (every state bound)" if not np.isfinite(thr) else f"{thr:.10g} {eu}"
    if thr == -math.inf:
        thr_s = "none: V falls without bound at an open end (every level is quasi-bound)"
    lines.append(
        f"units: {a.get('units_system')} (energies in {eu}, lengths in {lu}); continuum threshold: {thr_s}; "
        f"box [{a.get('box_left'):.6g}, {a.get('box_right'):.6g}] {lu}, {a.get('boundary')} ends"
    )
    params = json.loads(a.get("params", "{}"))
    if params:
        lines.append("params: " + ", ".join(f"{k} = {v:.10g}" for k, v in params.items()))
    n = ds.sizes.get("state", 0)
    count = int(a.get("bound_state_count", n))
    if n == 0 and count == 0:
        lines.append("no bound state: the potential binds nothing below the continuum threshold")
    elif n == 0:
        lines.append(f"no state resolved (the potential binds {count}; see the notes)")
    else:
        lines.extend(_state_table(ds, eu, lu))
    lev = ds.level_nodes.values
    if lev.size:
        lines.append(f"grid: {lev.size} nested levels, {int(lev[0])} to {int(lev[-1])} nodes; tolerance {a.get('tolerance'):.1e} relative")
    if "log10_width" in ds and np.isfinite(ds.log10_width.values).any():
        lines.append("width, lifetime: quasi-bound states on the open line are S-matrix poles E - i width/2 (zeros of "
                     "the Jost function with outgoing-wave conditions, no box); lifetime = hbar/width")
    msgs = a.get("messages", "")
    for m in msgs.splitlines():
        if m:
            lines.append(f"note: {m}")
    return "\n".join(lines)


def _where(ds: xr.Dataset, k: int) -> str:
    """The named region a state lives in, or where it sits (a hard wall), or '-'."""
    if "wall_state" in ds and int(ds.wall_state.values[k]) != 0:
        return "left wall" if int(ds.wall_state.values[k]) < 0 else "right wall"
    if "lives_in" in ds and "region_name" in ds:
        r = int(ds.lives_in.values[k])
        if 0 <= r < ds.sizes.get("region", 0):
            share = ds.probability_inside.values[k]
            # regions holding nearly as much as the main one (the wells of a symmetric doublet) are named too
            near = [j for j in np.argsort(-share) if share[j] >= SHARED * share[r]]
            return " + ".join(str(ds.region_name.values[j]) for j in near[:MAX_NAMED])
    return "-"


def _splitting(ds: xr.Dataset, k: int) -> str:
    """E[k+1] - E[k] with its error, '< bound' below double precision, blank for the last state."""
    if "splitting" not in ds or k + 1 >= ds.sizes["state"] or not np.isfinite(ds.splitting.values[k]):
        return ""
    if "splitting_is_bound" in ds and int(ds.splitting_is_bound.values[k]):
        return f"< {ds.splitting.values[k]:.2e}"
    return f"{ds.splitting.values[k]:.6g} +- {ds.splitting_error.values[k]:.1e}"


def _state_table(ds: xr.Dataset, eu: str, lu: str) -> list[str]:
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
