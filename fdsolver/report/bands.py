"""Plain-text tables of the archives of periodic cases: band structures, band sweeps and delta-comb checks.

Units in every header; every value beside its error estimate (or the largest error of its row).
"""

from __future__ import annotations

import json

import numpy as np

from fdsolver.report._common import label, title_of, units_of

#: rows of a one-param band sweep shown in full (else an evenly spaced selection)
SWEEP_ROWS = 12
ORDINALS = {0: "lowest"}


def _g(v, fmt: str = ".6g") -> str:
    return "-" if v is None or not np.isfinite(v) else format(float(v), fmt)


def _head(ds, what: str) -> list[str]:
    a = ds.attrs
    eu, lu = units_of(ds, "band_bottom" if "band_bottom" in ds else "energy"), a.get("units_note", "")
    lines = [title_of(ds)]
    length = units_of(ds, "x") if "x" in ds else (units_of(ds, "width") if "width" in ds else "")
    period = a.get("period")
    per = f"; period L = {period:.10g} {length} from x = {a.get('period_start', 0.0):.10g}" if period is not None else ""
    lines.append(f"{what}; units: {a.get('units_system')} ({lu or 'energies in ' + eu}){per}")
    params = json.loads(a.get("params", "{}"))
    if params:
        lines.append("params: " + ", ".join(f"{k} = {v:.10g}" for k, v in params.items()))
    return lines


def _notes(ds, key: str = "messages", most: int = 20) -> list[str]:
    out = [m for m in str(ds.attrs.get(key, "")).splitlines() if m]
    return [f"note: {m}" for m in out[:most]] + ([f"note: ... and {len(out) - most} more"] if len(out) > most else [])


# ------------------------------------------------------------------ bands
def format_bands(ds) -> str:
    """The table of a ``bands`` archive: edges, widths, gaps, masses, then the finite stacks if any."""
    a = ds.attrs
    eu, mu = units_of(ds, "band_bottom"), units_of(ds, "effective_mass_bottom")
    lines = _head(ds, "Bloch bands")
    e_l = a.get("zone_energy")
    lines.append(f"method: {a.get('method')}; tolerance {a.get('tolerance', 0):.1e} of max(|E|, E_L), "
                 f"E_L = hbar^2 pi^2 / (2 m L^2) = {e_l:.6g} {eu} (the recoil energy of a lattice of period L)")
    lines.append("")
    lines.append(f"{'band':>4}  {'bottom [' + eu + ']':>18}  {'top [' + eu + ']':>18}  {'width [' + eu + ']':>16}  "
                 f"{'gap above [' + eu + ']':>18}  {'error [' + eu + ']':>11}  conv  {'width/E_L':>10}")
    b, t, w, g = (ds[n].values for n in ("band_bottom", "band_top", "band_width", "gap_above"))
    errs = [ds[n + "_error"].values if n + "_error" in ds else np.zeros_like(b)
            for n in ("band_bottom", "band_top", "band_width", "gap_above")]
    err = np.max(np.stack(errs), axis=0)
    closed = ds.gap_closed.values if "gap_closed" in ds else np.zeros(b.size, int)
    for n in range(b.size):
        gap = "closed" if closed[n] else _g(g[n], ".10g")
        lines.append(f"{n:4d}  {b[n]:18.10g}  {t[n]:18.10g}  {w[n]:16.8g}  {gap:>18}  {err[n]:11.2e}  "
                     f"{'yes' if ds.converged.values[n] else ' NO'}  {w[n] / e_l:10.5g}")
    lines.append("")
    lines.append(f"{'band':>4}  {'m* bottom [' + mu + ']':>18}  {'error':>9}  {'m* top [' + mu + ']':>18}  {'error':>9}"
                 "   (from the curvature of E(q) at the edges)")
    mb, mt = ds.effective_mass_bottom.values, ds.effective_mass_top.values
    mbe = ds.effective_mass_bottom_error.values if "effective_mass_bottom_error" in ds else np.full(mb.size, np.nan)
    mte = ds.effective_mass_top_error.values if "effective_mass_top_error" in ds else np.full(mt.size, np.nan)
    for n in range(mb.size):
        lines.append(f"{n:4d}  {mb[n]:18.8g}  {_g(mbe[n], '9.1e')}  {mt[n]:18.8g}  {_g(mte[n], '9.1e')}")
    lines.append("")
    nq = ds.sizes["wavevector"]
    lines.append(f"E(q) at {nq} wavevectors on [0, pi/L] ({label(ds, 'wavevector', 'q')}); largest error "
                 f"{float(np.max(ds.energy_error.values)):.2e} {eu}")
    de = ds.dos_energy.values
    lines.append(f"density of states per unit length and energy (one spin) at {de.size} energies from {de[0]:.6g} to "
                 f"{de[-1]:.6g} {eu}, in {units_of(ds, 'density_of_states')}; it diverges at every band edge")
    if "bloch_wavevector" in ds:
        q = ds.bloch_wavevector.values * a["period"] / np.pi
        lines.append(f"Bloch functions of every band stored at q = {', '.join(f'{v:.4g}' for v in q)} pi/L on "
                     f"{ds.sizes['x']} points of one period")
    if "point_position" in ds:
        lines.append("point interactions per period: " + ", ".join(
            f"{s:.6g} {units_of(ds, 'point_strength')} at {x:.6g} {units_of(ds, 'point_position')}"
            for x, s in zip(ds.point_position.values, ds.point_strength.values)))
    if "n_periods" in ds:
        lines += [""] + _stack_rows(ds, eu)
    lines += _notes(ds)
    return "\n".join(lines)


