"""Validity map: the zero-range comparison over a plane of two parameters.

Each axis is a case param or, when points are replaced by wells, ``width``
(the replacement's width parameter, log spacing by default).  At every point
of the plane the finite model and its zero-range model are compared as in
:func:`fdsolver.zerorange.compare.compare`: per state the relative deviation
(E_finite - E_point) / |E_point|, whether each model binds the state (the
``existence`` flag: neither / point model only / finite wells only / both),
whether |deviation| is below the tolerance, and whether the finite energy is
resolved (error <= |deviation| / 10 of it).  Points whose wells overlap
(half-maximum regions meet) are marked and not solved.  The points run
through :func:`fdsolver.scans.runner.run` like a sweep's (chunks, executors,
checkpoint and resume), and the result does not depend on which executor ran
them.  Widths and params in their own units, energies in the case unit.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.scans.axes import Extra, axes_identity, parse_axes
from fdsolver.scans.runner import PointNotes, base_case, counts_match

#: most points of a map, and of one of its axes
MAX_POINTS = 250_000
MAX_AXIS_POINTS = 2000
#: memory of one state at one map point (four floats, three flags), and the most a map's arrays may take
MAP_BYTES_PER_STATE = 4 * 8 + 3
MAX_MAP_BYTES = 2 * 2**30


@dataclass(frozen=True)
class MapSpec:
    """A planned map: everything a worker needs (plain data, sent to other processes)."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    shape: str
    tolerance: float
    from_finite: bool
    width: float | None  # fixed replacement width when no axis is the width
    axes: tuple
    chunk: int | None = None
    key: str = field(default="", compare=False)

    what = "validity map"
    #: most points per chunk by default
    max_chunk = 50

    @property
    def shape2(self) -> tuple[int, int]:
        return (self.axes[0].values.size, self.axes[1].values.size)

    @property
    def n_points(self) -> int:
        return self.shape2[0] * self.shape2[1]

    def point(self, flat: int) -> dict:
        i, j = divmod(int(flat), self.shape2[1])
        return {self.axes[0].name: float(self.axes[0].values[i]), self.axes[1].name: float(self.axes[1].values[j])}

    def identity(self) -> dict:
        """JSON-able description compared on resume (exact float values)."""
        from fdsolver._version import __version__

        return {
            "study": "validity map",
            "fdsolver": __version__,
            "case_text": self.case_text,
            "case_tables": self.tables,
            "fixed": self.fixed,
            "axes": axes_identity(self.axes),
            "shape": self.shape,
            "tolerance": self.tolerance,
            "from_finite": self.from_finite,
            "width": self.width,
        }

    def solve_points(self, base, indices) -> dict:
        return solve_points(self, base, indices)

    def collector(self) -> "MapResults":
        return MapResults(self)


def map_axes(case, texts, replacing: bool) -> tuple:
    """The two axes of a map (``--map`` texts); ``width`` is an axis when points are replaced by wells."""
    from fdsolver.io.specs import KINDS

    u = case.units
    extra = {"width": Extra(u.length_udunits, u.length, "width parameter of the replacement wells", "log", True)} if replacing else {}
    return parse_axes(texts, case, "--map", extra=extra, max_count=MAX_AXIS_POINTS, long_name="case param {name}",
                      reserved=KINDS["delta_map"].names())


def plan_map(case, options, fixed: dict, chunk: int | None = None) -> MapSpec:
    """Check the two axes and the fixed replacement width; nothing is solved here."""
    if len(options.maps) != 2:
        raise CaseError(f"a validity map needs exactly two --map axes, got {len(options.maps)}", key="--map")
    replacing = not options.from_finite
    axes = map_axes(case, options.maps, replacing)
    if axes[0].name == axes[1].name:
        raise CaseError(f"both --map axes are '{axes[0].name}'; give two different params", key="--map")
    n = axes[0].values.size * axes[1].values.size
    if n > MAX_POINTS:
        raise CaseError(f"{n} map points is more than {MAX_POINTS}; use fewer", key="--map")
    width = None
    if replacing and not any(not a.param for a in axes):
        if options.widths is None or options.widths[2] != 1:
            raise CaseError("a map without a 'width' axis needs one replacement width: --widths W", key="--widths")
        width = options.widths[0]
    if chunk is not None and (isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1):
        raise CaseError(f"needs at least 1 point per task, got {chunk!r}", key="--chunk")
    from fdsolver.zerorange.models import from_finite, point_terms

    point_terms(case) if replacing else from_finite(case)  # refuse a wrong case before any work
    fixed = {k: v for k, v in fixed.items() if k not in {a.name for a in axes}}  # a mapped param is not fixed
    spec = MapSpec(case.text, case.path, dict(case.tables), fixed, options.shape, options.tolerance,
                   options.from_finite, width, axes, chunk)
    key = hashlib.sha256(json.dumps(spec.identity(), sort_keys=True).encode()).hexdigest()
    return MapSpec(**{**spec.__dict__, "key": key})


