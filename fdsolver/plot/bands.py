"""Figures of the archives of periodic cases (matplotlib on Agg, imported only for a figure).

* band structure: the potential over one period with the bands as shaded strips, the band diagram
  E(q) over the first zone (-pi/L .. pi/L) with the gaps shaded and their widths written in them,
  and the density of states beside it, all on one energy axis; with finite stacks a fourth panel
  sets the levels of each N-period stack beside the bands, and a row below shows each cluster's width
  over its band's width against N; with stored Bloch functions a last row draws |psi_nq(x)|^2 over one
  period at its energy, one panel per stored wavevector;
* band sweep: a fan chart of the bands (filled between bottom and top) against the first swept param
  (further params at their middle value), and below, the band widths on a log scale;
* delta-comb check: |deviation| of band edges, widths and gaps against the width on log-log axes,
  with the first-order law, the tolerance and the validity widths, and a bar chart of the validity
  width per band beside the first-order estimate tolerance / |a|.
"""

from __future__ import annotations

import json

import numpy as np

from fdsolver.plot._common import figure, label, save, title_of, units_of

GAP_COLOR = "0.86"


def _band_colors(n: int):
    import matplotlib

    cmap = matplotlib.colormaps["viridis"]
    return [cmap(0.05 + 0.8 * i / max(n - 1, 1)) for i in range(n)]


def _shade_bands(ax, ds, colors, alpha=0.18) -> None:
    for n, (b, t) in enumerate(zip(ds.band_bottom.values, ds.band_top.values)):
        ax.axhspan(b, t, color=colors[n], alpha=alpha, lw=0)


# ------------------------------------------------------------------ bands
def plot_bands(ds, path) -> None:
    """Draw a ``bands`` archive to ``path`` (module docstring)."""
    from matplotlib.gridspec import GridSpec

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    stacks = "n_periods" in ds
    bloch = "bloch_real" in ds
    ratios = [1.3, 2.6, 1.5] + ([2.2] if stacks else [])
    heights = [3.0] + ([1.25] if stacks else []) + ([2.2] if bloch else [])
    fig = plt.figure(figsize=(sum(ratios) * 1.75, 5.6 + 3.0 * stacks + 3.6 * bloch), dpi=120)
    gs = GridSpec(len(heights), len(ratios), figure=fig, width_ratios=ratios, height_ratios=heights)
    ax_v = fig.add_subplot(gs[0, 0])
    ax_q = fig.add_subplot(gs[0, 1], sharey=ax_v)
    ax_d = fig.add_subplot(gs[0, 2], sharey=ax_v)
    eu, lu = units_of(ds, "band_bottom"), units_of(ds, "x")
    nb = ds.sizes["band"]
    colors = _band_colors(nb)
    bottom, top = ds.band_bottom.values, ds.band_top.values
    v = ds.potential.values
    lo = min(float(bottom[0]), float(np.min(v)))
    hi = float(top[-1])
    arrow = 0.15 * (hi - lo)
    if "point_strength" in ds:  # room for the arrows of the point terms (down: attractive, up: repulsive)
        a = ds.point_strength.values
        if (a > 0).any():
            lo = min(lo, float(np.min(v)) - 1.1 * arrow)
        if (a < 0).any():
            hi = max(hi, float(np.max(v)) + 1.1 * arrow)
    pad = 0.05 * (hi - lo)
    ylim = (lo - pad, hi + pad)
    _panel_potential(ax_v, ds, colors, eu, lu, arrow)
    _panel_dispersion(ax_q, ds, colors, eu)
    _panel_dos(ax_d, ds, colors, eu)
    if stacks:
        ax_s = fig.add_subplot(gs[0, 3], sharey=ax_v)
        _panel_stacks(ax_s, ds, colors)
        _panel_ratios(fig.add_subplot(gs[1, :]), ds, colors)
    if bloch:
        _panels_bloch(fig, gs[len(heights) - 1, :], ds, colors, eu, lu)
    ax_v.set_ylim(*ylim)
    for ax in fig.axes[1:4 if stacks else 3]:  # the panels beside the potential share its energy axis
        ax.tick_params(labelleft=False)
    fig.suptitle(f"{title_of(ds)}: Bloch bands", fontsize=10)
    save(fig, path, rect=(0, 0, 1, 0.97))


