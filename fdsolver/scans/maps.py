"""Validity map: the zero-range comparison over a plane of two parameters.

Each axis is a case param or, when points are replaced by wells, ``width``
(the replacement's width parameter).  At every point of the plane the finite
model and its zero-range model are compared as in
:func:`fdsolver.deltacheck.compare`: per state the relative deviation
(E_finite - E_point) / |E_point|, whether each model binds the state (the
``existence`` flag: neither / point model only / finite wells only / both),
whether |deviation| is below the tolerance, and whether the finite energy is
resolved (error <= |deviation| / 10 of it).  Points whose wells overlap
(half-maximum regions meet) are marked and not solved.  Points run in chunks
through an executor (:mod:`fdsolver.executors`); the result does not depend on
which.  Widths and params in their own units, energies in the case unit.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError

EXISTENCE = ("neither", "point_only", "finite_only", "both")
MAX_POINTS = 250_000


@dataclass(frozen=True)
class MapAxis:
    """One axis of the map: ``name`` (a param or "width"), increasing ``values``, ``units``, ``spacing``."""

    name: str
    values: np.ndarray
    units: str
    spacing: str
    is_width: bool


def parse_axis(text: str, case, replacing: bool) -> MapAxis:
    """NAME=LO:HI:N, optionally :log or :lin (default: log for the width, linear otherwise)."""
    key = "--map"
    if not isinstance(text, str) or "=" not in text:
        raise CaseError(f"'{text}' is not NAME=LO:HI:N", key=key)
    name, rest = (t.strip() for t in text.split("=", 1))
    is_width = replacing and name == "width"
    if not is_width and name not in case.params:
        avail = (["width"] if replacing else []) + list(case.params)
        raise CaseError(f"'{name}' is neither a param of the case nor 'width' (choose from: {', '.join(avail)})",
                        file=case.path, key=key)
    if name == "state":
        raise CaseError("'state' is a dimension of the result; rename the param", file=case.path, key=key)
    parts = [p.strip() for p in rest.split(":")]
    spacing = "log" if is_width else "linear"
    if len(parts) == 4 and parts[3].lower() in ("log", "lin", "linear"):
        spacing = "log" if parts[3].lower() == "log" else "linear"
        parts = parts[:3]
    try:
        if len(parts) != 3:
            raise ValueError
        lo, hi, n = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise CaseError(f"'{text}' is not NAME=LO:HI:N (two numbers and a count, optionally :log)", key=key) from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise CaseError(f"'{text}' needs finite LO < HI", key=key)
    if not 2 <= n <= 2000:
        raise CaseError(f"the count must be from 2 to 2000, got {n}", key=key)
    if (spacing == "log" or is_width) and not lo > 0:
        raise CaseError(f"'{text}': a {'width' if is_width else 'log axis'} must be > 0", key=key)
    values = np.geomspace(lo, hi, n) if spacing == "log" else np.linspace(lo, hi, n)
    units = case.units.length if is_width else param_units(case, name)
    return MapAxis(name, values, units, spacing, is_width)


def param_units(case, name: str) -> str:
    """Units of a param: declared or exactly used (:func:`fdsolver.sweep.param_units`), else the one unit of every
    potential key whose expression contains it ("" when they disagree or there is none)."""
    import re

    from fdsolver.scans.sweep import ENERGY_KEYS, LENGTH_KEYS
    from fdsolver.scans.sweep import param_units as declared

    found = declared(case, name)
    if found:
        return found
    u = case.units
    kinds = {**{k: u.length for k in LENGTH_KEYS}, **{k: u.energy for k in ENERGY_KEYS}, "strength": f"{u.energy} {u.length}"}
    pattern = re.compile(rf"(?<![A-Za-z0-9_]){re.escape(name)}(?![A-Za-z0-9_])")
    seen = {kinds[k] for item in case.data.get("potential", []) or [] for k, v in item.items()
            if k in kinds and isinstance(v, str) and pattern.search(v)}
    return seen.pop() if len(seen) == 1 else ""


@dataclass(frozen=True)
class MapSpec:
    """Everything a worker needs (plain data, sent to other processes)."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    shape: str
    tolerance: float
    from_finite: bool
    width: float | None  # fixed replacement width when no axis is the width
    axes: tuple

    @property
    def shape2(self) -> tuple[int, int]:
        return (self.axes[0].values.size, self.axes[1].values.size)


