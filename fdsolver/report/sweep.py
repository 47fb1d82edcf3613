"""Plain-text summaries of sweep and threshold archives and searches, units in every header."""

from __future__ import annotations

import json

import numpy as np

from fdsolver.report._common import case_notes, declared, name_of, notes_of, run_header, title_of, units_of

TABLE_ROWS = 30


def _with_units(value: float, units: str, fmt: str = ".10g") -> str:
    return f"{value:{fmt}} {units}".rstrip()


def _interval(ds) -> tuple[float, float]:
    iv = ds.attrs["interval"]
    lo, hi = json.loads(iv) if isinstance(iv, str) else iv
    return float(lo), float(hi)


def _found(ds, first_only: bool) -> list[dict]:
    """The thresholds of a threshold archive (only the first if ``first_only``), as plain values."""
    rows = [{"state": int(s), "value": float(v), "uncertainty": float(e), "direction": int(d)}
            for v, e, s, d in zip(ds.threshold_value.values, ds.threshold_uncertainty.values,
                                  ds.threshold_state.values, ds.threshold_direction.values)]
    return rows[:1] if first_only else rows


def describe(t: dict, param: str, units: str = "") -> str:
    """One line for one threshold."""
    way = "increases" if t["direction"] > 0 else "decreases"
    nodes = f"{t['state']} node" + ("" if t["state"] == 1 else "s")
    return (f"state {t['state']} ({nodes}) appears at {param} = {_with_units(t['value'], units, '.12g')} "
            f"(+- {t['uncertainty']:.2g} {units}".rstrip() + f"); it binds as {param} {way}")


def threshold_summary(ds, first_only: bool = True, state=None) -> dict:
    """The answer of ``fdsolver threshold --json``: param, units, interval, the first (or asked) threshold, all found."""
    chosen = _found(ds, first_only)
    first = chosen[0] if chosen else None
    a = ds.attrs
    return {
        "param": json.loads(a["swept_params"])[0], "units": units_of(ds, "scan"), "interval": list(_interval(ds)),
        "state": first["state"] if first else state, "value": first["value"] if first else None,
        "uncertainty": first["uncertainty"] if first else None, "direction": first["direction"] if first else None,
        "found": bool(chosen), "bound_states_at_lo": int(a["bound_states_at_lo"]), "bound_states_at_hi": int(a["bound_states_at_hi"]),
        "thresholds": chosen, "notes": notes_of(ds, "notes"),
    }


def format_threshold(ds, first_only: bool = True, state=None) -> str:
    """The answer of ``fdsolver threshold``: the first threshold (or every one, or those of ``state``)."""
    info = threshold_summary(ds, first_only, state)
    u, name = info["units"], info["param"]
    lo, hi = info["interval"]
    n_lo, n_hi = info["bound_states_at_lo"], info["bound_states_at_hi"]
    rng = f"{name} from {_with_units(lo, u, 'g')} to {_with_units(hi, u, 'g')}"
    lines = [run_header(ds)]
    if not info["found"]:
        who = f"state {state} neither appears nor disappears" if state is not None else "no bound state appears or disappears"
        lines.append(f"{who} for {rng}: {n_lo} bound state(s) at {name} = {_with_units(lo, u, 'g')}, "
                     f"{n_hi} at {_with_units(hi, u, 'g')} (scanned {ds.sizes['scan']} points)")
    else:
        lines.extend(describe(t, name, u) for t in info["thresholds"])
        rest = ds.sizes.get("threshold", 0) - len(info["thresholds"])
        if rest > 0 and first_only:
            lines.append(f"{rest} more threshold(s) for {rng}; --all lists them")
        lines.append(f"bound states: {n_lo} at {name} = {_with_units(lo, u, 'g')}, "
                     f"{n_hi} at {_with_units(hi, u, 'g')} (zero-energy phase count, no box)")
    if not declared(ds, "scan"):
        lines.append(f"note: the units of {name} are not declared; add [sweep] units = {{{name} = \"...\"}} to the case")
    lines.extend(f"note: {n}" for n in info["notes"])
    return "\n".join(lines)


