"""The table of a solve archive: one row per bound state, units in every column header."""

from __future__ import annotations

import json
import math

import numpy as np
import xarray as xr

from fdsolver.report._common import units_of


def format_solve(ds: xr.Dataset) -> str:
    """The bound-state table of a solve archive."""
    eu, lu = units_of(ds, "energy"), units_of(ds, "x")
    a = ds.attrs
    lines = [a.get("title", "")]
    thr = a.get("continuum_threshold", math.inf)
    thr_s = "none (every state bound)" if not np.isfinite(thr) else f"{thr:.10g} {eu}"
    lines.append(
        f"units: {a.get('units_system')} (energies in {eu}, lengths in {lu}); continuum threshold: {thr_s}; "
        f"box [{a.get('box_left'):.6g}, {a.get('box_right'):.6g}] {lu}, {a.get('boundary')} ends"
    )
    params = json.loads(a.get("params", "{}"))
    if params:
        lines.append("params: " + ", ".join(f"{k} = {v:.10g}" for k, v in params.items()))
    n = ds.sizes.get("state", 0)
    if n == 0:
        lines.append("no bound state: the potential binds nothing below the continuum threshold")
    else:
        lines.append(
            f"{'state':>5}  {'energy [' + eu + ']':>22}  {'error [' + eu + ']':>12}  {'nodes':>5}  {'parity':>6}  "
            f"{'<x> [' + lu + ']':>12}  {'dx [' + lu + ']':>11}  conv"
        )
        for k in range(n):
            par = int(ds.parity.values[k])
            lines.append(
                f"{k:5d}  {ds.energy.values[k]:22.12g}  {ds.energy_error.values[k]:12.2e}  {int(ds.nodes.values[k]):5d}  "
                f"{('+1' if par > 0 else '-1' if par < 0 else '0'):>6}  {ds.mean_x.values[k]:12.6g}  "
                f"{ds.spread.values[k]:11.5g}  {'yes' if int(ds.converged.values[k]) else 'NO'}"
            )
    lev = ds.level_nodes.values
    if lev.size:
        lines.append(f"grid: {lev.size} nested levels, {int(lev[0])} to {int(lev[-1])} nodes; tolerance {a.get('tolerance'):.1e} relative")
    msgs = a.get("messages", "")
    for m in msgs.splitlines():
        if m:
            lines.append(f"note: {m}")
    return "\n".join(lines)
