"""The storage of an archive, inspected before the NetCDF library reads it: no links, no other files, bounded sizes.

An fdsolver archive is a NetCDF-4 file, that is an HDF5 file with one group of
datasets.  HDF5 can do much more, and a file from elsewhere may use it to
make a reader block, exhaust memory or read other files: external storage
(a variable's bytes kept in another file, a FIFO or a device), virtual
datasets (made of other files), soft and external links (to anywhere, to
itself), groups (nested, in cycles), datasets declaring terabytes that were
never written, or compressed a thousandfold.  The NetCDF library follows all
of these as soon as it opens a file, so :func:`inspect` looks at the file
first with the HDF5 library that netCDF4 itself loads (through ctypes; no
h5py), without following any link and without reading any data:

* every link in the root group is a hard link to a dataset (no groups, named
  types, soft or external links);
* no dataset keeps its bytes outside the file (external storage) or is
  virtual;
* every dataset is of a number or text type, and its declared size (points
  times item size; what it takes in memory once read, however it is stored)
  is added up;
* no object carries more than :data:`fdsolver.limits.MAX_ATTRIBUTES`
  attributes, and those NetCDF does not keep for itself are numbers or text.

It returns the datasets' names and declared sizes; :mod:`fdsolver.io.archive`
checks them against the archive kind and the memory budget.  Every refusal is
an :class:`~fdsolver.errors.ArchiveError` naming the file.
"""

from __future__ import annotations

import ctypes
import glob
import os
import threading

from fdsolver.errors import ArchiveError, printable, shorten
from fdsolver.limits import MAX_ATTRIBUTES, MAX_VARIABLES

#: the 8 bytes every HDF5 file (and so every NetCDF-4 file) starts with
SIGNATURE = b"\x89HDF\r\n\x1a\n"
#: attributes NetCDF-4 and the HDF5 dimension scales keep for themselves (any type; never read by fdsolver)
INTERNAL_ATTRIBUTES = frozenset({"REFERENCE_LIST", "DIMENSION_LIST", "CLASS", "NAME", "_Netcdf4Dimid",
                                 "_Netcdf4Coordinates", "_NCProperties", "_nc3_strict", "_FillValue",
                                 "_IsNetcdf4", "_SuperblockVersion", "_Format"})

# HDF5 enumerations (H5public.h, H5Lpublic.h, H5Ipublic.h, H5Tpublic.h, H5Dpublic.h): stable since HDF5 1.8
_H5F_ACC_RDONLY = 0
_H5_INDEX_NAME, _H5_ITER_NATIVE = 0, 2
_H5L_TYPE_HARD = 0
_H5I_DATASET = 5
_H5T_INTEGER, _H5T_FLOAT, _H5T_STRING = 0, 1, 3
_H5D_VIRTUAL = 3
_DATA_CLASSES = (_H5T_INTEGER, _H5T_FLOAT, _H5T_STRING)
_LINK_KINDS = {1: "a soft link", 64: "an external link (to another file)"}
_OBJECT_KINDS = {2: "a group", 3: "a named data type"}


class _Library:
    """The HDF5 C library netCDF4 loaded, with the calls :func:`inspect` makes."""

    def __init__(self, path: str):
        lib = ctypes.CDLL(path)
        hid, herr, c, sz, i64 = ctypes.c_int64, ctypes.c_int, ctypes.c_char_p, ctypes.c_size_t, ctypes.c_int64
        buf = ctypes.c_void_p
        sig = {
            "H5open": (herr, []),
            "H5Eset_auto2": (herr, [hid, ctypes.c_void_p, ctypes.c_void_p]),
            "H5Fopen": (hid, [c, ctypes.c_uint, hid]),
            "H5Fclose": (herr, [hid]),
            "H5Gopen2": (hid, [hid, c, hid]),
            "H5Gclose": (herr, [hid]),
            "H5Oopen": (hid, [hid, c, hid]),
            "H5Oclose": (herr, [hid]),
            "H5Iget_type": (ctypes.c_int, [hid]),
            "H5Dget_create_plist": (hid, [hid]),
            "H5Dget_space": (hid, [hid]),
            "H5Dget_type": (hid, [hid]),
            "H5Pget_external_count": (ctypes.c_int, [hid]),
            "H5Pget_layout": (ctypes.c_int, [hid]),
            "H5Pclose": (herr, [hid]),
            "H5Sget_simple_extent_npoints": (i64, [hid]),
            "H5Sclose": (herr, [hid]),
            "H5Tget_class": (ctypes.c_int, [hid]),
            "H5Tget_size": (sz, [hid]),
            "H5Tclose": (herr, [hid]),
            "H5Aopen": (hid, [hid, c, hid]),
            "H5Aiterate2": (herr, [hid, ctypes.c_int, ctypes.c_int, ctypes.POINTER(ctypes.c_uint64), buf, buf]),
            "H5Aget_type": (hid, [hid]),
            "H5Aclose": (herr, [hid]),
        }
        for name, (res, args) in sig.items():
            f = getattr(lib, name)
            f.restype, f.argtypes = res, args
        iterate = getattr(lib, "H5Literate2", None) or getattr(lib, "H5Literate")  # HDF5 1.12+ / 1.10
        iterate.restype = herr
        iterate.argtypes = [hid, ctypes.c_int, ctypes.c_int, ctypes.POINTER(ctypes.c_uint64), buf, buf]
        self.iterate_links = iterate
        self.lib = lib
        lib.H5open()
        lib.H5Eset_auto2(0, None, None)  # no error stacks printed to stderr (NetCDF does the same)


