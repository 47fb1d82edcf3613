"""Figures of continuum archives (matplotlib on Agg, imported only for a figure).

* transmission: T(E) on a log axis, each resonance in the range marked at
  E_r with its width, and the reflection R(E) below on a linear axis;
* resonances: one window - each pole at (E_r, Gamma), widths on a log axis;
  a sweep - resonance energies against the swept param above, their widths on
  a log axis below (log10 of the width where it underflows a double), other
  params at their middle value;
* current: J(V) with the peak and valley marked, and below, the resonance
  energies of the biased structure against the bias with the emitter's
  supply window.
"""

from __future__ import annotations

import json

import numpy as np

from fdsolver.plot._common import figure, label, save, units_of


def _width_axis(widths, log10w):
    """(values, is_log10): the widths themselves (log axis) or, where some underflow a double, their log10."""
    if np.any(np.isfinite(log10w) & (log10w < -290)):
        return log10w, True
    return widths, False


# --------------------------------------------------------------- transmission
def plot_transmission(ds, path) -> None:
    """Draw a transmission archive to ``path`` (a sweep over one param: log10 T as a map over (param, E))."""
    if ds.transmission.ndim > 1:
        _plot_transmission_map(ds, path)
        return
    e = ds.energy.values
    t = ds.transmission.values
    l10 = ds.log10_transmission.values if "log10_transmission" in ds else np.log10(np.maximum(t, 1e-300))
    eu = units_of(ds, "energy")
    fig, (ax, ax2) = figure(2, 1, height=6.5, sharex=True, gridspec_kw={"height_ratios": [3, 1.2]})
    if np.all(t[np.isfinite(l10)] > 0) and np.nanmin(l10) > -300:
        ax.semilogy(e, t, color="C0", lw=1.3, label="T(E)")
        ax.set_ylabel("transmission T [1] (log axis)")
        top = 1.0
    else:  # T below the double range somewhere: log10 T itself
        ax.plot(e, l10, color="C0", lw=1.3, label="log10 T(E)")
        ax.set_ylabel("log10 T [1]")
        top = 0.0
    if "resonance_energy" in ds:
        er, g = ds.resonance_energy.values, ds.resonance_width.values
        lw = ds.log10_resonance_width.values if "log10_resonance_width" in ds else np.log10(g)
        for k in np.flatnonzero(np.isfinite(er) & (er >= e[0]) & (er <= e[-1])):
            ax.axvline(er[k], color="C3", lw=0.8, ls=":")
            ax2.axvline(er[k], color="C3", lw=0.8, ls=":")
            wtxt = f"{g[k]:.3g}" if g[k] > 0 else f"1e{lw[k]:.0f}"
            ax.annotate(f"E_r = {er[k]:.5g} {eu}\nGamma = {wtxt} {eu}", (er[k], top), xycoords="data", xytext=(3, -3),
                        textcoords="offset points", va="top", fontsize=7, color="C3",
                        bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.8))
        ax.plot([], [], color="C3", lw=0.8, ls=":", label="resonance (S-matrix pole)")
    ax.legend(fontsize=7, loc="lower right")
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    ax.set_title(f"{ds.attrs.get('title', '')}: wave from the {ds.attrs.get('incident_side', 'left')}", fontsize=10)
    ax2.plot(e, ds.reflection.values, color="C1", lw=1.1)
    ax2.set_ylim(-0.05, 1.05)
    ax2.set_ylabel("reflection R [1]")
    ax2.set_xlabel(label(ds, "energy"))
    ax2.grid(True, lw=0.3, alpha=0.5)
    save(fig, path)


