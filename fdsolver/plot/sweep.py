"""Figures of sweep and threshold archives (matplotlib, Agg; imported only when a figure is asked for).

* one swept param: each state's energy against it (a gap where the state
  does not exist), the continuum threshold, a dashed marker at every located
  binding threshold, and below, the tunnel splitting E1 - E0 on a log scale;
* two or more: a map of the number of bound states over the first two
  (further params at their middle value, named in the title);
* a threshold archive: the zero-energy phase margin Phi against the param,
  with the integers N (state N bound above) and the thresholds marked.
"""

from __future__ import annotations

import json

import numpy as np

from fdsolver.plot._common import figure, label, legend_outside, run_subtitle, save, title_of, units_of


#: splittings are drawn on a log axis only when their positive values span at least this many decades
LOG_DECADES = 2.0
#: oscillator strengths from the ground state are drawn to at most this many final states
F_FINALS = 4
#: strengths below this are left off a log axis of f (zero by symmetry, up to round-off)
F_FLOOR = 1e-6


def _widths_panel(ax, ds, name, x) -> None:
    """Widths of the quasi-bound states against the param on a log axis (log10 of the width where it underflows)."""
    w, l10 = ds.level_width.values, ds.log10_level_width.values
    eu = units_of(ds, "level_width")
    use_log10 = bool(np.any(np.isfinite(l10) & (l10 < -290)))
    for k, s in enumerate(ds.state.values):
        y = l10[:, k] if use_log10 else w[:, k]
        ok = np.isfinite(l10[:, k]) & (np.isfinite(y))
        if not use_log10:
            ok &= y > 0
        if ok.any():
            ax.plot(x[ok], y[ok], marker="." if x.size <= 200 else None, lw=1.2, color=f"C{k % 10}",
                    label=f"state {int(s)}")
    if not use_log10:
        ax.set_yscale("log")
    ax.set_ylabel(f"log10(width / {eu})" if use_log10 else f"width [{eu}] (quasi-bound)")
    ax.grid(True, which="major", lw=0.3, alpha=0.5)


def _log(ds, name) -> bool:
    return ds[name].attrs.get("spacing") == "log"


def plot_sweep(ds, path) -> None:
    """Draw a sweep or threshold archive to ``path``."""
    if ds.attrs.get("fdsolver_kind") == "threshold":
        return _plot_threshold(ds, path)
    names = json.loads(ds.attrs.get("swept_params", "[]"))
    if len(names) == 1:
        return _plot_line(ds, names[0], path)
    return _plot_map(ds, names, path)


def _markers(ax, ds, name, eu=None) -> None:
    if "threshold_value" not in ds:
        return
    u = units_of(ds, name)
    for v, s in zip(ds.threshold_value.values, ds.threshold_state.values):
        ax.axvline(v, color="0.35", lw=0.9, ls="--")
        if eu is not None:
            ax.annotate(f"state {int(s)} binds\n{name} = {v:.6g} {u}".rstrip(), (v, 1.0), xycoords=("data", "axes fraction"),
                        xytext=(3, -4), textcoords="offset points", va="top", fontsize=7, color="0.25")


def _panels(ds, split) -> list[str]:
    """The panels of a one-param sweep, top to bottom."""
    out = ["energy"]
    if "mean_x" in ds and np.isfinite(ds.mean_x.values).any():
        out.append("mean_x")
    if "oscillator_strength" in ds and ds.sizes.get("final_state", 0) >= 2 and \
            np.isfinite(ds.oscillator_strength.values[:, 0, 1:]).any():
        out.append("f")
    if np.any(np.isfinite(split) & (split > 0)):
        out.append("splitting")
    if "log10_level_width" in ds and np.isfinite(ds.log10_level_width.values).any():
        out.append("width")  # quasi-bound states (a field): their widths
    return out


