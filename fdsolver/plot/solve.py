"""Figures of archives (matplotlib, Agg backend; imported only when a figure is asked for).

:func:`plot_archive` dispatches on the archive kind.  A solve figure shows
the potential, each bound-state energy as a horizontal line, and each
wavefunction offset at its energy (scaled to a fraction of the level
spacing), with axes in the case units.
"""

from __future__ import annotations

import importlib

import numpy as np

PLOTTERS = {
    "solve": "fdsolver.plot:plot_solve",
    "delta_check": "fdsolver.plot.delta:plot_delta",
    "sweep": "fdsolver.plot.sweep:plot_sweep",
    "threshold": "fdsolver.plot.sweep:plot_sweep",
}


def figure():
    """A new (figure, axes) pair on the non-interactive Agg backend."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt.subplots(figsize=(7.5, 5.0), dpi=120)


def save(fig, path) -> None:
    fig.tight_layout()
    fig.savefig(path)
    import matplotlib.pyplot as plt

    plt.close(fig)


def plot_archive(ds, path) -> None:
    """Draw archive ``ds`` to the image file ``path``."""
    from fdsolver.errors import ArchiveError

    mod, func = PLOTTERS[ds.attrs["fdsolver_kind"]].split(":")
    try:
        getattr(importlib.import_module(mod), func)(ds, path)
    except (KeyError, AttributeError, IndexError, TypeError) as exc:
        raise ArchiveError(
            f"archive is damaged or incomplete ({type(exc).__name__}: {str(exc)[:80]})", file=ds.encoding.get("source")
        ) from None


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
    fig, ax = figure()
    x = ds.x.values
    v = ds.potential.values
    energy = ds.energy.values
    psi = ds.psi.values
    eu = ds.energy.attrs.get("units_name", ds.energy.attrs.get("units"))
    lu = ds.x.attrs.get("units_name", ds.x.attrs.get("units"))
    lo, hi = _window(x, v, psi, energy)
    sel = (x >= lo) & (x <= hi)
    thr = ds.attrs.get("continuum_threshold", np.inf)
    vshow = v[sel]
    top = energy.max() if energy.size else vshow.max()
    if np.isfinite(thr):
        top = max(top, thr)
    span = max(top - vshow.min(), 1e-300)
    ax.plot(x[sel], np.minimum(vshow, top + 0.3 * span), color="0.2", lw=1.5, label="potential")
    gaps = np.diff(energy) if energy.size > 1 else np.array([0.1 * span])
    amp = 0.4 * max(np.min(gaps[gaps > 0]) if np.any(gaps > 0) else 0.1 * span, 0.02 * span)
    for k, e in enumerate(energy):
        p = psi[k][sel]
        scale = amp / max(np.max(np.abs(p)), 1e-300)
        line = ax.plot(x[sel], e + scale * p, lw=1.2, label=f"state {k}: {e:.6g} {eu}")[0]
        ax.axhline(e, color=line.get_color(), lw=0.6, ls="--")
    if np.isfinite(thr):
        ax.axhline(thr, color="0.5", lw=0.8, ls=":", label=f"continuum threshold {thr:.4g} {eu}")
    for pos in _point_positions(ds):
        if lo <= pos <= hi:
            ax.axvline(pos, color="0.6", lw=0.8, ls="-.")
    ax.set_xlim(lo, hi)
    ax.set_xlabel(f"x [{lu}]")
    ax.set_ylabel(f"energy [{eu}]  (wavefunctions offset at their energies)")
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