def _panel_potential(ax, ds, colors, eu, lu, arrow: float) -> None:
    x, v = ds.x.values, ds.potential.values
    _shade_bands(ax, ds, colors)
    ax.plot(x, v, color="k", lw=1.3)
    if "point_position" in ds:
        for xp, a in zip(ds.point_position.values, ds.point_strength.values):
            y0 = float(np.interp(xp, x, v))
            ax.annotate("", (xp, y0 - (arrow if a > 0 else -arrow)), (xp, y0),
                        arrowprops={"arrowstyle": "-|>", "color": "C3", "lw": 1.4})
            ax.annotate(f"{a:+.3g}", (xp, y0), xytext=(3, 4), textcoords="offset points", fontsize=7, color="C3")
    ax.set_xlim(x[0], x[-1])
    ax.set_xlabel(f"x over one period [{lu}]")
    ax.set_ylabel(f"energy [{eu}]")
    title = "potential" + (" (arrows: point terms,\nstrength in " + units_of(ds, "point_strength") + ")"
                           if "point_position" in ds else "")
    ax.set_title(title, fontsize=9)


def _panel_dispersion(ax, ds, colors, eu) -> None:
    period = float(ds.attrs["period"])
    t = ds.wavevector.values * period / np.pi
    e = ds.energy.values
    bottom, top, gap = ds.band_bottom.values, ds.band_top.values, ds.gap_above.values
    closed = ds.gap_closed.values if "gap_closed" in ds else np.zeros(bottom.size, int)
    for n in range(bottom.size - 1):
        if not closed[n]:
            ax.axhspan(top[n], bottom[n + 1], color=GAP_COLOR, lw=0, zorder=0)
            where = 0.0 if n % 2 == 0 else -0.62  # away from the q where the gap opens (pi/L for even n, 0 for odd)
            ax.text(where, 0.5 * (top[n] + bottom[n + 1]), f"gap {gap[n]:.4g} {eu}", ha="center", va="center",
                    fontsize=7, color="0.25")
    if not closed[-1]:  # the gap above the last band computed: shade up to its bottom edge's known part
        ax.axhspan(top[-1], top[-1] + gap[-1], color=GAP_COLOR, lw=0, zorder=0)
    for n in range(bottom.size):
        ax.plot(np.concatenate([-t[::-1], t]), np.concatenate([e[::-1, n], e[:, n]]), color=colors[n], lw=1.6)
        ax.annotate(f"{n}", (1.0, top[n] if n % 2 == 0 else bottom[n]), xytext=(3, 0), textcoords="offset points",
                    fontsize=7, color=colors[n], va="center")
    ax.set_xlim(-1.0, 1.0)
    ax.set_xticks([-1, -0.5, 0, 0.5, 1], ["-π/L", "-π/2L", "0", "π/2L", "π/L"])
    ax.set_xlabel("Bloch wavevector q")
    ax.set_title("band diagram E(q); gaps shaded", fontsize=9)
    ax.grid(True, axis="x", lw=0.3, alpha=0.5)


def _panel_dos(ax, ds, colors, eu) -> None:
    e, g = ds.dos_energy.values, ds.density_of_states.values
    _shade_bands(ax, ds, colors, alpha=0.12)
    inside = g > 0
    for n, (b, t) in enumerate(zip(ds.band_bottom.values, ds.band_top.values)):
        mine = inside & (e >= b) & (e <= t)
        ax.plot(g[mine], e[mine], color=colors[n], lw=1.2)
    ax.set_xscale("log")
    if inside.any():
        ax.set_xlim(0.5 * float(np.min(g[inside])), 2.0 * float(np.max(g[inside])))
    ax.set_xlabel(f"g(E) [{units_of(ds, 'density_of_states')}]")
    ax.set_title("density of states (one spin;\nlog scale; diverges at the edges)", fontsize=9)


