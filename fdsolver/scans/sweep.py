"""Parameter sweeps: the plan, the solve at each point, the arrays of a whole sweep, and the sweep as one call.

A sweep solves ``case.with_params(**fixed, **point)`` at every point of the
cartesian product of its axes, exactly as a single ``solve`` would, and keeps
per state: energy, energy_error, converged, nodes, parity (and psi on a common
x grid when asked).  States are labelled by their number of nodes (the
oscillation theorem numbers bound states by it), so a label follows one state
across the sweep and a state absent at a point is NaN there.  Per point it
also keeps the number of bound states on the whole open line (from the
zero-energy phase, :mod:`fdsolver.boundstates.counting`, independent of the box), the
number the box solve resolved, the continuum threshold and the tunnel
splitting E1 - E0.  Wavefunctions are interpolated linearly (error O(h^2) of
the solver's local spacing) onto the common grid, zero outside the solver's
box.  The points run through :func:`fdsolver.scans.runner.run` (chunks,
executors, checkpoint and resume); the archive is
:func:`fdsolver.io.datasets.sweep_dataset`.  Energies and lengths in the
case units; params in their own units.
"""

from __future__ import annotations

import hashlib
import itertools
import json
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.scans.axes import Axis, declared_units, parse_axes
from fdsolver.scans.runner import base_case

BYTES_PER_STATE = 8 + 8 + 8 + 4 + 1 + 1 + 8 + 8  # energy, error, binding energy, nodes, converged, parity, width, log10 width
BYTES_PER_POINT = 4 + 4 + 8 + 8 + 8 + 1 + 1  # bound, resolved, threshold, splitting (+ error, bound flag), solved


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

    what = "sweep"
    #: most points per chunk by default
    max_chunk = 200

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

    def solve_points(self, base, indices) -> dict:
        return solve_points(self, base, indices)

    def collector(self) -> "Results":
        return Results(self, base_case(self).settings.max_states)


def estimate_bytes(n_points: int, n_states: int, n_x: int) -> int:
    """Memory of a sweep result: per point and state variables, plus psi (n_x values per state) if kept."""
    return int(n_points) * (BYTES_PER_POINT + int(n_states) * (BYTES_PER_STATE + 8 * int(n_x)))


def _mb(n: float) -> str:
    return f"{n / 2**30:.3g} GB" if n >= 2**30 else f"{n / 2**20:.3g} MB"


