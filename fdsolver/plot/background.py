"""Figure of a zero-range check on a background: |relative deviation| against width on log-log axes per state
(the tolerance line, each validity width, the first-order prediction dotted), and |E - E_point| in
the energy unit (filled markers where the finite wells bind less, open where they bind more)."""

from __future__ import annotations

import numpy as np

from fdsolver.plot._common import figure, save, units_of


def plot_background(ds, path) -> None:
    eu, lu = units_of(ds, "energy"), units_of(ds, "width")
    fig, (ax, bx) = figure(1, 2, width=12.5, height=4.9)
    w = ds.width.values
    tol = float(ds.attrs.get("tolerance", np.nan))
    for s in ds.state.values:
        c = f"C{int(s) % 10}"
        d = np.abs(ds.deviation.values[:, s])
        ok = np.isfinite(d) & (d > 0)
        res = ok & (ds.resolved.values[:, s] == 1)
        ax.loglog(w[ok], d[ok], color=c, lw=1.2, label=f"state {int(s)}")
        ax.loglog(w[res], d[res], "o", color=c, ms=4)
        if (ok & ~res).any():
            ax.loglog(w[ok & ~res], d[ok & ~res], "x", color=c, ms=6)
        pred = np.abs(ds.predicted_deviation.values[:, s])
        if np.isfinite(pred).any():
            ax.loglog(w, pred, color=c, lw=0.8, ls=":")
        v = float(ds.validity_width.values[s])
        if np.isfinite(v):
            ax.axvline(v, color=c, lw=0.8, ls="--")
        de = ds.energy_deviation.values[:, s]
        okd = np.isfinite(de) & (de != 0)
        bx.loglog(w[okd], np.abs(de[okd]), color=c, lw=1.0,
                  label=f"state {int(s)} (E_point = {float(ds.energy_limit.values[s]):.6g} {eu})")
        bx.loglog(w[okd & (de > 0)], de[okd & (de > 0)], "o", color=c, ms=4)
        bx.loglog(w[okd & (de < 0)], -de[okd & (de < 0)], "o", color=c, ms=5, mfc="none")
    ax.axhline(tol, color="0.3", lw=0.8, ls="-.", label=f"tolerance {tol:g}")
    ax.set_xlabel(f"replacement width [{lu}]  (dashed: validity widths; dotted: first order)")
    ax.set_ylabel("|E - E_point| / |E_point - E_ref|  [1]")
    ax.set_title("deviation from the exact point interactions", fontsize=10)
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    ax.legend(fontsize=8)
    bx.set_xlabel(f"replacement width [{lu}]")
    bx.set_ylabel(f"|E - E_point| [{eu}]")
    bx.set_title("deviation in energy (filled: finite wells bind less; open: more)", fontsize=10)
    bx.grid(True, which="major", lw=0.3, alpha=0.5)
    bx.legend(fontsize=8)
    fig.suptitle(ds.attrs.get("title", ""), fontsize=11)
    save(fig, path, rect=(0, 0, 1, 0.95))


def plot_scatter_check(ds, path) -> None:
    """T(E) of the points and of a few replacement widths on a log axis (resonances marked), and the deviations
    against width on log-log axes (max |dT|, relative resonance shifts and width changes, the tolerance)."""
    eu, lu = units_of(ds, "energy"), units_of(ds, "width")
    fig, (ax, bx) = figure(1, 2, width=13.0, height=5.0)
    e, w = ds.energy.values, ds.width.values
    ax.semilogy(e, ds.transmission_limit.values, color="k", lw=1.6, label="point interactions")
    for n, i in enumerate(sorted({0, w.size // 2, w.size - 1})):
        ax.semilogy(e, ds.transmission.values[i], lw=1.0, ls="--", color=f"C{n}", label=f"width {w[i]:.3g} {lu}")
    for k in range(ds.sizes.get("resonance", 0)):
        ax.axvline(float(ds.resonance_energy_limit.values[k]), color="C3", lw=0.7, ls=":",
                   label="resonance (points)" if k == 0 else None)
    ax.set_xlabel(f"energy [{eu}]")
    ax.set_ylabel("transmission T [1] (log axis)")
    ax.set_title("T(E), wave from the left", fontsize=10)
    ax.grid(True, which="major", lw=0.3, alpha=0.5)
    ax.legend(fontsize=8)
    tol = float(ds.attrs.get("tolerance", np.nan))
    d = ds.transmission_deviation.values
    ok = np.isfinite(d) & (d > 0)
    bx.loglog(w[ok], d[ok], "o-", color="k", ms=4, lw=1.2, label="max |T - T_point|")
    for k in range(ds.sizes.get("resonance", 0)):
        s = np.abs(ds.resonance_relative_shift.values[:, k])
        g = np.abs(ds.resonance_width_deviation.values[:, k])
        c = f"C{k % 10}"
        good = np.isfinite(s) & (s > 0)
        bx.loglog(w[good], s[good], "s-", color=c, ms=3, lw=1.0, label=f"resonance {k}: |dE_r| / (E_r - V_in)")
        good = np.isfinite(g) & (g > 0)
        bx.loglog(w[good], g[good], "^--", color=c, ms=3, lw=1.0, label=f"resonance {k}: |dGamma| / Gamma")
    bx.axhline(tol, color="0.3", lw=0.8, ls="-.", label=f"tolerance {tol:g}")
    v = float(ds.validity_width)
    if np.isfinite(v):
        bx.axvline(v, color="0.3", lw=0.8, ls="--", label=f"validity width {v:.3g} {lu}")
    bx.set_xlabel(f"replacement width [{lu}]")
    bx.set_ylabel("deviation [1]")
    bx.set_title("deviation from the point interactions", fontsize=10)
    bx.grid(True, which="major", lw=0.3, alpha=0.5)
    bx.legend(fontsize=7)
    fig.suptitle(ds.attrs.get("title", ""), fontsize=11)
    save(fig, path, rect=(0, 0, 1, 0.95))
