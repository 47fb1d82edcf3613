"""Datasets of every archive kind, generated from the variable table :mod:`fdsolver.io.specs`.

:func:`build` turns a result object and a kind's rows into an
:class:`xarray.Dataset` with CF attributes (``long_name``, UDUNITS
``units`` and the plain ``units_name``, flags); one small function per kind
adds the kind's global attributes:

=====================  =====================================================
:func:`solve_record`   one solve (:class:`fdsolver.boundstates.result.Solution`), as a
                       :class:`~fdsolver.io.record.Record` (``.dataset()`` builds the Dataset)
:func:`sweep_dataset`  a parameter sweep (:class:`fdsolver.scans.sweep.Results`)
:func:`threshold_dataset`  a threshold search (:class:`fdsolver.boundstates.counting.Search`)
:func:`ladder_dataset`  a zero-range check over widths (:class:`fdsolver.zerorange.ladder.Ladder`)
:func:`map_dataset`    a zero-range validity map (:class:`fdsolver.scans.maps.MapResults`)
:func:`bands_dataset`  Bloch bands of a periodic case (:class:`fdsolver.bloch.study.BandStudy`)
:func:`band_sweep_dataset`  band edges over a parameter sweep (:class:`fdsolver.scans.bandsweep.BandResults`)
:func:`comb_check_dataset`  a delta comb against finite lattices (:class:`fdsolver.zerorange.combcheck.CombCheck`)
:func:`transmission_dataset`  T(E), R(E) and the poles in the range
:func:`resonances_dataset`  resonances of a window (or against swept params)
:func:`current_dataset`  Tsu-Esaki J(V) with peak and valley
=====================  =====================================================

:func:`check` is the reader's side: it refuses a Dataset whose variables do
not match its kind's rows.  Energies and lengths are in the case units.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

from typing import TYPE_CHECKING

import numpy as np

from fdsolver._version import __version__
from fdsolver.errors import ArchiveError
from fdsolver.io.specs import KINDS, PARAM, PARAMS, Kind, Var, kind_of
from fdsolver.io.record import Field, Record
from fdsolver.io.units import units_of

if TYPE_CHECKING:
    import xarray as xr

CONVENTIONS = "CF-1.13"
REFERENCES = (
    "Flux-form three-point finite differences on nested adaptive grids with Richardson extrapolation; "
    "BenDaniel-Duke matching, Phys. Rev. 152, 683 (1966); see README.md of fdsolver"
)
UNDECLARED = "units not declared; add [sweep] units = {NAME = \"UNIT\"} to the case"


@dataclass(frozen=True)
class Param:
    """A scanned param as the builders read it: its name, UDUNITS-2 ``units`` ("" if not declared), ``units_name``."""

    name: str
    units: str = ""
    units_name: str = ""


def base_attrs(case, kind: str, history: str) -> dict:
    """Global attributes shared by every archive kind (CF: Conventions, title, history, source, references, comment)."""
    return {
        "Conventions": CONVENTIONS,
        "title": case.title,
        "source": f"fdsolver {__version__}",
        "history": history,
        "references": REFERENCES,
        "comment": "Model calculation; check against measurement before relying on it.",
        "fdsolver_kind": kind,
        "units_system": case.units.name,
        "units_note": case.units.units_note,
        "hbar2_2me": float(case.units.hbar2_2me),
        "hbar2_2me_units": f"{case.units.energy} {case.units.length}^2",
        "particle_mass": float(case.mass),
        "case_file": str(case.path or ""),
        "case_text": case.text,
        "case_tables": json.dumps(case.tables),
        "params": json.dumps(case.params, sort_keys=True),
        **case_attrs(case),
    }


def case_attrs(case) -> dict:
    """The carrier, temperature, materials and unit notes of a case (every archive kind carries them)."""
    info = getattr(case, "stack_info", None)
    out = {
        "carrier": getattr(case, "carrier", "electron"),
        "temperature": float(getattr(case, "temperature", 300.0)),
        "temperature_units": "K",
        "nonparabolicity": int(bool(getattr(case, "nonparabolicity", False))),
        "param_units": json.dumps(getattr(case, "param_units", {}), sort_keys=True),
    }
    if getattr(case, "notes", ()):
        out["case_notes"] = "\n".join(case.notes)
    if info is not None:
        bands = info.bands
        out.update({
            "materials": info.describe(),
            "band_reference": float(bands.reference),
            "band_reference_note": "absolute band energy (materials library scale, case energy unit) of the stack's "
                                   "band extremum that the energies are measured from; absolute energy = "
                                   f"band_reference {'+' if bands.sign > 0 else '-'} energy",
            "layer_gaps": np.array([float(g) for g in bands.gap]),
            "layer_masses": np.array([float(m) for m in bands.mass]),
            "materials_source": "; ".join(info.library_files),
        })
    stack = getattr(getattr(case, "potential", None), "stack", None)
    if stack is not None and "layer_masses" not in out:
        out["layer_masses"] = np.array([float(layer.mass) for layer in stack.layers])
    return out


def _units_attrs(udunits: str, name: str) -> dict:
    return {"units": udunits} if name in ("", udunits) else {"units": udunits, "units_name": name}


def _param_attrs(param) -> dict:
    """Units of a scanned param (an object with ``units`` (UDUNITS, "" if undeclared) and ``units_name``)."""
    if param is None or not getattr(param, "units", ""):
        return {"units": "1", "units_note": UNDECLARED}
    return _units_attrs(param.units, getattr(param, "units_name", "") or param.units)


def var_attrs(var: Var, system, param=None) -> dict:
    """The attributes of one row in the unit system ``system`` (``param``: the scanned param for PARAM units)."""
    attrs: dict = {"long_name": var.long_name.format(param=getattr(param, "name", "the param"))}
    if var.units == PARAM:
        attrs.update(_param_attrs(param))
    elif var.units is not None:
        attrs.update(_units_attrs(*units_of(var.units, system)))
    if var.flags:
        attrs["flag_values"] = var.flag_values()
        attrs["flag_meanings"] = " ".join(var.meanings())
    if var.note:
        attrs["units_note"] = var.note.format(length=system.length)
    return attrs


def axis_attrs(axis) -> dict:
    """A scanned axis as a coordinate: its long name, units and spacing."""
    return {"long_name": axis.long_name, **_param_attrs(axis), "spacing": axis.spacing}


def _array(var: Var, value) -> np.ndarray:
    if var.dtype == "str":  # numpy text, not objects: an empty list of names must still be text on disk
        return np.array([str(v) for v in value], dtype=str)
    return np.asarray(value).astype(np.dtype(var.dtype))


def build(kind: str, result, system, attrs: dict, *, axes=(), param=None) -> xr.Dataset:
    """The Dataset of ``kind`` from ``result`` (see :func:`record`)."""
    return record(kind, result, system, attrs, axes=axes, param=param).dataset()


def record(kind: str, result, system, attrs: dict, *, axes=(), param=None) -> Record:
    """The Dataset of ``kind`` from ``result``: every row whose source gives a value, in the table's order.

    ``axes`` are the scanned axes (what :data:`PARAMS` stands for; each with
    ``name``, ``values``, ``units``, ``units_name``, ``long_name``,
    ``spacing``), ``param`` the scanned param whose units :data:`PARAM` rows
    take (default: the only axis).
    """
    spec = KINDS[kind]
    names = tuple(a.name for a in axes)
    param = param if param is not None else (axes[0] if len(axes) == 1 else None)
    coords: dict = {a.name: Field((a.name,), np.asarray(a.values), axis_attrs(a)) for a in axes}
    data: dict = {}
    for var in spec.rows:
        value = var.value(result)
        if value is None:
            if var.required:
                raise ValueError(f"{kind} archive: the result gives no value for the required variable {var.name}")
            continue
        dims = tuple(d for dim in var.dims for d in (names if dim == PARAMS else (dim,)))
        (coords if var.coord else data)[var.name] = Field(dims, _array(var, value), var_attrs(var, system, param))
    return Record(data, coords, attrs)


# ------------------------------------------------------------ the kinds
def solve_record(case, sol, history: str) -> Record:
    """The archive of one solve, without xarray (a :class:`~fdsolver.io.record.Record`; ``.dataset()`` makes the
    Dataset): coordinates x, state, region (with region_name), level; see :data:`specs.SOLVE`."""
    attrs = base_attrs(case, "solve", history)
    attrs.update({
        "continuum_threshold": float(sol.threshold) if math.isfinite(sol.threshold) else (np.inf if sol.threshold > 0 else -np.inf),
        "box_left": sol.box[0],
        "box_right": sol.box[1],
        "boundary": sol.boundary,
        "mirror_center": np.nan if sol.mirror_center is None else float(sol.mirror_center),
        "tolerance": float(case.settings.tolerance),
        "bound_state_count": int(sol.bound_count),
        "resolved_state_count": int(sol.resolved_count),
        "energy_reference": float(sol.reference),
        "messages": "\n".join(sol.messages),
    })
    tr = getattr(sol, "transitions", None)
    if tr is not None:
        kane = hasattr(sol, "state_mass")
        attrs.update({
            "dipole_form": ("velocity (flux) form C W_ij/(E_j - E_i) with each state's own mass (energy-dependent mass)"
                            if kane else "length form <i|x|j>"),
            "oscillator_strength_form": "velocity (flux) form m_r C W_ij^2/(E_j - E_i), W_ij = integral "
                                        "(psi_i psi_j' - psi_i' psi_j)/m dx; exact for a position-dependent mass",
            "optics_accuracy": (f"extrapolated over {tr.levels} nested grids (Romberg); errors are the extrapolation's "
                                "change" if tr.levels >= 2 else "one grid, second order in its spacing; errors from "
                                + ("every second node" if kane else "the length/velocity form difference")),
        })
    return record("solve", sol, case.units, attrs)


NOTES_SHOWN = 20


def sweep_dataset(case, spec, results, history: str, found=()) -> xr.Dataset:
    """The archive of a sweep: one dimension per swept param plus ``state`` (and ``x``, ``threshold``)."""
    values = results.arrays()
    if found:
        values.update({
            "threshold_value": np.array([t.value for t in found]),
            "threshold_uncertainty": np.array([t.uncertainty for t in found]),
            "threshold_state": np.array([t.state for t in found]),
            "threshold_direction": np.array([t.direction for t in found]),
        })
    notes = results.notes()
    attrs = base_attrs(case, "sweep", history)
    attrs.update({
        "swept_params": json.dumps([a.name for a in spec.axes]),
        "axes": json.dumps([a.text for a in spec.axes]),
        "fixed_params": json.dumps(spec.fixed, sort_keys=True),
        "points": int(spec.n_points),
        "failed_points": int(np.count_nonzero(values["solved"] == 0)),
        "state_labels": "states are labelled by their number of nodes",
        "tolerance": float(case.settings.tolerance),
        "notes_count": len(notes),
        "notes": "\n".join(notes[:NOTES_SHOWN] + ([f"... and {len(notes) - NOTES_SHOWN} more"] if len(notes) > NOTES_SHOWN else [])),
    })
    return build("sweep", values, case.units, attrs, axes=spec.axes)


def threshold_dataset(case, search, history: str, param) -> xr.Dataset:
    """The archive of a threshold search: the thresholds found and the scan of the phase margin behind them."""
    attrs = base_attrs(case, "threshold", history)
    attrs.update({
        "swept_params": json.dumps([search.param]),
        "interval": [search.lo, search.hi],
        "bound_states_at_lo": search.count_lo,
        "bound_states_at_hi": search.count_hi,
        "notes": "\n".join(search.notes),
        "method": "Pruefer phase of the zero-energy solution (node count, no box); Brent root of Phi - N",
    })
    return build("threshold", search, case.units, attrs, param=param)


def ladder_dataset(case, lad, history: str) -> xr.Dataset:
    """The archive of a zero-range check over widths: coordinates width, state and well."""
    attrs = base_attrs(case, "delta_check", history)
    attrs.update({
        "delta_mode": lad.mode,
        "replacement_shape": lad.shape if lad.mode == "replace" else "",
        "tolerance": float(lad.tolerance),
        "messages": "\n".join(lad.notes),
        "well_shapes": ", ".join(w.kind for w in lad.models[0].wells),
    })
    return build("delta_check", lad, case.units, attrs)



def background_dataset(case, chk, history: str) -> xr.Dataset:
    """The archive of a zero-range check on a background: coordinates width, state and point."""
    attrs = base_attrs(case, "delta_background", history)
    attrs.update({
        "delta_mode": "replace_on_background",
        "replacement_shape": chk.shape,
        "tolerance": float(chk.tolerance),
        "reference_energy": float(chk.reference),
        "reference_note": "deviation is relative to |energy_limit - reference_energy|: the continuum threshold, or "
                          "the lowest V where every state is bound",
        "messages": "\n".join(chk.notes),
    })
    return build("delta_background", chk, case.units, attrs)



def scatter_check_dataset(case, chk, history: str) -> xr.Dataset:
    """The archive of a zero-range check of scattering: coordinates width, energy, resonance and point."""
    attrs = base_attrs(case, "delta_transmission", history)
    attrs.update({
        "delta_mode": "transmission",
        "replacement_shape": chk.shape,
        "tolerance": float(chk.tolerance),
        "reference": chk.reference,
        "incident_side": "left",
        "messages": "\n".join(chk.notes),
    })
    return build("delta_transmission", chk, case.units, attrs)


MESSAGES_SHOWN = 200


def map_dataset(case, spec, results, history: str) -> xr.Dataset:
    """The archive of a validity map: the two map axes and ``state`` as dimensions."""
    attrs = base_attrs(case, "delta_check", history)
    attrs.update({
        "delta_mode": "from_finite_map" if spec.from_finite else "replace_map",
        "replacement_shape": "" if spec.from_finite else spec.shape,
        "tolerance": float(spec.tolerance),
        "replacement_width": float(spec.width) if spec.width is not None else np.nan,
        "map_axes": json.dumps([a.name for a in spec.axes]),
        "fixed_params": json.dumps(spec.fixed),
        "messages": "\n".join(results.notes()[:MESSAGES_SHOWN]),
    })
    return build("delta_map", results.arrays(spec.tolerance), case.units, attrs, axes=spec.axes)


# ------------------------------------------------------------ periodic cases
def _band_attrs(case, kind: str, history: str, period: float, start: float) -> dict:
    attrs = base_attrs(case, kind, history)
    attrs.update({"boundary": "periodic", "period": float(period), "period_start": float(start)})
    return attrs


def bands_dataset(case, study, history: str) -> xr.Dataset:
    """The archive of a band study (:class:`fdsolver.bloch.study.BandStudy`): coordinates wavevector, band, dos_energy,
    x (one period), and bloch_wavevector, point, n_periods, level where they apply; see :data:`specs.BANDS`."""
    return bands_record(case, study, history).dataset()


def bands_record(case, study, history: str) -> Record:
    """:func:`bands_dataset` without building the Dataset (no xarray import): what the band table prints from."""
    e = study.bands.edges
    attrs = _band_attrs(case, "bands", history, study.lattice.period, study.lattice.start)
    attrs.update({
        "method": e.method,
        "tolerance": float(e.tolerance),
        "zone_energy": float(e.energy_scale),
        "zone_energy_note": "E_L = hbar^2 pi^2 / (2 m_min L^2): free-particle energy at the zone boundary (the recoil "
                            "energy of an optical lattice of period L), in the energy unit",
        "cell_levels": int(e.levels),
        "cells": int(e.cells),
        "density_of_states_note": "per unit length and energy for one spin orientation (twice that for "
                                  "spin-degenerate electrons)",
        "messages": "\n".join(e.notes),
    })
    if study.stacks is not None:
        sb = study.stacks
        attrs.update({"stack_termination": sb.termination, "stack_bands": int(study.stack_band_count),
                      "stack_continuum_threshold": float(study.stack_threshold)})
        attrs["messages"] = "\n".join([*e.notes, *sb.messages])
    return record("bands", study, case.units, attrs)


def band_sweep_dataset(case, spec, results, history: str) -> xr.Dataset:
    """The archive of a band-edge sweep: one dimension per swept param plus ``band``; see :data:`specs.BAND_SWEEP`."""
    values = results.arrays()
    notes = results.notes()
    attrs = base_attrs(case, "band_sweep", history)
    attrs.update({
        "boundary": "periodic",
        "swept_params": json.dumps([a.name for a in spec.axes]),
        "axes": json.dumps([a.text for a in spec.axes]),
        "fixed_params": json.dumps(spec.fixed, sort_keys=True),
        "points": int(spec.n_points),
        "failed_points": int(np.count_nonzero(values["solved"] == 0)),
        "tolerance": float(spec.tolerance),
        "notes_count": len(notes),
        "notes": "\n".join(notes[:NOTES_SHOWN] + ([f"... and {len(notes) - NOTES_SHOWN} more"] if len(notes) > NOTES_SHOWN else [])),
    })
    return build("band_sweep", values, case.units, attrs, axes=spec.axes)


def comb_check_dataset(case, check, history: str) -> xr.Dataset:
    """The archive of a delta-comb check (:class:`fdsolver.zerorange.combcheck.CombCheck`); see :data:`specs.COMB_CHECK`."""
    c = check.comb
    attrs = _band_attrs(case, "comb_check", history, c.period, c.start)
    attrs.update({
        "replacement_shape": check.shape,
        "tolerance": float(check.tolerance),
        "zone_energy": float(check.point.energy_scale),
        "method": "delta comb in closed form; finite lattices: " + (check.finite[0].method if check.finite else ""),
        "messages": "\n".join(dict.fromkeys(m for f in check.finite for m in f.notes)),
    })
    return build("comb_check", check, case.units, attrs)


# ------------------------------------------------------------ the continuum
def _notes_attr(notes) -> str:
    notes = list(dict.fromkeys(notes))
    more = [f"... and {len(notes) - NOTES_SHOWN} more"] if len(notes) > NOTES_SHOWN else []
    return "\n".join(notes[:NOTES_SHOWN] + more)


def transmission_dataset(case, values: dict, history: str, *, incident: str, method: str, grid: str, notes=(),
                         axes=()) -> xr.Dataset:
    """The archive of T(E): coordinate ``energy`` (and ``resonance`` for the poles in its range)."""
    return transmission_record(case, values, history, incident=incident, method=method, grid=grid, notes=notes,
                               axes=axes).dataset()


def transmission_record(case, values: dict, history: str, *, incident: str, method: str, grid: str, notes=(),
                        axes=()) -> Record:
    """:func:`transmission_dataset` without building the Dataset (no xarray import)."""
    attrs = base_attrs(case, "transmission", history)
    attrs.update({
        "swept_params": json.dumps([a.name for a in axes]),
        "incident_side": incident,
        "method": method,
        "energy_grid": grid,
        "normalisation": "T = (flux out) / (flux in) = (k_out/m_out) |t|^2 / (k_in/m_in) for plane-wave leads "
                         "(BenDaniel-Duke matching); R likewise",
        "notes": _notes_attr(notes),
    })
    return record("transmission", values, case.units, attrs, axes=axes)


def resonances_dataset(case, values: dict, history: str, *, window, max_width, notes=(), axes=(),
                       fixed=None) -> xr.Dataset:
    """The archive of resonances in a window: dimension ``resonance`` (and the swept params of a sweep)."""
    return resonances_record(case, values, history, window=window, max_width=max_width, notes=notes, axes=axes,
                             fixed=fixed).dataset()


def resonances_record(case, values: dict, history: str, *, window, max_width, notes=(), axes=(),
                      fixed=None) -> Record:
    """:func:`resonances_dataset` without building the Dataset (no xarray import)."""
    attrs = base_attrs(case, "resonances", history)
    attrs.update({
        "swept_params": json.dumps([a.name for a in axes]),
        "window": [float(window[0]), float(window[1])],
        "max_width": float(max_width),
        "fixed_params": json.dumps(fixed or {}, sort_keys=True),
        "method": "zeros of the Jost function (S-matrix poles E_r - i Gamma/2): argument-principle count on "
                  "rectangles, Newton from both edges; real-axis formula for narrow poles",
        "notes": _notes_attr(notes),
    })
    return record("resonances", values, case.units, attrs, axes=axes)


def current_dataset(case, values: dict, history: str, *, temperature: float, fermi_level: float,
                    notes=()) -> xr.Dataset:
    """The archive of J(V): coordinate ``bias`` (and ``resonance`` for the poles at each bias)."""
    attrs = base_attrs(case, "current", history)
    attrs.update({
        "temperature_K": float(temperature),
        "emitter_fermi_level": float(fermi_level),
        "emitter_fermi_level_units": case.units.energy,
        "emitter_band_edge": float(case.potential.asymptote(-1)),
        "model": "Tsu-Esaki: J = (e m* / (2 pi^2 hbar^3)) int T(E) S(E) dE, Fermi-Dirac supply S; the bias drops "
                 "linearly across the inner layers; transverse mass = the emitter layer's",
        "notes": _notes_attr(notes),
    })
    return build("current", values, case.units, attrs)


# ------------------------------------------------------------ reading
def axes_of(ds: xr.Dataset, kind: Kind, path) -> tuple[str, ...]:
    """The scanned axes of an archive of ``kind`` (what :data:`PARAMS` stands for; none for a solve)."""
    if not kind.axes_attr:
        return ()
    try:
        names = json.loads(ds.attrs[kind.axes_attr])
    except (KeyError, ValueError, TypeError, RecursionError):
        names = None
    if not isinstance(names, list) or not (names or kind.axes_optional) or not all(isinstance(n, str) for n in names):
        raise ArchiveError(f"archive of kind '{kind.name}' has no readable {kind.axes_attr} attribute; it is damaged "
                           "or was not written by fdsolver", file=str(path))
    return tuple(names)


def check(ds: xr.Dataset, path) -> Kind:
    """The kind of archive ``ds``; :class:`ArchiveError` if it lacks a required variable or one has the wrong shape
    or type."""
    kind = kind_of(ds.attrs)
    if kind is None:
        raise ArchiveError("is a NetCDF file but not an fdsolver archive (no fdsolver_kind attribute)", file=str(path))
    names = axes_of(ds, kind, path)
    missing = [v.name for v in kind.rows if v.required and v.name not in ds.variables]
    if missing:
        raise ArchiveError(
            f"archive of kind '{kind.fdsolver_kind}' lacks the variable(s) {', '.join(missing)}; it is damaged or was not "
            "written by fdsolver", file=str(path))
    for var in kind.rows:
        if var.name not in ds.variables:
            continue
        dims = tuple(d for dim in var.dims for d in (names if dim == PARAMS else (dim,)))
        got = ds[var.name]
        wrong = got.dims != dims
        if not wrong:  # optional variables too: a report or figure reads whatever is there
            want = "OUS" if var.dtype == "str" else np.dtype(var.dtype).kind
            wrong = got.dtype.kind not in (want + ("iu" if want in "iu" else ""))
        if wrong:
            raise ArchiveError(
                f"variable {var.name} of this '{kind.name}' archive is {got.dtype} over ({', '.join(map(str, got.dims))}), "
                f"expected {var.dtype} over ({', '.join(map(str, dims))}); it is damaged or was not written by fdsolver",
                file=str(path))
    return kind


def absorption_dataset(case, study, history: str, extra: dict) -> xr.Dataset:
    """The archive of an intersubband absorption spectrum (:class:`fdsolver.optics.absorption.AbsorptionStudy`).

    ``extra``: global attributes of the run (the solve archive it came from, broadening, refractive index, ...).
    """
    attrs = base_attrs(case, "absorption", history)
    attrs.update({
        "sheet_density": float(study.sheet_density),
        "sheet_density_units": "cm-2",
        "carrier_temperature": float(study.temperature),
        "carrier_temperature_note": "temperature of the subband populations (Fermi-Dirac), K",
        "chemical_potential": float(study.chemical_potential),
        "notes": "\n".join(study.notes),
        "formula": "A(E) = sum over E_j > E_i of (N_i - N_j) pi e^2 hbar f_ij / (2 eps0 n c m_r m_e) L(E - E_ij), "
                   "L a Lorentzian of FWHM broadening with unit area",
        "formula_source": "Lorentz-oscillator cross-section (Hilborn, Am. J. Phys. 50, 982 (1982)); intersubband form "
                          "as in Helm, Semiconductors and Semimetals 62, ch. 1 (2000)",
        **extra,
    })
    if not attrs["notes"]:
        del attrs["notes"]
    return build("absorption", study, case.units, attrs)


def interband_dataset(case, study, history: str) -> xr.Dataset:
    """The archive of the interband transitions of a stack (:class:`fdsolver.optics.interband.InterbandStudy`)."""
    attrs = base_attrs(case, "interband", history)
    attrs.update({
        "effective_gap": float(study.effective_gap),
        "effective_gap_note": "lowest conduction-band edge minus highest valence-band edge (case energy unit)",
        "conduction_band_reference": float(study.electron_reference),
        "valence_band_reference": float(study.hole_reference),
        "notes": "\n".join(study.notes),
        "overlap_note": "squared overlap of the envelope functions only; the Bloch factor (E_P) and the polarisation "
                        "factors of heavy and light holes are not included; excitons and strain are not modelled",
    })
    if not attrs["notes"]:
        del attrs["notes"]
    return build("interband", study, case.units, attrs)