def _plot_line(ds, name, path) -> None:
    x = ds[name].values
    eu = units_of(ds, "energy")
    split = ds["tunnel_splitting"].values if "tunnel_splitting" in ds else np.array([np.nan])
    panels = _panels(ds, split)
    has_width = "width" in panels
    heights = {"energy": 3.0, "mean_x": 1.5, "f": 1.5, "splitting": 1.4, "width": 1.4}
    fig, axes = figure(len(panels), 1, width=8.5, height=1.3 + 1.35 * sum(heights[p] for p in panels), sharex=True,
                       gridspec_kw={"height_ratios": [heights[p] for p in panels]}) \
        if len(panels) > 1 else figure(width=8.5, height=5.0)
    by = dict(zip(panels, axes))
    ax = by["energy"]
    mark = "." if x.size <= 200 else None
    conv = ds.converged.values if "converged" in ds else None
    wall = ds.wall_state.values if "wall_state" in ds else None
    for k, s in enumerate(ds.state.values):
        e = ds.energy.values[:, k]
        if not np.isfinite(e).any():
            continue
        line = ax.plot(x, e, marker=mark, lw=1.3, label=f"state {int(s)} ({int(s)} node{'' if int(s) == 1 else 's'})")[0]
        for key in ("mean_x",):
            if key in by:
                by[key].plot(x, ds[key].values[:, k], marker=mark, lw=1.2, color=line.get_color())
    bad_label, wall_label = "not converged", "hard-wall state"
    if conv is not None and np.any(conv == 0):
        i, k = np.nonzero(conv == 0)
        ax.plot(x[i], ds.energy.values[i, k], "x", color="red", ms=7, mew=1.5, label=bad_label, zorder=5)
    if wall is not None and np.any((wall == -1) | (wall == 1)):
        i, k = np.nonzero((wall == -1) | (wall == 1))
        ax.plot(x[i], ds.energy.values[i, k], "s", mfc="none", color="0.3", ms=6, label=wall_label, zorder=5)
        if "mean_x" in by:  # the same marks where <x> is drawn: a wall state's <x> follows the walls, not the structure
            by["mean_x"].plot(x[i], ds.mean_x.values[i, k], "s", mfc="none", color="0.3", ms=6, zorder=5)
    vt = ds.continuum_threshold.values
    if np.isfinite(vt).any():
        ax.plot(x, vt, color="0.5", lw=0.9, ls=":", label="continuum threshold")
    _markers(ax, ds, name, eu)
    ax.set_ylabel(label(ds, "energy"))
    ax.set_title(f"{title_of(ds)}\n{run_subtitle(ds)}", fontsize=9.5)
    legend_outside(ax)
    if "mean_x" in by:
        axm = by["mean_x"]
        axm.set_ylabel(label(ds, "mean_x", "<x>"))
        _markers(axm, ds, name)
        mx = ds.mean_x.values[np.isfinite(ds.mean_x.values)]
        sp = ds.spread.values[np.isfinite(ds.spread.values)] if "spread" in ds else np.zeros(0)
        width = 0.5 * float(np.median(sp)) if sp.size else 1.0
        if mx.size and np.ptp(mx) < 0.05 * width:  # a mirror-symmetric structure: <x> constant, not round-off zoomed
            mid = 0.5 * (mx.max() + mx.min())
            axm.set_ylim(mid - width, mid + width)
    if "f" in by:
        axf = by["f"]
        for j in range(1, min(ds.sizes["final_state"], F_FINALS + 1)):
            fj = ds.oscillator_strength.values[:, 0, j]
            if np.isfinite(fj).any():
                axf.plot(x, fj, marker=mark, lw=1.2, color=f"C{j}", label=f"0 -> {j}")
        axf.set_ylabel("oscillator strength f [1]")
        shown = ds.oscillator_strength.values[:, 0, 1:F_FINALS + 1]
        pos = shown[np.isfinite(shown) & (shown > F_FLOOR)]
        if pos.size and np.all(shown[np.isfinite(shown)] >= 0) and np.log10(pos.max() / pos.min()) >= LOG_DECADES:
            # weak lines that a field switches on are the point of a Stark sweep: a log axis shows them
            axf.set_yscale("log")
            axf.set_ylim(max(F_FLOOR, 0.5 * pos.min()), 2.0 * pos.max())
        else:
            axf.set_ylim(bottom=min(0.0, axf.get_ylim()[0]))
        legend_outside(axf, title="from state 0")
        _markers(axf, ds, name)
    if "splitting" in by:
        ax2 = by["splitting"]
        ok = np.isfinite(split) & (split > 0)
        ax2.plot(x[ok], split[ok], color="C3", lw=1.3, marker=mark)
        if np.log10(split[ok].max() / split[ok].min()) >= LOG_DECADES:
            ax2.set_yscale("log")
        ax2.set_ylabel(label(ds, "tunnel_splitting", "E1 - E0"))
        _markers(ax2, ds, name)
    if has_width:
        _widths_panel(by["width"], ds, name, x)
    for a in axes:
        if _log(ds, name):
            a.set_xscale("log")
        a.grid(True, lw=0.3, alpha=0.5)
    axes[-1].set_xlabel(label(ds, name))
    save(fig, path)


