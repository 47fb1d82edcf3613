"""The figure of a solve archive: the potential, each bound-state energy as a horizontal line, and each
wavefunction offset at its energy (scaled to a fraction of the level spacing), with axes in the case units."""

from __future__ import annotations

import numpy as np

from fdsolver.plot._common import figure, label, save, units_of


def _window(x, v, psi, energy):
    """x-range worth showing: where any state has 1e-4 of its peak density, or the potential varies."""
    if psi.size:
        dens = psi**2
        keep = np.any(dens > 1e-4 * dens.max(axis=1, keepdims=True), axis=0)
        lo, hi = x[keep][0], x[keep][-1]
    else:
        lo, hi = x[0], x[-1]
    varies = np.flatnonzero(np.abs(np.diff(v)) > 1e-9 * (np.ptp(v) + 1e-300))
    if varies.size:
        lo, hi = min(lo, x[varies[0]]), max(hi, x[varies[-1] + 1])
    pad = 0.05 * (hi - lo)
    return max(x[0], lo - pad), min(x[-1], hi + pad)


def plot_solve(ds, path) -> None:
    """Draw a solve archive to ``path``."""
    fig, (ax,) = figure()
    x = ds.x.values
    v = ds.potential.values
    energy = ds.energy.values
    psi = ds.psi.values
    eu = units_of(ds, "energy")
    lo, hi = _window(x, v, psi, energy)
    sel = (x >= lo) & (x <= hi)
    thr = ds.attrs.get("continuum_threshold", np.inf)
    vshow = v[sel]
    top = energy.max() if energy.size else vshow.max()
    if np.isfinite(thr):
        top = max(top, thr)
    span = max(top - vshow.min(), 1e-300)
    clip = top + 0.3 * span
    quasi = "log10_width" in ds and bool(np.isfinite(ds.log10_width.values).any())
    if quasi:  # quasi-bound states: show the barriers that hold them, and size the waves to that range
        clip = max(clip, float(np.max(vshow)))
        span = max(span, 0.5 * (clip - float(vshow.min())))
    ax.plot(x[sel], np.minimum(vshow, clip), color="0.2", lw=1.5, label="potential")
    gaps = np.diff(energy) if energy.size > 1 else np.array([0.1 * span])
    amp = 0.4 * max(np.min(gaps[gaps > 0]) if np.any(gaps > 0) else 0.1 * span, 0.02 * span)
    if quasi and energy.size == 1:  # one resonance between tall barriers: a wave a tenth of their height
        amp = 0.1 * (clip - float(vshow.min()))
    for k, e in enumerate(energy):
        p = psi[k][sel]
        scale = amp / max(np.max(np.abs(p)), 1e-300)
        text = f"state {k}: {e:.6g} {eu}"
        if quasi and np.isfinite(ds.log10_width.values[k]):
            w = float(ds.width.values[k])
            text += f", width {w:.2g} {eu}" if w > 0 else f", width 1e{float(ds.log10_width.values[k]):.0f} {eu}"
        line = ax.plot(x[sel], e + scale * p, lw=1.2, label=text)[0]
        ax.axhline(e, color=line.get_color(), lw=0.6, ls="--")
    if np.isfinite(thr):
        ax.axhline(thr, color="0.5", lw=0.8, ls=":", label=f"continuum threshold {thr:.4g} {eu}")
    for pos in _point_positions(ds):
        if lo <= pos <= hi:
            ax.axvline(pos, color="0.6", lw=0.8, ls="-.")
    ax.set_xlim(lo, hi)
    ax.set_xlabel(label(ds, "x"))
    ax.set_ylabel(label(ds, "energy") + "  (wavefunctions offset at their energies)")
    ax.set_title(ds.attrs.get("title", ""))
    if energy.size <= 12:
        ax.legend(fontsize=7, loc="best")
    save(fig, path)


def _point_positions(ds):
    """Positions of zero-range terms of the stored case (drawn as vertical lines)."""
    try:
        from fdsolver.api import case_of_run

        case = case_of_run(ds)
    except Exception:
        return []
    return [p for p, _ in case.potential.point_terms()]