def _stack_rows(ds, eu: str) -> list[str]:
    a = ds.attrs
    hard = a.get("stack_termination") == "hard"
    k = int(a.get("stack_bands", ds.sizes["band"]))
    where = "between hard walls at the period ends" if hard else "open, in the cladding"
    lines = [f"finite stacks of N periods ({where}), their levels in the lowest {k} band(s):"]
    thr = float(a.get("stack_continuum_threshold", np.inf))
    if not hard and np.isfinite(thr):
        lines.append(f"(open stacks bind levels only below the continuum threshold {thr:.6g} {eu} of the cladding; a "
                     "band reaching above it is filled only in part)")
    head = (f"{'N':>4}  {'band':>4}  {'levels':>6}  {'cluster bottom [' + eu + ']':>22}  {'cluster top [' + eu + ']':>22}  "
            f"{'cluster width':>13}  {'/ band width':>12}")
    lines.append(head + (f"  {'exact width':>13}" if hard else ""))
    for i, n in enumerate(ds.n_periods.values):
        for b in range(k):
            row = (f"{int(n):4d}  {b:4d}  {int(ds.cluster_count.values[i, b]):6d}  "
                   f"{_g(ds.cluster_bottom.values[i, b], '22.10g'):>22}  {_g(ds.cluster_top.values[i, b], '22.10g'):>22}  "
                   f"{_g(ds.cluster_width.values[i, b], '13.6g'):>13}  {_g(ds.width_ratio.values[i, b], '12.5f'):>12}")
            if hard:
                row += f"  {_g(ds.predicted_width.values[i, b], '13.6g'):>13}"
            lines.append(row)
    lb = ds.stack_level_band.values
    e = ds.stack_energy.values
    for i, n in enumerate(ds.n_periods.values):
        gap = e[i][lb[i] == -1]
        if gap.size:
            lines.append(f"  N = {int(n)}: {gap.size} level(s) in gaps, at " + ", ".join(f"{v:.8g}" for v in gap)
                         + f" {eu}")
    if hard:
        p = ds.stack_predicted_energy.values
        ok = np.isfinite(p) & np.isfinite(e)
        if ok.any():
            dev = float(np.max(np.abs(e[ok] - p[ok])))
            lines.append(f"levels against the exact hard-wall levels E_n(j pi / N L) and the one-period Dirichlet "
                         f"levels: largest difference {dev:.2e} {eu} (largest level error "
                         f"{float(np.nanmax(ds.stack_energy_error.values)):.2e} {eu})")
    lines.append("the cluster of N levels in each band fills it as N grows: width ratio 1 - O(1/N^2) between hard "
                 "walls, cos(pi/(N+1)) for nearest-neighbour coupling in the open")
    return lines


