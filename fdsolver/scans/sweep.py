"""Parameter sweeps: the plan, the solve at each point, the arrays of a whole sweep, and the sweep as one call.

A sweep solves ``case.with_params(**fixed, **point)`` at every point of the
cartesian product of its axes, exactly as a single ``solve`` would, and keeps
per state: energy, energy_error, converged, nodes, parity, <x>, the spread,
the probability inside every named layer or component, the hard-wall flag,
and the dipoles and oscillator strengths to the :data:`TRANSITION_STATES`
lowest states (one grid, O(h^2), with the length/velocity-form difference as
their error, :func:`fdsolver.optics.solved.transitions_of`); and psi on a
common x grid when asked.  States are labelled by their number of nodes (the
oscillation theorem numbers bound states by it), so a label follows one state
across the sweep and a state absent at a point is NaN there.  Per point it
also keeps the number of bound states on the whole open line (from the
zero-energy phase, :mod:`fdsolver.boundstates.counting`, independent of the box), the
number the box solve resolved, the continuum threshold and the tunnel
splitting E1 - E0.  Wavefunctions are interpolated linearly (error O(h^2) of
the solver's local spacing) onto the common grid, zero outside the solver's
box.  Without ``[sweep] psi_range`` the common grid covers the boxes of the
corner points (solved once before the sweep) and follows the density of
their grids' nodes (``psi_points`` quantiles of their union); the norm each
state keeps on it is stored beside psi (``psi_norm``), with a note where it
is below :data:`NORM_WARNING` (a point whose box reaches beyond the corners',
or a grid too coarse for the state).  The points run through :func:`fdsolver.scans.runner.run` (chunks,
executors, checkpoint and resume); the archive is
:func:`fdsolver.io.datasets.sweep_dataset`.  Energies and lengths in the
case units; params in their own units.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.errors import CaseError
from fdsolver.limits import MAX_MEMORY_MB, MAX_SWEEP_POINTS
from fdsolver.scans.axes import Axis, OnAxes, declared_units, parse_axes
from fdsolver.scans.runner import PointNotes, base_case, counts_match

BYTES_PER_STATE = 8 + 8 + 8 + 4 + 1 + 1 + 8 + 8 + 1 + 8 + 8  # energy, error, binding energy, nodes, converged, parity, <x>, spread, wall,
# width, log10 width
BYTES_PER_POINT = 4 + 4 + 8 + 8 + 8 + 1 + 1 + 8  # bound, resolved, threshold, splitting (+ error, bound flag), solved, m_r
#: dipoles and oscillator strengths are kept from every state to this many lowest states
TRANSITION_STATES = 8
#: a state keeping less of its norm on the common psi grid gets a note
NORM_WARNING = 0.999
#: corner points solved before a sweep to find the boxes the common psi grid must cover
PSI_CORNERS = 16
#: most points per chunk by default (about 1 s of CPU at 1 ms per point, a bundled double well's cost; a Dask task
#: costs about 10 ms of CPU beyond its work, so fewer, larger chunks make a Dask sweep cheaper: :func:`runner._chunks`)
MAX_CHUNK = 1000
#: most bytes of results in a default chunk: a chunk's record travels back whole and is one line of the checkpoint
CHUNK_BYTES = 16 * 2**20


# ----------------------------------------------------------------- plan
@dataclass(frozen=True)
class SweepSpec(OnAxes):
    """A planned sweep: the case (text, path, tables), fixed params, axes, psi grid and chunk size."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    axes: tuple[Axis, ...]
    save_psi: bool = False
    psi_x: np.ndarray | None = None
    chunk: int | None = None
    #: keep only what needs no wavefunction: energies, errors, convergence, parities, widths, splittings, counts
    energies_only: bool = False
    key: str = field(default="", compare=False)
    #: the memory budget of the result (bytes): records that would grow it beyond are refused
    budget_bytes: int = field(default=1000 * 2**20, compare=False)
    #: the memory one point's record takes at most (:func:`estimate_bytes`; psi included if kept)
    point_bytes: int = field(default=0, compare=False)

    what = "sweep"

    @property
    def max_chunk(self) -> int:
        """Most points per chunk by default: :data:`MAX_CHUNK`, fewer where their records would exceed
        :data:`CHUNK_BYTES` (wavefunctions kept for many states)."""
        return max(1, min(MAX_CHUNK, CHUNK_BYTES // max(1, self.point_bytes)))

    def identity(self) -> dict:
        """JSON-able description compared on resume (exact float values)."""
        from fdsolver._version import __version__

        out = {
            "fdsolver": __version__,
            "case_text": self.case_text,
            "case_tables": self.tables,
            "fixed": self.fixed,
            "axes": self.axes_identity(),
            "save_psi": bool(self.save_psi),
            "psi_x": None if self.psi_x is None else [float(v) for v in self.psi_x],
        }
        if self.energies_only:  # named only where set: a full sweep's identity is what it always was
            out["energies_only"] = True
        return out

    def solve_points(self, base, indices) -> dict:
        return solve_points(self, base, indices)

    def collector(self) -> "Results":
        return Results(self, base_case(self).settings.max_states)


def estimate_bytes(n_points: int, n_states: int, n_x: int, n_regions: int = 0) -> int:
    """Memory of a sweep result: per point and state variables (with the transitions to the lowest states and
    the probability inside each of ``n_regions``), plus psi and its norm (n_x + 1 values per state) if kept."""
    per_state = BYTES_PER_STATE + 8 * int(n_regions) + 3 * 8 * min(int(n_states), TRANSITION_STATES)
    per_state += 8 * (int(n_x) + 1) if n_x else 0
    return int(n_points) * (BYTES_PER_POINT + int(n_states) * per_state)


def _mb(n: float) -> str:
    return f"{n / 2**30:.3g} GB" if n >= 2**30 else f"{n / 2**20:.3g} MB"


def _budget(memory_mb, table, file) -> float:
    """The memory budget of a sweep result (MB): the caller's (``--memory-mb``), else ``[sweep] memory_mb``, else 1000."""
    budget, key, where = (memory_mb, "--memory-mb", None) if memory_mb is not None else (
        table.get("memory_mb", 1000.0), "sweep.memory_mb", file)
    if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not 0 < budget <= MAX_MEMORY_MB:
        raise CaseError(f"must be a positive number of MB, at most {MAX_MEMORY_MB:g}, got {budget!r}", file=where, key=key)
    return float(budget)


def _psi_range(case, table, file) -> tuple[float, float] | None:
    """``[sweep] psi_range``: two finite lengths, low < high (booleans are not numbers; values given with units
    are converted to the case length unit)."""
    rng = _psi_range_units(case, table.get("psi_range"))
    if rng is None:
        return None
    ok = isinstance(rng, (list, tuple)) and len(rng) == 2 and all(
        isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in rng)
    if not ok or not rng[0] < rng[1]:
        raise CaseError(f"must be [low, high], two finite numbers with low < high (case length unit), got {rng!r}",
                        file=file, key="sweep.psi_range")
    return float(rng[0]), float(rng[1])


def plan_sweep(case, axes, fixed=None, save_psi=False, memory_mb=None, chunk=None, energies_only=False) -> SweepSpec:
    """Check a sweep before any work: its settings, its size (points and memory), the corner points (up to 256).

    ``energies_only``: keep only what needs no wavefunction (:attr:`SweepSpec.energies_only`); it keeps no psi, so
    it is refused with ``save_psi``.  (The memory count is the full record's either way: an upper bound.)
    """
    if energies_only and save_psi:
        raise CaseError("an energies-only sweep keeps no wavefunctions: drop --save-psi or --energies-only",
                        file=case.path, key="--energies-only")
    fixed = {k: v for k, v in (fixed or {}).items() if k not in {a.name for a in axes}}  # a swept param is not fixed
    table = case.data.get("sweep") or {}
    declared_units(case)  # every [sweep] units entry a param and a UDUNITS string
    budget = _budget(memory_mb, table, case.path)
    n_states = case.settings.max_states
    n_x = table.get("psi_points", 401) if save_psi else 0
    if save_psi and (isinstance(n_x, bool) or not isinstance(n_x, int) or not 2 <= n_x <= 100000):
        raise CaseError(f"must be a whole number from 2 to 100000, got {n_x!r}", file=case.path, key="sweep.psi_points")
    rng = _psi_range(case, table, case.path)
    chunk = chunk if chunk is not None else table.get("chunk")
    if chunk is not None and (isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1):
        raise CaseError(f"must be a whole number >= 1, got {chunk!r}", file=case.path if "chunk" in table else None,
                        key="sweep.chunk" if "chunk" in table else "--chunk")
    key = axes[0].key if axes and getattr(axes[0], "key", None) else "--vary"
    n_points = math.prod(int(a.values.size) for a in axes)  # exact: 64 axes of 2 values do not overflow to 0
    point_bytes = estimate_bytes(1, n_states, n_x, len(case.potential.regions()))
    need = n_points * point_bytes
    if need > budget * 2**20:
        what = f"{n_points} points x {n_states} states" + (f" x {n_x} x-points of psi" if save_psi else "")
        raise CaseError(
            f"the sweep result would take about {_mb(need)} in memory ({what}), more than the budget of "
            f"{budget:g} MB; sweep fewer points{', drop --save-psi' if save_psi else ''} or raise --memory-mb "
            "([sweep] memory_mb)",
            file=case.path,
            key=key,
        )
    if n_points > MAX_SWEEP_POINTS:
        raise CaseError(f"the sweep has {n_points:.4g} points; at most {MAX_SWEEP_POINTS} are allowed (the work budget), "
                        "so sweep fewer", file=case.path, key=key)
    corners = itertools.product(*[(a.values[0], a.values[-1]) for a in axes])
    spans = []
    for point in (dict(zip([a.name for a in axes], c)) for c in itertools.islice(corners, 256)):
        c = case.with_params(**{**fixed, **{k: float(v) for k, v in point.items()}})
        spans.append(c.potential.support())
    psi_x = None
    if save_psi:
        if rng is None:
            psi_x = _covering_grid(case, axes, fixed, n_x, spans)
        else:
            psi_x = np.linspace(rng[0], rng[1], n_x)
    spec = SweepSpec(case.text, case.path, dict(case.tables), fixed, tuple(axes), bool(save_psi), psi_x, chunk,
                     bool(energies_only), budget_bytes=int(budget * 2**20), point_bytes=point_bytes)
    key = hashlib.sha256(json.dumps(spec.identity(), sort_keys=True).encode()).hexdigest()
    return SweepSpec(**{**spec.__dict__, "key": key})


def _psi_range_units(case, rng):
    """``[sweep] psi_range`` with any values given with units converted to the case length unit."""
    from fdsolver.input.quantities import split_quantity, to_case_units

    if not isinstance(rng, (list, tuple)):
        return rng
    out = []
    for v in rng:
        q = split_quantity(v)
        out.append(to_case_units(q[0], q[1], "length", case.units, file=case.path, key="sweep.psi_range") if q else v)
    return out


def _covering_grid(case, axes, fixed, n_x: int, spans) -> np.ndarray:
    """A common x grid covering the boxes of the corner points, dense where their solver grids are dense.

    The corner points (up to :data:`PSI_CORNERS`) are solved; the grid is ``n_x`` quantiles of the union of
    their nodes (ends included).  Where no corner can be solved: the potential's extent plus 50 % each side.
    """
    from fdsolver.runs import solve_case

    nodes = []
    corners = itertools.product(*[(a.values[0], a.values[-1]) for a in axes])
    for point in itertools.islice(corners, PSI_CORNERS):
        try:
            sol = solve_case(case.with_params(**{**fixed, **{a.name: float(v) for a, v in zip(axes, point)}}), notes=False)
        except CaseError:
            continue
        nodes.append(np.asarray(sol.x, dtype=float))
    if not nodes:
        lo, hi = min(s[0] for s in spans), max(s[1] for s in spans)
        pad = 0.5 * (hi - lo) if hi > lo else 1.0
        return np.linspace(lo - pad, hi + pad, n_x)
    union = sorted_distinct(np.concatenate(nodes))
    grid = np.quantile(union, np.linspace(0.0, 1.0, n_x))
    return sorted_distinct(grid) if sorted_distinct(grid).size == n_x else np.linspace(union[0], union[-1], n_x)


# --------------------------------------------------------------- points
def solve_points(spec: SweepSpec, base, indices) -> dict:
    """Solve the points ``indices`` of ``spec`` (``base``: its case); compact arrays, one row per state found."""
    from fdsolver.optics.solved import transitions_of
    from fdsolver.runs import solve_case

    n = len(indices)
    psi_x = spec.psi_x if spec.save_psi and spec.psi_x is not None else np.zeros(0)
    n_regions = len(base.potential.regions())
    out: dict[str, Any] = {"index": np.asarray(indices, dtype=np.int64), "solved": np.zeros(n, np.int8), "bound": np.full(n, -1, np.int32),
           "resolved": np.zeros(n, np.int32), "vt": np.full(n, np.nan), "count": np.zeros(n, np.int32),
           "ref_mass": np.full(n, np.nan)}
    keys = ("label", "energy", "error", "converged", "parity", "psi", "mean_x", "spread", "wall", "inside", "psi_norm",
            "dipole", "f", "f_err", "width", "log10_width")
    rows: dict[str, list] = {k: [] for k in keys}
    out["split"], out["split_error"] = np.full(n, np.nan), np.full(n, np.nan)
    out["split_bound"] = np.zeros(n, np.int8)
    messages = []
    for j, flat in enumerate(indices):
        point = spec.point(flat)
        where = ", ".join(f"{k} = {v:.10g}" for k, v in point.items())
        try:
            case = base.with_params(**{**spec.fixed, **point})
            sol = solve_case(case, notes=False, wavefunctions=not spec.energies_only)
            tr = None if spec.energies_only else transitions_of(case.potential, sol, case.units, refine=False)
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
        labels = sol.nodes.astype(np.int32)
        rows["label"].append(labels)
        rows["energy"].append(sol.energy)
        rows["error"].append(sol.energy_error)
        rows["converged"].append(sol.converged.astype(np.int8))
        rows["parity"].append(sol.parity.astype(np.int8))
        if not spec.energies_only:
            rows["mean_x"].append(sol.mean_x)
            rows["spread"].append(sol.spread)
            rows["wall"].append(np.asarray(sol.wall, dtype=np.int8))
            rows["inside"].append(np.asarray(sol.inside, dtype=float).reshape(sol.energy.size, n_regions))
            for key, name in (("dipole", "dipole"), ("f", "oscillator_strength"),
                              ("f_err", "oscillator_strength_error")):
                block = np.full((sol.energy.size, TRANSITION_STATES), np.nan)
                if tr is not None:
                    low = np.flatnonzero(labels < TRANSITION_STATES)
                    block[:, labels[low]] = np.asarray(getattr(tr, name))[:, low]
                rows[key].append(block)
        if tr is not None:
            out["ref_mass"][j] = tr.reference_mass
        # quasi-bound states (a field, or a well between barriers above the threshold) carry their widths
        rows["width"].append(np.zeros(sol.energy.size) if sol.width is None else np.asarray(sol.width, float))
        rows["log10_width"].append(np.full(sol.energy.size, -np.inf) if sol.log10_width is None
                                   else np.asarray(sol.log10_width, float))
        if spec.save_psi:
            p = np.array([np.interp(psi_x, sol.x, q, left=0.0, right=0.0) for q in sol.psi]).reshape(-1, psi_x.size)
            sq = p * p  # trapezoid rule on the common grid
            norm = np.sum(0.5 * (sq[:, 1:] + sq[:, :-1]) * np.diff(psi_x), axis=1) if psi_x.size > 1 else np.zeros(p.shape[0])
            rows["psi"].append(p)
            rows["psi_norm"].append(norm)
            for k in np.flatnonzero(norm < NORM_WARNING):
                messages.append([int(flat), f"at {where}: state {labels[k]} keeps {norm[k]:.4f} of its norm on the common "
                                 "psi grid (cut at its ends or too coarse there); set [sweep] psi_range and psi_points"])
        messages.extend([int(flat), f"at {where}: {m}"] for m in sol.messages)
    empty = {"label": np.int32, "converged": np.int8, "parity": np.int8, "wall": np.int8}
    widths = {"psi": psi_x.size, "inside": n_regions, "dipole": TRANSITION_STATES, "f": TRANSITION_STATES,
              "f_err": TRANSITION_STATES}
    for k, parts in rows.items():
        if k in ("psi", "psi_norm") and not spec.save_psi or k in WAVE_ROWS and spec.energies_only:
            continue
        if parts:
            out[k] = np.concatenate(parts)
        else:
            out[k] = np.zeros((0, widths[k]) if k in widths else 0, dtype=empty.get(k, np.float64))
    out["messages"] = messages
    return out


#: the per-state rows of a chunk record that need the wavefunctions (left out of an energies-only sweep)
WAVE_ROWS = ("mean_x", "spread", "wall", "inside", "dipole", "f", "f_err")


# ------------------------------------------------------------- assembly
class Results(PointNotes):
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
        self.psi_norm = np.full((n, s), np.nan) if self.psi is not None else None
        self.regions = tuple(r[0] for r in base_case(spec).potential.regions())
        # what needs the wavefunctions (None in an energies-only sweep)
        self.mean_x = self.spread = self.wall = self.inside = self.dipole = self.f = self.f_err = None
        if not spec.energies_only:
            self.mean_x, self.spread = np.full((n, s), np.nan), np.full((n, s), np.nan)
            self.wall = np.full((n, s), -2, np.int8)
            self.inside = np.full((n, s, len(self.regions)), np.nan)
            t = (n, s, TRANSITION_STATES)
            self.dipole, self.f, self.f_err = np.full(t, np.nan), np.full(t, np.nan), np.full(t, np.nan)
        self.ref_mass = np.full(n, np.nan)
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
        n_x = 0 if self.psi is None else self.psi.shape[2]
        if estimate_bytes(self.energy.shape[0], need, n_x) > self.spec.budget_bytes:
            raise ValueError(f"a state with {need - 1} nodes would take the result beyond its memory budget of "
                             f"{self.spec.budget_bytes / 2**20:g} MB")
        pad = lambda a, fill: np.concatenate([a, np.full(a.shape[:1] + (extra,) + a.shape[2:], fill, a.dtype)], axis=1)  # noqa: E731
        self.energy, self.error = pad(self.energy, np.nan), pad(self.error, np.nan)
        self.converged, self.parity = pad(self.converged, -1), pad(self.parity, 0)
        if not self.spec.energies_only:
            self.mean_x, self.spread, self.wall = pad(self.mean_x, np.nan), pad(self.spread, np.nan), pad(self.wall, -2)
            self.inside = pad(self.inside, np.nan)
            self.dipole, self.f, self.f_err = pad(self.dipole, np.nan), pad(self.f, np.nan), pad(self.f_err, np.nan)
        self.width, self.log10_width = pad(self.width, np.nan), pad(self.log10_width, np.nan)
        if self.psi is not None:
            self.psi = pad(self.psi, np.nan)
            self.psi_norm = pad(self.psi_norm, np.nan)

    def add(self, rec: dict) -> int:
        """Store one chunk result; returns the number of points it held."""
        idx = np.asarray(rec["index"], dtype=np.int64)
        count = counts_match(rec, "count", ("label", "energy", "error", "converged", "parity", "psi"))
        self.done[idx] = True
        self.solved[idx], self.bound[idx], self.resolved[idx], self.vt[idx] = rec["solved"], rec["bound"], rec["resolved"], rec["vt"]
        if "ref_mass" in rec:
            self.ref_mass[idx] = rec["ref_mass"]
        if "split" in rec:
            self.split[idx], self.split_error[idx], self.split_bound[idx] = rec["split"], rec["split_error"], rec["split_bound"]
        rows = np.repeat(idx, count)
        labels = np.asarray(rec["label"], dtype=np.int64)
        if labels.size and labels.min() < 0:
            raise ValueError("it has a negative node count")
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
            for name, target in (("mean_x", self.mean_x), ("spread", self.spread), ("wall", self.wall),
                                 ("inside", self.inside), ("dipole", self.dipole), ("f", self.f), ("f_err", self.f_err),
                                 ("width", self.width), ("log10_width", self.log10_width)):
                if name in rec and target is not None:
                    target[rows, labels] = np.asarray(rec[name])[sel]
            if self.psi is not None:
                self.psi[rows, labels] = np.asarray(rec["psi"])[sel]
                if "psi_norm" in rec:
                    self.psi_norm[rows, labels] = np.asarray(rec["psi_norm"])[sel]
        self.keep_notes(rec)
        return int(idx.size)

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
            out["psi_norm"] = grid(self.psi_norm)
        if spec.energies_only:  # nothing that needs the wavefunctions was made
            return out
        out["mean_x"], out["spread"], out["wall_state"] = grid(self.mean_x), grid(self.spread), grid(self.wall)
        if self.regions:
            out["region"] = np.arange(len(self.regions))
            out["region_name"] = [str(r) for r in self.regions]
            out["probability_inside"] = self.inside[:, :s].reshape(shape + (s, len(self.regions)))
        t = min(s, TRANSITION_STATES)
        if t >= 2:
            out["final_state"] = np.arange(t)
            cut = lambda a: a[:, :s, :t].reshape(shape + (s, t))  # noqa: E731
            out["dipole"], out["oscillator_strength"] = cut(self.dipole), cut(self.f)
            out["oscillator_strength_error"] = cut(self.f_err)
            out["reference_mass"] = self.ref_mass.reshape(shape)
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
def sweep_axes(texts, case, kind: str = "sweep") -> tuple[Axis, ...]:
    """The axes of a sweep: ``texts`` (``--vary``), else the case's ``[sweep] vary`` list; no param may take the name
    of a variable or dimension of the archive ``kind`` ("sweep", or "band_sweep")."""
    from fdsolver.io.specs import KINDS

    texts, key = list(texts or []), "--vary"
    if not texts:
        texts, key = (case.data.get("sweep") or {}).get("vary", []), "sweep.vary"
        if not isinstance(texts, list) or not all(isinstance(t, str) for t in texts):
            raise CaseError('must be a list of strings like "d=1:5:20"', file=case.path, key=key)
    if not texts:
        raise CaseError(f"nothing to sweep: give --vary NAME=START:STOP:COUNT (params: {', '.join(case.params)})", key="--vary")
    return parse_axes(texts, case, key, reserved=KINDS[kind].names())


def run_sweep(spec: SweepSpec, executor, *, output=None, resume=False, restart=False, action=None, progress=None,
              locate=True, before_write=None):
    """Run ``spec`` on ``executor`` (checkpointed beside ``output``, written there at the end); the sweep Dataset.

    ``locate``: refine the binding thresholds between neighbouring points of a
    one-param sweep.  See :func:`fdsolver.scans.runner.run` for ``output``,
    ``resume``, ``restart``, ``progress`` and ``before_write``.
    """
    from fdsolver.io.datasets import sweep_dataset
    from fdsolver.scans.runner import run

    base = base_case(spec)
    case = base.with_params(**spec.fixed) if spec.fixed else base
    action = action or (f"fdsolver sweep {spec.case_path or case.title} " + " ".join(f"--vary {a.text}" for a in spec.axes)
                        + (" --energies-only" if spec.energies_only else ""))

    def finish(results: Results, history: str):
        found = locate_along(spec, results.bound) if locate else []
        return sweep_dataset(case, spec, results, history, found)

    return run(spec, executor, finish, action=action, output=output, resume=resume, restart=restart, progress=progress,
               before_write=before_write)
