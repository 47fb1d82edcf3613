"""Plain-text tables of continuum archives (transmission, resonances, current), units in every header."""

from __future__ import annotations

import json
import math

import numpy as np

from fdsolver.report._common import label, units_of

#: most rows of a T(E) or J(V) table (every k-th row is shown; the archive holds all)
TABLE_ROWS = 30
#: most resonances shown per swept point
COLUMNS = 4


def window_of(ds) -> tuple[float, float]:
    """The window attribute (a pair, or its JSON text once written to a file)."""
    w = ds.attrs["window"]
    lo, hi = json.loads(w) if isinstance(w, str) else np.atleast_1d(w)
    return float(lo), float(hi)


def _params(ds) -> list[str]:
    params = json.loads(ds.attrs.get("params", "{}"))
    return ["params: " + ", ".join(f"{k} = {v:.10g}" for k, v in params.items())] if params else []


def _notes(ds) -> list[str]:
    return [f"note: {m}" for m in str(ds.attrs.get("notes", "")).splitlines() if m]


def _pick(n: int, must=()) -> np.ndarray:
    """At most TABLE_ROWS indices of n, evenly spread, plus the ``must`` ones."""
    if n <= TABLE_ROWS:
        return np.arange(n)
    step = int(math.ceil(n / TABLE_ROWS))
    return np.unique(np.concatenate([np.arange(0, n, step), [n - 1], np.asarray(must, int)]))


def _lifetime(tau: float, l10: float) -> str:
    if not np.isfinite(tau) and not np.isfinite(l10):
        return "bound"
    if np.isfinite(tau) and tau > 0:
        return f"{tau:.4e}"
    return f"1e{l10:.1f}"


def _width(g: float, l10: float) -> str:
    if g > 0 or not np.isfinite(l10):
        return f"{g:.6g}"
    return f"1e{l10:.1f}"


def resonance_rows(ds, idx=()) -> list[str]:
    """One row per resonance: energy, its error, width, its error, lifetime (s); ``idx`` picks a swept point."""
    eu = units_of(ds, "resonance_energy")
    take = (lambda name: ds[name].values[idx] if name in ds else np.full(ds.sizes["resonance"], np.nan))
    e, ee, g, ge = take("resonance_energy"), take("resonance_energy_error"), take("resonance_width"), take("resonance_width_error")
    tau, l10g, l10t = take("lifetime"), take("log10_resonance_width"), take("log10_lifetime")
    bound = take("bound") if "bound" in ds else np.zeros(e.size)
    rows = [f"{'n':>3}  {'E_r [' + eu + ']':>20}  {'error [' + eu + ']':>12}  {'width [' + eu + ']':>14}  "
            f"{'error [' + eu + ']':>12}  {'lifetime [s]':>12}"]
    for k in np.flatnonzero(np.isfinite(e)):
        if bound[k]:
            rows.append(f"{k:3d}  {e[k]:20.12g}  {ee[k]:12.2e}  {'0 (bound)':>14}  {'':>12}  {'bound':>12}")
            continue
        rows.append(f"{k:3d}  {e[k]:20.12g}  {ee[k]:12.2e}  {_width(g[k], l10g[k]):>14}  {ge[k]:12.2e}  "
                    f"{_lifetime(tau[k], l10t[k]):>12}")
    return rows