# ------------------------------------------------------------------ band sweep
def format_band_sweep(ds) -> str:
    """The summary of a band sweep: per band the range of its edges and width, and a table along one param."""
    a = ds.attrs
    names = json.loads(a.get("swept_params", "[]"))
    eu = units_of(ds, "band_bottom")
    lines = _head(ds, f"band edges over {int(a.get('points', 0))} points")
    for n in names:
        v = ds[n].values
        lines.append(f"  {n} = {v[0]:.6g} .. {v[-1]:.6g} {units_of(ds, n)}".rstrip()
                     + f" ({v.size} values, {ds[n].attrs.get('spacing', '')} spacing)")
    fixed = json.loads(a.get("fixed_params", "{}"))
    if fixed:
        lines.append("fixed: " + ", ".join(f"{k} = {v}" for k, v in fixed.items()))
    solved = ds.solved.values > 0
    if not solved.all():
        lines.append(f"{int((~solved).sum())} point(s) not solved (their case was invalid; see the notes)")
    lines.append(f"{'band':>4}  {'bottom min':>12}  {'bottom max':>12}  {'top min':>12}  {'top max':>12}  "
                 f"{'width min':>12}  {'width max':>12}  [{eu}]  converged")
    for b in range(ds.sizes["band"]):
        sel = {"band": b}
        bot, top, wid = (ds[n].isel(sel).values[solved] for n in ("band_bottom", "band_top", "band_width"))
        conv = ds.converged.isel(sel).values[solved]
        if not bot.size:
            continue
        lines.append(f"{b:4d}  {np.nanmin(bot):12.6g}  {np.nanmax(bot):12.6g}  {np.nanmin(top):12.6g}  "
                     f"{np.nanmax(top):12.6g}  {np.nanmin(wid):12.6g}  {np.nanmax(wid):12.6g}  {int((conv == 1).sum())}"
                     f"/{conv.size}")
    if len(names) == 1:
        lines += [""] + _sweep_rows(ds, names[0], eu)
    lines += _notes(ds, "notes")
    return "\n".join(lines)


def _sweep_rows(ds, name: str, eu: str) -> list[str]:
    x = ds[name].values
    rows = np.arange(x.size) if x.size <= SWEEP_ROWS else np.unique(np.linspace(0, x.size - 1, SWEEP_ROWS).round().astype(int))
    nb = ds.sizes["band"]
    head = f"{label(ds, name):>16}" + "".join(f"  {'band ' + str(b) + ' [' + eu + ']':>23}" for b in range(nb))
    lines = [f"band bottom .. top (width) at {rows.size} of {x.size} values:", head]
    for i in rows:
        row = f"{x[i]:16.6g}"
        for b in range(nb):
            lo, hi = ds.band_bottom.values[i, b], ds.band_top.values[i, b]
            row += f"  {_g(lo, '.5g') + ' .. ' + _g(hi, '.5g'):>23}"
        lines.append(row)
    return lines


