"""Archives: xarray Datasets with CF-1.13 attributes, written to NetCDF atomically and read back checked.

Every fdsolver result (a solve, a zero-range check or map, a sweep, a
threshold search) is a Dataset whose global attribute ``fdsolver_kind`` says
which; all carry the case file text verbatim (``case_text``), the resolved
parameters (``params``, JSON), the table files the case read (``case_tables``,
JSON), the fdsolver version (``source``) and a ``history`` line per write
with a UTC timestamp.  Their variables are declared in :mod:`fdsolver.io.specs`
and built by :mod:`fdsolver.io.datasets`.

Units: every number has ``units`` (UDUNITS-2 spelling; atomic units as
scaled SI units with ``units_name`` = bohr/hartree) and ``long_name``.
Wavefunctions are stored as psi * sqrt(1 length unit), which is
dimensionless (``units = "1"``), because UDUNITS cannot write half powers;
``units_note`` says so on the variable.

:func:`write_dataset` writes (with the netCDF4 library alone,
:mod:`fdsolver.io.netcdf`, from a Dataset or from the
:class:`~fdsolver.io.record.Record` a command built without xarray) to a temporary file in the target folder,
fsyncs it and renames it over the target (``os.replace``), holding Ctrl-C
until the file is complete, so a crash leaves the old file or the new one,
never a truncated one.  :func:`open_run` reads an archive back fully into
memory and checks it against the variable table of its kind.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import datetime as _dt
import errno
import json
import os
import signal
import stat
import tempfile
import threading
from pathlib import Path

import numpy as np

from fdsolver._version import __version__
from fdsolver.errors import ArchiveError, CaseError, printable, shorten, write_failure
from fdsolver.io.datasets import check
from fdsolver.io.lightxr import xarray
from fdsolver.io.netcdf import as_record, store_netcdf
from fdsolver.io.record import Field, Record
from fdsolver.limits import ARCHIVE_MEMORY_MB, MAX_MEMORY_MB, MAX_VARIABLES

if TYPE_CHECKING:
    import xarray as xr


def stamp(action: str) -> str:
    """One history line: an ISO-8601 UTC timestamp and what was done."""
    now = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    return f"{now}: {action} (fdsolver {__version__})"


def _clean_attrs(attrs: dict) -> dict:
    out = {}
    for k, v in attrs.items():
        if isinstance(v, (bool, np.bool_)):
            v = int(v)
        elif isinstance(v, dict):
            v = json.dumps(v)
        elif isinstance(v, (list, tuple)):
            v = json.dumps(list(v))
        elif v is None:
            v = ""
        out[k] = v
    return out


#: a temporary file of a write that has not been touched for this long was left by a killed write (seconds)
STALE_SECONDS = 300
_TMP_CHARS = frozenset("abcdefghijklmnopqrstuvwxyz0123456789_")


def remove_stale(path, suffix: str = ".tmp") -> None:
    """Remove temporary files of writes of ``path`` that were killed (untouched for :data:`STALE_SECONDS`).

    Only names this writer makes for this target (``.NAME.XXXXXXXX`` + ``suffix``) are touched; a write in
    progress changes its file all the time, so it is never taken for a stale one.
    """
    import time

    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    head, now = f".{path.name}.", time.time()
    try:
        names = [n for n in os.listdir(folder) if n.startswith(head) and n.endswith(suffix)]
    except OSError:
        return
    for name in names:
        tag = name[len(head):-len(suffix)]
        if len(tag) != 8 or not set(tag) <= _TMP_CHARS:
            continue
        p = folder / name
        try:
            st = p.lstat()
            if stat.S_ISREG(st.st_mode) and now - st.st_mtime > STALE_SECONDS:
                p.unlink()
        except OSError:
            pass


def _free_bytes(folder: Path) -> int | None:
    try:
        st = os.statvfs(folder)
    except (OSError, AttributeError):
        return None
    return st.f_bavail * st.f_frsize


def _cannot_write(exc: BaseException, path: Path, need: int) -> CaseError:
    """One line for a failed write (the NetCDF library says only "HDF error" when the disk is full)."""
    if isinstance(exc, OSError) and exc.errno is not None:
        return write_failure(exc, path)
    free = _free_bytes(path.parent if str(path.parent) else Path("."))
    if free is not None and free < need + 2**20:
        return write_failure(OSError(errno.ENOSPC, "No space left on device"), path)
    return CaseError(f"cannot write '{shorten(path)}' ({type(exc).__name__}: {str(exc)[:120]}); check the disk and "
                     "the folder's permissions", key="--output")


def write_dataset(ds: xr.Dataset | Record, path) -> Path:
    """Write ``ds`` (an xarray Dataset, or the :class:`~fdsolver.io.record.Record` of one: writing it needs no
    xarray) to NetCDF at ``path`` atomically (temp file + os.replace), through the one writer of archives
    (:func:`fdsolver.io.netcdf.store_netcdf`); stale temporary files of the same target left by killed writes are
    removed first.  A full disk, a read-only folder and the like are a :class:`CaseError` (key ``--output``), and
    nothing is left behind."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise CaseError(f"folder '{shorten(folder)}' does not exist; create it or choose another output path", key="--output")
    if path.is_dir():
        raise CaseError(f"'{shorten(path)}' is a directory; give a file name for the archive", key="--output")
    remove_stale(path)
    rec = as_record(ds)
    need = rec.nbytes
    free = _free_bytes(folder)
    if free is not None and free < need:
        raise CaseError(f"the archive needs about {need / 2**20:.3g} MB but the disk holding '{shorten(folder)}' has "
                        f"{free / 2**20:.3g} MB free; free some space or write elsewhere", key="--output")

    def cleaned(fields: dict) -> dict:
        return {k: Field(f.dims, f.values, _clean_attrs(f.attrs)) for k, f in fields.items()}

    rec = Record(data=cleaned(rec.data), coords=cleaned(rec.coords), attrs=_clean_attrs(rec.attrs))
    encoding: dict = {}
    for name, f in (*rec.data.items(), *rec.coords.items()):
        kind = np.asarray(f.values).dtype.kind
        if kind == "f":
            encoding[name] = {"_FillValue": None} if name in rec.coords else {"_FillValue": np.nan}
        if kind == "b":
            raise TypeError(f"boolean variable {name} must be stored as int8")
    for name, f in rec.data.items():  # HDF5 checksums: a flipped byte is detected on reading
        if np.asarray(f.values).dtype.kind in "fiu" and np.ndim(f.values) > 0:
            encoding.setdefault(name, {})["fletcher32"] = True
    # Ctrl-C is held back until the file is complete: an interrupt inside the NetCDF library can leave
    # its locks taken (the process would hang in the cleanup); it is raised right after the rename.
    held: list[int] = []
    old_handler = None
    if threading.current_thread() is threading.main_thread():
        old_handler = signal.signal(signal.SIGINT, lambda signum, _frame: held.append(signum))
    tmp = None
    try:
        try:
            fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
            os.close(fd)
            store_netcdf(rec, tmp, encoding)
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; archives get the usual permissions
            with open(tmp, "rb") as fh:  # on disk before the rename
                os.fsync(fh.fileno())
            os.replace(tmp, path)
        except BaseException as exc:
            if tmp is not None:
                try:
                    os.unlink(tmp)
                except OSError:
                    pass
            if isinstance(exc, (OSError, RuntimeError)):
                raise _cannot_write(exc, path, need) from None
            raise
    finally:
        if old_handler is not None:
            signal.signal(signal.SIGINT, old_handler)
    if held:
        raise KeyboardInterrupt
    return path