def plan_map(case, options, fixed: dict) -> MapSpec:
    """Check the two axes and the fixed replacement width; nothing is solved here."""
    if len(options.maps) != 2:
        raise CaseError(f"a validity map needs exactly two --map axes, got {len(options.maps)}", key="--map")
    replacing = not options.from_finite
    axes = tuple(parse_axis(t, case, replacing) for t in options.maps)
    if axes[0].name == axes[1].name:
        raise CaseError(f"both --map axes are '{axes[0].name}'; give two different params", key="--map")
    n = axes[0].values.size * axes[1].values.size
    if n > MAX_POINTS:
        raise CaseError(f"{n} map points is more than {MAX_POINTS}; use fewer", key="--map")
    width = None
    if replacing and not any(a.is_width for a in axes):
        if options.widths is None or options.widths[2] != 1:
            raise CaseError("a map without a 'width' axis needs one replacement width: --widths W", key="--widths")
        width = options.widths[0]
    from fdsolver.zerorange.models import from_finite, point_terms

    point_terms(case) if replacing else from_finite(case)  # refuse a wrong case before any work
    return MapSpec(case.text, case.path, dict(case.tables), dict(fixed), options.shape, options.tolerance,
                   options.from_finite, width, axes)


# ----------------------------------------------------------------- workers
_BASE: dict = {}


def _base(spec: MapSpec):
    key = (spec.case_text, spec.case_path, json.dumps(spec.tables, sort_keys=True))
    if key not in _BASE:
        from fdsolver.input.case import case_from_text

        _BASE.clear()
        _BASE[key] = case_from_text(spec.case_text, path=spec.case_path, tables=spec.tables)
    return _BASE[key]


def map_point(spec: MapSpec, values: dict) -> dict:
    """Compare the two models at one point of the plane ({axis name: value}); a plain dict of results."""
    from fdsolver.zerorange import compare as DC
    from fdsolver.zerorange import models as DM

    base = _base(spec)
    params = {k: v for k, v in values.items() if not (k == "width" and not spec.from_finite)}
    case = base.with_params(**spec.fixed, **params) if (params or spec.fixed) else base
    if spec.from_finite:
        model = DM.from_finite(case)
    else:
        model = DM.replacement(case, spec.shape, values.get("width", spec.width))
    if DM.overlap_of(model) >= 0:
        return {"overlap": True}
    lim, pred = DC.limit_of(model, case)
    r = DC.compare(case, model, lim, pred)
    return {"overlap": False, "energy": r.energy, "error": r.energy_error, "resolved": r.resolved,
            "limit": r.energy_limit, "predicted": r.predicted, "notes": list(r.notes)}


def run_chunk(job) -> list:
    """Map points [(i, j), ...] of ``spec``: [(i, j, result or error text), ...]."""
    spec, cells = job
    out = []
    for i, j in cells:
        values = {spec.axes[0].name: float(spec.axes[0].values[i]), spec.axes[1].name: float(spec.axes[1].values[j])}
        try:
            out.append((i, j, map_point(spec, values)))
        except CaseError as err:
            where = ", ".join(f"{k} = {v:.6g}" for k, v in values.items())
            out.append((i, j, f"at {where}: {err.message}"))
    return out