def _panel_stacks(ax, ds, colors) -> None:
    ns = ds.n_periods.values
    _shade_bands(ax, ds, colors, alpha=0.15)
    e, band = ds.stack_energy.values, ds.stack_level_band.values
    for i in range(ns.size):
        for lev, b in zip(e[i], band[i]):
            if not np.isfinite(lev):
                continue
            ax.hlines(lev, i - 0.34, i + 0.34, color=colors[b] if b >= 0 else "C3", lw=1.0 if b >= 0 else 1.6)
    thr = float(ds.attrs.get("stack_continuum_threshold", np.inf))
    if np.isfinite(thr):  # open stacks bind nothing above the cladding's band edge
        ax.axhline(thr, color="0.3", ls="--", lw=0.9)
        ax.annotate("continuum threshold\nof the cladding", (ns.size - 0.45, thr), xytext=(0, 3),
                    textcoords="offset points", ha="right", va="bottom", fontsize=7, color="0.3")
    ax.set_xlim(-0.6, ns.size - 0.4)
    ax.set_xticks(range(ns.size), [str(int(n)) for n in ns])
    ax.set_xlabel("periods N of the finite stack")
    where = "hard walls" if ds.attrs.get("stack_termination") == "hard" else "open, in the cladding"
    ax.set_title(f"levels of N-period stacks ({where});\nred: in a gap", fontsize=9)


def _panels_bloch(fig, cell, ds, colors, eu, lu) -> None:
    """|psi_nq(x)|^2 over one period, one panel per stored wavevector, each drawn at its energy E_n(q)."""
    qs = ds.bloch_wavevector.values
    shown = min(qs.size, 4)
    sub = cell.subgridspec(1, shown, wspace=0.08)
    x, v = ds.x.values, ds.potential.values
    dens = ds.bloch_real.values ** 2 + ds.bloch_imag.values ** 2  # (q, band, x), 1/length
    energy = ds.bloch_energy.values
    bottom, top = ds.band_bottom.values, ds.band_top.values
    lo = min(float(np.min(v)), float(bottom[0]))
    hi = float(top[-1])
    step = (hi - lo) / (2.0 * max(len(bottom), 1))  # the tallest |psi|^2 of a band is drawn this high
    period = float(ds.attrs["period"])
    first = None
    for i in range(shown):
        ax = fig.add_subplot(sub[0, i], sharey=first)
        first = first or ax
        ax.plot(x, v, color="k", lw=1.0)
        for n in range(dens.shape[1]):
            d = dens[i, n]
            ax.fill_between(x, energy[i, n], energy[i, n] + step * d / max(float(d.max()), 1e-300),
                            color=colors[n], alpha=0.55, lw=0.6)
            ax.axhline(energy[i, n], color=colors[n], lw=0.5)
        frac = qs[i] * period / np.pi
        ax.set_title(f"q = {frac:.3g} π/L", fontsize=9)
        ax.set_xlim(x[0], x[-1])
        ax.set_ylim(lo - 0.05 * (hi - lo), hi + step * 1.1)
        ax.set_xlabel(f"x over one period [{lu}]")
        if i == 0:
            ax.set_ylabel(f"energy [{eu}]")
        else:
            ax.tick_params(labelleft=False)
    first.annotate("Bloch functions |ψ(x)|² (each scaled to its own peak), drawn at E_n(q)", (0, 1), xytext=(0, 16),
                   xycoords="axes fraction", textcoords="offset points", fontsize=9, va="bottom")