def _axis_text(ds, name) -> str:
    v = ds[name].values
    u = units_of(ds, name)
    return f"{name} = {v[0]:.6g} .. {v[-1]:.6g} {u}".rstrip() + f" ({v.size} values, {ds[name].attrs.get('spacing', '')} spacing)"


def _thresholds(ds) -> list[str]:
    if "threshold_value" not in ds:
        return []
    names = json.loads(ds.attrs.get("swept_params", "[]"))
    name = names[0] if names else "param"
    u = units_of(ds, "threshold_value")
    out = []
    for v, e, s, d in zip(ds.threshold_value.values, ds.threshold_uncertainty.values, ds.threshold_state.values, ds.threshold_direction.values):
        way = "increases" if d > 0 else "decreases"
        out.append(f"  state {int(s)} appears at {name} = {v:.12g} {u} (+- {e:.2g} {u}); binds as {name} {way}".replace("  ;", ";"))
    return out


def format_sweep(ds) -> str:
    """The summary of a sweep (or threshold) archive."""
    if ds.attrs.get("fdsolver_kind") == "threshold":
        return _format_threshold_archive(ds)
    a = ds.attrs
    names = json.loads(a.get("swept_params", "[]"))
    eu = units_of(ds, "energy")
    lines = [title_of(ds), run_header(ds),
             f"sweep of {int(a.get('points', 0))} points; energies in {eu}; states labelled by node count"]
    lines.extend("  " + _axis_text(ds, n) for n in names)
    fixed = json.loads(a.get("fixed_params", "{}"))
    if fixed:
        lines.append("fixed: " + ", ".join(f"{name_of(k)} = {name_of(v)}" for k, v in fixed.items()))
    bound = ds.bound_states.values
    if bound.size and np.all(bound >= 0):
        lines.append(f"bound states on the whole line: {int(bound.min())} to {int(bound.max())}")
    for s in ds.state.values:
        e = ds.energy.sel(state=s).values
        ok = np.isfinite(e)
        if ok.any():
            lines.append(f"state {int(s)}: exists at {int(ok.sum())} of {e.size} points, energy {np.nanmin(e):.8g} to {np.nanmax(e):.8g} {eu}"
                         + _width_range(ds, s, eu))
        else:
            lines.append(f"state {int(s)}: exists at no point")
    if len(names) == 1 and ds.sizes[names[0]] <= TABLE_ROWS:
        lines.extend(_table(ds, names[0], eu))
        lines.extend(_position_table(ds, names[0]))
    if "tunnel_splitting" in ds and np.isfinite(ds.tunnel_splitting.values).any():
        ts = ds.tunnel_splitting.values
        lines.append(f"tunnel splitting E1 - E0: {np.nanmin(ts):.6g} to {np.nanmax(ts):.6g} {eu} where both states exist")
    th = _thresholds(ds)
    if th:
        lines.append("binding thresholds (zero-energy phase, no box):")
        lines.extend(th)
    nc = int(np.count_nonzero(ds.converged.values == 0))
    if nc:
        lines.append(f"note: {nc} state value(s) not converged to the tolerance (converged = 0)")
    if int(a.get("failed_points", 0)):
        lines.append(f"note: {int(a['failed_points'])} point(s) could not be solved (solved = 0)")
    lines.extend(case_notes(ds))
    notes = notes_of(ds, "notes")
    if notes:
        lines.append(f"notes ({int(a.get('notes_count', 0))}):")
        lines.extend("  " + m for m in notes)
    return "\n".join(lines)