# ------------------------------------------------------------------ comb check
def format_comb_check(ds) -> str:
    """The table of a delta-comb check: per band the deviations against width, the first-order law, the validity width."""
    a = ds.attrs
    eu, lu = units_of(ds, "band_bottom"), units_of(ds, "width")
    tol = float(a["tolerance"])
    shape = a.get("replacement_shape", "")
    from_finite = shape.startswith("from_finite")
    lines = _head(ds, "delta comb against finite lattices")
    pts = ", ".join(f"{s:.6g} {units_of(ds, 'point_strength')} at {x:.6g} {lu}"
                    for x, s in zip(ds.point_position.values, ds.point_strength.values))
    if from_finite:
        lines.append(f"the case's own {shape.split(': ', 1)[-1]} components against their delta comb "
                     f"(alpha_j = -int V_j dx at each centroid): {pts}")
    else:
        lines.append(f"each point per period replaced by a {shape} well or barrier of the same strength and centre: "
                     f"{pts}")
        lines.append(f"width = {ds.width.attrs.get('long_name', 'width')}")
    lines.append("deviation: band edges (E_finite - E_comb) / max(|E_bottom|, |E_top|) of the comb's band; widths and "
                 f"gaps relative to the comb's own; tolerance {tol:.1e}")
    lines.append("comb: " + ", ".join(f"band {n} {b:.8g} .. {t:.8g} {eu}" for n, (b, t) in
                                      enumerate(zip(ds.band_bottom_limit.values, ds.band_top_limit.values))))
    names = [str(v) for v in ds.quantity_name.values]
    for n in range(ds.sizes["band"]):
        lines += _comb_band(ds, n, names, tol, eu, lu, from_finite)
    lines += _notes(ds)
    return "\n".join(lines)


_SHORT = {"band_bottom": "bottom", "band_top": "top", "band_width": "width", "gap_above": "gap"}
_FLAGS = {0: "crossing", 1: "holds", 2: "fails", 3: "not resolved"}


def _comb_band(ds, n, names, tol, eu, lu, from_finite) -> list[str]:
    lines = ["", f"band {n}: comb {ds.band_bottom_limit.values[n]:.10g} .. {ds.band_top_limit.values[n]:.10g} {eu}, "
             f"width {ds.band_width_limit.values[n]:.8g} {eu}, gap above "
             + ("closed" if ds.gap_closed_limit.values[n] else f"{ds.gap_above_limit.values[n]:.8g} {eu}")]
    head = f"  {'width [' + lu + ']':>13}" + "".join(f"  {_SHORT[q] + ' dev':>11}  {'predicted':>10}" for q in names)
    lines.append(head + "  ok")
    dev, pred, res = ds.deviation.values, ds.predicted_deviation.values, ds.resolved.values
    for i, w in enumerate(ds.width.values):
        row = f"  {w:13.5g}"
        for k in range(len(names)):
            d = dev[i, k, n]
            mark = "" if not np.isfinite(d) or res[i, k, n] else "?"
            row += f"  {_g(d, '10.3e') + mark:>11}  {_g(pred[i, k, n], '10.3e'):>10}"
        edge = np.abs(dev[i, :3, n])
        ok = "yes" if np.all(np.isfinite(edge)) and np.max(edge) < tol else "no"
        lines.append(row + f"  {ok}")
    if not from_finite:
        coef, expo, pc = ds.law_coefficient.values, ds.law_exponent.values, ds.predicted_coefficient.values
        iu = units_of(ds, "law_coefficient")
        laws = [f"{_SHORT[q]} a = {_g(coef[k, n], '.4g')} (slope {_g(expo[k, n], '.3f')}; first order {_g(pc[k, n], '.4g')})"
                for k, q in enumerate(names) if np.isfinite(coef[k, n]) or np.isfinite(pc[k, n])]
        if laws:
            lines.append(f"  law deviation = a * width [a in {iu}]: " + "; ".join(laws))
    v, flag = ds.validity_width.values[n], int(ds.validity_flag.values[n])
    text = {0: f"valid (edges and width within {tol:.1e}) for widths up to {_g(v, '.4g')} {lu}",
            1: f"valid (edges and width within {tol:.1e}) at every width compared, up to at least {_g(v, '.4g')} {lu}",
            2: f"NOT valid: a deviation exceeds {tol:.1e} already at the narrowest width",
            3: "no width could be resolved against the comb: no validity width"}[flag]
    lines.append("  " + text + ("  ('?': deviation not resolved by the error estimate)" if (res[:, :, n] == 0).any() else ""))
    return lines