_LIB: list = []
_LOCK = threading.Lock()


def _library_path() -> str | None:
    """The HDF5 library of the netCDF4 package: the one already mapped into this process, else the one beside it."""
    import netCDF4  # noqa: F401  (loads its HDF5 library)

    try:
        with open("/proc/self/maps") as fh:
            for line in fh:
                name = os.path.basename(line.split()[-1]) if line.strip() else ""
                if name.startswith("libhdf5") and not name.startswith("libhdf5_hl") and ".so" in name:
                    return line.split()[-1]
    except OSError:
        pass
    site = os.path.dirname(os.path.dirname(os.path.abspath(netCDF4.__file__)))
    for pattern in ("netcdf4.libs/libhdf5-*", "netCDF4.libs/libhdf5-*", "netCDF4/.dylibs/libhdf5*"):
        found = sorted(p for p in glob.glob(os.path.join(site, pattern)) if "hdf5_hl" not in p)
        if found:
            return found[0]
    import ctypes.util

    return ctypes.util.find_library("hdf5")


def _library(path) -> _Library:
    with _LOCK:
        if not _LIB:
            where = _library_path()
            if where is None:
                raise ArchiveError("cannot check the archive's storage: the HDF5 library of netCDF4 was not found",
                                   file=str(path))
            try:
                _LIB.append(_Library(where))
            except (OSError, AttributeError) as exc:
                raise ArchiveError(f"cannot check the archive's storage: the HDF5 library could not be used ({exc})",
                                   file=str(path)) from None
        return _LIB[0]


def inspect(path) -> dict[str, int]:
    """Check the storage of the HDF5 (NetCDF-4) file at ``path`` (module docstring) without reading any data.

    Returns ``{dataset name: declared bytes}`` (variable-length text counts its pointers only; its bytes are
    inside the file, whose size the caller bounds).
    """
    from xarray.backends.locks import HDF5_LOCK  # the HDF5 library is not thread-safe: the lock xarray's reads hold

    h = _library(path)
    with HDF5_LOCK:
        return _inspect(h, path)


def _inspect(h: _Library, path) -> dict[str, int]:
    lib = h.lib
    f = lib.H5Fopen(os.fsencode(path), _H5F_ACC_RDONLY, 0)
    if f < 0:
        raise ArchiveError("is not a readable HDF5/NetCDF-4 file; it may be truncated or corrupt", file=str(path))
    opened: list[tuple] = []  # (closer, id): everything opened is closed, whatever happens

    def keep(closer, ident: int, what: str) -> int:
        if ident < 0:
            raise ArchiveError(f"cannot read {what}; the file is damaged", file=str(path))
        opened.append((closer, ident))
        return ident

    def release(ident: int) -> None:
        for i, (closer, other) in enumerate(opened):
            if other == ident:
                closer(other)
                del opened[i]
                return

    try:
        root = keep(lib.H5Gclose, lib.H5Gopen2(f, b"/", 0), "the root group")
        _attributes(h, root, "the archive", path, keep, release)
        links = _links(h, root, path)
        sizes: dict[str, int] = {}
        for name, kind in links:
            shown = printable(shorten(name, 60))
            if kind != _H5L_TYPE_HARD:
                raise ArchiveError(f"holds {_LINK_KINDS.get(kind, 'a link of an unknown kind')} named '{shown}'; an "
                                   "fdsolver archive has none, and it is not followed", file=str(path))
        for name, _ in links:
            shown = printable(shorten(name, 60))
            obj = keep(lib.H5Oclose, lib.H5Oopen(root, name.encode("utf-8", "surrogateescape"), 0), f"'{shown}'")
            otype = lib.H5Iget_type(obj)
            if otype != _H5I_DATASET:
                raise ArchiveError(f"holds {_OBJECT_KINDS.get(otype, 'an object of an unknown kind')} named '{shown}'; "
                                   "an fdsolver archive holds variables only", file=str(path))
            sizes[name] = _dataset(h, obj, shown, path, keep, release)
            _attributes(h, obj, f"variable '{shown}'", path, keep, release)
            release(obj)
        return sizes
    finally:
        for closer, ident in reversed(opened):
            closer(ident)
        lib.H5Fclose(f)


