"""Plain-text tables of delta-check archives (width ladder, from-finite comparison, validity map), units in every header."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import xarray as xr

import json

import numpy as np

from fdsolver.report._common import label, name_of, notes_of, run_header, title_of, units_of

ORDINAL = {0: "ground", 1: "first excited", 2: "second excited"}


def _g(v, fmt=".6g") -> str:
    return "-" if v is None or not np.isfinite(v) else format(float(v), fmt)


def _head(ds) -> list[str]:
    a = ds.attrs
    lines = [title_of(ds), run_header(ds)]
    params = json.loads(a.get("params", "{}"))
    lines.append(f"deviation = (E_finite - E_point) / |E_point|, "
                 f"tolerance {a.get('tolerance'):.1e}" + ("; params: " + ", ".join(f"{name_of(k)} = {v:.10g}" for k, v in params.items()) if params else ""))
    return lines


def format_delta(ds: xr.Dataset) -> str:
    """The table of any delta-check archive."""
    mode = ds.attrs.get("delta_mode", "replace")
    if mode.endswith("_map"):
        return _format_map(ds)
    return _format_ladder(ds)


def _format_ladder(ds) -> str:
    a = ds.attrs
    eu, lu = units_of(ds, "energy"), units_of(ds, "width")
    lines = _head(ds)
    n_w = ds.sizes["well"]
    wells = ", ".join(f"{name_of(ds.well_name.values[k])} at {ds.well_center.values[k]:.6g} {lu} "
                      f"(alpha {ds.well_strength.values[k]:.6g} {units_of(ds, 'well_strength')})" for k in range(n_w))
    if a.get("delta_mode") == "from_finite":
        lines.append(f"zero-range model of {n_w} finite well(s) ({a.get('well_shapes')}): alpha_j = int |V_j| dx, "
                     f"x_j = centroid; {wells}")
    else:
        lines.append(f"{n_w} point interaction(s) replaced by {a.get('replacement_shape')} wells of the same strength "
                     f"and centroid: {wells}")
        lines.append(f"width = {ds.width.attrs.get('long_name', 'width')}")
    lim = ds.energy_limit.values
    ex_l = ds.exists_limit.values
    n_p = int(ex_l.sum())
    lines.append("point model: " + (f"{n_p} bound state(s): " + ", ".join(
        f"E{k} = {lim[k]:.10g} {eu}" for k in range(ds.sizes['state']) if ex_l[k]) if n_p else "no bound state"))
    for k in range(ds.sizes["state"]):
        dc = ds.critical_separation_limit.values[k]
        if np.isfinite(dc):
            lines.append(f"  point model binds state {k} only for nearest-neighbour separations above {dc:.6g} {lu}")
    if a.get("delta_mode") == "from_finite":
        lines += _from_finite_rows(ds, eu, lu)
    else:
        for k in range(ds.sizes["state"]):
            lines += _state_block(ds, k, eu, lu)
    lines += _count_warnings(ds, lu)
    lines.extend(f"note: {m}" for m in notes_of(ds, "messages"))
    return "\n".join(lines)


def _state_block(ds, k, eu, lu) -> list[str]:
    name = ORDINAL.get(k, f"state {k}")
    lim = ds.energy_limit.values[k]
    lines = ["", f"state {k} ({name}): point model " + (f"E = {lim:.10g} {eu}" if np.isfinite(lim) else "does not bind it")]
    crit = ds.critical_separation.values[:, k]
    show_c = np.isfinite(crit).any()
    kappa = _kappa(ds, lim)
    depth = _depths(ds)
    head = (f"  {'width [' + lu + ']':>13}  {'w*kappa':>8}  {'depth [' + eu + ']':>13}  {'energy [' + eu + ']':>18}  "
            f"{'error [' + eu + ']':>11}  {'E - E_point [' + eu + ']':>20}  {'deviation':>10}  "
            f"{'predicted':>10}" + (f"  {'d_c [' + lu + ']':>11}" if show_c else "") + "  ok")
    lines.append(head)
    for i, w in enumerate(ds.width.values):
        ex = int(ds.exists.values[i, k])
        res = int(ds.resolved.values[i, k])
        e = ds.energy.values[i, k]
        dev = ds.deviation.values[i, k]
        flag = "yes" if ex and res and abs(dev) < ds.attrs["tolerance"] else ("unbound" if not ex else ("NOT RESOLVED" if not res else "no"))
        if not np.isfinite(lim) and ex:
            flag = "finite only"
        row = (f"  {w:13.5g}  {_g(w * kappa, '8.3g'):>8}  {_g(depth[i], '13.5g'):>13}  "
               f"{_g(e, '18.10g') if ex else 'not bound'.rjust(18)}  {_g(ds.energy_error.values[i, k], '11.2e'):>11}  "
               f"{_g(e - lim if ex else np.nan, '20.4e'):>20}  "
               f"{_g(dev, '10.3e'):>10}  {_g(ds.predicted_deviation.values[i, k], '10.3e'):>10}")
        if show_c:
            row += f"  {_g(crit[i], '11.6g'):>11}"
        lines.append(row + f"  {flag}")
    a_fit, a_pred = ds.law_coefficient.values[k], ds.predicted_coefficient.values[k]
    iu = units_of(ds, "law_coefficient")
    if np.isfinite(a_fit) or np.isfinite(a_pred):
        lines.append(f"  leading order: deviation = a * width, a = {_g(a_fit, '.5g')} {iu} fitted (log-log slope "
                     f"{_g(ds.law_exponent.values[k], '.3f')}); first-order prediction a = {_g(a_pred, '.5g')} {iu}")
    code = int(ds.validity_flag.values[k])
    v = ds.validity_width.values[k]
    tol = ds.attrs["tolerance"]
    text = {
        0: f"valid (|deviation| < {tol:.1e}) for widths up to {_g(v, '.4g')} {lu}",
        1: f"valid (|deviation| < {tol:.1e}) over the whole ladder, widths up to at least {_g(v, '.4g')} {lu}",
        2: f"NOT valid: |deviation| >= {tol:.1e} already at the narrowest resolved width"
           + (f" (leading order suggests widths below {tol / a_pred:.3g} {lu})" if np.isfinite(a_pred) and a_pred > 0 else ""),
        3: "the point model does not bind this state: no validity width",
        4: f"valid up to at least {_g(v, '.4g')} {lu}; beyond it the state is lost or not resolved",
        5: "",
        6: "no width of the ladder could be resolved: no validity width (see the notes)",
    }[code]
    if text:
        lines.append("  " + text)
    bw = ds.binding_width.values[k]
    if np.isfinite(bw):
        lines.append(f"  the finite wells {'unbind' if np.isfinite(lim) else 'bind'} this state at width {bw:.6g} {lu}")
    return lines


def _from_finite_rows(ds, eu, lu) -> list[str]:
    lines = ["", f"{'state':>5}  {'finite [' + eu + ']':>18}  {'error [' + eu + ']':>11}  {'zero-range [' + eu + ']':>18}  "
             f"{'deviation':>10}  {'predicted':>10}  {'d_c finite [' + lu + ']':>16}  {'d_c zero-range [' + lu + ']':>20}"]
    for k in range(ds.sizes["state"]):
        ex, ex_l = int(ds.exists.values[0, k]), int(ds.exists_limit.values[k])
        lines.append(
            f"{k:5d}  {(_g(ds.energy.values[0, k], '18.10g') if ex else 'not bound'):>18}  {_g(ds.energy_error.values[0, k], '11.2e'):>11}  "
            f"{(_g(ds.energy_limit.values[k], '18.10g') if ex_l else 'not bound'):>18}  {_g(ds.deviation.values[0, k], '10.3e'):>10}  "
            f"{_g(ds.predicted_deviation.values[0, k], '10.3e'):>10}  {_g(ds.critical_separation.values[0, k], '16.6g'):>16}  "
            f"{_g(ds.critical_separation_limit.values[k], '20.6g'):>20}")
    dev = np.abs(ds.deviation.values[0])
    tol = ds.attrs["tolerance"]
    ok = np.isfinite(dev) & (dev < tol)
    both = (ds.exists.values[0] > 0) & (ds.exists_limit.values > 0)
    if both.any():
        verdict = "holds" if ok[both].all() else "does NOT hold"
        lines.append(f"the zero-range model {verdict} to {tol:.1e} for the states both models bind")
    return lines


def _count_warnings(ds, lu) -> list[str]:
    n_p = int(ds.exists_limit.values.sum())
    counts = ds.exists.values.sum(axis=1).astype(int)
    out = []
    diff = np.flatnonzero(counts != n_p)
    if diff.size:
        w = ds.width.values
        where = ", ".join(f"{w[i]:.4g}" for i in diff[:8]) + (" ..." if diff.size > 8 else "")
        out.append("")
        out.append(f"WARNING: the models disagree on the number of bound states: the point model binds {n_p}, "
                   f"the finite wells bind {', '.join(str(c) for c in counts[diff][:8])} at width(s) {where} {lu}")
        out.append("         (a state the finite wells lose is marked 'unbound' in its table; see its critical separation)")
    else:
        out.append("")
        every = " at every width" if ds.sizes["width"] > 1 else ""
        out.append(f"both models bind {n_p} state(s){every}")
    return out


def _format_map(ds) -> str:
    a = ds.attrs
    ax = json.loads(a["map_axes"])
    eu = units_of(ds, "energy")
    lines = _head(ds)
    what = (f"{a.get('replacement_shape')} wells replacing the points" if a["delta_mode"] == "replace_map"
            else "the case's finite wells against their zero-range model")
    fixed = "" if not np.isfinite(a.get("replacement_width", np.nan)) else f", width {a['replacement_width']:.6g}"
    lines.append(f"validity map of {what}{fixed}: {label(ds, ax[0])} x {label(ds, ax[1])}, "
                 f"{ds.sizes[ax[0]]} x {ds.sizes[ax[1]]} points, energies in {eu}")
    solved = ds.solved.values > 0
    if ds.overlap.values.any():
        lines.append(f"{int(ds.overlap.values.sum())} points with overlapping wells were not solved")
    tol = a["tolerance"]
    lines.append(f"{'state':>5}  {'|dev| min':>10}  {'|dev| max':>10}  {'within tol':>10}  {'point only':>10}  "
                 f"{'finite only':>11}  {'unresolved':>10}")
    for k in range(ds.sizes["state"]):
        dev = np.abs(ds.deviation.values[:, :, k])[solved]
        ex = ds.existence.values[:, :, k][solved]
        good = np.isfinite(dev)
        unres = int(((ds.resolved.values[:, :, k][solved] == 0) & (ex & 2 > 0)).sum())
        lines.append(f"{k:5d}  {_g(dev[good].min() if good.any() else np.nan, '10.3e'):>10}  "
                     f"{_g(dev[good].max() if good.any() else np.nan, '10.3e'):>10}  "
                     f"{int((dev[good] < tol).sum()):>10d}  {int((ex == 1).sum()):>10d}  {int((ex == 2).sum()):>11d}  {unres:>10d}")
    if "width" in ax:
        lines += _width_rows(ds, ax, tol)
    if ((ds.existence.values == 1) | (ds.existence.values == 2)).any():
        lines.append("WARNING: the models disagree on which states exist in part of the plane "
                     "('point only' / 'finite only' above; hatched in the figure)")
    lines.extend(f"note: {m}" for m in notes_of(ds, "messages")[:20])
    return "\n".join(lines)


def _width_rows(ds, ax, tol) -> list[str]:
    """Per value of the other axis: the validity width of each state (largest width valid at all narrower ones)."""
    other = ax[1] if ax[0] == "width" else ax[0]
    w = ds.width.values
    lines = [f"{label(ds, 'width', 'validity width')} per {other} (largest width with |deviation| < {tol:.1e} at it and "
             "all narrower widths):",
             f"{label(ds, other):>14}" + "".join(f"  {'state ' + str(k):>12}" for k in range(ds.sizes["state"]))]
    dev = ds.deviation.transpose(other, "width", "state").values
    for i, v in enumerate(ds[other].values):
        row = f"{v:14.6g}"
        for k in range(ds.sizes["state"]):
            good = np.isfinite(dev[i, :, k]) & (np.abs(dev[i, :, k]) < tol)
            if not good[0]:
                cell = "none" if np.isfinite(dev[i, 0, k]) else "unbound"
            elif good.all():
                cell = f">={w[-1]:.4g}"
            else:
                cell = f"{w[int(np.argmin(good)) - 1]:.4g}"
            row += f"  {cell:>12}"
        lines.append(row)
    return lines


def _kappa(ds, energy) -> float:
    """Decay constant sqrt(m |E| / (hbar^2/2m_e)) of a point-model level (1/length; nan if unknown)."""
    m, c = ds.attrs.get("particle_mass"), ds.attrs.get("hbar2_2me")
    if m is None or c is None or not np.isfinite(energy):
        return float("nan")
    return float(np.sqrt(float(m) * abs(float(energy)) / float(c)))


def _depths(ds) -> np.ndarray:
    """Depth of the first replacement well at each width (its -V at the centre, energy unit; nan from finite)."""
    shape = ds.attrs.get("replacement_shape", "")
    if ds.attrs.get("delta_mode") != "replace" or not shape:
        return np.full(ds.sizes["width"], np.nan)
    from fdsolver.model.shapes import FINITE_REPLACEMENTS

    alpha = float(ds.well_strength.values[0])
    make = FINITE_REPLACEMENTS[shape]
    return np.array([-float(getattr(make("", 0.0, alpha, float(w)), "amplitude")) for w in ds.width.values])