# ----------------------------------------------------------------- workers
def map_point(spec: MapSpec, base, values: dict):
    """Compare the two models at one point of the plane ({axis name: value}): a Comparison, or None if wells overlap."""
    from fdsolver.zerorange import compare as DC
    from fdsolver.zerorange import models as DM

    params = {k: v for k, v in values.items() if not (k == "width" and not spec.from_finite)}
    case = base.with_params(**{**spec.fixed, **params}) if (params or spec.fixed) else base
    if spec.from_finite:
        model = DM.from_finite(case)
    else:
        width = values["width"] if "width" in values else spec.width
        if width is None:  # plan_map asks for one when no axis is the width
            raise CaseError("a map without a 'width' axis needs one replacement width: --widths W", key="--widths")
        model = DM.replacement(case, spec.shape, float(width))
    if DM.overlap_of(model) >= 0:
        return None
    lim, pred = DC.limit_of(model, case)
    return DC.compare(case, model, lim, pred)


ROW_FIELDS = ("energy", "error", "resolved", "limit", "predicted")


def solve_points(spec: MapSpec, base, indices) -> dict:
    """Compare the models at the points ``indices`` (flat, row-major over the two axes): compact arrays."""
    n = len(indices)
    out: dict[str, Any] = {"index": np.asarray(indices, dtype=np.int64), "overlap": np.zeros(n, np.int8), "solved": np.zeros(n, np.int8),
           "n_finite": np.zeros(n, np.int32), "n_limit": np.zeros(n, np.int32), "n_predicted": np.zeros(n, np.int32)}
    rows: dict[str, list] = {k: [] for k in ROW_FIELDS}
    messages = []
    for j, flat in enumerate(indices):
        values = spec.point(flat)
        where = ", ".join(f"{k} = {v:.6g}" for k, v in values.items())
        try:
            r = map_point(spec, base, values)
        except CaseError as err:
            messages.append([int(flat), f"at {where}: {err.message}"])
            continue
        if r is None:
            out["overlap"][j] = 1
            continue
        out["solved"][j] = 1
        out["n_finite"][j], out["n_limit"][j], out["n_predicted"][j] = r.energy.size, r.energy_limit.size, r.predicted.size
        for k, v in (("energy", r.energy), ("error", r.energy_error), ("resolved", r.resolved), ("limit", r.energy_limit),
                     ("predicted", r.predicted)):
            rows[k].append(np.asarray(v, np.int8 if k == "resolved" else np.float64))
        messages.extend([int(flat), f"at {where}: {t}"] for t in r.notes)
    for k, parts in rows.items():
        out[k] = np.concatenate(parts) if parts else np.zeros(0, np.int8 if k == "resolved" else np.float64)
    out["messages"] = messages
    return out


