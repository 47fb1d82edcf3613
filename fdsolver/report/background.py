"""Table of a zero-range check on a background (kind ``delta_background``): per state the point-model energy,
the deviation at every width (relative and in the energy unit), the fitted law and the validity width."""

from __future__ import annotations

import numpy as np

from fdsolver.report._common import units_of


def format_background(ds) -> str:
    a = ds.attrs
    eu, lu = units_of(ds, "energy"), units_of(ds, "width")
    tol = float(a.get("tolerance", np.nan))
    lines = [a.get("title", ""),
             f"zero-range check on a background: each point replaced by a {a.get('replacement_shape')} well of the same "
             f"strength on the same layers, fields and walls; energies in {eu}, lengths in {lu}",
             f"reference: the case with exact point interactions (finite-difference solve, derivative jump at a node); "
             f"relative deviations are (E - E_point) / |E_point - {float(a.get('reference_energy', np.nan)):.6g} {eu}| "
             "(the continuum threshold, or the lowest V where every state is bound)"]
    for p in ds.point.values:
        lines.append(f"point {int(p)} '{ds.point_name.values[p]}': x = {float(ds.point_center.values[p]):.6g} {lu}, "
                     f"alpha = {float(ds.point_strength.values[p]):.6g} {units_of(ds, 'point_strength')}, "
                     f"decay length 1/kappa = {float(ds.decay_length.values[p]):.4g} {lu}")
    from fdsolver.zerorange.ladder import VALIDITY_FLAGS

    w = ds.width.values
    for s in ds.state.values:
        e0, e0e = float(ds.energy_limit.values[s]), float(ds.energy_limit_error.values[s])
        valid, flag = float(ds.validity_width.values[s]), VALIDITY_FLAGS[int(ds.validity_flag.values[s])]
        coef, expo = float(ds.law_coefficient.values[s]), float(ds.law_exponent.values[s])
        lines.append("")
        lines.append(f"state {int(s)}: point model E = {e0:.12g} +- {e0e:.1e} {eu}; deviation ~ {coef:.4g} {lu}^-1 x width"
                     f" (fitted slope {expo:.3f}); |deviation| < {tol:g} up to width {valid:.4g} {lu} ({flag})")
        head = (f"{'width [' + lu + ']':>14} {'w*kappa':>9} {'depth [' + eu + ']':>14} {'E [' + eu + ']':>20} "
                f"{'error':>8} {'E - E_point [' + eu + ']':>22} {'relative':>11} {'1st order':>10}  ok")
        lines.append(head)
        for i, wi in enumerate(w):
            e = float(ds.energy.values[i, s])
            lines.append(
                f"{wi:14.5g} {float(ds.width_in_decay_lengths.values[i, 0]):9.3g} "
                f"{float(ds.replacement_depth.values[i, 0]):14.5g} "
                + (f"{e:20.12g} {float(ds.energy_error.values[i, s]):8.1e} "
                   f"{float(ds.energy_deviation.values[i, s]):22.4e} {float(ds.deviation.values[i, s]):11.3e} "
                   f"{float(ds.predicted_deviation.values[i, s]):10.3e}  "
                   f"{'yes' if int(ds.resolved.values[i, s]) else 'NO'}" if np.isfinite(e) else f"{'no such state':>20}"))
    if ds.point.size > 1:
        lines.append("(w*kappa and depth columns: point 0; the archive has every point)")
    for m in str(a.get("messages", "")).splitlines():
        if m:
            lines.append(f"note: {m}")
    return "\n".join(lines)


#: energies shown in the T(E) table of a scattering check
SHOWN_ENERGIES = 12


def format_scatter_check(ds) -> str:
    """Table of a zero-range check for scattering (kind ``delta_transmission``)."""
    a = ds.attrs
    eu, lu = units_of(ds, "energy"), units_of(ds, "width")
    tol = float(a.get("tolerance", np.nan))
    e = ds.energy.values
    lines = [a.get("title", ""),
             f"zero-range check for scattering: each point replaced by a {a.get('replacement_shape')} well or barrier of "
             f"the same strength; reference: the point interactions by {a.get('reference')}; wave from the left; "
             f"{e.size} energies {e[0]:.6g} to {e[-1]:.6g} {eu}; lengths in {lu}"]
    for p in ds.point.values:
        lines.append(f"point {int(p)} '{ds.point_name.values[p]}': x = {float(ds.point_center.values[p]):.6g} {lu}, "
                     f"alpha = {float(ds.point_strength.values[p]):.6g} {units_of(ds, 'point_strength')}, "
                     f"length scale 2C/(m|alpha|) = {float(ds.decay_length.values[p]):.4g} {lu}")
    lines.append(f"max |T - T_point| ~ {float(ds.law_coefficient):.4g} {lu}^-1 x width (fitted slope "
                 f"{float(ds.law_exponent):.3f}); every deviation below {tol:g} up to width "
                 f"{float(ds.validity_width):.4g} {lu}")
    n_r = ds.sizes.get("resonance", 0)
    if n_r:
        lines.append("resonances of the point model: " + ", ".join(
            f"E_r = {float(ds.resonance_energy_limit.values[k]):.8g} {eu} (width {float(ds.resonance_width_limit.values[k]):.4g})"
            for k in range(n_r)))
    else:
        lines.append("no resonance of the point model in the energy range")
    head = f"{'width [' + lu + ']':>14} {'w/scale':>9} {'depth [' + eu + ']':>14} {'max |dT|':>10}"
    for k in range(n_r):
        head += f"  {'dE_r' + str(k) + ' [' + eu + ']':>16} {'rel':>9} {'dGamma/Gamma':>12}"
    lines.append(head)
    for i, wi in enumerate(ds.width.values):
        row = (f"{wi:14.5g} {float(ds.width_in_decay_lengths.values[i, 0]):9.3g} "
               f"{float(ds.replacement_depth.values[i, 0]):14.5g} {float(ds.transmission_deviation.values[i]):10.3e}")
        for k in range(n_r):
            row += (f"  {float(ds.resonance_energy_deviation.values[i, k]):16.4e} "
                    f"{float(ds.resonance_relative_shift.values[i, k]):9.2e} "
                    f"{float(ds.resonance_width_deviation.values[i, k]):12.3e}")
        lines.append(row)
    step = max(1, e.size // SHOWN_ENERGIES)
    lines.append(f"T(E) (every {step}th energy; the archive holds all): narrowest and widest width against the points")
    lines.append(f"{'energy [' + eu + ']':>16} {'T_point':>12} {'T (w=' + format(float(ds.width.values[0]), '.3g') + ')':>16} "
                 f"{'T (w=' + format(float(ds.width.values[-1]), '.3g') + ')':>16}")
    for j in range(0, e.size, step):
        lines.append(f"{e[j]:16.6g} {float(ds.transmission_limit.values[j]):12.6g} "
                     f"{float(ds.transmission.values[0, j]):16.6g} {float(ds.transmission.values[-1, j]):16.6g}")
    for m in str(a.get("messages", "")).splitlines():
        if m:
            lines.append(f"note: {m}")
    return "\n".join(lines)