def plan_sweep(case, axes, fixed=None, save_psi=False, memory_mb=None, chunk=None) -> SweepSpec:
    """Check a sweep before any work: the corner points (up to 256) are valid cases, the result fits the memory budget."""
    fixed = {k: v for k, v in (fixed or {}).items() if k not in {a.name for a in axes}}  # a swept param is not fixed
    table = case.data.get("sweep") or {}
    declared_units(case)  # every [sweep] units entry a param and a UDUNITS string
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
        c = case.with_params(**{**fixed, **{k: float(v) for k, v in point.items()}})
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
def solve_points(spec: SweepSpec, base, indices) -> dict:
    """Solve the points ``indices`` of ``spec`` (``base``: its case); compact arrays, one row per state found."""
    from fdsolver.api import solve_case

    n = len(indices)
    psi_x = spec.psi_x if spec.save_psi and spec.psi_x is not None else np.zeros(0)
    out: dict[str, Any] = {"index": np.asarray(indices, dtype=np.int64), "solved": np.zeros(n, np.int8), "bound": np.full(n, -1, np.int32),
           "resolved": np.zeros(n, np.int32), "vt": np.full(n, np.nan), "count": np.zeros(n, np.int32)}
    rows: dict[str, list] = {k: [] for k in ("label", "energy", "error", "converged", "parity", "psi", "width",
                                             "log10_width")}
    out["split"], out["split_error"] = np.full(n, np.nan), np.full(n, np.nan)
    out["split_bound"] = np.zeros(n, np.int8)
    messages = []
    for j, flat in enumerate(indices):
        point = spec.point(flat)
        where = ", ".join(f"{k} = {v:.10g}" for k, v in point.items())
        try:
            case = base.with_params(**{**spec.fixed, **point})
            sol = solve_case(case)
        except CaseError as err:
            messages.append([int(flat), f"at {where}: {err}"])
            continue
        out["solved"][j] = 1
        out["resolved"][j] = sol.energy.size
        out["vt"][j] = sol.threshold
        out["bound"][j] = sol.whole_line_count  # the solve's own box-independent count (-1: every state bound)
        if sol.energy.size >= 2 and sol.index[0] == 0 and sol.index[1] == 1:
            out["split"][j], out["split_error"][j] = sol.splitting[0], sol.splitting_error[0]
            out["split_bound"][j] = int(sol.splitting_bound[0])
        out["count"][j] = sol.energy.size
        rows["label"].append(sol.nodes.astype(np.int32))
        rows["energy"].append(sol.energy)
        rows["error"].append(sol.energy_error)
        rows["converged"].append(sol.converged.astype(np.int8))
        rows["parity"].append(sol.parity.astype(np.int8))
        # quasi-bound states (a field, or a well between barriers above the threshold) carry their widths
        rows["width"].append(np.zeros(sol.energy.size) if sol.width is None else np.asarray(sol.width, float))
        rows["log10_width"].append(np.full(sol.energy.size, -np.inf) if sol.log10_width is None
                                   else np.asarray(sol.log10_width, float))
        if spec.save_psi:
            rows["psi"].append(np.array([np.interp(psi_x, sol.x, p, left=0.0, right=0.0) for p in sol.psi]).reshape(-1, psi_x.size))
        messages.extend([int(flat), f"at {where}: {m}"] for m in sol.messages)
    empty = {"label": np.int32, "converged": np.int8, "parity": np.int8}
    for k, parts in rows.items():
        if k == "psi" and not spec.save_psi:
            continue
        if parts:
            out[k] = np.concatenate(parts)
        else:
            out[k] = np.zeros((0, psi_x.size) if k == "psi" else 0, dtype=empty.get(k, np.float64))
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
        self.width, self.log10_width = np.full((n, s), np.nan), np.full((n, s), np.nan)
        self.psi = np.full((n, s, spec.psi_x.size), np.nan) if spec.save_psi and spec.psi_x is not None else None
        self.solved = np.zeros(n, np.int8)
        self.bound = np.full(n, -1, np.int32)
        self.resolved = np.zeros(n, np.int32)
        self.vt = np.full(n, np.nan)
        self.split, self.split_error = np.full(n, np.nan), np.full(n, np.nan)
        self.split_bound = np.zeros(n, np.int8)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    def _grow(self, need: int) -> None:
        extra = need - self.energy.shape[1]
        pad = lambda a, fill: np.concatenate([a, np.full(a.shape[:1] + (extra,) + a.shape[2:], fill, a.dtype)], axis=1)  # noqa: E731
        self.energy, self.error = pad(self.energy, np.nan), pad(self.error, np.nan)
        self.converged, self.parity = pad(self.converged, -1), pad(self.parity, 0)
        self.width, self.log10_width = pad(self.width, np.nan), pad(self.log10_width, np.nan)
        if self.psi is not None:
            self.psi = pad(self.psi, np.nan)

    def add(self, rec: dict) -> int:
        """Store one chunk result; returns the number of points it held."""
        idx = np.asarray(rec["index"], dtype=np.int64)
        self.done[idx] = True
        self.solved[idx], self.bound[idx], self.resolved[idx], self.vt[idx] = rec["solved"], rec["bound"], rec["resolved"], rec["vt"]
        if "split" in rec:
            self.split[idx], self.split_error[idx], self.split_bound[idx] = rec["split"], rec["split_error"], rec["split_bound"]
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
            if "width" in rec:  # checkpoints written before widths existed have none
                self.width[rows, labels] = np.asarray(rec["width"])[sel]
                self.log10_width[rows, labels] = np.asarray(rec["log10_width"])[sel]
            if self.psi is not None:
                self.psi[rows, labels] = np.asarray(rec["psi"])[sel]
        for flat, msg in rec.get("messages", []):
            self.messages.setdefault(int(flat), []).append(str(msg))
        return int(idx.size)

    def notes(self) -> list[str]:
        """Every message, in point order."""
        return [m for k in sorted(self.messages) for m in self.messages[k]]

    def arrays(self) -> dict:
        """The values of the sweep archive's variables (:data:`fdsolver.io.specs.SWEEP`), on the grid of the axes.

        States are the node counts 0 .. the highest found; binding energy = continuum threshold - energy;
        the tunnel splitting E1 - E0 as the solver extrapolated it (a sequence of its own, with its own error;
        an upper bound where it is below double precision).
        """
        spec = self.spec
        labels = np.flatnonzero(np.any(np.isfinite(self.energy), axis=0))
        s = int(labels[-1]) + 1 if labels.size else 0
        shape = spec.shape
        grid = lambda a: a[:, :s].reshape(shape + (s,))  # noqa: E731
        energy, error = grid(self.energy), grid(self.error)
        vt = self.vt.reshape(shape)
        out = {
            "state": np.arange(s),
            "energy": energy,
            "energy_error": error,
            "binding_energy": vt[..., None] - energy,
            "converged": grid(self.converged),
            "nodes": np.where(np.isfinite(energy), np.arange(s), -1),
            "parity": grid(self.parity),
            "level_width": grid(self.width),
            "log10_level_width": grid(self.log10_width),
            "bound_states": self.bound.reshape(shape),
            "resolved_states": self.resolved.reshape(shape),
            "continuum_threshold": vt,
            "solved": self.solved.reshape(shape),
        }
        if s >= 2:
            out["tunnel_splitting"] = self.split.reshape(shape)
            out["tunnel_splitting_error"] = self.split_error.reshape(shape)
            out["tunnel_splitting_is_bound"] = self.split_bound.reshape(shape)
        if self.psi is not None:
            out["x"] = spec.psi_x
            out["psi"] = self.psi[:, :s].reshape(shape + (s, self.psi.shape[2]))
        return out


