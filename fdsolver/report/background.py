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