def format_transmission(ds) -> str:
    """The table of a transmission archive: the resonances in the range, then T(E) at up to 30 energies (a sweep:
    per point the largest T and where, and the flux conservation)."""
    a = ds.attrs
    if ds.transmission.ndim > 1:
        return _transmission_sweep(ds)
    eu = units_of(ds, "energy")
    e = ds.energy.values
    lines = [a.get("title", ""), f"units: {a.get('units_system')} (energies in {eu}); wave incident from the "
             f"{a.get('incident_side')}; {a.get('energy_grid')}"] + _params(ds)
    lines.append(f"method: {a.get('method')}")
    n_r = int(np.count_nonzero(np.isfinite(ds.resonance_energy.values))) if "resonance_energy" in ds else 0
    if "resonance_energy" in ds:
        lo, hi = e[0], e[-1]
        if n_r:
            lines.append(f"{n_r} pole(s) with E_r in [{lo:.6g}, {hi:.6g}] {eu}:")
            lines += ["  " + r for r in resonance_rows(ds)]
        else:
            lines.append(f"no resonance with its energy in [{lo:.6g}, {hi:.6g}] {eu}")
    t = ds.transmission.values
    peaks = [int(np.argmin(np.abs(e - er))) for er in ds.resonance_energy.values[np.isfinite(ds.resonance_energy.values)]] \
        if n_r else []
    rows = _pick(e.size, peaks)
    shown = "" if rows.size == e.size else f" ({rows.size} of {e.size} energies, and those nearest each E_r; " \
        "the archive holds all)"
    lines.append(f"T(E){shown}:")
    lines.append(f"  {'energy [' + eu + ']':>20}  {'T':>12}  {'error':>9}  {'R':>12}  {'log10 T':>9}")
    l10 = ds.log10_transmission.values if "log10_transmission" in ds else np.log10(np.maximum(t, 1e-300))
    for i in rows:
        lines.append(f"  {e[i]:20.12g}  {t[i]:12.6g}  {ds.transmission_error.values[i]:9.1e}  "
                     f"{ds.reflection.values[i]:12.6g}  {l10[i]:9.3f}")
    if "unitarity_defect" in ds:
        lines.append(f"flux conservation: max |R + T - 1| = {float(np.max(ds.unitarity_defect.values, initial=0.0)):.1e}")
    return "\n".join(lines + _notes(ds))


def format_resonances(ds) -> str:
    """The table of a resonances archive: one row per pole, or per swept point the lowest poles."""
    a = ds.attrs
    eu = units_of(ds, "resonance_energy")
    lo, hi = window_of(ds)
    names = json.loads(a.get("swept_params", "[]"))
    lines = [a.get("title", ""), f"units: {a.get('units_system')} (energies in {eu}); poles E_r - i Gamma/2 in the window "
             f"[{lo:.6g}, {hi:.6g}] {eu} with widths up to {float(a.get('max_width')):.4g} {eu}; lifetime = hbar/Gamma"]
    lines += _params(ds)
    if not names:
        n = int(np.count_nonzero(np.isfinite(ds.resonance_energy.values)))
        if n == 0:
            lines.append(f"no resonance in the window [{lo:.6g}, {hi:.6g}] {eu} (widths up to "
                         f"{float(a.get('max_width')):.4g} {eu})")
        else:
            lines += resonance_rows(ds)
        return "\n".join(lines + _notes(ds))
    lines.append("sweep over " + ", ".join(f"{label(ds, n)}" for n in names) + "; resonance n counted from the "
                 "low end of the window at each point")
    shape = tuple(ds.sizes[n] for n in names)
    n_r = min(ds.sizes["resonance"], COLUMNS)
    head = "".join(f"  {label(ds, n):>16}" for n in names)
    for k in range(n_r):
        head += f"  {'E_' + str(k) + ' [' + eu + ']':>16}  {'Gamma_' + str(k) + ' [' + eu + ']':>14}"
    lines.append(head)
    flat = list(np.ndindex(*shape))
    picked = _pick(len(flat))
    e = ds.resonance_energy.values
    g = ds.resonance_width.values
    l10 = ds.log10_resonance_width.values if "log10_resonance_width" in ds else np.full(e.shape, np.nan)
    bound = ds.bound.values if "bound" in ds else np.zeros(e.shape, np.int8)
    for i in picked:
        idx = flat[int(i)]
        row = "".join(f"  {float(ds[n].values[j]):16.8g}" for n, j in zip(names, idx))
        for k in range(n_r):
            ek = e[idx + (k,)]
            if not np.isfinite(ek):
                row += f"  {'-':>16}  {'-':>14}"
            else:
                width = "0 (bound)" if bound[idx + (k,)] else _width(g[idx + (k,)], l10[idx + (k,)])
                row += f"  {ek:16.10g}  {width:>14}"
        lines.append(row)
    if len(picked) < len(flat):
        lines.append(f"({len(picked)} of {len(flat)} points shown; the archive holds all)")
    if ds.sizes["resonance"] > COLUMNS:
        lines.append(f"({ds.sizes['resonance'] - COLUMNS} higher resonance(s) not shown; the archive holds them)")
    return "\n".join(lines + _notes(ds))


