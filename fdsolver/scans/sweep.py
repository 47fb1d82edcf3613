"""Parameter sweeps: axes, the solve at one point, and the Dataset of a whole sweep.

A sweep solves ``case.with_params(**fixed, **point)`` at every point of the
cartesian product of its axes, exactly as a single ``solve`` would, and keeps
per state: energy, energy_error, converged, nodes, parity (and psi on a common
x grid when asked).  States are labelled by their number of nodes (the
oscillation theorem numbers bound states by it), so a label follows one state
across the sweep and a state absent at a point is NaN there.  Per point it
also keeps the number of bound states on the whole open line (from the
zero-energy phase, :mod:`fdsolver.thresholds`, independent of the box), the
number the box solve resolved, the continuum threshold and the tunnel
splitting E1 - E0.  Wavefunctions are interpolated linearly (error O(h^2) of
the solver's local spacing) onto the common grid, zero outside the solver's
box.  Energies and lengths in the case units; params in their own units.
"""

from __future__ import annotations

import hashlib
import itertools
import json
from dataclasses import dataclass, field

import numpy as np

from fdsolver.scans.axes import (  # noqa: F401  (re-exported: the sweep's public names)
    ENERGY_KEYS,
    LENGTH_KEYS,
    SWEEP_KEYS,
    Axis,
    _number,
    _suggest,
    param_units,
    parse_axes,
    parse_axis,
    split_spec,
    sweep_table,
)
from fdsolver.errors import CaseError

BYTES_PER_STATE = 8 + 8 + 8 + 4 + 1 + 1  # energy, error, binding energy, nodes, converged, parity
BYTES_PER_POINT = 4 + 4 + 8 + 8 + 8 + 1  # bound, resolved, threshold, splitting (+ error), solved


