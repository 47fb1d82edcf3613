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
