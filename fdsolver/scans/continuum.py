"""Continuum scans through the one runner: resonances against swept params, and J(V) over bias points.

* :class:`ResonanceScan` finds the poles in a fixed energy window
  (:func:`fdsolver.continuum.resonances.find_resonances`) at every point of
  the cartesian product of its axes; resonances are numbered from the low end
  of the window at each point (resonance 0 is the lowest), so a label follows
  one level as long as none enters or leaves the window below it.
* :class:`BiasScan` computes the Tsu-Esaki current density
  (:func:`fdsolver.continuum.current.current_density`) at every bias; the
  biases are the points.

Both are plain data sent to worker processes and run through
:func:`fdsolver.scans.runner.run` (chunks, executors, checkpoint and resume);
records are stored by point index, so the result does not depend on the
executor.  Energies in the case energy unit, biases in V, current densities
in A/m^2, lifetimes in s.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from fdsolver.scans.runner import PointNotes
from fdsolver.scans.axes import OnAxes
from fdsolver.errors import CaseError

#: per-resonance fields of a record and of the arrays (record key -> archive variable)
RES_FIELDS = {
    "energy": "resonance_energy", "energy_error": "resonance_energy_error", "width": "resonance_width",
    "width_error": "resonance_width_error", "log10_width": "log10_resonance_width", "lifetime": "lifetime",
    "lifetime_error": "lifetime_error", "log10_lifetime": "log10_lifetime", "bound": "bound",
}


def resonance_arrays(res) -> dict:
    """The per-resonance variables of one :class:`~fdsolver.continuum.resonances.Resonances` (no scanned axes)."""
    out: dict[str, Any] = {"resonance": np.arange(len(res))}
    for f, name in RES_FIELDS.items():
        out[name] = np.asarray(getattr(res, f)).astype(np.int8 if f == "bound" else float)
    return out


def _key(spec) -> str:
    return hashlib.sha256(json.dumps(spec.identity(), sort_keys=True).encode()).hexdigest()


# ------------------------------------------------------------- resonances
@dataclass(frozen=True)
class ResonanceScan(OnAxes):
    """Resonances in ``window`` (widths up to ``max_width``) at every point of ``axes`` (plain data)."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    axes: tuple
    window: tuple[float, float]
    max_width: float | None
    chunk: int | None = None
    key: str = field(default="", compare=False)

    what = "resonance sweep"
    verb = "sweeping"
    max_chunk = 20

    def identity(self) -> dict:
        from fdsolver._version import __version__

        return {"study": "resonance sweep", "fdsolver": __version__, "case_text": self.case_text,
                "case_tables": self.tables, "fixed": self.fixed,
                "axes": self.axes_identity(),
                "window": [float(v) for v in self.window], "max_width": self.max_width}

    def solve_points(self, base, indices) -> dict:
        from fdsolver.continuum.resonances import find_resonances

        n = len(indices)
        out: dict[str, Any] = {"index": np.asarray(indices, dtype=np.int64), "solved": np.zeros(n, np.int8),
                               "count": np.zeros(n, np.int32)}
        rows: dict[str, list] = {f: [] for f in RES_FIELDS}
        messages = []
        for j, flat in enumerate(indices):
            point = self.point(flat)
            where = ", ".join(f"{k} = {v:.10g}" for k, v in point.items())
            try:
                case = base.with_params(**{**self.fixed, **point})
                res = find_resonances(case.potential, self.window, max_width=self.max_width, domain=case.domain)
            except CaseError as err:
                messages.append([int(flat), f"at {where}: {err.message}"])
                continue
            out["solved"][j] = 1
            out["count"][j] = len(res)
            for f in RES_FIELDS:
                rows[f].append(np.asarray(getattr(res, f)).astype(np.int8 if f == "bound" else float))
            messages.extend([int(flat), f"at {where}: {m}"] for m in res.notes if not m.startswith("no resonance"))
        for f, parts in rows.items():
            out[f] = np.concatenate(parts) if parts else np.zeros(0, np.int8 if f == "bound" else float)
        out["messages"] = messages
        return out

    def collector(self) -> ResonanceResults:
        return ResonanceResults(self)