# ----------------------------------------------------------------- resonances
def plot_resonances(ds, path) -> None:
    """Draw a resonances archive to ``path``."""
    names = json.loads(ds.attrs.get("swept_params", "[]"))
    if names:
        return _plot_resonance_sweep(ds, names, path)
    eu = units_of(ds, "resonance_energy")
    fig, (ax,) = figure()
    e, g = ds.resonance_energy.values, ds.resonance_width.values
    lw = ds.log10_resonance_width.values
    bound = ds.bound.values.astype(bool) if "bound" in ds else np.zeros(e.size, bool)
    y, is_log10 = _width_axis(g, lw)
    res = np.isfinite(e) & ~bound
    if res.any():
        ax.plot(e[res], y[res], "o", color="C0", label="resonance")
        for k in np.flatnonzero(res):
            tau = ds.lifetime.values[k]
            ttxt = f"{tau:.2e} s" if np.isfinite(tau) else f"1e{ds.log10_lifetime.values[k]:.0f} s"
            gtxt = f"{g[k]:.3g}" if g[k] > 0 else f"1e{lw[k]:.0f}"
            ax.annotate(f"E_r = {e[k]:.5g} {eu}\nGamma = {gtxt} {eu}\nlifetime {ttxt}", (e[k], y[k]), xytext=(4, 4), textcoords="offset points",
                        fontsize=7)
    from fdsolver.report.continuum import window_of

    lo, hi = window_of(ds)
    for k in np.flatnonzero(np.isfinite(e) & bound):
        ax.axvline(e[k], color="C2", lw=1.0, ls="--")
    if bound.any():
        ax.plot([], [], color="C2", ls="--", label="true bound state (width 0)")
    if not is_log10:
        ax.set_yscale("log")
    ax.set_xlim(lo, hi)
    ax.set_xlabel(f"resonance energy E_r [{eu}]")
    ax.set_ylabel(f"log10(width / {eu}) [1]" if is_log10 else f"full width Gamma [{eu}] (log axis)")
    if not res.any() and not bound.any():
        ax.text(0.5, 0.5, "no resonance in the window", transform=ax.transAxes, ha="center")
    else:
        ax.legend(fontsize=7, loc="best")
    ax.grid(True, which="both", lw=0.3, alpha=0.5)
    ax.set_title(f"{ds.attrs.get('title', '')}: poles in [{lo:.4g}, {hi:.4g}] {eu}", fontsize=10)
    save(fig, path)


