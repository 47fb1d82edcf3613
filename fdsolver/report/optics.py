"""Tables of the optics archives: an intersubband absorption spectrum and the interband transitions of a stack."""

from __future__ import annotations

import math

import numpy as np

from fdsolver.report._common import case_notes, run_header, title_of, units_of

#: interband transitions listed (strongest overlaps first within the lowest energies)
INTERBAND_ROWS = 12
#: transitions whose squared overlap is below this are called forbidden in the table
FORBIDDEN = 1e-6


def _notes(ds) -> list[str]:
    out = case_notes(ds)
    out += [f"note: {n}" for n in str(ds.attrs.get("notes", "")).splitlines() if n and f"note: {n}" not in out]
    return out


def format_absorption(ds) -> str:
    """The summary of an absorption archive: populations, each transition's line, the peak of the spectrum."""
    a = ds.attrs
    eu, lu = units_of(ds, "photon_energy"), units_of(ds, "state_energy")
    cm2 = _per_cm2(ds)
    lines = [title_of(ds), run_header(ds),
             f"intersubband absorption of {float(a['sheet_density']):.4g} cm^-2 carriers at "
             f"{float(a.get('carrier_temperature', 0.0)):g} K; Lorentzian FWHM {float(a['broadening']):.4g} {eu}; "
             f"refractive index {float(a['refractive_index']):.3g}; field along the growth axis",
             f"chemical potential {float(a['chemical_potential']):.6g} {eu} (same scale as the subband energies)",
             f"{'subband':>7}  {'energy [' + eu + ']':>16}  {'population [cm^-2]':>19}"]
    for k in range(ds.sizes.get("state", 0)):
        lines.append(f"{int(ds.state.values[k]):>7}  {float(ds.state_energy.values[k]):16.8g}  "
                     f"{float(ds.population.values[k]) * cm2:19.5g}")
    ph, total = ds.photon_energy.values, ds.absorption.values
    lines.append(f"{'from':>5} {'to':>4}  {'energy [' + eu + ']':>16}  {'f':>9}  {'peak absorption':>15}  "
                 f"{'area [' + eu + ']':>14}")
    order = np.argsort(-np.abs(ds.integrated_absorption.values)) if ds.sizes.get("transition", 0) else []
    for t in order[:INTERBAND_ROWS]:
        peak = float(np.max(np.abs(ds.transition_absorption.values[t])))
        lines.append(f"{int(ds.transition_initial.values[t]):>5} {int(ds.transition_final.values[t]):>4}  "
                     f"{float(ds.transition_energy.values[t]):16.8g}  "
                     f"{float(ds.transition_oscillator_strength.values[t]):9.5f}  {peak:15.4e}  "
                     f"{float(ds.integrated_absorption.values[t]):14.4e}")
    if total.size:
        k = int(np.argmax(total))
        lines.append(f"peak of the spectrum: {float(total[k]):.4e} (fraction absorbed per pass) at {float(ph[k]):.6g} {eu}; "
                     f"photon energies {float(ph[0]):.6g} to {float(ph[-1]):.6g} {eu}, {ph.size} points")
    if "absorption_coefficient" in ds:
        coef = ds.absorption_coefficient.values
        per = float(a.get("period", math.nan))
        lines.append(f"absorption coefficient of a stack with period {per:.4g} {lu}: peak "
                     f"{float(np.max(coef)) * _per_cm(ds):.4g} cm^-1")
    lines.extend(_notes(ds))
    return "\n".join(lines)


def _per_cm2(ds) -> float:
    """One (case length unit)^-2 in cm^-2."""
    return _per_cm(ds) ** 2


def _per_cm(ds) -> float:
    """One (case length unit)^-1 in cm^-1."""
    from fdsolver.model.units import UNIT_SYSTEMS

    system = UNIT_SYSTEMS.get(ds.attrs.get("units_system"))
    return 1.0 / (system.length_si * 100.0) if system is not None else math.nan


def format_interband(ds) -> str:
    """The interband table: levels of each carrier, then the e-h transitions by energy with their overlaps."""
    a = ds.attrs
    eu = units_of(ds, "electron_energy")
    lines = [title_of(ds), run_header(ds),
             f"effective gap (lowest conduction-band edge - highest valence-band edge): {float(a['effective_gap']):.8g} {eu}"]
    for name, label in (("electron", "e"), ("heavy_hole", "hh"), ("light_hole", "lh")):
        e, err = ds[f"{name}_energy"].values, ds[f"{name}_energy_error"].values if f"{name}_energy_error" in ds else None
        levels = ", ".join(f"{label}{k + 1} {v:.6g}" + (f" +- {err[k]:.1e}" if err is not None else "") for k, v in enumerate(e))
        lines.append(f"{name.replace('_', ' ')} confinement energies [{eu}]: {levels or 'none bound'}")
    rows = []
    for hole, label in (("heavy_hole", "hh"), ("light_hole", "lh")):
        te, ov = ds[f"{hole}_transition_energy"].values, ds[f"{hole}_overlap"].values
        oe = ds[f"{hole}_overlap_error"].values if f"{hole}_overlap_error" in ds else np.full_like(ov, np.nan)
        for i in range(te.shape[0]):
            for j in range(te.shape[1]):
                rows.append((float(te[i, j]), f"e{i + 1}-{label}{j + 1}", float(ov[i, j]), float(oe[i, j])))
    rows.sort()
    allowed = [r for r in rows if r[2] >= FORBIDDEN]
    lines.append(f"{'transition':<11}  {'energy [' + eu + ']':>16}  {'wavelength [nm]':>15}  {'overlap |<e|h>|^2':>17}  "
                 f"{'error':>8}")
    for te, name, ov, oe in allowed[:INTERBAND_ROWS]:
        lines.append(f"{name:<11}  {te:16.8g}  {_wavelength_nm(te, ds):>15}  {ov:17.6f}  "
                     f"{(f'{oe:8.1e}' if np.isfinite(oe) else '       -')}")
    hidden = len(rows) - len(allowed)
    if hidden:
        lines.append(f"({hidden} transition(s) with overlap below {FORBIDDEN:g} left out: forbidden by parity or "
                     "by the separation of the envelopes)")
    if len(allowed) > INTERBAND_ROWS:
        lines.append(f"({len(allowed) - INTERBAND_ROWS} more allowed transition(s) above; the archive holds them all)")
    lines.append("the overlap is the envelope part of the strength (no Bloch factor, no heavy/light-hole "
                 "polarisation factor); excitons and strain are not modelled")
    lines.extend(_notes(ds))
    return "\n".join(lines)


def _wavelength_nm(energy: float, ds) -> str:
    from fdsolver.model.units import HBAR, UNIT_SYSTEMS

    system = UNIT_SYSTEMS.get(ds.attrs.get("units_system"))
    if system is None or not energy > 0:
        return "-"
    return f"{2 * math.pi * HBAR * 299792458.0 / (energy * system.energy_si) * 1e9:.6g}"