def _table(ds, name, eu) -> list[str]:
    pu = units_of(ds, name)
    states = [int(s) for s in ds.state.values]
    head = f"{name + (' [' + pu + ']' if pu else ''):>14}" + "".join(f"  {'E' + str(s) + ' [' + eu + ']':>18}" for s in states)
    has_split = "tunnel_splitting" in ds
    head += f"  {'E1-E0 [' + eu + ']':>14}" if has_split else ""
    head += f"  {'bound':>5}"
    rows = [head]
    for i, v in enumerate(ds[name].values):
        row = f"{v:14.6g}" + "".join(f"  {ds.energy.values[i, k]:18.10g}" for k in range(len(states)))
        if has_split:
            row += f"  {ds.tunnel_splitting.values[i]:14.6g}"
        row += f"  {int(ds.bound_states.values[i]):5d}"
        rows.append(row.replace("nan", "  -"))
    return rows


#: states whose <x> and strengths from the ground state the position table shows
POSITION_STATES = 3


def _position_table(ds, name) -> list[str]:
    """Per point: <x> of the lowest states and the oscillator strengths from state 0 (all in the archive and
    in ``fdsolver export``)."""
    if "mean_x" not in ds:
        return []
    pu, lu = units_of(ds, name), units_of(ds, "mean_x")
    ks = [int(s) for s in ds.state.values][:POSITION_STATES]
    fs = [int(j) for j in ds.final_state.values if 0 < int(j) <= POSITION_STATES] if "oscillator_strength" in ds else []
    head = f"{name + (' [' + pu + ']' if pu else ''):>14}" + "".join(f"  {'<x>' + str(k) + ' [' + lu + ']':>14}" for k in ks)
    head += "".join(f"  {'f0' + str(j):>10}" for j in fs)
    rows = ["position and strength from state 0 (<x>: mean position; f0j: oscillator strength 0 -> j):", head]
    mx = np.array(ds.mean_x.values, dtype=float)
    spread = ds.spread.values[np.isfinite(ds.spread.values)] if "spread" in ds else np.zeros(0)
    scale = float(np.median(spread)) if spread.size else 1.0
    mx[np.abs(mx) < 1e-9 * scale] = 0.0  # round-off of a mirror-symmetric state's <x> is shown as 0
    for i, v in enumerate(ds[name].values):
        row = f"{v:14.6g}" + "".join(f"  {mx[i, k]:14.6g}" for k in range(len(ks)))
        row += "".join(f"  {ds.oscillator_strength.values[i, 0, j]:10.5f}" for j in fs)
        rows.append(row.replace("nan", "  -"))
    return rows


def _format_threshold_archive(ds) -> str:
    a = ds.attrs
    name = json.loads(a.get("swept_params", '["param"]'))[0]
    u = units_of(ds, "threshold_value")
    lines = [title_of(ds), run_header(ds), f"binding thresholds of {name} (zero-energy phase, no box)"]
    lo, hi = ds.scan.values[0], ds.scan.values[-1]
    lines.append(f"interval {name} = {lo:g} .. {hi:g} {u}; bound states {a.get('bound_states_at_lo')} at {lo:g}, {a.get('bound_states_at_hi')} at {hi:g}")
    if ds.sizes.get("threshold", 0) == 0:
        lines.append("no bound state appears or disappears in the interval")
    for v, e, s, d in zip(ds.threshold_value.values, ds.threshold_uncertainty.values, ds.threshold_state.values, ds.threshold_direction.values):
        way = "increases" if d > 0 else "decreases"
        lines.append(f"  state {int(s)} appears at {name} = {v:.12g} {u} (+- {e:.2g} {u}); binds as {name} {way}")
    lines.extend(f"note: {n}" for n in notes_of(ds, "notes"))
    return "\n".join(lines)


def _width_range(ds, s, eu: str) -> str:
    """", quasi-bound at P points, width 1e-a to 1e-b EU" for a state that is quasi-bound somewhere (else "")."""
    if "log10_level_width" not in ds:
        return ""
    l10 = ds.log10_level_width.sel(state=s).values
    q = np.isfinite(l10)
    if not q.any():
        return ""
    return (f"; quasi-bound at {int(q.sum())} points, width 10^{np.min(l10[q]):.2f} to 10^{np.max(l10[q]):.2f} {eu} "
            "(log10_level_width)")
