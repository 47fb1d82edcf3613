"""The figure of a solve archive: the potential drawn exactly, each bound state at its energy with its wavefunction.

* The potential is re-evaluated from the stored case on a fine sampling of the shown window with both
  one-sided values at every feature (interfaces, edges), so steps are vertical and flat layers flat;
  the archive's own ``potential(x)`` (dual-cell averages, sloped at steps) is the fallback.
* Each wavefunction psi(x) is drawn offset at its energy and scaled so that its largest |psi| is
  :data:`PSI_FRACTION` of the energy axis span: every state is equally readable whatever the level
  spacing (the scale is a drawing choice; psi's units are not shown on the axis).
* Converged states in the structure are solid lines; states that are not converged are dashed, and
  hard-wall states dotted, and the legend says which.  The legend sits to the right of the axes.
* Named layers or components are labelled at the bottom of the axes.
"""

from __future__ import annotations

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.plot._common import figure, label, legend_outside, run_subtitle, save, title_of, units_of

#: peak |psi| of every drawn wavefunction, as a fraction of the energy axis span
PSI_FRACTION = 0.07
#: samples of the potential over the shown window (plus two at every feature)
POTENTIAL_SAMPLES = 2000


def _window(x, v, psi):
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


def _case(ds):
    try:
        from fdsolver.api import case_of_run

        return case_of_run(ds)
    except Exception:  # a damaged or foreign case text: draw from the archive alone
        return None


def exact_potential(case, lo: float, hi: float, fallback_x, fallback_v):
    """(x, V) sampled so that steps at features are vertical: both one-sided values at each feature."""
    if case is None:
        return fallback_x, fallback_v
    pot = case.potential
    feats = np.asarray(pot.features(), dtype=float)
    feats = feats[(feats > lo) & (feats < hi)]
    eps = 1e-9 * (hi - lo)
    xs = sorted_distinct(np.concatenate([np.linspace(lo, hi, POTENTIAL_SAMPLES), feats - eps, feats + eps]))
    with np.errstate(all="ignore"):
        v = pot.value(xs)
    if not np.all(np.isfinite(v)):
        return fallback_x, fallback_v
    return xs, v


def _style(ds, k: int) -> tuple[str, str]:
    """(line style, legend suffix) of state k: solid, dashed if not converged, dotted at a hard wall."""
    if "converged" in ds and not int(ds.converged.values[k]):
        return "--", " (NOT converged)"
    if "wall_state" in ds and int(ds.wall_state.values[k]) != 0:
        return ":", f" (wall state, {'left' if int(ds.wall_state.values[k]) < 0 else 'right'})"
    return "-", ""


def plot_solve(ds, path) -> None:
    """Draw a solve archive to ``path``."""
    fig, (ax,) = figure(width=9.0, height=5.2)
    x, v = ds.x.values, ds.potential.values
    energy, psi = ds.energy.values, ds.psi.values
    eu = units_of(ds, "energy")
    lo, hi = _window(x, v, psi)
    case = _case(ds)
    sel = (x >= lo) & (x <= hi)
    xp, vp = exact_potential(case, lo, hi, x[sel], v[sel])
    thr = ds.attrs.get("continuum_threshold", np.inf)
    top = energy.max() if energy.size else vp.max()
    if np.isfinite(thr):
        top = max(top, thr)
    bottom = min(vp.min(), energy.min() if energy.size else vp.min())
    span = max(top - bottom, 1e-300)
    ceiling = top + 0.25 * span
    ax.plot(xp, np.minimum(vp, ceiling), color="0.15", lw=1.6, label="potential", zorder=3)
    ax.set_ylim(bottom - 0.05 * span, ceiling)
    axis_span = ceiling - (bottom - 0.05 * span)
    amp = PSI_FRACTION * axis_span
    for k, e in enumerate(energy):
        p = psi[k][sel]
        scale = amp / max(np.max(np.abs(p)), 1e-300)
        ls, tag = _style(ds, k)
        state = int(ds.state.values[k]) if "state" in ds else k
        line = ax.plot(x[sel], e + scale * p, lw=1.3, ls=ls, label=f"state {state}: {e:.6g} {eu}{tag}", zorder=4)[0]
        ax.plot([lo, hi], [e, e], color=line.get_color(), lw=0.5, alpha=0.6, zorder=2)  # the energy level: thin and solid (dashes mean not converged)
    if np.isfinite(thr):
        ax.axhline(thr, color="0.5", lw=0.9, ls=":", label=f"continuum threshold {thr:.6g} {eu}")
    first = True
    for pos in _point_positions(case):
        if lo <= pos <= hi:
            ax.axvline(pos, color="0.55", lw=0.8, ls="-.", label="point interaction (zero range)" if first else None)
            first = False
    _region_labels(ax, case, lo, hi)
    ax.set_xlim(lo, hi)
    ax.set_xlabel(label(ds, "x"))
    picture = ds.attrs.get("carrier", "electron") != "electron"
    ax.set_ylabel(label(ds, "energy", "hole energy (hole picture)" if picture else "energy"))
    ax.set_title(f"{title_of(ds)}\n{run_subtitle(ds)}", fontsize=9.5)
    ax.text(0.0, -0.13, f"psi(x) drawn at its energy, each scaled to a peak of {100 * PSI_FRACTION:.0f} % of the energy "
            "axis; dashed: not converged, dotted: hard-wall state", transform=ax.transAxes, fontsize=7, color="0.3",
            va="top")
    legend_outside(ax)
    save(fig, path)


def _point_positions(case):
    """Positions of zero-range terms of the stored case (drawn as vertical lines)."""
    return [] if case is None else [p for p, _ in case.potential.point_terms()]


def _region_labels(ax, case, lo: float, hi: float) -> None:
    """The names of the named layers and components, at the bottom of the axes, where they are shown."""
    if case is None:
        return
    regions = case.potential.regions()
    if not regions or len(regions) > 14:
        return
    for name, a, b in regions:
        a, b = max(a, lo), min(b, hi)
        if not b > a:
            continue
        narrow = (b - a) < 0.09 * (hi - lo)
        ax.text(0.5 * (a + b), 0.015, str(name), transform=ax.get_xaxis_transform(), ha="center", va="bottom",
                fontsize=6.5, color="0.35", rotation=90 if narrow else 0, clip_on=True)