class ResonanceResults(PointNotes):
    """The sweep's per-resonance arrays (flat point x resonance), filled chunk by chunk in any order."""

    def __init__(self, spec: ResonanceScan):
        self.spec = spec
        n = spec.n_points
        self.values = {f: np.full((n, 0), 0 if f == "bound" else np.nan, np.int8 if f == "bound" else float)
                       for f in RES_FIELDS}
        self.solved = np.zeros(n, np.int8)
        self.count = np.zeros(n, np.int32)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    def add(self, rec: dict) -> int:
        idx = np.asarray(rec["index"], dtype=np.int64)
        self.done[idx] = True
        self.solved[idx], self.count[idx] = rec["solved"], rec["count"]
        counts = np.asarray(rec["count"], np.int64)
        need = int(counts.max()) if counts.size else 0
        have = self.values["energy"].shape[1]
        if need > have:
            for f, a in self.values.items():
                fill = 0 if f == "bound" else np.nan
                self.values[f] = np.concatenate([a, np.full((a.shape[0], need - have), fill, a.dtype)], axis=1)
        rows = np.repeat(idx, counts)
        cols = np.concatenate([np.arange(c) for c in counts]) if counts.size else np.zeros(0, np.int64)
        for f in RES_FIELDS:
            self.values[f][rows, cols.astype(np.int64)] = np.asarray(rec[f])
        self.keep_notes(rec)
        return int(idx.size)

    def arrays(self) -> dict:
        shape = self.spec.shape
        n_r = self.values["energy"].shape[1]
        out: dict[str, Any] = {"resonance": np.arange(n_r)}
        for f, name in RES_FIELDS.items():
            out[name] = self.values[f].reshape(shape + (n_r,))
        out["solved"] = self.solved.reshape(shape)
        out["resonance_count"] = self.count.reshape(shape)
        return out


def plan_resonance_sweep(case, axes, fixed, window, max_width, chunk=None) -> ResonanceScan:
    """Check a resonance sweep before any work: the corner points are valid cases."""
    import itertools

    fixed = {k: v for k, v in (fixed or {}).items() if k not in {a.name for a in axes}}
    for corner in itertools.islice(itertools.product(*[(a.values[0], a.values[-1]) for a in axes]), 64):
        case.with_params(**{**fixed, **{a.name: float(v) for a, v in zip(axes, corner)}})
    spec = ResonanceScan(case.text, case.path, dict(case.tables), dict(fixed), tuple(axes),
                         (float(window[0]), float(window[1])), max_width, chunk)
    return ResonanceScan(**{**spec.__dict__, "key": _key(spec)})


# ------------------------------------------------------------- transmission
#: per-energy fields of a transmission sweep record (archive variable names)
T_FIELDS = ("transmission", "transmission_error", "reflection", "log10_transmission", "unitarity_defect",
            "incident_open")


@dataclass(frozen=True)
class TransmissionScan(OnAxes):
    """T(E), R(E) at ``n`` even energies from ``lo`` to ``hi`` at every point of ``axes`` (plain data)."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    axes: tuple
    energies: tuple[float, float, int]
    incident: str
    chunk: int | None = None
    key: str = field(default="", compare=False)

    what = "transmission sweep"
    verb = "sweeping"
    max_chunk = 20

    @property
    def energy(self) -> np.ndarray:
        lo, hi, n = self.energies
        return np.linspace(lo, hi, int(n))

    def identity(self) -> dict:
        from fdsolver._version import __version__

        return {"study": "transmission sweep", "fdsolver": __version__, "case_text": self.case_text,
                "case_tables": self.tables, "fixed": self.fixed,
                "axes": self.axes_identity(),
                "energies": [float(v) for v in self.energies], "incident": self.incident}

    def solve_points(self, base, indices) -> dict:
        from fdsolver.continuum.scan import fixed_grid

        n, n_e = len(indices), int(self.energies[2])
        out: dict[str, Any] = {"index": np.asarray(indices, dtype=np.int64), "solved": np.zeros(n, np.int8)}
        for f in T_FIELDS:
            out[f] = np.full((n, n_e), 0 if f == "incident_open" else np.nan)
        messages = []
        lo, hi, _ = self.energies
        for j, flat in enumerate(indices):
            point = self.point(flat)
            where = ", ".join(f"{k} = {v:.10g}" for k, v in point.items())
            try:
                case = base.with_params(**{**self.fixed, **point})
                tr = fixed_grid(case.potential, lo, hi, n_e, incident=self.incident, domain=case.domain)
            except CaseError as err:
                messages.append([int(flat), f"at {where}: {err.message}"])
                continue
            out["solved"][j] = 1
            vals = {"transmission": tr.transmission, "transmission_error": tr.transmission_error,
                    "reflection": tr.reflection, "log10_transmission": tr.log_transmission / np.log(10.0),
                    "unitarity_defect": tr.unitarity_defect, "incident_open": tr.open}
            for f in T_FIELDS:
                out[f][j] = np.asarray(vals[f], float)
            messages.extend([int(flat), f"at {where}: {m}"] for m in tr.notes)
        out["messages"] = messages
        return out

    def collector(self) -> TransmissionResults:
        return TransmissionResults(self)


class TransmissionResults(PointNotes):
    """The sweep's (point, energy) arrays, filled chunk by chunk in any order."""

    def __init__(self, spec: TransmissionScan):
        self.spec = spec
        n, n_e = spec.n_points, int(spec.energies[2])
        self.values = {f: np.full((n, n_e), 0 if f == "incident_open" else np.nan) for f in T_FIELDS}
        self.solved = np.zeros(n, np.int8)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    def add(self, rec: dict) -> int:
        idx = np.asarray(rec["index"], dtype=np.int64)
        self.done[idx] = True
        self.solved[idx] = rec["solved"]
        for f in T_FIELDS:
            self.values[f][idx] = np.asarray(rec[f])
        self.keep_notes(rec)
        return int(idx.size)

    def arrays(self) -> dict:
        shape = self.spec.shape + (int(self.spec.energies[2]),)
        out: dict[str, Any] = {"energy": self.spec.energy}
        for f in T_FIELDS:
            out[f] = self.values[f].reshape(shape).astype(np.int8 if f == "incident_open" else float)
        return out