def _panel_ratios(ax, ds, colors) -> None:
    ns = ds.n_periods.values.astype(float)
    k = int(ds.attrs.get("stack_bands", ds.sizes["band"]))
    hard = ds.attrs.get("stack_termination") == "hard"
    thr = float(ds.attrs.get("stack_continuum_threshold", np.inf))
    for b in range(k):
        r = ds.width_ratio.values[:, b]
        cut = not hard and ds.band_top.values[b] > thr  # the open stacks bind only the part below the threshold
        ax.plot(ns, r, "o:" if cut else "o-", color=colors[b], ms=4, lw=1.2,
                label=f"band {b}: N-level cluster width / band width"
                + (" (reaches above the continuum threshold: filled in part)" if cut else ""))
        if "predicted_width" in ds and np.isfinite(ds.predicted_width.values[:, b]).any():
            ax.plot(ns, ds.predicted_width.values[:, b] / ds.band_width.values[b], "x", color=colors[b], ms=6)
    big = np.linspace(max(ns.min(), 2.0), ns.max(), 100)
    if hard:  # levels E(j pi / N L), j = 1 .. N - 1, of a cosine band
        ax.plot(big, np.cos(np.pi / big), color="0.4", ls="--", lw=0.9, label="cos(pi/N): a cosine band between walls")
    else:
        ax.plot(big, np.cos(np.pi / (big + 1.0)), color="0.4", ls="--", lw=0.9,
                label="cos(pi/(N+1)): nearest-neighbour chain")
    ax.axhline(1.0, color="0.5", lw=0.8)
    ax.set_xscale("log", base=2)
    ax.set_xticks(ns, [str(int(n)) for n in ns])
    ax.set_xlabel("periods N")
    ax.set_ylabel("cluster / band width [1]")
    ax.set_ylim(-0.02, 1.05)
    ax.legend(fontsize=7, loc="upper left", ncol=2)
    ax.set_title("the clusters fill the minibands as N grows" + (" (x: exact hard-wall clusters)" if hard else ""),
                 fontsize=9)
    ax.grid(True, lw=0.3, alpha=0.5)