def open_run(path, *, memory_mb: float = ARCHIVE_MEMORY_MB) -> xr.Dataset:
    """Load an fdsolver archive fully into memory, treating it as untrusted input (:mod:`fdsolver.io.untrusted`).

    Nothing is read before the file's storage has been inspected and the declared size of its variables checked
    against ``memory_mb``; only the variables and attributes its kind declares are kept.
    :class:`ArchiveError` (naming the file) for anything else.
    """
    from fdsolver.io import hdf5, untrusted

    if not isinstance(path, (str, os.PathLike)) or not str(path).strip():
        raise ArchiveError(f"give the path of an archive, got {path!r}")
    if isinstance(memory_mb, bool) or not isinstance(memory_mb, (int, float)) or not 0 < memory_mb <= MAX_MEMORY_MB:
        raise ArchiveError(f"memory_mb must be a positive number of MB, at most {MAX_MEMORY_MB:g}, got {memory_mb!r}")
    p = Path(path)
    budget = float(memory_mb) * 2**20
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise ArchiveError("no such archive file", file=str(path)) from None
    except OSError as exc:
        raise ArchiveError(f"cannot read: {exc.strerror or exc}", file=str(path)) from None
    if stat.S_ISDIR(st.st_mode):
        raise ArchiveError("is a directory, not an archive", file=str(path))
    if not stat.S_ISREG(st.st_mode):
        raise ArchiveError("is not a regular file (a pipe or a device); an archive is a NetCDF file", file=str(path))
    if st.st_size > budget:
        raise ArchiveError(f"is {st.st_size / 2**20:.4g} MB, more than the {memory_mb:g} MB budget for reading an "
                           "archive (open_run(path, memory_mb=...) raises it)", file=str(path))
    try:
        with open(p, "rb") as fh:
            head = fh.read(len(hdf5.SIGNATURE))
    except OSError as exc:
        raise ArchiveError(f"cannot read: {exc.strerror or exc}", file=str(path)) from None
    if head != hdf5.SIGNATURE:
        raise ArchiveError("not a readable NetCDF archive: it does not start with the HDF5 signature of a NetCDF-4 "
                           "file, which an fdsolver archive is", file=str(path))
    declared = hdf5.inspect(p)
    if len(declared) > MAX_VARIABLES:
        raise ArchiveError(f"holds {len(declared)} variables; an fdsolver archive has at most {MAX_VARIABLES}",
                           file=str(path))
    total = sum(declared.values())
    if total > budget:
        raise ArchiveError(f"declares {total / 2**20:.4g} MB of data, more than the {memory_mb:g} MB budget for "
                           "reading an archive; nothing was read (open_run(path, memory_mb=...) raises it)",
                           file=str(path))
    try:
        xr = xarray()
        with xr.open_dataset(p, engine="netcdf4") as lazy:  # nothing is read yet but the attributes
            kind = untrusted.kind_attribute(lazy.attrs, path)
            attrs = untrusted.global_attributes(lazy.attrs, kind, path)
            ds = untrusted.declared_only(lazy, kind, path).load()
    except ArchiveError:
        raise
    except Exception as exc:  # netCDF4/HDF5 raise OSError, RuntimeError, ValueError, KeyError ...
        raise ArchiveError(
            f"not a readable NetCDF archive ({type(exc).__name__}: {printable(str(exc)[:120])}); it may be truncated "
            "or corrupt", file=str(path)) from None
    ds.attrs = attrs
    check(ds, path)
    untrusted.variables(ds, kind, path)
    ds.encoding["source"] = str(path)
    return ds