def plan_transmission_sweep(case, axes, fixed, energies, incident, chunk=None) -> TransmissionScan:
    """Check a transmission sweep before any work: the corner points are valid cases."""
    import itertools

    fixed = {k: v for k, v in (fixed or {}).items() if k not in {a.name for a in axes}}
    for corner in itertools.islice(itertools.product(*[(a.values[0], a.values[-1]) for a in axes]), 64):
        case.with_params(**{**fixed, **{a.name: float(v) for a, v in zip(axes, corner)}})
    spec = TransmissionScan(case.text, case.path, dict(case.tables), dict(fixed), tuple(axes),
                            (float(energies[0]), float(energies[1]), int(energies[2])), incident, chunk)
    return TransmissionScan(**{**spec.__dict__, "key": _key(spec)})


# ------------------------------------------------------------------ current
@dataclass(frozen=True)
class BiasScan:
    """The current density at every bias of ``biases`` (V) at ``temperature`` (K) and emitter ``fermi_level``."""

    case_text: str
    case_path: str | None
    tables: dict
    fixed: dict
    biases: tuple[float, ...]
    temperature: float
    fermi_level: float
    tol: float = 1e-6
    chunk: int | None = None
    key: str = field(default="", compare=False)

    what = "current-voltage curve"
    verb = "computing J(V) at"
    max_chunk = 4

    @property
    def n_points(self) -> int:
        return len(self.biases)

    def identity(self) -> dict:
        from fdsolver._version import __version__

        return {"study": "current", "fdsolver": __version__, "case_text": self.case_text, "case_tables": self.tables,
                "fixed": self.fixed, "biases": [float(b) for b in self.biases], "temperature": self.temperature,
                "fermi_level": self.fermi_level, "tol": self.tol}

    def solve_points(self, base, indices) -> dict:
        from fdsolver.continuum.current import current_density

        case = base.with_params(**self.fixed) if self.fixed else base
        n = len(indices)
        out: dict[str, Any] = {"index": np.asarray(indices, dtype=np.int64), "j": np.full(n, np.nan),
                               "err": np.full(n, np.nan), "evals": np.zeros(n, np.int32), "solved": np.zeros(n, np.int8),
                               "count": np.zeros(n, np.int32)}
        e_r, g_r, messages = [], [], []
        for k, flat in enumerate(indices):
            bias = float(self.biases[int(flat)])
            try:
                j, err, res, evals = current_density(case.potential, bias, temperature=self.temperature,
                                                     fermi_level=self.fermi_level, tol=self.tol)
            except CaseError as exc:
                messages.append([int(flat), f"at {bias:g} V: {exc.message}"])
                continue
            out["j"][k], out["err"][k], out["evals"][k], out["solved"][k] = j, err, evals, 1
            if res is not None:
                keep = ~np.asarray(res.bound, bool)
                e_r.append(np.asarray(res.energy)[keep])
                g_r.append(np.asarray(res.width)[keep])
                out["count"][k] = int(np.count_nonzero(keep))
                messages.extend([int(flat), f"at {bias:g} V: {m}"] for m in res.notes if not m.startswith("no resonance"))
        out["res_energy"] = np.concatenate(e_r) if e_r else np.zeros(0)
        out["res_width"] = np.concatenate(g_r) if g_r else np.zeros(0)
        out["messages"] = messages
        return out

    def collector(self) -> CurrentResults:
        return CurrentResults(self)


