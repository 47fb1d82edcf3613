"""Band-edge sweeps: the band edges, widths, gaps and band-edge masses of a periodic case over a grid of params.

At every point of the cartesian product of the axes the case is rebuilt with
``case.with_params(**fixed, **point)``, read as a lattice
(:func:`fdsolver.bloch.study.lattice_of`) and its lowest ``n_bands`` bands found by
:func:`fdsolver.bloch.structure.band_edges` exactly as ``fdsolver bands`` finds them (edges with none
missed, each quantity with its error estimate).  The points run through the one runner,
:func:`fdsolver.scans.runner.run` (chunks, executors, checkpoint and resume); a point whose case is
invalid (a stack that no longer adds up to the period, ...) is kept as not solved with its message.
The archive is :func:`fdsolver.io.datasets.band_sweep_dataset` (kind ``band_sweep``).  Energies in
the case energy unit, masses in m_e, params in their own units.
"""

from __future__ import annotations

import hashlib
import itertools
import json
from dataclasses import dataclass, field

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.scans.axes import Axis, OnAxes
from fdsolver.scans.runner import PointNotes, base_case

#: per-band arrays of a band sweep: (archive name, BandEdges field)
FIELDS = ("band_bottom", "band_bottom_error", "band_top", "band_top_error", "band_width", "band_width_error",
          "gap_above", "gap_above_error", "effective_mass_bottom", "effective_mass_bottom_error",
          "effective_mass_top", "effective_mass_top_error")
#: bytes per point and band of the result (the float fields, gap_closed, converged)
BYTES_PER_BAND = 8 * len(FIELDS) + 2