# ------------------------------------------------------------ assembly
class MapResults(PointNotes):
    """The map's arrays, filled chunk by chunk in any order (flat point index x state)."""

    def __init__(self, spec: MapSpec):
        n = spec.n_points
        self.spec = spec
        self.n_states = 1
        self.values = {k: np.full((n, 1), np.nan) for k in ("energy", "error", "limit", "predicted")}
        self.flags = {k: np.zeros((n, 1), np.int8) for k in ("exists", "exists_limit", "resolved")}
        self.overlap = np.zeros(n, np.int8)
        self.solved = np.zeros(n, np.int8)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    def _grow(self, need: int) -> None:
        extra = need - self.n_states
        for store, fill in ((self.values, np.nan), (self.flags, 0)):
            for k, a in store.items():
                store[k] = np.concatenate([a, np.full((a.shape[0], extra), fill, a.dtype)], axis=1)
        self.n_states = need

    def add(self, rec: dict) -> int:
        """Store one chunk result; returns the number of points it held."""
        idx = np.asarray(rec["index"], dtype=np.int64)
        counts_match(rec, "n_finite", ("energy", "error", "resolved"))
        counts_match(rec, "n_limit", ("limit",))
        counts_match(rec, "n_predicted", ("predicted",))
        self.done[idx] = True
        self.overlap[idx], self.solved[idx] = rec["overlap"], rec["solved"]
        counts = {"energy": rec["n_finite"], "error": rec["n_finite"], "resolved": rec["n_finite"],
                  "limit": rec["n_limit"], "predicted": rec["n_predicted"]}
        need = int(max([0] + [int(np.max(c)) for c in counts.values() if len(c)]))
        if need > self.n_states and self.spec.n_points * need * MAP_BYTES_PER_STATE > MAX_MAP_BYTES:
            raise ValueError(f"{need} states per point would take the map beyond {MAX_MAP_BYTES / 2**30:g} GB")
        if need > self.n_states:
            self._grow(need)
        for k in ROW_FIELDS:
            n = np.asarray(counts[k], np.int64)
            rows, cols = np.repeat(idx, n), np.concatenate([np.arange(c) for c in n]) if n.size else np.zeros(0, np.int64)
            target = self.flags["resolved"] if k == "resolved" else self.values[k]
            target[rows, cols.astype(np.int64)] = np.asarray(rec[k])
            if k == "energy":
                self.flags["exists"][rows, cols.astype(np.int64)] = 1
            if k == "limit":
                self.flags["exists_limit"][rows, cols.astype(np.int64)] = 1
        self.keep_notes(rec)
        return int(idx.size)

    def notes(self) -> list[str]:
        """The overlap count, then every message in point order."""
        n_over = int(self.overlap.sum())
        head = [f"{n_over} of {self.spec.n_points} points have overlapping wells and were not solved"] if n_over else []
        return head + super().notes()

    def arrays(self, tolerance: float) -> dict:
        """The values of the map archive's variables (:data:`fdsolver.io.specs.DELTA_MAP`) on the plane."""
        n1, n2 = self.spec.shape2
        plane = lambda a: a.reshape((n1, n2) + a.shape[1:])  # noqa: E731
        energy, limit = plane(self.values["energy"]), plane(self.values["limit"])
        with np.errstate(invalid="ignore", divide="ignore"):
            dev = (energy - limit) / np.abs(limit)
        # bit 0: the point model binds the state, bit 1: the finite wells do (the order of io.specs.EXISTENCE)
        existence = plane(self.flags["exists_limit"]) + 2 * plane(self.flags["exists"])
        return {
            "state": np.arange(self.n_states),
            "energy": energy,
            "energy_error": plane(self.values["error"]),
            "energy_limit": limit,
            "deviation": dev,
            "predicted_deviation": plane(self.values["predicted"]),
            "existence": existence,
            "within_tolerance": np.abs(dev) < tolerance,
            "resolved": plane(self.flags["resolved"]),
            "overlap": plane(self.overlap),
            "solved": plane(self.solved),
        }


def run_map(spec: MapSpec, executor, *, case=None, output=None, resume=False, restart=False, action=None, progress=None,
            before_write=None):
    """All points of the plane through ``executor`` (checkpointed beside ``output``, written there at the end);
    the map Dataset.  See :func:`fdsolver.scans.runner.run` for the options."""
    from fdsolver.io.datasets import map_dataset
    from fdsolver.scans.runner import run

    if case is None:
        base = base_case(spec)
        case = base.with_params(**spec.fixed) if spec.fixed else base
    action = action or f"fdsolver delta-check {spec.case_path or case.title} " + " ".join(f"--map {a.text}" for a in spec.axes)

    def finish(results: MapResults, history: str):
        return map_dataset(case, spec, results, history)

    return run(spec, executor, finish, action=action, output=output, resume=resume, restart=restart, progress=progress,
               before_write=before_write)