def format_current(ds) -> str:
    """The table of a current archive: J(V) with its error, and the peak and valley."""
    a = ds.attrs
    ju = units_of(ds, "current_density")
    lines = [a.get("title", ""), f"Tsu-Esaki current density at {float(a.get('temperature_K')):g} K, emitter Fermi level "
             f"{float(a.get('emitter_fermi_level')):.6g} {a.get('emitter_fermi_level_units')} (from the emitter band edge's "
             "zero); the bias drops linearly across the inner layers"] + _params(ds)
    v = ds.bias.values
    j = ds.current_density.values
    if "peak_bias" in ds:
        pv = float(ds.peak_current_density) / float(ds.valley_current_density) if float(ds.valley_current_density) else math.inf
        lines.append(f"peak: J = {float(ds.peak_current_density):.6g} {ju} at {float(ds.peak_bias):.6g} V; valley: "
                     f"J = {float(ds.valley_current_density):.6g} {ju} at {float(ds.valley_bias):.6g} V; "
                     f"peak-to-valley ratio {pv:.3g} (on this bias grid)")
    else:
        lines.append("no negative differential resistance on this bias grid (no peak followed by a valley)")
    must = [int(np.argmin(np.abs(v - float(ds[n])))) for n in ("peak_bias", "valley_bias") if n in ds]
    rows = _pick(v.size, must)
    n_res = np.count_nonzero(np.isfinite(ds.resonance_energy.values), axis=1) if "resonance_energy" in ds \
        else np.zeros(v.size, int)
    lines.append(f"{'bias [V]':>10}  {'J [' + ju + ']':>14}  {'error [' + ju + ']':>14}  {'resonances':>10}")
    for i in rows:
        lines.append(f"{v[i]:10.5g}  {j[i]:14.6g}  {ds.current_density_error.values[i]:14.2e}  {int(n_res[i]):>10d}")
    if rows.size < v.size:
        lines.append(f"({rows.size} of {v.size} biases shown; the archive holds all)")
    return "\n".join(lines + _notes(ds))


def _transmission_sweep(ds) -> str:
    """A T(E) sweep over params: per point the peak T, its energy, and min log10 T (T(E) itself is in the archive)."""
    import json

    a = ds.attrs
    eu = units_of(ds, "energy")
    names = json.loads(a.get("swept_params", "[]"))
    e = ds.energy.values
    lines = [a.get("title", ""), f"units: {a.get('units_system')} (energies in {eu}); wave incident from the "
             f"{a.get('incident_side')}; {a.get('energy_grid')} from {e[0]:.6g} to {e[-1]:.6g} {eu}"]
    lines.append("sweep over " + ", ".join(f"{n} [{units_of(ds, n) or '1'}]" for n in names) +
                 "; per point: the largest T on the grid and its energy (the archive holds T(E) at every point)")
    t = ds.transmission.transpose(*names, "energy").values.reshape(-1, e.size)
    l10 = ds.log10_transmission.transpose(*names, "energy").values.reshape(-1, e.size)
    grids = np.meshgrid(*[ds[n].values for n in names], indexing="ij")
    head = "  ".join(f"{n:>14}" for n in names) + f"  {'max T':>12}  {'at E [' + eu + ']':>16}  {'min log10 T':>12}"
    lines.append(head)
    for i in range(t.shape[0]):
        row = "  ".join(f"{float(g.ravel()[i]):14.6g}" for g in grids)
        if not np.isfinite(t[i]).any():
            lines.append(row + "  not solved")
            continue
        k = int(np.nanargmax(t[i]))
        lines.append(row + f"  {t[i, k]:12.6g}  {e[k]:16.10g}  {np.nanmin(l10[i]):12.3f}")
    if "unitarity_defect" in ds:
        lines.append(f"flux conservation: max |R + T - 1| = {float(np.nanmax(ds.unitarity_defect.values)):.1e}")
    return "\n".join(lines + _notes(ds))