@dataclass(frozen=True)
class BandSweepSpec(OnAxes):
    """A planned band sweep: the case (text, path, tables), fixed params, axes, bands, tolerance, chunk size."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    axes: tuple[Axis, ...]
    n_bands: int
    tolerance: float
    chunk: int | None = None
    key: str = field(default="", compare=False)

    what = "band sweep"
    #: most points per chunk by default
    max_chunk = 100

    def identity(self) -> dict:
        """JSON-able description compared on resume (exact float values)."""
        from fdsolver._version import __version__

        return {
            "study": "band sweep",
            "fdsolver": __version__,
            "case_text": self.case_text,
            "case_tables": self.tables,
            "fixed": self.fixed,
            "axes": self.axes_identity(),
            "n_bands": int(self.n_bands),
        }

    def settings(self, case):
        from fdsolver.bloch.study import settings_of

        return settings_of(case, self.n_bands)

    def solve_points(self, base, indices) -> dict:
        return solve_points(self, base, indices)

    def collector(self) -> BandResults:
        return BandResults(self)


def plan_band_sweep(case, axes, fixed=None, n_bands: int | None = None, memory_mb=None, chunk=None) -> BandSweepSpec:
    """Check a band sweep before any work: the corner points (up to 256) are valid lattices, the result fits the budget."""
    from fdsolver.bloch.study import lattice_of, settings_of

    fixed = {k: v for k, v in (fixed or {}).items() if k not in {a.name for a in axes}}
    settings = settings_of(case, n_bands)
    table = case.data.get("sweep") or {}
    budget = memory_mb if memory_mb is not None else table.get("memory_mb", 1000.0)
    if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not budget > 0:
        raise CaseError(f"must be a positive number of MB, got {budget!r}", file=case.path, key="sweep.memory_mb")
    n_points = int(np.prod([a.values.size for a in axes], dtype=np.int64))
    need = n_points * (settings.n_bands * BYTES_PER_BAND + 1)
    if need > budget * 2**20:
        raise CaseError(f"the band sweep would take about {need / 2**20:.3g} MB in memory ({n_points} points x "
                        f"{settings.n_bands} bands), more than the budget of {budget:g} MB; sweep fewer points or "
                        "bands, or raise --memory-mb ([sweep] memory_mb)", file=case.path,
                        key=axes[0].key if axes else "--vary")
    corners = itertools.product(*[(a.values[0], a.values[-1]) for a in axes])
    for point in itertools.islice(corners, 256):
        lattice_of(case.with_params(**{**fixed, **{a.name: float(v) for a, v in zip(axes, point)}}))
    chunk = chunk if chunk is not None else table.get("chunk")
    if chunk is not None and (isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1):
        raise CaseError(f"must be a whole number >= 1, got {chunk!r}", file=case.path, key="sweep.chunk")
    spec = BandSweepSpec(case.text, case.path, dict(case.tables), fixed, tuple(axes), settings.n_bands,
                         settings.tolerance, chunk)
    key = hashlib.sha256(json.dumps(spec.identity(), sort_keys=True).encode()).hexdigest()
    return BandSweepSpec(**{**spec.__dict__, "key": key})


def solve_points(spec: BandSweepSpec, base, indices) -> dict:
    """Band edges at the points ``indices`` of ``spec`` (``base``: its case); one row of ``n_bands`` per point."""
    from fdsolver.bloch.structure import band_edges
    from fdsolver.bloch.study import lattice_of

    n, nb = len(indices), spec.n_bands
    out: dict = {"index": np.asarray(indices, dtype=np.int64), "solved": np.zeros(n, np.int8)}
    for name in FIELDS:
        out[name] = np.full((n, nb), np.nan)
    out["gap_closed"] = np.full((n, nb), -1, np.int8)
    out["converged"] = np.full((n, nb), -1, np.int8)
    messages = []
    for j, flat in enumerate(indices):
        point = spec.point(flat)
        where = ", ".join(f"{k} = {v:.10g}" for k, v in point.items())
        try:
            case = base.with_params(**{**spec.fixed, **point})
            edges = band_edges(lattice_of(case), spec.settings(case))
        except CaseError as err:
            messages.append([int(flat), f"at {where}: {err}"])
            continue
        out["solved"][j] = 1
        for name in FIELDS:
            out[name][j] = getattr(edges, name)
        out["gap_closed"][j] = edges.gap_closed.astype(np.int8)
        out["converged"][j] = edges.converged.astype(np.int8)
        messages.extend([int(flat), f"at {where}: {m}"] for m in edges.notes)
    out["messages"] = messages
    return out


class BandResults(PointNotes):
    """The band sweep's arrays, filled chunk by chunk in any order."""

    def __init__(self, spec: BandSweepSpec):
        n, nb = spec.n_points, spec.n_bands
        self.spec = spec
        self.values = {name: np.full((n, nb), np.nan) for name in FIELDS}
        self.gap_closed = np.full((n, nb), -1, np.int8)
        self.converged = np.full((n, nb), -1, np.int8)
        self.solved = np.zeros(n, np.int8)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    def add(self, rec: dict) -> int:
        """Store one chunk's record; returns the number of points it held."""
        idx = np.asarray(rec["index"], dtype=np.int64)
        self.done[idx] = True
        self.solved[idx] = rec["solved"]
        for name in FIELDS:
            self.values[name][idx] = rec[name]
        self.gap_closed[idx] = rec["gap_closed"]
        self.converged[idx] = rec["converged"]
        self.keep_notes(rec)
        return int(idx.size)

    def arrays(self) -> dict:
        """The values of the band-sweep archive's variables (:data:`fdsolver.io.specs.BAND_SWEEP`) on the axes' grid."""
        shape = self.spec.shape
        nb = self.spec.n_bands
        out = {name: v.reshape(shape + (nb,)) for name, v in self.values.items()}
        out.update({"band": np.arange(nb), "gap_closed": self.gap_closed.reshape(shape + (nb,)),
                    "converged": self.converged.reshape(shape + (nb,)), "solved": self.solved.reshape(shape)})
        return out


def run_band_sweep(spec: BandSweepSpec, executor, *, output=None, resume=False, restart=False, action=None,
                   progress=None):
    """Run ``spec`` on ``executor`` (checkpointed beside ``output``, written there at the end); the band-sweep Dataset.

    See :func:`fdsolver.scans.runner.run` for ``output``, ``resume``, ``restart`` and ``progress``.
    """
    from fdsolver.io.datasets import band_sweep_dataset
    from fdsolver.scans.runner import run

    base = base_case(spec)
    case = base.with_params(**spec.fixed) if spec.fixed else base
    action = action or f"fdsolver bands {spec.case_path or case.title} " + " ".join(f"--vary {a.text}" for a in spec.axes)

    def finish(results: BandResults, history: str):
        return band_sweep_dataset(case, spec, results, history)

    return run(spec, executor, finish, action=action, output=output, resume=resume, restart=restart, progress=progress)