def _plot_map(ds, names, path) -> None:
    import matplotlib.colors as mcolors

    xa, ya = names[0], names[1]
    sel = {n: ds.sizes[n] // 2 for n in names[2:]}
    b = ds.bound_states.isel(sel).transpose(ya, xa).values
    fig, (ax,) = figure()
    valid = b[b >= 0]
    low = int(valid.min()) if valid.size else 0
    top = max(int(valid.max()) if valid.size else 0, low + 1)
    cmap = mcolors.ListedColormap([mcolors.to_rgba(c) for c in _colors(top - low + 1)])
    norm = mcolors.BoundaryNorm(np.arange(low - 0.5, top + 1.5), cmap.N)
    mesh = ax.pcolormesh(ds[xa].values, ds[ya].values, np.where(b < 0, np.nan, b), cmap=cmap, norm=norm, shading="nearest")
    cb = fig.colorbar(mesh, ax=ax, ticks=np.arange(low, top + 1))
    cb.set_label("number of bound states (whole line, no box)")
    if top >= 1 and min(b.shape) >= 2:
        ax.contour(ds[xa].values, ds[ya].values, b, levels=np.arange(low + 0.5, top + 0.5), colors="k", linewidths=0.8)
    ax.set_xlabel(label(ds, xa))
    ax.set_ylabel(label(ds, ya))
    if _log(ds, xa):
        ax.set_xscale("log")
    if _log(ds, ya):
        ax.set_yscale("log")
    extra = ", ".join(f"{n} = {ds[n].values[i]:.4g}" for n, i in sel.items())
    ax.set_title(f"{title_of(ds)}\n{run_subtitle(ds)}" + (f"\n(at {extra})" if extra else ""), fontsize=9.5)
    save(fig, path)


def _colors(n: int):
    import matplotlib

    cmap = matplotlib.colormaps["viridis"]
    return [cmap(i / max(n - 1, 1)) for i in range(n)]


def _plot_threshold(ds, path) -> None:
    name = json.loads(ds.attrs.get("swept_params", '["param"]'))[0]
    fig, (ax,) = figure()
    x, phi = ds.scan.values, ds.phase_margin.values
    ax.plot(x, phi, color="C0", lw=1.4, label="zero-energy phase margin")
    for n in range(max(0, int(np.floor(phi.min()))), int(np.ceil(phi.max())) + 1):
        ax.axhline(n, color="0.7", lw=0.7, ls=":")
    u = units_of(ds, "scan")
    for v, s in zip(ds.threshold_value.values, ds.threshold_state.values):
        ax.axvline(v, color="0.35", lw=0.9, ls="--")
        # below the level, right of the line: the margin rises through it there, so the text stays off the curve
        ax.annotate(f"state {int(s)}: {v:.8g} {u}".rstrip(), (v, int(s)), xytext=(4, -11), textcoords="offset points", fontsize=7)
    ax.set_xlabel(label(ds, "scan", name))
    ax.set_ylabel("phase margin (state N bound where it exceeds N) [1]")
    ax.set_title(f"{title_of(ds)}\n{run_subtitle(ds)}", fontsize=9.5)
    ax.legend(fontsize=7, loc="best")
    save(fig, path)