class CurrentResults(PointNotes):
    """J, its error and the resonances of the biased structure at every bias, filled in any order."""

    def __init__(self, spec: BiasScan):
        n = spec.n_points
        self.spec = spec
        self.j, self.err = np.full(n, np.nan), np.full(n, np.nan)
        self.evals, self.solved, self.count = np.zeros(n, np.int32), np.zeros(n, np.int8), np.zeros(n, np.int32)
        self.res_energy, self.res_width = np.full((n, 0), np.nan), np.full((n, 0), np.nan)
        self.done = np.zeros(n, bool)
        self.messages: dict[int, list[str]] = {}

    def add(self, rec: dict) -> int:
        idx = np.asarray(rec["index"], dtype=np.int64)
        self.done[idx] = True
        self.j[idx], self.err[idx], self.evals[idx] = rec["j"], rec["err"], rec["evals"]
        self.solved[idx], self.count[idx] = rec["solved"], rec["count"]
        counts = np.asarray(rec["count"], np.int64)
        need = int(counts.max()) if counts.size else 0
        if need > self.res_energy.shape[1]:
            pad = np.full((self.res_energy.shape[0], need - self.res_energy.shape[1]), np.nan)
            self.res_energy = np.concatenate([self.res_energy, pad], axis=1)
            self.res_width = np.concatenate([self.res_width, pad.copy()], axis=1)
        rows = np.repeat(idx, counts)
        cols = np.concatenate([np.arange(c) for c in counts]).astype(np.int64) if counts.size else np.zeros(0, np.int64)
        self.res_energy[rows, cols] = np.asarray(rec["res_energy"])
        self.res_width[rows, cols] = np.asarray(rec["res_width"])
        self.keep_notes(rec)
        return int(idx.size)

    def arrays(self) -> dict:
        bias = np.asarray(self.spec.biases, float)
        out: dict[str, Any] = {"bias": bias, "current_density": self.j, "current_density_error": self.err,
                               "solved": self.solved, "transmission_evaluations": self.evals,
                               "resonance": np.arange(self.res_energy.shape[1]), "resonance_energy": self.res_energy,
                               "resonance_width": self.res_width}
        pv = peak_valley(bias, self.j)
        if pv is not None:
            out.update(zip(("peak_bias", "peak_current_density", "valley_bias", "valley_current_density"), pv))
        return out


def peak_valley(bias, j) -> tuple[float, float, float, float] | None:
    """(peak bias, peak J, valley bias, valley J) of the strongest negative differential resistance, or None.

    A peak is a local maximum of |J| (over biases of one sign, in order of |V|)
    followed by a lower local minimum; of all such pairs the one with the
    largest drop J_peak - J_valley is returned.
    """
    v, cur = np.asarray(bias, float), np.asarray(j, float)
    best = None
    for sign in (1.0, -1.0):
        sel = np.flatnonzero((sign * v >= 0) & np.isfinite(cur))
        if sel.size < 3:
            continue
        sel = sel[np.argsort(sign * v[sel])]
        a = sign * cur[sel]
        for i in range(1, a.size - 1):
            if not (a[i] >= a[i - 1] and a[i] > a[i + 1]):
                continue
            k = i + 1
            while k + 1 < a.size and a[k + 1] <= a[k]:
                k += 1
            drop = a[i] - a[k]
            if drop > 0 and (best is None or drop > best[0]):
                best = (drop, sel[i], sel[k])
    if best is None:
        return None
    _, ip, iv = best
    return float(v[ip]), float(cur[ip]), float(v[iv]), float(cur[iv])


def plan_current(case, biases, temperature: float, fermi_level: float, fixed=None, chunk=None) -> BiasScan:
    """Check a J(V) run before any work: a layer stack with inner layers, finite biases, named units."""
    from fdsolver.continuum.current import biased_potential

    b = np.asarray(biases, float)
    if b.size == 0 or not np.all(np.isfinite(b)):
        raise CaseError("give at least one finite bias (V)", key="--bias")
    try:
        biased_potential(case.potential, float(b[0]))
    except CaseError as err:
        raise err.located(file=case.path) from None
    if case.domain.hard:
        raise CaseError('a current needs open ends (leads); remove boundary = "hard"', file=case.path,
                        key="domain.boundary")
    if not math.isfinite(case.potential.asymptote(-1)) or not math.isfinite(case.potential.asymptote(1)):
        raise CaseError("a current needs flat leads on both sides (the bias is applied across the inner layers); "
                        "remove the field or unbounded components", file=case.path, key="potential")
    spec = BiasScan(case.text, case.path, dict(case.tables), dict(fixed or {}), tuple(float(v) for v in b),
                    float(temperature), float(fermi_level), 1e-6, chunk)
    return BiasScan(**{**spec.__dict__, "key": _key(spec)})