# ------------------------------------------------------------------ band sweep
def plot_band_sweep(ds, path) -> None:
    """Fan chart of the band edges against the first swept param, band widths below (module docstring)."""
    names = json.loads(ds.attrs.get("swept_params", "[]"))
    name = names[0]
    sel = {n: ds.sizes[n] // 2 for n in names[1:]}
    sub = ds.isel(sel) if sel else ds
    x = sub[name].values
    nb = ds.sizes["band"]
    colors = _band_colors(nb)
    fig, (ax, ax2) = figure(2, 1, width=7.5, height=8.0, sharex=True, gridspec_kw={"height_ratios": [3, 1.4]})
    bot, top, wid = (sub[n].transpose(name, "band").values for n in ("band_bottom", "band_top", "band_width"))
    for n in range(nb):
        ax.fill_between(x, bot[:, n], top[:, n], color=colors[n], alpha=0.45, lw=0, label=f"band {n}")
        ax.plot(x, bot[:, n], color=colors[n], lw=1.0)
        ax.plot(x, top[:, n], color=colors[n], lw=1.0)
        ok = np.isfinite(wid[:, n]) & (wid[:, n] > 0)
        ax2.semilogy(x[ok], wid[ok, n], color=colors[n], lw=1.3, label=f"band {n}")
    ax.set_ylabel(label(ds, "band_bottom", "energy"))
    extra = ", ".join(f"{n} = {ds[n].values[i]:.4g}" for n, i in sel.items())
    ax.set_title(f"{title_of(ds)}\nminibands against {name} (white: gaps)" + (f" at {extra}" if extra else ""),
                 fontsize=10)
    ax.legend(fontsize=7, loc="best", ncol=2)
    ax2.set_ylabel(label(ds, "band_width", "band width"))
    ax2.grid(True, which="both", lw=0.3, alpha=0.5)
    ax2.set_xlabel(label(ds, name))
    if ds[name].attrs.get("spacing") == "log":
        ax2.set_xscale("log")
    save(fig, path)


# ------------------------------------------------------------------ comb check
def plot_comb_check(ds, path) -> None:
    """Deviations of the finite lattices from the delta comb against width, and their bands (module docstring)."""
    fig, axes = figure(2, 2, width=11.5, height=8.6)
    w = ds.width.values
    lu = units_of(ds, "width")
    tol = float(ds.attrs["tolerance"])
    nb = ds.sizes["band"]
    colors = _band_colors(nb)
    names = [str(v) for v in ds.quantity_name.values]
    dev, pred, res = ds.deviation.values, ds.predicted_deviation.values, ds.resolved.values
    panels = ((axes[0], ("band_bottom", "band_top"), "band edges: |E_finite - E_comb| / max(|E_bottom|, |E_top|)"),
              (axes[1], ("band_width",), "band widths: |W_finite - W_comb| / W_comb"),
              (axes[2], ("gap_above",), "gaps: |G_finite - G_comb| / G_comb"))
    for ax, qs, title in panels:
        for n in range(nb):
            for q in qs:
                k = names.index(q)
                d = np.abs(dev[:, k, n])
                ok = np.isfinite(d) & (d > 0)
                if not ok.any():
                    continue
                mark = "o-" if q != "band_top" else "s--"
                good = ok & (res[:, k, n] > 0)
                ax.loglog(w[ok], d[ok], mark, color=colors[n], ms=3.5, lw=1.0, mfc="none" if q == "band_top" else None,
                          label=f"band {n} {q.replace('band_', '')}" if len(qs) > 1 else f"band {n}")
                if (ok & ~good).any():
                    ax.loglog(w[ok & ~good], d[ok & ~good], "x", color="0.3", ms=6)
                p = np.abs(pred[:, k, n])
                pk = np.isfinite(p) & (p > 0)
                if pk.any() and q != "band_top":
                    ax.loglog(w[pk], p[pk], ":", color=colors[n], lw=0.9)
        ax.axhline(tol, color="0.3", lw=1.0, ls="-.")
        ax.set_title(title, fontsize=9)
        ax.set_xlabel(f"width [{lu}]")
        ax.set_ylabel("relative deviation [1]")
        ax.grid(True, which="both", lw=0.3, alpha=0.5)
        if ax.has_data():
            ax.legend(fontsize=6.5, loc="upper left", ncol=2)
    for n in range(nb):
        v = ds.validity_width.values[n]
        if np.isfinite(v):
            axes[0].axvline(v, color=colors[n], ls=":", lw=1.0)
    axes[2].annotate(f"dotted: first order; -.: tolerance {tol:.0e}; x: not resolved", (0.02, 0.02),
                     xycoords="axes fraction", fontsize=7, color="0.3")
    _panel_validity(axes[3], ds, colors, tol, lu)
    shape = ds.attrs.get("replacement_shape", "")
    fig.suptitle(f"{title_of(ds)}: {shape} components against the delta comb", fontsize=10)
    save(fig, path, rect=(0, 0, 1, 0.97))


def _panel_validity(ax, ds, colors, tol, lu) -> None:
    """Validity width per band (bars), beside the first-order estimate tol / max |a| of edges and width."""
    nb = ds.sizes["band"]
    v = ds.validity_width.values
    flags = ds.validity_flag.values
    a = np.abs(ds.predicted_coefficient.values[:3])
    with np.errstate(divide="ignore", invalid="ignore"):
        first = tol / np.nanmax(np.where(a > 0, a, np.nan), axis=0)
    x = np.arange(nb)
    ok = np.isfinite(v)
    ax.bar(x[ok], v[ok], color=[colors[n] for n in x[ok]], width=0.6, label="validity width (finite lattices)")
    for n in x:
        if flags[n] == 1 and ok[n]:
            ax.annotate("holds over\nthe ladder", (n, v[n]), xytext=(0, 3), textcoords="offset points", ha="center",
                        fontsize=6.5)
        elif not ok[n]:
            ax.annotate("fails" if flags[n] == 2 else "not\nresolved", (n, 1.0), xycoords=("data", "axes fraction"),
                        xytext=(0, -24), textcoords="offset points", ha="center", fontsize=7)
    fk = np.isfinite(first)
    if fk.any():
        ax.plot(x[fk], first[fk], "k_", ms=22, mew=2.0, label="first order: tolerance / |a|")
    ax.set_yscale("log")
    ax.set_xticks(x, [f"band {n}" for n in x])
    ax.set_ylabel(f"width [{lu}]")
    ax.set_title(f"validity width per band (edges and width within {tol:.0e})", fontsize=9)
    ax.legend(fontsize=7, loc="best")
    ax.grid(True, axis="y", which="both", lw=0.3, alpha=0.5)
