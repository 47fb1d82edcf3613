"""Checkpoint and resume of a sweep: finished chunks appended to a file beside the output.

The checkpoint ``OUT.nc.checkpoint`` is JSON lines.  The first line is the
header: what defines the result (case text, table files, fixed params, exact
axis values, psi grid, fdsolver version; :meth:`SweepSpec.identity`), its
SHA-256 and the history line of the run that started it.  Every further line
is one finished chunk, ``CRC32 JSON``, its arrays stored as base64 of their
raw bytes (so values come back bit for bit).  Each line is written with one
``write``, flushed and fsync'ed; the header is written to a temporary file
and renamed into place.  A kill at any moment (even SIGKILL) leaves complete
lines plus at most one partial last line, which resume drops.  Resuming a
different sweep is refused with the first difference named.  The final NetCDF
is built from the same arrays whether they came from the checkpoint or were
just computed, and carries the original history line, so a resumed run
writes the same file as an uninterrupted one.
"""

from __future__ import annotations

import base64
import json
import os
import zlib
from pathlib import Path

import numpy as np

from fdsolver.errors import CaseError

MAGIC = "fdsolver sweep checkpoint"
VERSION = 1


def path_for(output) -> Path:
    return Path(str(output) + ".checkpoint")


def _enc(v):
    if isinstance(v, np.ndarray):
        a = np.ascontiguousarray(v)
        return {"nd": a.dtype.str, "shape": list(a.shape), "b64": base64.b64encode(a.tobytes()).decode("ascii")}
    return v


def _dec(v):
    if isinstance(v, dict) and "nd" in v:
        return np.frombuffer(base64.b64decode(v["b64"]), dtype=np.dtype(v["nd"])).reshape(v["shape"]).copy()
    return v


def encode(record: dict) -> bytes:
    body = json.dumps({k: _enc(v) for k, v in record.items()}, separators=(",", ":")).encode()
    return b"%08x " % zlib.crc32(body) + body + b"\n"


def decode(line: bytes) -> dict | None:
    """The record of one line, or None if it is partial or damaged."""
    if not line.endswith(b"\n") or len(line) < 10 or line[8:9] != b" ":
        return None
    body = line[9:-1]
    try:
        if int(line[:8], 16) != zlib.crc32(body):
            return None
        return {k: _dec(v) for k, v in json.loads(body).items()}
    except (ValueError, KeyError, TypeError):
        return None


def difference(old: dict, new: dict) -> str | None:
    """The first way two sweep identities differ, in words (None if they agree)."""
    if old.get("case_text") != new["case_text"]:
        a, b = (old.get("case_text") or "").splitlines(), new["case_text"].splitlines()
        for i in range(max(len(a), len(b))):
            la, lb = (a[i] if i < len(a) else "<end>"), (b[i] if i < len(b) else "<end>")
            if la != lb:
                return f"the case text differs at line {i + 1}: checkpoint has {la.strip()!r}, this case has {lb.strip()!r}"
    if old.get("case_tables") != new["case_tables"]:
        names = sorted(set(old.get("case_tables", {})) ^ set(new["case_tables"])) or sorted(
            k for k in new["case_tables"] if old["case_tables"].get(k) != new["case_tables"][k])
        return f"the table file(s) {', '.join(names)} differ"
    if old.get("fixed") != new["fixed"]:
        return f"the fixed params (--set) differ: checkpoint {old.get('fixed')}, this run {new['fixed']}"
    oa, na = old.get("axes", []), new["axes"]
    if [a["name"] for a in oa] != [a["name"] for a in na]:
        return f"the checkpoint sweeps {', '.join(a['name'] for a in oa)}; this run sweeps {', '.join(a['name'] for a in na)}"
    for a, b in zip(oa, na):
        if a["values"] != b["values"]:
            return f"the values of {a['name']} differ: checkpoint {a['text']} ({len(a['values'])} values), this run {b['text']} ({len(b['values'])} values)"
    if old.get("save_psi") != new["save_psi"] or old.get("psi_x") != new["psi_x"]:
        return "the wavefunction settings differ (--save-psi or [sweep] psi_points/psi_range)"
    if old.get("fdsolver") != new["fdsolver"]:
        return f"it was written by fdsolver {old.get('fdsolver')}, this is {new['fdsolver']}"
    return None