def locate_along(spec: SweepSpec, bound: np.ndarray, rtol: float = 1e-9) -> list:
    """Thresholds of a one-param sweep, refined between neighbouring points whose bound-state counts differ."""
    from fdsolver.scans import thresholds

    if len(spec.axes) != 1:
        return []
    axis, base = spec.axes[0], base_case(spec)
    found: list = []
    for i in np.flatnonzero((bound[:-1] >= 0) & (bound[1:] >= 0) & (bound[:-1] != bound[1:])):
        a, b = float(axis.values[i]), float(axis.values[i + 1])
        try:
            res = thresholds.find_thresholds(base, axis.name, a, b, fixed=spec.fixed, scan=3, rtol=rtol, units=axis.units_name)
        except CaseError:  # a point the zero-energy march cannot take; the sweep's own values stand
            continue
        found.extend(res.thresholds)
    return sorted(found, key=lambda t: (t.value, t.state))


# ----------------------------------------------------------------- the run
def sweep_axes(texts, case) -> tuple[Axis, ...]:
    """The axes of a sweep: ``texts`` (``--vary``), else the case's ``[sweep] vary`` list; no param may take the name
    of a variable or dimension of the sweep archive."""
    from fdsolver.io.specs import KINDS

    texts, key = list(texts or []), "--vary"
    if not texts:
        texts, key = (case.data.get("sweep") or {}).get("vary", []), "sweep.vary"
        if not isinstance(texts, list) or not all(isinstance(t, str) for t in texts):
            raise CaseError('must be a list of strings like "d=1:5:20"', file=case.path, key=key)
    if not texts:
        raise CaseError(f"nothing to sweep: give --vary NAME=START:STOP:COUNT (params: {', '.join(case.params)})", key="--vary")
    return parse_axes(texts, case, key, reserved=KINDS["sweep"].names())


def run_sweep(spec: SweepSpec, executor, *, output=None, resume=False, restart=False, action=None, progress=None,
              locate=True):
    """Run ``spec`` on ``executor`` (checkpointed beside ``output``, written there at the end); the sweep Dataset.

    ``locate``: refine the binding thresholds between neighbouring points of a
    one-param sweep.  See :func:`fdsolver.scans.runner.run` for ``output``,
    ``resume``, ``restart`` and ``progress``.
    """
    from fdsolver.io.datasets import sweep_dataset
    from fdsolver.scans.runner import run

    base = base_case(spec)
    case = base.with_params(**spec.fixed) if spec.fixed else base
    action = action or f"fdsolver sweep {spec.case_path or case.title} " + " ".join(f"--vary {a.text}" for a in spec.axes)

    def finish(results: Results, history: str):
        found = locate_along(spec, results.bound) if locate else []
        return sweep_dataset(case, spec, results, history, found)

    return run(spec, executor, finish, action=action, output=output, resume=resume, restart=restart, progress=progress)
