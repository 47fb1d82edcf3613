"""Figures of the optics archives (matplotlib on Agg, imported only for a figure).

* absorption: the fraction absorbed per pass against photon energy, each transition's Lorentzian line
  dashed beneath it and its energy marked; a wavelength axis on top (nm-meV runs); the absorption
  coefficient on the right where a period was given;
* interband: left, the band diagram with the conduction band and its electron levels (top panel)
  and the valence band with its heavy- and light-hole levels (bottom panel; the gap between them is
  left out), each envelope drawn at its level; right, the squared overlap of every e-h transition
  against its energy (heavy holes solid, light holes open), the allowed ones named.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.plot._common import figure, label, legend_outside, run_subtitle, save, units_of

#: peak |psi| of drawn envelopes, as a fraction of the panel's energy span
PSI_FRACTION = 0.12
#: transitions named in the interband figure (the allowed ones with the lowest energies)
NAMED = 8


def _wavelength_axis(ax, ds) -> None:
    """A top axis in micrometres (vacuum wavelength) for photon energies in meV."""
    from fdsolver.model.units import HBAR, UNIT_SYSTEMS

    system = UNIT_SYSTEMS.get(ds.attrs.get("units_system"))
    if system is None:
        return
    hc = 2 * math.pi * HBAR * 299792458.0 / system.energy_si * 1e6  # energy unit * um

    def fwd(e):
        e = np.asarray(e, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(e > 0, hc / np.maximum(e, 1e-300), np.inf)

    top = ax.secondary_xaxis("top", functions=(fwd, fwd))
    lo, hi = ax.get_xlim()
    nice = np.array([0.5, 1, 1.5, 2, 3, 4, 5, 6, 8, 10, 12, 15, 20, 25, 30, 40, 50, 70, 100, 150, 200, 300, 500])
    lam_lo, lam_hi = hc / hi, (hc / lo if lo > 0 else np.inf)
    ticks = nice[(nice >= lam_lo) & (nice <= lam_hi)]
    if ticks.size > 7:  # keep them apart where the wavelength crowds (low photon energies)
        pos = hc / ticks
        keep = [0]
        for k in range(1, ticks.size):
            if abs(pos[k] - pos[keep[-1]]) > 0.07 * (hi - lo):
                keep.append(k)
        ticks = ticks[keep]
    top.set_xticks(ticks)
    top.set_xticklabels([f"{t:g}" for t in ticks])
    top.set_xlabel("vacuum wavelength [um]", fontsize=8)
    top.tick_params(labelsize=7)


def plot_absorption(ds, path) -> None:
    """Draw an absorption archive to ``path``."""
    fig, (ax,) = figure(width=8.5, height=4.8)
    e, a = ds.photon_energy.values, ds.absorption.values
    eu = units_of(ds, "photon_energy")
    ax.plot(e, a, color="k", lw=1.6, label="total")
    for t in range(ds.sizes.get("transition", 0)):
        line = ds.transition_absorption.values[t]
        if np.max(np.abs(line)) < 1e-3 * max(np.max(np.abs(a)), 1e-300):
            continue
        i, j = int(ds.transition_initial.values[t]), int(ds.transition_final.values[t])
        et, f = float(ds.transition_energy.values[t]), float(ds.transition_oscillator_strength.values[t])
        c = f"C{t % 10}"
        ax.plot(e, line, ls="--", lw=1.0, color=c, label=f"{i} -> {j}: {et:.4g} {eu}, f = {f:.3g}")
        ax.axvline(et, color=c, lw=0.6, ls=":")
    ax.set_xlim(e[0], e[-1])
    ax.set_ylim(bottom=0.0)
    ax.set_xlabel(label(ds, "photon_energy", "photon energy"))
    ax.set_ylabel("fraction absorbed per pass [1]\n(field along the growth axis)")
    at = ds.attrs
    ax.set_title(f"{at.get('title', '')}\n{run_subtitle(ds)}\n{float(at['sheet_density']):.3g} cm^-2 at "
                 f"{float(at.get('carrier_temperature', 0)):g} K, FWHM {float(at['broadening']):.3g} {eu}, "
                 f"n = {float(at['refractive_index']):.3g}", fontsize=9)
    if at.get("units_system") == "nm-meV" and e[0] > 0:
        _wavelength_axis(ax, ds)
    if "absorption_coefficient" in ds:
        from fdsolver.report.optics import _per_cm

        ax2 = ax.twinx()
        ax2.set_ylim(0.0, ax.get_ylim()[1] / float(at["period"]) * _per_cm(ds))
        from fdsolver.model.units import UNIT_SYSTEMS

        lu = UNIT_SYSTEMS[at["units_system"]].length if at.get("units_system") in UNIT_SYSTEMS else ""
        ax2.set_ylabel(f"absorption coefficient [cm^-1]\n(stack of period {float(at['period']):.4g} {lu})", fontsize=8)
    legend_outside(ax) if "absorption_coefficient" not in ds else ax.legend(fontsize=7, loc="upper right", frameon=False)
    save(fig, path)


def _levels(ax, x, edge, energies, psi, reference, sign, style, name, lo, hi, span):
    """Envelopes drawn at their absolute levels (sign -1: holes, drawn below their level)."""
    sel = (x >= lo) & (x <= hi)
    for k, eps in enumerate(energies):
        level = reference + sign * eps
        p = psi[k][sel]
        scale = PSI_FRACTION * span / max(np.max(np.abs(p)), 1e-300)
        line = ax.plot(x[sel], level + sign * scale * p, lw=1.1, ls=style,
                       label=f"{name}{k + 1}: {eps:.4g}")[0]
        ax.plot([lo, hi], [level, level], color=line.get_color(), lw=0.5, alpha=0.6)  # the level: thin and solid


def _window(ds):
    x = ds.x.values
    dens = np.concatenate([ds[n].values ** 2 for n in ("electron_psi", "heavy_hole_psi", "light_hole_psi")
                           if n in ds and ds[n].size])
    if dens.size:
        keep = np.any(dens > 1e-4 * dens.max(axis=1, keepdims=True), axis=0)
        lo, hi = x[keep][0], x[keep][-1]
    else:
        lo, hi = x[0], x[-1]
    pad = 0.05 * (hi - lo)
    return max(x[0], lo - pad), min(x[-1], hi + pad)


def plot_interband(ds, path) -> None:
    """Draw an interband archive to ``path``."""
    import matplotlib.gridspec as gridspec

    fig, _ = figure(width=12.5, height=6.2)
    fig.clf()
    grid = gridspec.GridSpec(2, 2, figure=fig, width_ratios=[1.25, 1.0], hspace=0.08, wspace=0.55)
    top, bottom = fig.add_subplot(grid[0, 0]), None
    bottom = fig.add_subplot(grid[1, 0], sharex=top)
    right = fig.add_subplot(grid[:, 1])
    eu = units_of(ds, "electron_energy")
    x = ds.x.values
    lo, hi = _window(ds)
    sel = (x >= lo) & (x <= hi)
    cb, vb = ds.conduction_band_edge.values, ds.valence_band_edge.values
    a = ds.attrs
    e_ref, h_ref = float(a["conduction_band_reference"]), float(a["valence_band_reference"])
    ee, eh, el = ds.electron_energy.values, ds.heavy_hole_energy.values, ds.light_hole_energy.values
    cspan = max(float(np.max(cb[sel]) - np.min(cb[sel])), float(ee.max()) if ee.size else 1.0, 1e-300)
    vspan = max(float(np.max(vb[sel]) - np.min(vb[sel])), float(max(eh.max() if eh.size else 0, el.max() if el.size else 0)), 1e-300)
    top.plot(x[sel], cb[sel], color="k", lw=1.5, label="conduction band")
    _levels(top, x, cb, ee, ds.electron_psi.values, e_ref, +1, "-", "e", lo, hi, cspan)
    bottom.plot(x[sel], vb[sel], color="k", lw=1.5, label="valence band")
    _levels(bottom, x, vb, eh, ds.heavy_hole_psi.values, h_ref, -1, "-", "hh", lo, hi, vspan)
    _levels(bottom, x, vb, el, ds.light_hole_psi.values, h_ref, -1, "--", "lh", lo, hi, vspan)
    top.set_ylim(np.min(cb[sel]) - 0.08 * cspan, np.max(cb[sel]) + 0.25 * cspan)
    bottom.set_ylim(np.min(vb[sel]) - 0.25 * vspan, np.max(vb[sel]) + 0.08 * vspan)
    top.tick_params(labelbottom=False)
    top.spines["bottom"].set_linestyle((0, (3, 3)))
    bottom.spines["top"].set_linestyle((0, (3, 3)))
    top.set_ylabel(f"electron energy [{eu}]")
    bottom.set_ylabel(f"electron energy [{eu}]")
    bottom.set_xlabel(label(ds, "x"))
    top.set_xlim(lo, hi)
    top.set_title(f"band edges (gap left out: {float(a['effective_gap']):.6g} {eu}); levels [{eu}] from the band "
                  "extrema", fontsize=8.5)
    legend_outside(top, fontsize=7)
    legend_outside(bottom, fontsize=7)
    rows = []
    for hole, marker, fill in (("heavy_hole", "o", "full"), ("light_hole", "s", "none")):
        te, ov = ds[f"{hole}_transition_energy"].values, ds[f"{hole}_overlap"].values
        m = right.stem(te.ravel(), ov.ravel(), linefmt="C0-" if hole == "heavy_hole" else "C1--",
                       markerfmt=f"C{0 if hole == 'heavy_hole' else 1}{marker}", basefmt=" ",
                       label=f"e - {'heavy' if hole == 'heavy_hole' else 'light'} hole")
        if fill == "none":
            m.markerline.set_markerfacecolor("none")
        tag = "hh" if hole == "heavy_hole" else "lh"
        rows += [(float(te[i, j]), float(ov[i, j]), f"e{i + 1}-{tag}{j + 1}") for i in range(te.shape[0])
                 for j in range(te.shape[1])]
    energies = [r[0] for r in rows]
    span = max(max(energies) - min(energies), 1e-300) if energies else 1.0
    # the strongest transitions are named (heavy holes left of their stem, light holes right), a name only where it
    # keeps clear of the names already placed (a name is about 7 % of the energy axis wide and 5 % of the height)
    placed: list[tuple[float, float]] = []
    for e, o, name in sorted((r for r in rows if r[1] > 0.05), key=lambda r: -r[1])[:NAMED]:
        left = "hh" in name
        centre = e - 0.04 * span if left else e + 0.04 * span
        if any(abs(centre - c) < 0.08 * span and abs(o - y) < 0.06 for c, y in placed):
            continue
        placed.append((centre, o))
        right.annotate(name, (e, o), xytext=(-3 if left else 3, 3), textcoords="offset points", fontsize=7,
                       ha="right" if left else "left")
    right.set_ylim(0.0, 1.12)
    if energies:
        right.set_xlim(min(energies) - 0.1 * span, max(energies) + 0.05 * span)  # room for the names
    right.set_xlabel(f"transition energy [{eu}]")
    right.set_ylabel("envelope overlap |<e|h>|^2 [1]")
    right.set_title("interband transitions (no Bloch or polarisation factor)", fontsize=8.5)
    right.legend(fontsize=7, loc="upper right", frameon=False)
    right.grid(True, lw=0.3, alpha=0.5)
    fig.suptitle(f"{a.get('title', '')}\n{run_subtitle(ds)}", fontsize=9.5)
    save(fig, path, layout=False)