class Checkpoint:
    """An open checkpoint: ``header`` (dict) and ``append(record)``; holds an exclusive lock while open."""

    def __init__(self, path: Path, header: dict, fh):
        self.path, self.header, self._fh = path, header, fh

    @staticmethod
    def _lock(fh, path) -> None:
        try:
            import fcntl
        except ImportError:  # not POSIX: no lock
            return
        try:
            fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            fh.close()
            raise CaseError("another fdsolver sweep is writing this checkpoint; wait for it to finish", file=str(path)) from None

    @classmethod
    def create(cls, path: Path, identity: dict, key: str, history: str) -> "Checkpoint":
        header = {"magic": MAGIC, "version": VERSION, "key": key, "identity": identity, "history": history}
        tmp = path.with_name(f".{path.name}.tmp")
        with open(tmp, "wb") as fh:
            fh.write(json.dumps(header).encode() + b"\n")
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
        fh = open(path, "ab")
        cls._lock(fh, path)
        return cls(path, header, fh)

    @staticmethod
    def read_header(path: Path) -> dict:
        try:
            with open(path, "rb") as fh:
                header = json.loads(fh.readline())
        except (OSError, ValueError):
            header = None
        if not isinstance(header, dict) or header.get("magic") != MAGIC:
            raise CaseError("is not an fdsolver sweep checkpoint (or its header is damaged); move it away", file=str(path))
        if header.get("version") != VERSION:
            raise CaseError(f"checkpoint format {header.get('version')} is not {VERSION}; finish it with the fdsolver that wrote it", file=str(path))
        return header

    @classmethod
    def resume(cls, path: Path, identity: dict, key: str, on_record) -> "Checkpoint":
        """Check that ``path`` belongs to this sweep, feed its records to ``on_record``, open it for appending."""
        header = cls.read_header(path)
        if header.get("key") != key:
            why = difference(header.get("identity", {}), identity) or "its sweep definition differs"
            raise CaseError(f"refusing to resume: this checkpoint is of a different sweep ({why}); "
                            "use another output name, or --restart to discard it", file=str(path))
        fh = open(path, "r+b")
        cls._lock(fh, path)
        fh.readline()
        good = fh.tell()
        while True:
            line = fh.readline()
            if not line:
                break
            rec = decode(line)
            if rec is not None:
                on_record(rec)
            if line.endswith(b"\n"):
                good = fh.tell()
        fh.truncate(good)  # a partial last line from a kill
        fh.seek(good)
        return cls(path, header, fh)

    @staticmethod
    def count_points(path: Path) -> int:
        n = 0
        with open(path, "rb") as fh:
            fh.readline()
            for line in fh:
                rec = decode(line)
                if rec is not None:
                    n += len(rec["index"])
        return n

    def append(self, record: dict) -> None:
        self._fh.write(encode(record))
        self._fh.flush()
        os.fsync(self._fh.fileno())

    def close(self) -> None:
        if not self._fh.closed:
            self._fh.close()

    def discard(self) -> None:
        self.close()
        self.path.unlink(missing_ok=True)


def _chunks(todo: np.ndarray, size: int):
    """Contiguous runs of the flat indices still to do, cut to ``size``."""
    if todo.size == 0:
        return
    breaks = np.flatnonzero(np.diff(todo) != 1) + 1
    for run in np.split(todo, breaks):
        for i in range(0, run.size, size):
            yield run[i : i + size]


def run_sweep(spec, executor, *, output=None, resume=False, restart=False, action=None, progress=None, locate=True):
    """Run ``spec`` on ``executor`` with a checkpoint beside ``output``; write ``output`` atomically at the end.

    ``progress(n)`` is called with the number of points each finished chunk
    (or the resumed checkpoint) adds.  Returns the sweep Dataset.
    """
    from fdsolver.io.archive import stamp, write_dataset
    from fdsolver.scans.sweep import Results, base_case, locate_along

    base = base_case(spec)
    case = base.with_params(**spec.fixed) if spec.fixed else base
    action = action or f"fdsolver sweep {spec.case_path or case.title} " + " ".join(f"--vary {a.text}" for a in spec.axes)
    results = Results(spec, case.settings.max_states)
    ck, history = None, None
    if output is not None:
        path = path_for(output)
        if path.exists() and restart:
            Checkpoint.read_header(path)  # only ever delete our own files
            path.unlink()
        if path.exists() and not resume:
            done = Checkpoint.count_points(path) if path.stat().st_size else 0
            raise CaseError(f"a checkpoint of an unfinished sweep is here ({done} of its points done); add --resume to "
                            "continue it or --restart to discard it", file=str(path))
        if path.exists():
            ck = Checkpoint.resume(path, spec.identity(), spec.key, results.add)
        else:
            ck = Checkpoint.create(path, spec.identity(), spec.key, stamp(action))
        history = ck.header["history"]
    try:
        if progress and results.n_done:
            progress(results.n_done)
        todo = np.flatnonzero(~results.done)
        size = spec.chunk or max(1, min(200, -(-todo.size // (8 * max(1, executor.workers)))))
        jobs = ((spec, idx) for idx in _chunks(todo, size))
        for rec in executor.imap_unordered(_run_chunk, jobs):
            if ck is not None:
                ck.append(rec)
            n = results.add(rec)
            if progress:
                progress(n)
        found = locate_along(spec, results.bound) if locate else []
        ds = results.dataset(case, action, history, found)
        if output is not None:
            write_dataset(ds, output)
            ck.discard()
            ck = None
        return ds
    finally:
        if ck is not None:
            ck.close()


def _run_chunk(job):
    from fdsolver.scans.sweep import run_chunk

    return run_chunk(job)
