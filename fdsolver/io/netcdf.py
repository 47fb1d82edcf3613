"""The NetCDF-4 file of an archive, written from its variables with the netCDF4 library alone.

:func:`store_netcdf` is the one writer of every fdsolver archive
(:func:`fdsolver.io.archive.write_dataset` calls it on a temporary file).  It
takes a :class:`~fdsolver.io.record.Record` (an xarray Dataset is turned into
one first, :func:`as_record`), so writing needs neither xarray nor pandas:
their import costs a cold ``fdsolver solve -o run.nc`` about 0.3 s of CPU,
which reading an archive back still pays (measured in DEVELOPERS.md).

What is written, as xarray's netCDF4 store writes the same variables (checked
variable by variable against it in the tests): global attributes; one
dimension per dimension name, of its size; every variable with its
dimensions and attributes, data variables first, then coordinates; floats,
signed and unsigned integers as themselves, text as NetCDF-4 variable-length
strings; a ``_FillValue`` where the encoding gives one (NaN for float data,
none for coordinates); HDF5 Fletcher-32 checksums where the encoding asks for
them (the library then chooses the chunks); a coordinate that is not a
dimension (or a scalar one) is named in the CF ``coordinates`` attribute of
every data variable over its dimensions (names sorted).  Booleans, dates and
complex numbers are refused (the archives store flags as int8 and have no
dates).
"""

from __future__ import annotations

import sys
import threading

import numpy as np

from fdsolver.io.record import Field, Record

#: the netCDF-C library is not thread-safe: fdsolver's writes hold this lock (and xarray's, where xarray is loaded
#: and may be reading in another thread)
_LOCK = threading.Lock()


def as_record(ds) -> Record:
    """``ds`` as a :class:`Record`: itself, or an xarray Dataset's data variables, coordinates and attributes
    (values as numpy arrays; nothing of xarray is imported)."""
    if isinstance(ds, Record):
        return ds

    def fields(variables) -> dict[str, Field]:
        return {str(k): Field(tuple(str(d) for d in v.dims), np.asarray(v.values), dict(v.attrs))
                for k, v in variables.items()}

    return Record(data=fields(ds.data_vars), coords=fields(ds.coords), attrs=dict(ds.attrs))


def _file_type(name: str, values: np.ndarray):
    """The NetCDF-4 type of a variable's values: its numpy dtype, or ``str`` for text."""
    kind = values.dtype.kind
    if kind in "fiu":
        return values.dtype
    if kind in "US" or (kind == "O" and all(isinstance(v, str) for v in values.ravel().tolist())):
        return str
    raise TypeError(f"variable {name} of dtype {values.dtype} cannot be archived (floats, integers and text only)")


def _xarray_lock():
    """xarray's lock around the netCDF-C library, if xarray's backends are loaded (else None)."""
    locks = sys.modules.get("xarray.backends.netCDF4_")
    return getattr(locks, "NETCDF4_PYTHON_LOCK", None) if locks is not None else None


def store_netcdf(record, path: str, encoding: dict) -> None:
    """Write ``record`` (a :class:`Record` or an xarray Dataset) to a new NETCDF4 file at ``path``.

    ``encoding[name]`` may hold ``_FillValue`` (a number, or None for none) and ``fletcher32`` (bool) for a
    variable.  An existing file at ``path`` is overwritten (the caller writes to a fresh temporary file).
    """
    import netCDF4

    rec = as_record(record)
    fields = [*rec.data.items(), *rec.coords.items()]
    types = {name: _file_type(name, np.asarray(f.values)) for name, f in fields}
    extra = [name for name, f in rec.coords.items() if f.dims != (name,)]  # coordinates that are not dimensions
    outer = _xarray_lock()
    with _LOCK:
        if outer is not None:
            outer.acquire()
        try:
            nc = netCDF4.Dataset(path, mode="w", format="NETCDF4")
            try:
                nc.setncatts(rec.attrs)
                sizes = rec.sizes
                for dim in dict.fromkeys(d for _, f in fields for d in f.dims):  # in order of first use
                    nc.createDimension(dim, sizes[dim])
                for name, f in fields:
                    enc = encoding.get(name, {})
                    var = nc.createVariable(name, types[name], f.dims, fletcher32=bool(enc.get("fletcher32", False)),
                                            contiguous=False, fill_value=enc.get("_FillValue"))
                    attrs = dict(f.attrs)
                    named = [c for c in extra if name in rec.data and set(rec.coords[c].dims) <= set(f.dims)]
                    if named:
                        attrs["coordinates"] = " ".join(sorted(named))
                    var.setncatts(attrs)
                    values = np.asarray(f.values)
                    if types[name] is str:
                        values = values.astype(object)
                    if values.size:
                        var[...] = values
            finally:
                nc.close()
        finally:
            if outer is not None:
                outer.release()
