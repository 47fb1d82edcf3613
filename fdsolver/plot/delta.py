"""Figures of delta-check archives (matplotlib on Agg, imported only for a figure).

* width ladder: left, |deviation| against width on log-log axes per state,
  with the first-order prediction (slope 1), the tolerance line and each
  validity width; right, the finite-width energies against width with the
  point-model energies as dashed lines and the widths where a state unbinds;
* from-finite: the levels of both models side by side;
* map: one panel per state, log10 |deviation| as a heatmap, the tolerance
  contour, hatching where only one model binds the state, and the binding
  boundary of each model.
"""

from __future__ import annotations

import json

import numpy as np

from fdsolver.plot._common import figure, label, run_subtitle, save, title_of, units_of


def _panels(ncols: int, width: float = 6.0, height: float = 4.8):
    """One row of ``ncols`` panels, each ``width`` x ``height`` inches."""
    return figure(1, ncols, width=width * ncols, height=height)


def plot_delta(ds, path) -> None:
    """Draw a delta-check archive to ``path``."""
    mode = ds.attrs.get("delta_mode", "replace")
    if mode.endswith("_map"):
        _plot_map(ds, path)
    elif mode == "from_finite":
        _plot_levels(ds, path)
    else:
        _plot_ladder(ds, path)


def _plot_ladder(ds, path) -> None:
    crit = ds.critical_separation.values
    has_crit = np.isfinite(crit).any() or np.isfinite(ds.critical_separation_limit.values).any()
    fig, axes = _panels(3 if has_crit else 2, 5.0 if has_crit else 6.0)
    ax, ax2 = axes[0], axes[1]
    w = ds.width.values
    lu, eu = units_of(ds, "width"), units_of(ds, "energy")
    tol = ds.attrs["tolerance"]
    colors = [f"C{k}" for k in range(ds.sizes["state"])]
    for k in range(ds.sizes["state"]):
        c = colors[k]
        dev = np.abs(ds.deviation.values[:, k])
        res = ds.resolved.values[:, k] > 0
        ok = np.isfinite(dev) & (dev > 0)
        ax.loglog(w[ok & res], dev[ok & res], "o-", color=c, ms=4, lw=1.2, label=f"state {k}: measured")
        if (ok & ~res).any():
            ax.loglog(w[ok & ~res], dev[ok & ~res], "o", mfc="none", color=c, ms=6, label=f"state {k}: not resolved")
        a = ds.predicted_coefficient.values[k]
        if np.isfinite(a) and a > 0:
            ax.loglog(w, a * w, "--", color=c, lw=0.9, label=f"first order {a:.3g} {units_of(ds, 'predicted_coefficient')} x width")
        v = ds.validity_width.values[k]
        if np.isfinite(v) and int(ds.validity_flag.values[k]) in (0, 4):
            ax.axvline(v, color=c, ls=":", lw=1.0)
            ax.annotate(f"valid up to {v:.3g} {lu}", (v, tol), xytext=(4, -14 - 11 * k), textcoords="offset points",
                        color=c, fontsize=7, bbox=dict(facecolor="white", edgecolor="none", alpha=0.85, pad=0.6),
                        zorder=5)  # on a white ground: the text may cross another state's curve
        e = ds.energy.values[:, k]
        ax2.semilogx(w, e, "o-", color=c, ms=4, lw=1.2, label=f"state {k}: finite wells")
        lim = ds.energy_limit.values[k]
        if np.isfinite(lim):
            ax2.axhline(lim, color=c, ls="--", lw=0.9, label=f"state {k}: point model {lim:.4g} {eu}")
        bw = ds.binding_width.values[k]
        if np.isfinite(bw):
            ax2.axvline(bw, color=c, ls=":", lw=1.0)
            ax2.annotate(f"state {k} {'unbinds' if np.isfinite(lim) else 'binds'}\nat {bw:.3g} {lu}", (bw, 0.0),
                         xytext=(4, -24), textcoords="offset points", color=c, fontsize=7)
    ax.axhline(tol, color="0.3", lw=1.0, ls="-.", label=f"tolerance {tol:.0e}")
    ax.set_xlabel(f"well width [{lu}]" + (" (gaussian: sigma)" if ds.attrs.get("replacement_shape") == "gaussian" else ""))
    ax.set_ylabel("|E_finite - E_point| / |E_point|")
    ax.set_title("deviation of the point model", fontsize=10)
    ax.legend(fontsize=6.5, loc="upper left")
    ax.grid(True, which="both", lw=0.3, alpha=0.5)
    ax2.axhline(0.0, color="0.5", lw=0.8)
    ax2.set_xlabel(f"well width [{lu}]")
    ax2.set_ylabel(f"energy [{eu}]")
    ax2.set_title("bound-state energies", fontsize=10)
    ax2.legend(fontsize=6.5, loc="center right")
    if has_crit:
        _plot_critical(ds, axes[2], colors, lu)
    fig.suptitle(f"{title_of(ds)}: {ds.attrs.get('replacement_shape')} wells vs point interactions\n"
                 f"{run_subtitle(ds)}", fontsize=10)
    save(fig, path)


