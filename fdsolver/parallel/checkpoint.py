"""The checkpoint format: finished chunks of a scan appended to a file beside its output.

The checkpoint ``OUT.nc.checkpoint`` is JSON lines.  The first line is the
header: what defines the result (the scan's ``identity()``: case text, table
files, fixed params, exact axis values, settings, fdsolver version), its
SHA-256 and the history line of the run that started it.  Every further line
is one finished chunk, ``CRC32 JSON``, its arrays stored as base64 of their
raw bytes (so values come back bit for bit).  Each line is written with one
``write``, flushed and fsync'ed; the header is written to a temporary file
and renamed into place.  A kill at any moment (even SIGKILL) leaves complete
lines plus at most one partial last line, which resume drops.  Resuming a
different scan is refused with the first difference named (:func:`difference`).
The file is held under ``flock`` while open.  What runs the chunks and when
the checkpoint is created, resumed and removed is
:mod:`fdsolver.scans.runner`.
"""

from __future__ import annotations

import base64
import json
import os
import zlib
from pathlib import Path

import numpy as np

from fdsolver.errors import CaseError, write_failure

#: longest header line read (the identity holds the case text, its tables and every axis value)
MAX_HEADER_BYTES = 256 * 2**20
MAGIC = "fdsolver sweep checkpoint"  # the format's name since its first version (it now serves every scan)
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
    except (ValueError, KeyError, TypeError, AttributeError, RecursionError):
        return None


#: identity key -> how a difference in it is named (keys not listed are named by themselves)
LABELS = {
    "fixed": "the fixed params (--set)",
    "save_psi": "the wavefunction settings (--save-psi or [sweep] psi_points/psi_range)",
    "energies_only": "the records kept (--energies-only)",
    "psi_x": "the wavefunction settings (--save-psi or [sweep] psi_points/psi_range)",
    "shape": "the replacement shape (--shape)",
    "tolerance": "the tolerance (--tolerance)",
    "from_finite": "the direction (--from-finite)",
    "width": "the replacement width (--widths)",
    "study": "the kind of scan",
}


def _case_difference(old: dict, new: dict) -> str | None:
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
    return None


def _axes_difference(old: dict, new: dict) -> str | None:
    oa, na = old.get("axes", []), new["axes"]
    if [a["name"] for a in oa] != [a["name"] for a in na]:
        return f"the checkpoint scans {', '.join(a['name'] for a in oa)}; this run scans {', '.join(a['name'] for a in na)}"
    for a, b in zip(oa, na):
        if a["values"] != b["values"]:
            return (f"the values of {a['name']} differ: checkpoint {a['text']} ({len(a['values'])} values), "
                    f"this run {b['text']} ({len(b['values'])} values)")
    return None


def _said(identity: dict, key: str) -> str:
    return repr(identity[key]) if key in identity else "not set"


def difference(old: dict, new: dict) -> str | None:
    """The first way two scan identities differ, in words (None if they agree)."""
    if old.get("study", "sweep") != new.get("study", "sweep"):
        return f"it is a checkpoint of a {old.get('study', 'sweep')}, not of a {new.get('study', 'sweep')}"
    why = _case_difference(old, new)
    if why:
        return why
    if old.get("fixed") != new.get("fixed"):
        return f"{LABELS['fixed']} differ: checkpoint {old.get('fixed')}, this run {new.get('fixed')}"
    why = _axes_difference(old, new)
    if why:
        return why
    for key in [*new, *(k for k in old if k not in new)]:  # a key either side may leave out (a default)
        if key in ("case_text", "case_tables", "fixed", "axes", "fdsolver", "study") or old.get(key) == new.get(key):
            continue
        return (f"{LABELS.get(key, 'the ' + key.replace('_', ' '))} differ: checkpoint {_said(old, key)}, "
                f"this run {_said(new, key)}")[:400]
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
            raise CaseError("another fdsolver run is writing this checkpoint; wait for it to finish", file=str(path)) from None

    @classmethod
    def create(cls, path: Path, identity: dict, key: str, history: str) -> "Checkpoint":
        header = {"magic": MAGIC, "version": VERSION, "key": key, "identity": identity, "history": history}
        tmp = path.with_name(f".{path.name}.tmp")
        try:
            with open(tmp, "wb") as fh:
                fh.write(json.dumps(header).encode() + b"\n")
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, path)
            fh = open(path, "ab")
        except OSError as exc:
            try:
                tmp.unlink()
            except OSError:
                pass
            raise write_failure(exc, path) from None
        cls._lock(fh, path)
        return cls(path, header, fh)

    @staticmethod
    def check_path(path: Path) -> None:
        """CaseError if something other than a regular file (a folder, a pipe, a device) stands at ``path``:
        such a thing is never read (a pipe would block) nor replaced."""
        import stat

        try:
            st = os.stat(path)
        except FileNotFoundError:
            return
        except OSError as exc:
            raise CaseError(f"cannot use the checkpoint path: {exc.strerror or exc}", file=str(path), key="--output") from None
        if stat.S_ISDIR(st.st_mode):
            raise CaseError("a folder stands where the checkpoint goes; move it away or choose another output name",
                            file=str(path), key="--output")
        if not stat.S_ISREG(st.st_mode):
            raise CaseError("a pipe or a device stands where the checkpoint goes; move it away or choose another "
                            "output name", file=str(path), key="--output")

    @staticmethod
    def read_header(path: Path) -> dict:
        Checkpoint.check_path(path)
        try:
            with open(path, "rb") as fh:
                header = json.loads(fh.readline(MAX_HEADER_BYTES))
        except (OSError, ValueError, RecursionError):
            header = None
        if not isinstance(header, dict) or header.get("magic") != MAGIC:
            raise CaseError("is not an fdsolver checkpoint (or its header is damaged); move it away", file=str(path))
        if header.get("version") != VERSION:
            raise CaseError(f"checkpoint format {header.get('version')} is not {VERSION}; finish it with the fdsolver that wrote it", file=str(path))
        return header

    @classmethod
    def resume(cls, path: Path, identity: dict, key: str, on_record, what: str = "sweep") -> "Checkpoint":
        """Check that ``path`` belongs to this scan (a ``what``), feed its records to ``on_record(record, line)``,
        open it for appending."""
        header = cls.read_header(path)
        if header.get("key") != key:
            why = difference(header.get("identity", {}), identity) or f"its {what} definition differs"
            raise CaseError(f"refusing to resume: this checkpoint is of a different {what} ({why}); "
                            "use another output name, or --restart to discard it", file=str(path))
        fh = open(path, "r+b")
        cls._lock(fh, path)
        fh.readline()
        good = fh.tell()
        lineno = 1
        try:
            while True:
                line = fh.readline()
                lineno += 1
                if not line:
                    break
                rec = decode(line)
                if rec is not None:
                    on_record(rec, lineno)
                if line.endswith(b"\n"):
                    good = fh.tell()
        except BaseException:
            fh.close()
            raise
        fh.truncate(good)  # a partial last line from a kill
        fh.seek(good)
        return cls(path, header, fh)

    @staticmethod
    def count_points(path: Path) -> int:
        """Points held by the checkpoint at ``path`` (CaseError if it is not one)."""
        Checkpoint.read_header(path)
        n = 0
        with open(path, "rb") as fh:
            fh.readline()
            for line in fh:
                rec = decode(line)
                if rec is not None:
                    n += int(np.size(rec.get("index", ())))
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