# ----------------------------------------------------------------- plan
@dataclass(frozen=True)
class SweepSpec:
    """A planned sweep: the case (text, path, tables), fixed params, axes, psi grid and chunk size."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    axes: tuple[Axis, ...]
    save_psi: bool = False
    psi_x: np.ndarray | None = None
    chunk: int | None = None
    key: str = field(default="", compare=False)

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(a.values.size for a in self.axes)

    @property
    def n_points(self) -> int:
        return int(np.prod(self.shape, dtype=np.int64))

    def point(self, flat: int) -> dict:
        idx = np.unravel_index(int(flat), self.shape)
        return {a.name: float(a.values[i]) for a, i in zip(self.axes, idx)}

    def identity(self) -> dict:
        """JSON-able description compared on resume (exact float values)."""
        from fdsolver._version import __version__

        return {
            "fdsolver": __version__,
            "case_text": self.case_text,
            "case_tables": self.tables,
            "fixed": self.fixed,
            "axes": [{"name": a.name, "text": a.text, "values": [float(v) for v in a.values]} for a in self.axes],
            "save_psi": bool(self.save_psi),
            "psi_x": None if self.psi_x is None else [float(v) for v in self.psi_x],
        }


def estimate_bytes(n_points: int, n_states: int, n_x: int) -> int:
    """Memory of a sweep result: per point and state variables, plus psi (n_x values per state) if kept."""
    return int(n_points) * (BYTES_PER_POINT + int(n_states) * (BYTES_PER_STATE + 8 * int(n_x)))


def _mb(n: float) -> str:
    return f"{n / 2**30:.3g} GB" if n >= 2**30 else f"{n / 2**20:.3g} MB"


def plan_sweep(case, axes, fixed=None, save_psi=False, memory_mb=None, chunk=None) -> SweepSpec:
    """Check a sweep before any work: the corner points (up to 256) are valid cases, the result fits the memory budget."""
    fixed = dict(fixed or {})
    table = sweep_table(case)
    budget = memory_mb if memory_mb is not None else table.get("memory_mb", 1000.0)
    if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not budget > 0:
        raise CaseError(f"must be a positive number of MB, got {budget!r}", file=case.path, key="sweep.memory_mb")
    n_states = case.settings.max_states
    n_x = table.get("psi_points", 401) if save_psi else 0
    if save_psi and (isinstance(n_x, bool) or not isinstance(n_x, int) or not 2 <= n_x <= 100000):
        raise CaseError(f"must be a whole number from 2 to 100000, got {n_x!r}", file=case.path, key="sweep.psi_points")
    n_points = int(np.prod([a.values.size for a in axes], dtype=np.int64))
    need = estimate_bytes(n_points, n_states, n_x)
    if need > budget * 2**20:
        what = f"{n_points} points x {n_states} states" + (f" x {n_x} x-points of psi" if save_psi else "")
        raise CaseError(
            f"the sweep result would take about {_mb(need)} in memory ({what}), more than the budget of "
            f"{budget:g} MB; sweep fewer points{', drop --save-psi' if save_psi else ''} or raise --memory-mb "
            "([sweep] memory_mb)",
            file=case.path,
            key=axes[0].key if axes and getattr(axes[0], "key", None) else "--vary",
        )
    corners = itertools.product(*[(a.values[0], a.values[-1]) for a in axes])
    spans = []
    for point in (dict(zip([a.name for a in axes], c)) for c in itertools.islice(corners, 256)):
        c = case.with_params(**fixed, **{k: float(v) for k, v in point.items()})
        spans.append(c.potential.support())
    psi_x = None
    if save_psi:
        rng = table.get("psi_range")
        if rng is None:
            lo, hi = min(s[0] for s in spans), max(s[1] for s in spans)
            pad = 0.5 * (hi - lo) if hi > lo else 1.0
            rng = (lo - pad, hi + pad)
        if not (isinstance(rng, (list, tuple)) and len(rng) == 2 and all(isinstance(v, (int, float)) for v in rng) and rng[0] < rng[1]):
            raise CaseError("must be [low, high] with low < high (case length unit)", file=case.path, key="sweep.psi_range")
        psi_x = np.linspace(float(rng[0]), float(rng[1]), n_x)
    chunk = chunk if chunk is not None else table.get("chunk")
    if chunk is not None and (not isinstance(chunk, int) or chunk < 1):
        raise CaseError(f"must be a whole number >= 1, got {chunk!r}", file=case.path, key="sweep.chunk")
    spec = SweepSpec(case.text, case.path, dict(case.tables), fixed, tuple(axes), bool(save_psi), psi_x, chunk)
    key = hashlib.sha256(json.dumps(spec.identity(), sort_keys=True).encode()).hexdigest()
    return SweepSpec(**{**spec.__dict__, "key": key})


# --------------------------------------------------------------- points
_BASE: dict[str, object] = {}


def base_case(spec: SweepSpec):
    """The case of ``spec`` (built once per process)."""
    case = _BASE.get(spec.key)
    if case is None:
        from fdsolver.input.case import case_from_text

        case = case_from_text(spec.case_text, path=spec.case_path, tables=spec.tables)
        _BASE.clear()
        _BASE[spec.key] = case
    return case


def run_chunk(job) -> dict:
    """Solve the points ``indices`` of ``spec``; returns compact arrays (one row per state found)."""
    spec, indices = job
    from fdsolver.scans import thresholds
    from fdsolver.api import solve_case
    from fdsolver.parallel.executors import blas_threads

    blas_threads(1)  # same bits in every process (see executors.blas_threads)

    base = base_case(spec)
    n = len(indices)
    out = {"index": np.asarray(indices, dtype=np.int64), "solved": np.zeros(n, np.int8), "bound": np.full(n, -1, np.int32),
           "resolved": np.zeros(n, np.int32), "vt": np.full(n, np.nan), "count": np.zeros(n, np.int32)}
    rows = {k: [] for k in ("label", "energy", "error", "converged", "parity", "psi")}
    messages = []
    for j, flat in enumerate(indices):
        point = spec.point(flat)
        where = ", ".join(f"{k} = {v:.10g}" for k, v in point.items())
        try:
            case = base.with_params(**spec.fixed, **point)
            sol = solve_case(case)
        except CaseError as err:
            messages.append([int(flat), f"at {where}: {err}"])
            continue
        out["solved"][j] = 1
        out["resolved"][j] = sol.energy.size
        out["vt"][j] = sol.threshold
        try:
            out["bound"][j] = thresholds.bound_count(case)
        except CaseError:
            pass
        out["count"][j] = sol.energy.size
        rows["label"].append(sol.nodes.astype(np.int32))
        rows["energy"].append(sol.energy)
        rows["error"].append(sol.energy_error)
        rows["converged"].append(sol.converged.astype(np.int8))
        rows["parity"].append(sol.parity.astype(np.int8))
        if spec.save_psi:
            rows["psi"].append(np.array([np.interp(spec.psi_x, sol.x, p, left=0.0, right=0.0) for p in sol.psi]).reshape(-1, spec.psi_x.size))
        messages.extend([int(flat), f"at {where}: {m}"] for m in sol.messages)
    empty = {"label": np.int32, "converged": np.int8, "parity": np.int8}
    for k, parts in rows.items():
        if k == "psi" and not spec.save_psi:
            continue
        if parts:
            out[k] = np.concatenate(parts)
        else:
            out[k] = np.zeros((0, spec.psi_x.size) if k == "psi" else 0, dtype=empty.get(k, np.float64))
    out["messages"] = messages
    return out


# ------------------------------------------------------------- assembly
class Results:
    """The sweep's arrays, filled chunk by chunk in any order; memory is that of the result only."""

    def __init__(self, spec: SweepSpec, n_states: int):
        n, s = spec.n_points, max(1, int(n_states))
        self.spec = spec
        self.energy = np.full((n, s), np.nan)
        self.error = np.full((n, s), np.nan)
        self.converged = np.full((n, s), -1, np.int8)
        self.parity = np.zeros((n, s), np.int8)
        self.psi = np.full((n, s, spec.psi_x.size), np.nan) if spec.save_psi else None
        self.solved = np.zeros(n, np.int8)
        self.bound = np.full(n, -1, np.int32)
        self.resolved = np.zeros(n, np.int32)
        self.vt = np.full(n, np.nan)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    @property
    def n_done(self) -> int:
        return int(np.count_nonzero(self.done))

    def _grow(self, need: int) -> None:
        extra = need - self.energy.shape[1]
        pad = lambda a, fill: np.concatenate([a, np.full(a.shape[:1] + (extra,) + a.shape[2:], fill, a.dtype)], axis=1)  # noqa: E731
        self.energy, self.error = pad(self.energy, np.nan), pad(self.error, np.nan)
        self.converged, self.parity = pad(self.converged, -1), pad(self.parity, 0)
        if self.psi is not None:
            self.psi = pad(self.psi, np.nan)

    def add(self, rec: dict) -> int:
        """Store one chunk result; returns the number of points it held."""
        idx = np.asarray(rec["index"], dtype=np.int64)
        self.done[idx] = True
        self.solved[idx], self.bound[idx], self.resolved[idx], self.vt[idx] = rec["solved"], rec["bound"], rec["resolved"], rec["vt"]
        rows = np.repeat(idx, rec["count"])
        labels = np.asarray(rec["label"], dtype=np.int64)
        if labels.size:
            if labels.max() >= self.energy.shape[1]:
                self._grow(int(labels.max()) + 1)
            first = np.unique(rows * (labels.max() + 1) + labels, return_index=True)[1]  # one state per (point, label)
            if first.size < labels.size:
                for r in sorted(set(range(labels.size)) - set(first.tolist())):
                    self.messages.setdefault(int(rows[r]), []).append(f"two states with {labels[r]} nodes; the higher one is left out")
            rows, labels, sel = rows[first], labels[first], first
            self.energy[rows, labels] = np.asarray(rec["energy"])[sel]
            self.error[rows, labels] = np.asarray(rec["error"])[sel]
            self.converged[rows, labels] = np.asarray(rec["converged"])[sel]
            self.parity[rows, labels] = np.asarray(rec["parity"])[sel]
            if self.psi is not None:
                self.psi[rows, labels] = np.asarray(rec["psi"])[sel]
        for flat, msg in rec.get("messages", []):
            self.messages.setdefault(int(flat), []).append(str(msg))
        return int(idx.size)

    def dataset(self, case, action: str, history: str | None = None, found=()):
        """The archive Dataset (kind "sweep"); ``found`` are located thresholds of a one-param sweep."""
        import xarray as xr

        from fdsolver.io.archive import base_attrs, energy_attrs, length_attrs

        spec, u = self.spec, case.units
        labels = np.flatnonzero(np.any(np.isfinite(self.energy), axis=0))
        s = int(labels[-1]) + 1 if labels.size else 0
        shape, dims = spec.shape, tuple(a.name for a in spec.axes)
        sdims = dims + ("state",)
        r = lambda a: a[:, :s].reshape(shape + (s,))  # noqa: E731
        energy = r(self.energy)
        exists = np.isfinite(energy)
        vt = self.vt.reshape(shape)
        ea = lambda name: energy_attrs(u, name)  # noqa: E731
        coords = {a.name: (a.name, a.values, {"long_name": f"swept param {a.name}", "spacing": a.spacing, "units": a.units or "1",
                                              **({} if a.units else {"units_note": "units not declared; add [sweep] units to the case"})})
                  for a in spec.axes}
        coords["state"] = ("state", np.arange(s, dtype=np.int32), {"long_name": "bound state labelled by its number of nodes", "units": "1"})
        data = {
            "energy": (sdims, energy, ea("bound-state energy (Richardson-extrapolated); NaN where the state does not exist")),
            "energy_error": (sdims, r(self.error), ea("estimated absolute error of energy")),
            "binding_energy": (sdims, vt[..., None] - energy, ea("continuum threshold minus energy")),
            "converged": (sdims, r(self.converged), {"long_name": "1 if energy_error is below the tolerance", "units": "1",
                                                     "flag_values": np.array([-1, 0, 1], np.int8), "flag_meanings": "no_such_state not_converged converged"}),
            "nodes": (sdims, np.where(exists, np.arange(s, dtype=np.int32), -1).astype(np.int32),
                      {"long_name": "number of nodes of the wavefunction (-1: no such state)", "units": "1"}),
            "parity": (sdims, r(self.parity), {"long_name": "mirror parity (+1 even, -1 odd, 0 no mirror symmetry or no state)", "units": "1"}),
            "bound_states": (dims, self.bound.reshape(shape), {"long_name": "number of bound states on the whole open line (zero-energy phase count, no box); -1 where every state is bound", "units": "1"}),
            "resolved_states": (dims, self.resolved.reshape(shape), {"long_name": "number of states the box solve returned", "units": "1"}),
            "continuum_threshold": (dims, vt, ea("continuum threshold (lower asymptote of V)")),
            "solved": (dims, self.solved.reshape(shape), {"long_name": "1 if the point was solved, 0 if its case was invalid", "units": "1"}),
        }
        if s >= 2:
            data["tunnel_splitting"] = (dims, energy[..., 1] - energy[..., 0], ea("tunnel splitting E1 - E0 where both states exist"))
            data["tunnel_splitting_error"] = (dims, r(self.error)[..., 1] + r(self.error)[..., 0], ea("error bound of the tunnel splitting"))
        if self.psi is not None:
            coords["x"] = ("x", spec.psi_x, length_attrs(u, "position (common grid of the stored wavefunctions)"))
            data["psi"] = (sdims + ("x",), self.psi[:, :s].reshape(shape + (s, spec.psi_x.size)),
                           {"long_name": "normalised wavefunction times sqrt(length unit), linearly interpolated", "units": "1",
                            "units_note": f"psi in {u.length}^-1/2; zero outside the solver's box; NaN where the state does not exist"})
        if found:
            punits = spec.axes[0].units or "1"
            data["threshold_value"] = ("threshold", np.array([t.value for t in found]), {"long_name": f"value of {spec.axes[0].name} where the state appears", "units": punits})
            data["threshold_uncertainty"] = ("threshold", np.array([t.uncertainty for t in found]), {"long_name": "uncertainty of threshold_value", "units": punits})
            data["threshold_state"] = ("threshold", np.array([t.state for t in found], np.int32), {"long_name": "node count of the state that appears", "units": "1"})
            data["threshold_direction"] = ("threshold", np.array([t.direction for t in found], np.int8), {"long_name": "+1 binds as the param increases, -1 as it decreases", "units": "1"})
        attrs = base_attrs(case, "sweep", action)
        if history:
            attrs["history"] = history
        notes = [m for k in sorted(self.messages) for m in self.messages[k]]
        attrs.update({
            "swept_params": json.dumps([a.name for a in spec.axes]),
            "axes": json.dumps([a.text for a in spec.axes]),
            "fixed_params": json.dumps(spec.fixed, sort_keys=True),
            "points": int(spec.n_points),
            "failed_points": int(np.count_nonzero(self.solved == 0)),
            "state_labels": "states are labelled by their number of nodes",
            "tolerance": float(case.settings.tolerance),
            "notes_count": len(notes),
            "notes": "\n".join(notes[:20] + ([f"... and {len(notes) - 20} more"] if len(notes) > 20 else [])),
        })
        return xr.Dataset(data_vars=data, coords=coords, attrs=attrs)


def locate_along(spec: SweepSpec, bound: np.ndarray, rtol: float = 1e-9) -> list:
    """Thresholds of a one-param sweep, refined between neighbouring points whose bound-state counts differ."""
    from fdsolver.scans import thresholds

    if len(spec.axes) != 1:
        return []
    axis, base = spec.axes[0], base_case(spec)
    found = []
    for i in np.flatnonzero((bound[:-1] >= 0) & (bound[1:] >= 0) & (bound[:-1] != bound[1:])):
        a, b = float(axis.values[i]), float(axis.values[i + 1])
        try:
            res = thresholds.find_thresholds(base, axis.name, a, b, fixed=spec.fixed, scan=3, rtol=rtol, units=axis.units)
        except CaseError:  # a point the zero-energy march cannot take; the sweep's own values stand
            continue
        found.extend(res.thresholds)
    return sorted(found, key=lambda t: (t.value, t.state))