_LINK_CALLBACK = ctypes.CFUNCTYPE(ctypes.c_int, ctypes.c_int64, ctypes.c_void_p, ctypes.c_void_p, ctypes.c_void_p)


def _links(h: _Library, group: int, path) -> list[tuple[str, int]]:
    """(name, link type) of every link in ``group``, in one pass in storage order (nothing is followed);
    ArchiveError beyond MAX_VARIABLES."""
    found: list[tuple[str, int]] = []

    def visit(_group, name, info, _data):
        kind = ctypes.c_int.from_address(info).value  # H5L_info_t / H5L_info2_t: the link type comes first
        found.append((ctypes.string_at(name).decode("utf-8", "surrogateescape"), kind))
        return 1 if len(found) > MAX_VARIABLES else 0

    idx = ctypes.c_uint64(0)
    status = h.iterate_links(group, _H5_INDEX_NAME, _H5_ITER_NATIVE, ctypes.byref(idx), _LINK_CALLBACK(visit), None)
    if len(found) > MAX_VARIABLES:
        raise ArchiveError(f"holds more than {MAX_VARIABLES} objects; an fdsolver archive has a few dozen variables",
                           file=str(path))
    if status < 0:
        raise ArchiveError("cannot list the archive's contents; the file is damaged", file=str(path))
    return found


def _dataset(h: _Library, d: int, shown: str, path, keep, release) -> int:
    """Declared bytes of dataset ``d``; ArchiveError for external storage, virtual layout or a type of no number."""
    lib = h.lib
    plist = keep(lib.H5Pclose, lib.H5Dget_create_plist(d), f"the storage of '{shown}'")
    if lib.H5Pget_external_count(plist) != 0:
        raise ArchiveError(f"variable '{shown}' keeps its data in another file (HDF5 external storage); an fdsolver "
                           "archive never does, and it is not read", file=str(path))
    if lib.H5Pget_layout(plist) == _H5D_VIRTUAL:
        raise ArchiveError(f"variable '{shown}' is made of other files (an HDF5 virtual dataset); it is not read",
                           file=str(path))
    release(plist)
    space = keep(lib.H5Sclose, lib.H5Dget_space(d), f"the shape of '{shown}'")
    points = lib.H5Sget_simple_extent_npoints(space)
    release(space)
    dtype = keep(lib.H5Tclose, lib.H5Dget_type(d), f"the type of '{shown}'")
    klass, item = lib.H5Tget_class(dtype), lib.H5Tget_size(dtype)
    release(dtype)
    if klass not in _DATA_CLASSES:
        raise ArchiveError(f"variable '{shown}' is of a type that is neither a number nor text", file=str(path))
    if points < 0:
        raise ArchiveError(f"cannot read the shape of '{shown}'; the file is damaged", file=str(path))
    return int(points) * int(item)


_ATTR_CALLBACK = ctypes.CFUNCTYPE(ctypes.c_int, ctypes.c_int64, ctypes.c_void_p, ctypes.c_void_p, ctypes.c_void_p)


def _attributes(h: _Library, obj: int, where: str, path, keep, release) -> None:
    """At most MAX_ATTRIBUTES attributes on ``obj``, each a number or text unless NetCDF keeps it for itself."""
    lib = h.lib
    names: list[str] = []
    odd: list[str] = []

    def visit(loc, name, _info, _data):
        raw = ctypes.string_at(name)
        text = raw.decode("utf-8", "replace")
        names.append(text)
        if text not in INTERNAL_ATTRIBUTES:
            attr = lib.H5Aopen(loc, raw, 0)
            klass = -1
            if attr >= 0:
                atype = lib.H5Aget_type(attr)
                if atype >= 0:
                    klass = lib.H5Tget_class(atype)
                    lib.H5Tclose(atype)
                lib.H5Aclose(attr)
            if klass not in _DATA_CLASSES:
                odd.append(text)
                return 1
        return 1 if len(names) > MAX_ATTRIBUTES else 0

    idx = ctypes.c_uint64(0)
    status = lib.H5Aiterate2(obj, _H5_INDEX_NAME, _H5_ITER_NATIVE, ctypes.byref(idx), _ATTR_CALLBACK(visit), None)
    if odd:
        raise ArchiveError(f"attribute '{printable(shorten(odd[0], 60))}' of {where} is neither a number nor text "
                           "(a compound or other HDF5 type); it is not read", file=str(path))
    if len(names) > MAX_ATTRIBUTES:
        raise ArchiveError(f"{where} carries more than {MAX_ATTRIBUTES} attributes; an fdsolver archive has about "
                           "thirty", file=str(path))
    if status < 0:
        raise ArchiveError(f"cannot read the attributes of {where}; the file is damaged", file=str(path))