def _plot_critical(ds, ax, colors, lu) -> None:
    """Critical nearest-neighbour separation of each excited state against width, both models, and this case's."""
    w = ds.width.values
    for k in range(1, ds.sizes["state"]):
        c = colors[k]
        dc = ds.critical_separation.values[:, k]
        if np.isfinite(dc).any():
            ax.semilogx(w, dc, "o-", color=c, ms=4, lw=1.2, label=f"state {k}: finite wells")
        lim = ds.critical_separation_limit.values[k]
        if np.isfinite(lim):
            ax.axhline(lim, color=c, ls="--", lw=0.9, label=f"state {k}: point model {lim:.4g} {lu}")
    centres = np.sort(ds.well_center.values)
    if centres.size > 1:
        d = float(np.min(np.diff(centres)))
        ax.axhline(d, color="0.3", lw=1.2, label=f"this case: {d:.4g} {lu}")
    ax.set_xscale("log")
    lo, hi = ax.get_ylim()
    ax.set_ylim(lo, hi + 0.08 * (hi - lo))
    ax.set_xlabel(f"well width [{lu}]")
    ax.set_ylabel(f"critical separation [{lu}]")
    ax.set_title("state bound only above its critical separation", fontsize=10)
    ax.legend(fontsize=6.5, loc="center left")
    ax.grid(True, which="both", lw=0.3, alpha=0.5)


def _plot_levels(ds, path) -> None:
    fig, (ax,) = _panels(1, 6.5, 4.8)
    eu = units_of(ds, "energy")
    for k in range(ds.sizes["state"]):
        for x0, e in ((0.0, ds.energy.values[0, k]), (1.0, ds.energy_limit.values[k])):
            if np.isfinite(e):
                ax.hlines(e, x0 + 0.1, x0 + 0.9, color=f"C{k}", lw=2)
                ax.annotate(f"{e:.5g}", (x0 + 0.5, e), xytext=(0, 3), textcoords="offset points", ha="center", fontsize=7)
        d = ds.deviation.values[0, k]
        if np.isfinite(d):
            ax.annotate(f"state {k}: deviation {d:+.2e}", (1.0, ds.energy_limit.values[k]), xytext=(0, -11),
                        textcoords="offset points", ha="center", fontsize=7, color=f"C{k}")
    ax.set_xticks([0.5, 1.5], ["finite wells", "zero-range model"])
    ax.set_xlim(0, 2)
    ax.set_ylabel(f"energy [{eu}]")
    ax.set_title(f"{title_of(ds)}\n{run_subtitle(ds)}", fontsize=9.5)
    save(fig, path)


