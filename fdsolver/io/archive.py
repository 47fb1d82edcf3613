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

:func:`write_dataset` writes to a temporary file in the target folder,
fsyncs it and renames it over the target (``os.replace``), holding Ctrl-C
until the file is complete, so a crash leaves the old file or the new one,
never a truncated one.  :func:`open_run` reads an archive back fully into
memory and checks it against the variable table of its kind.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import datetime as _dt
import json
import os
import signal
import tempfile
import threading
from pathlib import Path

import numpy as np

from fdsolver._version import __version__
from fdsolver.errors import ArchiveError, CaseError
from fdsolver.io.datasets import check
from fdsolver.io.specs import ARCHIVE_KINDS

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


def write_dataset(ds: xr.Dataset, path) -> Path:
    """Write ``ds`` to NetCDF at ``path`` atomically (temp file + os.replace)."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise CaseError(f"folder '{folder}' does not exist; create it or choose another output path", key="--output")
    if path.is_dir():
        raise CaseError(f"'{path}' is a directory; give a file name for the archive", key="--output")
    ds = ds.copy()
    ds.attrs = _clean_attrs(ds.attrs)
    for name in ds.variables:
        ds[name].attrs = _clean_attrs(ds[name].attrs)
    encoding: dict = {}
    for name in ds.variables:
        var = ds[name]
        if var.dtype.kind == "f":
            encoding[name] = {"_FillValue": None} if name in ds.coords else {"_FillValue": np.nan}
        if var.dtype.kind == "b":
            raise TypeError(f"boolean variable {name} must be stored as int8")
    for name in ds.data_vars:  # HDF5 checksums: a flipped byte is detected on reading
        if ds[name].dtype.kind in "fiu" and ds[name].ndim > 0:
            encoding.setdefault(name, {})["fletcher32"] = True
    # Ctrl-C is held back until the file is complete: an interrupt inside the NetCDF library can leave
    # its locks taken (the process would hang in the cleanup); it is raised right after the rename.
    held: list[int] = []
    old_handler = None
    if threading.current_thread() is threading.main_thread():
        old_handler = signal.signal(signal.SIGINT, lambda signum, _frame: held.append(signum))
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    os.close(fd)
    try:
        ds.to_netcdf(tmp, engine="netcdf4", encoding=encoding)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; archives get the usual permissions
        with open(tmp, "rb") as fh:  # on disk before the rename
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    finally:
        if old_handler is not None:
            signal.signal(signal.SIGINT, old_handler)
    if held:
        raise KeyboardInterrupt
    return path


def open_run(path) -> xr.Dataset:
    """Load an fdsolver archive fully into memory; :class:`ArchiveError` if it is not a readable one."""
    p = Path(path)
    if p.is_dir():
        raise ArchiveError("is a directory, not an archive", file=str(path))
    if not p.exists():
        raise ArchiveError("no such archive file", file=str(path))
    try:
        import xarray as xr

        with xr.open_dataset(p, engine="netcdf4") as ds:
            ds = ds.load()
    except Exception as exc:  # netCDF4/HDF5 raise OSError, RuntimeError, ValueError, KeyError ...
        raise ArchiveError(
            f"not a readable NetCDF archive ({type(exc).__name__}: {str(exc)[:120]}); it may be truncated or corrupt",
            file=str(path),
        ) from None
    if ds.attrs.get("fdsolver_kind") not in ARCHIVE_KINDS:
        raise ArchiveError("is a NetCDF file but not an fdsolver archive (no fdsolver_kind attribute)", file=str(path))
    if "case_text" not in ds.attrs:
        raise ArchiveError("archive has no case_text attribute; it was not written by fdsolver", file=str(path))
    check(ds, path)
    ds.encoding["source"] = str(path)
    return ds
