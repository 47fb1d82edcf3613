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

from fdsolver.plot._common import figure, label, save, units_of


def _with_splitting(has_split: bool, has_width: bool = False):
    """One panel, or the energies above the tunnel splitting and/or the widths of quasi-bound states (sharing the
    param axis)."""
    extra = int(has_split) + int(has_width)
    if not extra:
        return figure()
    return figure(1 + extra, 1, height=5.0 + 2.2 * extra, sharex=True, gridspec_kw={"height_ratios": [3] + [1.3] * extra})


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


def _plot_line(ds, name, path) -> None:
    x = ds[name].values
    eu = units_of(ds, "energy")
    split = ds["tunnel_splitting"].values if "tunnel_splitting" in ds else np.array([np.nan])
    has_split = bool(np.any(np.isfinite(split) & (split > 0)))
    has_width = "log10_level_width" in ds and bool(np.isfinite(ds.log10_level_width.values).any())
    fig, axes = _with_splitting(has_split, has_width)
    ax = axes[0]
    for s in ds.state.values:
        e = ds.energy.sel(state=s).values
        if np.isfinite(e).any():
            ax.plot(x, e, marker="." if x.size <= 200 else None, lw=1.3, label=f"state {int(s)} ({int(s)} node{'' if int(s) == 1 else 's'})")
    vt = ds.continuum_threshold.values
    if np.isfinite(vt).any():
        ax.plot(x, vt, color="0.5", lw=0.9, ls=":", label="continuum threshold")
    _markers(ax, ds, name, eu)
    ax.set_ylabel(label(ds, "energy"))
    ax.set_title(ds.attrs.get("title", ""))
    if ds.sizes.get("state", 0) <= 12:
        ax.legend(fontsize=7, loc="best")
    if has_split:
        ax2 = axes[1]
        ok = np.isfinite(split) & (split > 0)
        ax2.semilogy(x[ok], split[ok], color="C3", lw=1.3)
        ax2.set_ylabel(label(ds, "tunnel_splitting", "E1 - E0"))
        _markers(ax2, ds, name)
    if has_width:
        _widths_panel(axes[-1], ds, name, x)
    for a in axes:
        if _log(ds, name):
            a.set_xscale("log")
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
    ax.set_title(ds.attrs.get("title", "") + (f"\n(at {extra})" if extra else ""), fontsize=10)
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
        ax.annotate(f"state {int(s)}: {v:.8g} {u}".rstrip(), (v, int(s)), xytext=(4, 4), textcoords="offset points", fontsize=7)
    ax.set_xlabel(label(ds, "scan", name))
    ax.set_ylabel("phase margin (state N bound where it exceeds N) [1]")
    ax.set_title(ds.attrs.get("title", ""))
    ax.legend(fontsize=7, loc="best")
    save(fig, path)