def _plot_map(ds, path) -> None:
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch
    from matplotlib.ticker import FormatStrFormatter, LogLocator, NullFormatter

    names = json.loads(ds.attrs["map_axes"])
    n_s = ds.sizes["state"]
    fig, axes = _panels(n_s, 5.6, 4.8)
    tol = ds.attrs["tolerance"]
    xa, ya = ds[names[0]], ds[names[1]]
    for k, ax in enumerate(axes):
        dev = np.abs(ds.deviation.values[:, :, k]).T  # rows = second axis
        with np.errstate(divide="ignore"):
            z = np.log10(np.where(dev > 0, dev, np.nan))
        mesh = ax.pcolormesh(xa.values, ya.values, z, shading="nearest", cmap="viridis")
        fig.colorbar(mesh, ax=ax, label="log10 |deviation|")
        if np.isfinite(z).sum() > 3 and np.nanmin(z) < np.log10(tol) < np.nanmax(z):
            ax.contour(xa.values, ya.values, z, levels=[np.log10(tol)], colors="k", linewidths=1.4, linestyles="solid")
        ex = ds.existence.values[:, :, k].T
        only = np.where((ex == 1) | (ex == 2), 1.0, np.nan)
        if np.isfinite(only).any():
            ax.contourf(xa.values, ya.values, np.nan_to_num(only, nan=0.0), levels=[0.5, 1.5], colors="none", hatches=["////"])
            ax.pcolormesh(xa.values, ya.values, only, shading="nearest", cmap=ListedColormap(["#d62728"]), alpha=0.35)
        neither = np.where(ex == 0, 1.0, np.nan)
        neither[ds.solved.values.T == 0] = np.nan
        if np.isfinite(neither).any():
            ax.pcolormesh(xa.values, ya.values, neither, shading="nearest", cmap=ListedColormap(["0.8"]))
        for flag, style, color in ((2, "-", "#ff7f0e"), (1, "--", "#e377c2")):
            has = ((ex & flag) > 0).astype(float)
            has[ds.solved.values.T == 0] = np.nan
            if 0 < np.nansum(has) < np.isfinite(has).sum():
                ax.contour(xa.values, ya.values, has, levels=[0.5], colors=color, linestyles=style, linewidths=1.2)
        if ds.overlap.values.any():
            ov = np.where(ds.overlap.values.T > 0, 1.0, np.nan)
            ax.pcolormesh(xa.values, ya.values, ov, shading="nearest", cmap=ListedColormap(["white"]))
        for axis, coord, which in ((ax.set_xscale, xa, ax.xaxis), (ax.set_yscale, ya, ax.yaxis)):
            if coord.attrs.get("spacing") == "log":
                axis("log")
                # ticks as plain numbers: at 1, 2 and 5 per decade on a short axis (minor labels ran into each
                # other), at every power of ten beyond about two decades (1, 2 and 5 ran into each other there)
                decades = np.log10(float(np.max(coord.values)) / float(np.min(coord.values)))
                which.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0) if decades <= 2.5 else (1.0,)))
                which.set_major_formatter(FormatStrFormatter("%g"))
                which.set_minor_formatter(NullFormatter())
        ax.set_xlabel(label(ds, names[0]))
        ax.set_ylabel(label(ds, names[1]))
        ax.set_title(f"state {k}", fontsize=10)
    from matplotlib.lines import Line2D

    handles = [
        Line2D([], [], color="k", lw=1.4, label=f"|deviation| = {tol:.0e} (tolerance)"),
        Patch(facecolor="#d62728", alpha=0.35, hatch="////", label="only one model binds the state"),
        Patch(facecolor="0.8", label="neither model binds it"),
        Line2D([], [], color="#e377c2", ls="--", lw=1.2, label="point model: where the state binds"),
        Line2D([], [], color="#ff7f0e", lw=1.2, label="finite wells: where the state binds"),
    ]
    if ds.overlap.values.any():
        handles.append(Patch(facecolor="white", edgecolor="0.5", label="wells overlap (not solved)"))
    fig.legend(handles=handles, loc="lower center", ncol=3, fontsize=7, frameon=False)
    fig.suptitle(f"{title_of(ds)}: validity of the zero-range model\n{run_subtitle(ds)}", fontsize=10)
    save(fig, path, rect=(0, 0.12, 1, 0.95))  # room for the legend below the panels