def run_map(spec: MapSpec, executor, progress=None) -> dict:
    """All points of the plane through ``executor``; returns the gathered arrays (see :func:`map_dataset`)."""
    n1, n2 = spec.shape2
    cells = [(i, j) for i in range(n1) for j in range(n2)]
    size = max(1, min(50, len(cells) // (8 * max(1, getattr(executor, "workers", 1)))))
    jobs = ((spec, cells[k:k + size]) for k in range(0, len(cells), size))
    got, notes = {}, []
    for part in executor.imap_unordered(run_chunk, jobs):
        for i, j, res in part:
            if isinstance(res, str):
                notes.append(res)
            else:
                got[(i, j)] = res
                where = f"{spec.axes[0].name} = {spec.axes[0].values[i]:.6g}, {spec.axes[1].name} = {spec.axes[1].values[j]:.6g}"
                notes.extend(f"at {where}: {t}" for t in res.get("notes", ()))
        if progress:
            progress(len(part))
    n_s = max([1] + [max(r["energy"].size, r["limit"].size) for r in got.values() if not r["overlap"]])
    arr = {k: np.full((n1, n2, n_s), np.nan) for k in ("energy", "error", "limit", "predicted")}
    flags = {k: np.zeros((n1, n2, n_s), np.int8) for k in ("exists", "exists_limit", "resolved")}
    overlap, solved = np.zeros((n1, n2), np.int8), np.zeros((n1, n2), np.int8)
    for (i, j), r in got.items():
        if r["overlap"]:
            overlap[i, j] = 1
            continue
        solved[i, j] = 1
        for k, src in (("energy", "energy"), ("error", "error"), ("limit", "limit"), ("predicted", "predicted")):
            arr[k][i, j, : r[src].size] = r[src]
        flags["exists"][i, j, : r["energy"].size] = 1
        flags["exists_limit"][i, j, : r["limit"].size] = 1
        flags["resolved"][i, j, : r["resolved"].size] = r["resolved"]
    if overlap.any():
        notes.insert(0, f"{int(overlap.sum())} of {n1 * n2} points have overlapping wells and were not solved")
    return {**arr, **flags, "overlap": overlap, "solved": solved, "notes": notes}


def map_dataset(case, spec: MapSpec, res: dict, action: str):
    """Archive Dataset of a map: coordinates the two axes and ``state``."""
    import xarray as xr

    from fdsolver.io.archive import base_attrs, energy_attrs, length_attrs

    u = case.units
    a1, a2 = spec.axes
    dims = (a1.name, a2.name, "state")
    with np.errstate(invalid="ignore", divide="ignore"):
        dev = (res["energy"] - res["limit"]) / np.abs(res["limit"])
    existence = res["exists_limit"] + 2 * res["exists"]
    within = (np.abs(dev) < spec.tolerance).astype(np.int8)
    one = lambda name: {"units": "1", "long_name": name}  # noqa: E731
    data = {
        "energy": (dims, res["energy"], energy_attrs(u, "bound-state energy of the finite-width wells")),
        "energy_error": (dims, res["error"], energy_attrs(u, "estimated absolute error of energy")),
        "energy_limit": (dims, res["limit"], energy_attrs(u, "bound-state energy of the zero-range point model")),
        "deviation": (dims, dev, one("relative deviation (energy - energy_limit) / |energy_limit|")),
        "predicted_deviation": (dims, res["predicted"], one("first-order predicted relative deviation")),
        "existence": (dims, existence.astype(np.int8), {"units": "1", "long_name": "which models bind the state",
                                                        "flag_values": np.arange(4, dtype=np.int8), "flag_meanings": " ".join(EXISTENCE)}),
        "within_tolerance": (dims, within, one("1 if |deviation| is below the tolerance")),
        "resolved": (dims, res["resolved"], one("1 if energy_error <= |energy - energy_limit| / 10")),
        "overlap": (dims[:2], res["overlap"], one("1 where neighbouring wells overlap (not solved)")),
        "solved": (dims[:2], res["solved"], one("1 where the comparison was made")),
    }

    def axis_attrs(ax):
        if ax.is_width:
            return {**length_attrs(u, "width parameter of the replacement wells"), "spacing": ax.spacing}
        return {"units": ax.units or "1", "long_name": f"case param {ax.name}", "spacing": ax.spacing,
                **({"units_note": "units not declared in the case ([sweep] units)"} if not ax.units else {})}

    coords = {a1.name: (a1.name, a1.values, axis_attrs(a1)), a2.name: (a2.name, a2.values, axis_attrs(a2)),
              "state": ("state", np.arange(res["energy"].shape[2], dtype=np.int32),
                        {"long_name": "bound state index = node count (0 = ground state)", "units": "1"})}
    attrs = base_attrs(case, "delta_check", action)
    attrs.update({"delta_mode": "from_finite_map" if spec.from_finite else "replace_map",
                  "replacement_shape": "" if spec.from_finite else spec.shape, "tolerance": float(spec.tolerance),
                  "replacement_width": float(spec.width) if spec.width is not None else np.nan,
                  "map_axes": json.dumps([a.name for a in spec.axes]), "fixed_params": json.dumps(spec.fixed),
                  "messages": "\n".join(res["notes"][:200])})
    return xr.Dataset(data, coords=coords, attrs=attrs)