def _plot_resonance_sweep(ds, names, path) -> None:
    name = names[0]
    sel = {n: ds.sizes[n] // 2 for n in names[1:]}
    sub = ds.isel(sel).transpose(name, "resonance")
    x = sub[name].values
    eu = units_of(ds, "resonance_energy")
    fig, (ax, ax2) = figure(2, 1, height=7.0, sharex=True, gridspec_kw={"height_ratios": [1.4, 1]})
    e, g, lw = sub.resonance_energy.values, sub.resonance_width.values, sub.log10_resonance_width.values
    bound = sub.bound.values.astype(bool)
    y, is_log10 = _width_axis(g, lw)
    for k in range(e.shape[1]):
        if not np.isfinite(e[:, k]).any():
            continue
        line = ax.plot(x, e[:, k], marker="." if x.size <= 200 else None, lw=1.3, label=f"resonance {k}")[0]
        ok = np.isfinite(e[:, k]) & ~bound[:, k] & (np.isfinite(y[:, k]) & ((y[:, k] > 0) | is_log10))
        ax2.plot(x[ok], y[ok, k], marker="." if x.size <= 200 else None, lw=1.3, color=line.get_color())
        b = np.isfinite(e[:, k]) & bound[:, k]
        if b.any():
            ax.plot(x[b], e[b, k], "s", ms=4, mfc="none", color=line.get_color())
    if bound.any():
        ax.plot([], [], "s", ms=4, mfc="none", color="0.3", label="true bound state (width 0)")
    if not is_log10:
        ax2.set_yscale("log")
    ax.set_ylabel(f"resonance energy E_r [{eu}]")
    ax2.set_ylabel(f"log10(width / {eu}) [1]" if is_log10 else f"full width Gamma [{eu}] (log axis)")
    ax2.set_xlabel(label(ds, name))
    if ds[name].attrs.get("spacing") == "log":
        ax2.set_xscale("log")
    if e.shape[1] <= 12:
        ax.legend(fontsize=7, loc="best")
    for a in (ax, ax2):
        a.grid(True, which="major", lw=0.3, alpha=0.5)
    extra = ", ".join(f"{n} = {ds[n].values[i]:.4g}" for n, i in sel.items())
    ax.set_title(ds.attrs.get("title", "") + (f"\n(at {extra})" if extra else ""), fontsize=10)
    save(fig, path)


# -------------------------------------------------------------------- current
def plot_current(ds, path) -> None:
    """Draw a current archive to ``path``."""
    v, j = ds.bias.values, ds.current_density.values
    ju = units_of(ds, "current_density")
    has_res = "resonance_energy" in ds and np.isfinite(ds.resonance_energy.values).any()
    fig, axes = figure(2, 1, height=7.0, sharex=True, gridspec_kw={"height_ratios": [1.5, 1]}) if has_res else figure()
    ax = axes[0]
    ax.plot(v, j, "o-" if v.size <= 120 else "-", ms=3, color="C0", lw=1.3, label="J(V)")
    err = ds.current_density_error.values
    if np.any(err > 1e-3 * np.nanmax(np.abs(j))):
        ax.fill_between(v, j - err, j + err, color="C0", alpha=0.25, lw=0, label="estimated error")
    if "peak_bias" in ds:
        vp, jp = float(ds.peak_bias), float(ds.peak_current_density)
        vv, jv = float(ds.valley_bias), float(ds.valley_current_density)
        ax.plot([vp], [jp], "^", color="C3", ms=8, label=f"peak {jp:.3g} {ju} at {vp:.3g} V")
        ax.plot([vv], [jv], "v", color="C2", ms=8, label=f"valley {jv:.3g} {ju} at {vv:.3g} V")
        ratio = jp / jv if jv else np.inf
        ax.annotate(f"peak-to-valley {ratio:.3g}", (vv, jv), xytext=(6, 10), textcoords="offset points", fontsize=8)
    ax.set_ylabel(f"current density J [{ju}]")
    ax.legend(fontsize=7, loc="upper center")
    ax.grid(True, lw=0.3, alpha=0.5)
    a = ds.attrs
    ax.set_title(f"{a.get('title', '')}\nTsu-Esaki, {float(a.get('temperature_K')):g} K, emitter Fermi level "
                 f"{float(a.get('emitter_fermi_level')):.4g} {a.get('emitter_fermi_level_units')}", fontsize=10)
    if has_res:
        ax2 = axes[1]
        er = ds.resonance_energy.values
        eu = a.get("emitter_fermi_level_units")
        ax2.plot(np.repeat(v, er.shape[1]), er.ravel(), ".", ms=3, color="C0", label="resonances of the biased stack")
        ef = float(a.get("emitter_fermi_level"))
        edge = float(a.get("emitter_band_edge", np.nan))
        if np.isfinite(edge) and edge < ef:
            ax2.axhspan(edge, ef, color="C1", alpha=0.2, lw=0, label="emitter: band edge to Fermi level")
        else:
            ax2.axhline(ef, color="0.3", lw=0.9, ls="--", label="emitter Fermi level")
        ax2.set_ylabel(f"resonance energy [{eu}]")
        ax2.legend(fontsize=7, loc="upper right")
        ax2.grid(True, lw=0.3, alpha=0.5)
        ax2.set_xlabel(label(ds, "bias"))
    else:
        ax.set_xlabel(label(ds, "bias"))
    save(fig, path)


def _plot_transmission_map(ds, path) -> None:
    """log10 T over (first swept param, energy); further swept params at their first value."""
    import json

    names = json.loads(ds.attrs.get("swept_params", "[]"))
    sel = ds.isel({n: 0 for n in names[1:]}) if len(names) > 1 else ds
    p = names[0]
    l10 = sel.log10_transmission.transpose(p, "energy").values
    e, x = sel.energy.values, sel[p].values
    eu = units_of(ds, "energy")
    fig, (ax,) = figure(1, 1, width=8.0, height=5.5)
    lo = max(float(np.nanmin(l10)), -12.0) if np.isfinite(l10).any() else -12.0
    mesh = ax.pcolormesh(x, e, np.clip(l10.T, lo, 0.0), shading="nearest", cmap="viridis", vmin=lo, vmax=0.0)
    fig.colorbar(mesh, ax=ax, label="log10 T [1]" + (f" (clipped at {lo:g})" if lo == -12.0 else ""))
    ax.set_xlabel(label(ds, p))
    ax.set_ylabel(f"energy [{eu}]")
    extra = ", ".join(f"{n} = {float(ds[n].values[0]):g}" for n in names[1:])
    ax.set_title(ds.attrs.get("title", "") + (f" ({extra})" if extra else "") +
                 f"\nT(E) against {p}, wave from the {ds.attrs.get('incident_side')}", fontsize=10)
    save(fig, path)
