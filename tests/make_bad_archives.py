"""Crafted archives for the hostile-input tests: ``python tests/make_bad_archives.py [OUTDIR]``.

fdsolver archives are untrusted input: a file received from someone else may
be damaged, foreign, or made on purpose to hang, exhaust memory or read other
files.  This script writes such files into OUTDIR (default
``tests/bad_archives/``), with ``archives.json`` listing each one with what it
checks and what ``fdsolver show`` and ``fdsolver plot`` must do with it.
Nothing binary is committed: every archive is made from a real fdsolver run
of an invented case, then altered with xarray, netCDF4 or, for HDF5 features
netCDF4 cannot write (external storage, links, compound attributes, direct
chunk writes), the HDF5 C library that the netCDF4 wheel itself loads, called
through ctypes.  h5py is not needed.

The expected outcome of every crafted archive is the contract of README.md
("Exit codes", "Archives") and of issue 11: exit code 2, one line on stderr
naming the file, nothing written, within seconds and with bounded memory;
``fdsolver.open_run`` and ``fdsolver.case_of_run`` raise only
``fdsolver.errors.FdsolverError`` subclasses.  A few archives are valid but
carry terminal escape sequences in text that ``show`` prints; for those the
outcome is exit code 0 with the control characters escaped.

All cases, names and numbers here are invented; they describe no real device.
"""

from __future__ import annotations

import ctypes
import glob
import json
import os
import shutil
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
DEFAULT_OUT = HERE / "bad_archives"
SPEC_NAME = "archives.json"

#: every crafted archive: name, what it checks, expected exit codes of show and plot, flags
ARCHIVES: list[dict] = []


def crafted(checks: str, *, code: int = 2, clean_stdout: bool = False, no_quote_of: str | None = None, slow: bool = False,
            api_refuses: bool = False):
    """Register a builder ``make_NAME(ctx) -> None`` that writes ``ctx.out / 'NAME.nc'``.

    ``slow``: the archive hangs or takes long with the fdsolver this corpus was written against; the tests run
    it in separate processes (marked slow) so that the fast loop stays fast.
    ``api_refuses``: ``open_run`` (or ``case_of_run``) must refuse it with an FdsolverError, not return its
    content (external storage, links, sizes and a stored case beyond the limits; issue 11, "What to build" 2).
    """

    def deco(fn):
        name = fn.__name__.removeprefix("make_")
        entry = {"name": name, "file": f"{name}.nc", "checks": checks, "code": code, "builder": fn}
        if clean_stdout:
            entry["clean_stdout"] = True
        if no_quote_of:
            entry["no_quote_of"] = no_quote_of
        if slow:
            entry["slow"] = True
        if api_refuses:
            entry["api_refuses"] = True
        ARCHIVES.append(entry)
        return fn

    return deco


# ------------------------------------------------------------------ HDF5 through ctypes
class HDF5:
    """The few HDF5 C calls needed here, from the libhdf5 bundled with (and already loaded by) netCDF4."""

    H5F_ACC_RDWR = 0x0001
    H5F_ACC_TRUNC = 0x0002
    H5S_SCALAR = 0
    H5T_COMPOUND = 6

    def __init__(self):
        import netCDF4  # loads its libhdf5; CDLL below then returns the same library

        site = Path(netCDF4.__file__).resolve().parent.parent
        libs = sorted(glob.glob(str(site / "netcdf4.libs" / "libhdf5-*.so*"))) or sorted(
            glob.glob(str(site / "netCDF4.libs" / "libhdf5-*.so*"))
        )
        hl = sorted(glob.glob(str(site / "netcdf4.libs" / "libhdf5_hl-*.so*"))) or sorted(
            glob.glob(str(site / "netCDF4.libs" / "libhdf5_hl-*.so*"))
        )
        if not libs or not hl:
            raise RuntimeError("cannot find the HDF5 library of the netCDF4 wheel")
        self.lib = ctypes.CDLL(libs[0])
        self.hl = ctypes.CDLL(hl[0])
        hid, herr, c, u64, i64 = ctypes.c_int64, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint64, ctypes.c_int64
        p64 = ctypes.POINTER(ctypes.c_uint64)
        sig = {
            "H5open": (herr, []),
            "H5Fopen": (hid, [c, ctypes.c_uint, hid]),
            "H5Fcreate": (hid, [c, ctypes.c_uint, hid, hid]),
            "H5Fclose": (herr, [hid]),
            "H5Gopen2": (hid, [hid, c, hid]),
            "H5Gcreate2": (hid, [hid, c, hid, hid, hid]),
            "H5Gclose": (herr, [hid]),
            "H5Screate": (hid, [ctypes.c_int]),
            "H5Screate_simple": (hid, [ctypes.c_int, p64, p64]),
            "H5Sclose": (herr, [hid]),
            "H5Pcreate": (hid, [hid]),
            "H5Pclose": (herr, [hid]),
            "H5Pset_external": (herr, [hid, c, i64, u64]),
            "H5Pset_chunk": (herr, [hid, ctypes.c_int, p64]),
            "H5Pset_deflate": (herr, [hid, ctypes.c_uint]),
            "H5Dcreate2": (hid, [hid, c, hid, hid, hid, hid, hid]),
            "H5Dopen2": (hid, [hid, c, hid]),
            "H5Dwrite": (herr, [hid, hid, hid, hid, hid, ctypes.c_void_p]),
            "H5Dwrite_chunk": (herr, [hid, hid, ctypes.c_uint32, p64, ctypes.c_size_t, ctypes.c_void_p]),
            "H5Dclose": (herr, [hid]),
            "H5Tcreate": (hid, [ctypes.c_int, ctypes.c_size_t]),
            "H5Tinsert": (herr, [hid, c, ctypes.c_size_t, hid]),
            "H5Tcopy": (hid, [hid]),
            "H5Tset_size": (herr, [hid, ctypes.c_size_t]),
            "H5Tclose": (herr, [hid]),
            "H5Acreate2": (hid, [hid, c, hid, hid, hid, hid]),
            "H5Awrite": (herr, [hid, hid, ctypes.c_void_p]),
            "H5Aclose": (herr, [hid]),
            "H5Lcreate_external": (herr, [c, c, hid, c, hid, hid]),
            "H5Lcreate_soft": (herr, [c, hid, c, hid, hid]),
            "H5Lcreate_hard": (herr, [hid, c, hid, c, hid, hid]),
        }
        for name, (res, args) in sig.items():
            f = getattr(self.lib, name)
            f.restype, f.argtypes = res, args
        self.hl.H5DSattach_scale.restype = herr
        self.hl.H5DSattach_scale.argtypes = [hid, hid, ctypes.c_uint]
        self.lib.H5open()
        g = lambda n: ctypes.c_int64.in_dll(self.lib, n).value  # noqa: E731
        self.DCPL = g("H5P_CLS_DATASET_CREATE_ID_g")
        self.U8 = g("H5T_NATIVE_UINT8_g")
        self.F64 = g("H5T_NATIVE_DOUBLE_g")
        self.I32 = g("H5T_NATIVE_INT_g")
        self.C_S1 = g("H5T_C_S1_g")

    def ok(self, value, what):
        if value < 0:
            raise RuntimeError(f"HDF5 call failed: {what}")
        return value

    @staticmethod
    def dims(*n):
        return (ctypes.c_uint64 * len(n))(*n)

    def open(self, path):
        return self.ok(self.lib.H5Fopen(str(path).encode(), self.H5F_ACC_RDWR, 0), f"open {path}")

    def dataset(self, loc, name, dtype, shape, dcpl=0):
        space = self.ok(self.lib.H5Screate_simple(len(shape), self.dims(*shape), None), "space")
        d = self.ok(self.lib.H5Dcreate2(loc, name.encode(), dtype, space, 0, dcpl, 0), f"dataset {name}")
        self.lib.H5Sclose(space)
        return d

    def external_dataset(self, loc, name, target, dtype, n, itemsize):
        """A 1-D dataset of ``n`` items whose raw data live in the external file ``target``."""
        dcpl = self.ok(self.lib.H5Pcreate(self.DCPL), "dcpl")
        self.ok(self.lib.H5Pset_external(dcpl, str(target).encode(), 0, n * itemsize), "set_external")
        d = self.dataset(loc, name, dtype, (n,), dcpl)
        self.lib.H5Pclose(dcpl)
        return d

    def string_attr(self, loc, name, text: bytes):
        t = self.lib.H5Tcopy(self.C_S1)
        self.lib.H5Tset_size(t, max(1, len(text)))
        space = self.lib.H5Screate(self.H5S_SCALAR)
        a = self.ok(self.lib.H5Acreate2(loc, name.encode(), t, space, 0, 0), f"attribute {name}")
        buf = ctypes.create_string_buffer(text, max(1, len(text)))
        self.ok(self.lib.H5Awrite(a, t, buf), "write attribute")
        self.lib.H5Aclose(a)
        self.lib.H5Sclose(space)
        self.lib.H5Tclose(t)


# ------------------------------------------------------------------ base archives (real runs)
CASE_SOLVE = {
    "title": "Square well for crafted archives (invented)",
    "units": "nm-meV",
    "mass": 0.067,
    "params": {"width": 3.0, "depth": 100.0},
    "potential": [{"name": "well", "shape": "square", "center": 0.0, "width": "width", "depth": "depth"}],
    "solve": {"max_states": 3, "tolerance": 1e-6},
}
CASE_PAIR = (
    'title = "Double well for crafted archives (invented)"\nunits = "nm-meV"\nmass = 0.067\n\n'
    "[params]\nd = 2.0\nwidth = 3.0\ndepth = 100.0\n\n"
    '[[potential]]\nshape = "square"\ncenter = "-(d + width) / 2"\nwidth = "width"\ndepth = "depth"\n\n'
    '[[potential]]\nshape = "square"\ncenter = "(d + width) / 2"\nwidth = "width"\ndepth = "depth"\n\n'
    '[solve]\ntolerance = 1e-6\n\n[sweep]\nunits = { d = "nm" }\n'
)


class Context:
    """Where to write, the base archives, and the HDF5 helper (made on first use)."""

    def __init__(self, out: Path):
        self.out = out
        self.aux = out / "aux"
        self.aux.mkdir(exist_ok=True)
        self._h5 = None
        base = out / "_base"
        base.mkdir(exist_ok=True)
        self.solve, self.sweep, self.threshold = self._bases(base)

    @property
    def h5(self) -> HDF5:
        if self._h5 is None:
            self._h5 = HDF5()
        return self._h5

    @staticmethod
    def _bases(base: Path):
        import fdsolver
        from fdsolver.input.case import case_from_text
        from fdsolver.io.archive import write_dataset

        solve = base / "solve.nc"
        write_dataset(fdsolver.solve(fdsolver.case_from_dict(CASE_SOLVE), action="crafted-archive base"), solve)
        (base / "pair.toml").write_text(CASE_PAIR)
        pair = case_from_text(CASE_PAIR, path=str(base / "pair.toml"))
        sweep = base / "sweep.nc"
        # the public API calls (stable across internal moves of the sweep and threshold code)
        write_dataset(fdsolver.sweep(pair, ["d=1:2:3"], executor="serial", thresholds=False,
                                     action="crafted-archive base sweep"), sweep)
        threshold = base / "threshold.nc"
        write_dataset(fdsolver.threshold(pair, "d=0.1:6", scan=9, action="crafted-archive base threshold"), threshold)
        return solve, sweep, threshold

    # helpers used by the builders
    def path(self, name: str) -> Path:
        return self.out / f"{name}.nc"

    def copy(self, name: str, base: Path | None = None) -> Path:
        p = self.path(name)
        shutil.copyfile(base or self.solve, p)
        return p

    def load(self, base: Path | None = None):
        import xarray as xr

        with xr.open_dataset(base or self.solve, engine="netcdf4") as ds:
            return ds.load()

    def save(self, ds, name: str) -> Path:
        p = self.path(name)
        ds.to_netcdf(p, engine="netcdf4")
        return p


def _rebuild(ctx: Context, name: str, change, base: Path | None = None) -> None:
    """Load a base archive, apply ``change(ds) -> ds``, write it with xarray (no fdsolver writer)."""
    ds = change(ctx.load(base))
    for v in ds.variables:
        ds[v].encoding = {}
    ctx.save(ds, name)


def _attr(ctx: Context, name: str, key: str, value, base: Path | None = None) -> None:
    """Copy a base archive and set one global attribute with netCDF4 (any netCDF type)."""
    import netCDF4

    p = ctx.copy(name, base)
    with netCDF4.Dataset(p, "a") as nc:
        if isinstance(value, str):
            nc.setncattr_string(key, value) if len(value) > 60000 else nc.setncattr(key, value)
        else:
            nc.setncattr(key, value)


# ================================================================== HDF5 storage and links
@crafted("an extra variable whose raw data is stored externally in a FIFO: reading it would block for ever", api_refuses=True)
def make_ext_fifo_extra(ctx):
    fifo = ctx.aux / "ext_fifo"
    if not fifo.exists():
        os.mkfifo(fifo)
    p = ctx.copy("ext_fifo_extra")
    h = ctx.h5
    f = h.open(p)
    h.lib.H5Dclose(h.external_dataset(f, "extra", fifo.resolve(), h.U8, 64, 1))
    h.lib.H5Fclose(f)


@crafted("an extra variable stored externally in /etc/passwd: the archive reads a file it does not name",
         no_quote_of="/etc/passwd", api_refuses=True)
def make_ext_passwd_extra(ctx):
    n = min(os.path.getsize("/etc/passwd"), 512) if os.path.exists("/etc/passwd") else 64
    p = ctx.copy("ext_passwd_extra")
    h = ctx.h5
    f = h.open(p)
    h.lib.H5Dclose(h.external_dataset(f, "extra", "/etc/passwd", h.U8, n, 1))
    h.lib.H5Fclose(f)


@crafted("an extra variable of 4 GiB stored externally in /dev/zero (a small file that reads without end)", api_refuses=True)
def make_ext_devzero_4gib(ctx):
    p = ctx.copy("ext_devzero_4gib")
    h = ctx.h5
    f = h.open(p)
    h.lib.H5Dclose(h.external_dataset(f, "extra", "/dev/zero", h.U8, 4 * 2**30, 1))
    h.lib.H5Fclose(f)


@crafted("an extra variable stored externally in a file that does not exist", api_refuses=True)
def make_ext_missing_file(ctx):
    p = ctx.copy("ext_missing_file")
    h = ctx.h5
    f = h.open(p)
    h.lib.H5Dclose(h.external_dataset(f, "extra", (ctx.aux / "no_such_file.bin").resolve(), h.U8, 64, 1))
    h.lib.H5Fclose(f)


@crafted("the energy variable itself stored externally in /etc/passwd (its bytes would be shown as energies)",
         no_quote_of="/etc/passwd", api_refuses=True)
def make_ext_energy_passwd(ctx):
    p = ctx.path("ext_energy_passwd")
    _rebuild(ctx, "ext_energy_passwd", lambda ds: ds.drop_vars("energy"))
    h = ctx.h5
    f = h.open(p)
    n = int(ctx.load().sizes["state"])
    d = h.external_dataset(f, "energy", "/etc/passwd", h.F64, n, 8)
    scale = h.lib.H5Dopen2(f, b"state", 0)
    h.ok(h.hl.H5DSattach_scale(d, scale, 0), "attach scale")
    h.string_attr(d, "units", b"meV")
    h.lib.H5Dclose(scale)
    h.lib.H5Dclose(d)
    h.lib.H5Fclose(f)


@crafted("an HDF5 external link to a FIFO: following it would block for ever", api_refuses=True)
def make_elink_fifo(ctx):
    fifo = ctx.aux / "elink_fifo"
    if not fifo.exists():
        os.mkfifo(fifo)
    p = ctx.copy("elink_fifo")
    h = ctx.h5
    f = h.open(p)
    h.ok(h.lib.H5Lcreate_external(str(fifo.resolve()).encode(), b"/", f, b"sneaky", 0, 0), "external link")
    h.lib.H5Fclose(f)


@crafted("an HDF5 external link to /etc/passwd", no_quote_of="/etc/passwd", api_refuses=True)
def make_elink_passwd(ctx):
    p = ctx.copy("elink_passwd")
    h = ctx.h5
    f = h.open(p)
    h.ok(h.lib.H5Lcreate_external(b"/etc/passwd", b"/", f, b"sneaky", 0, 0), "external link")
    h.lib.H5Fclose(f)


@crafted("an HDF5 external link from the archive to itself", slow=True, api_refuses=True)
def make_elink_self(ctx):
    p = ctx.copy("elink_self")
    h = ctx.h5
    f = h.open(p)
    h.ok(h.lib.H5Lcreate_external(str(p.resolve()).encode(), b"/", f, b"again", 0, 0), "external link")
    h.lib.H5Fclose(f)


@crafted("an HDF5 external link to a variable of another (valid) archive: data from a file the user did not name", api_refuses=True)
def make_elink_other_archive(ctx):
    other = ctx.aux / "other_archive.nc"
    shutil.copyfile(ctx.solve, other)
    p = ctx.copy("elink_other_archive")
    h = ctx.h5
    f = h.open(p)
    h.ok(h.lib.H5Lcreate_external(str(other.resolve()).encode(), b"/psi", f, b"borrowed_psi", 0, 0), "external link")
    h.lib.H5Fclose(f)


@crafted("an HDF5 soft link that points nowhere", api_refuses=True)
def make_softlink_dangling(ctx):
    p = ctx.copy("softlink_dangling")
    h = ctx.h5
    f = h.open(p)
    h.ok(h.lib.H5Lcreate_soft(b"/nowhere/at/all", f, b"ghost", 0, 0), "soft link")
    h.lib.H5Fclose(f)


@crafted("an HDF5 soft link that points at itself", api_refuses=True)
def make_softlink_loop(ctx):
    p = ctx.copy("softlink_loop")
    h = ctx.h5
    f = h.open(p)
    h.ok(h.lib.H5Lcreate_soft(b"/loop", f, b"loop", 0, 0), "soft link")
    h.lib.H5Fclose(f)


@crafted("a group holding a hard link back to the root group: the group tree is a cycle", slow=True, api_refuses=True)
def make_hardlink_cycle(ctx):
    p = ctx.copy("hardlink_cycle")
    h = ctx.h5
    f = h.open(p)
    g = h.ok(h.lib.H5Gcreate2(f, b"g", 0, 0, 0), "group")
    h.ok(h.lib.H5Lcreate_hard(f, b"/", g, b"up", 0, 0), "hard link")
    h.lib.H5Gclose(g)
    h.lib.H5Fclose(f)


@crafted("groups nested 500 deep")
def make_groups_deep(ctx):
    import netCDF4

    p = ctx.copy("groups_deep")
    with netCDF4.Dataset(p, "a") as nc:
        g = nc
        for i in range(500):
            g = g.createGroup(f"g{i}")


# ================================================================== declared sizes
@crafted("a small file declaring an unwritten extra variable of 4.8 GB", api_refuses=True)
def make_big_unwritten_extra(ctx):
    import netCDF4

    p = ctx.copy("big_unwritten_extra")
    with netCDF4.Dataset(p, "a") as nc:
        nc.createDimension("huge", 600_000_000)
        nc.createVariable("extra", "f8", ("huge",))


@crafted("a solve archive whose x axis declares 300 million unwritten points (psi would be 7.2 GB)", api_refuses=True)
def make_big_unwritten_psi(ctx):
    import netCDF4

    src = ctx.load()
    p = ctx.path("big_unwritten_psi")
    n = 300_000_000
    with netCDF4.Dataset(p, "w") as nc:
        nc.setncatts({k: (v if not isinstance(v, (bool, np.bool_)) else int(v)) for k, v in src.attrs.items()})
        for dim, size in src.sizes.items():  # every dimension of the solve archive but x as it is
            if dim != "x":
                nc.createDimension(dim, size)
        nc.createDimension("x", n)
        for name in src.variables:
            v = src[name]
            if "x" in v.dims:
                nc.createVariable(name, "f8", v.dims)
                continue
            if v.dtype.kind in "OU":
                var = nc.createVariable(name, str, v.dims)
                var[:] = np.asarray(v.values, dtype=object)
            else:
                var = nc.createVariable(name, v.dtype, v.dims)
                var[:] = v.values
            var.setncatts({k: a for k, a in v.attrs.items()})


@crafted("an extra chunked variable declaring 8 TB (10^12 doubles), never written", api_refuses=True)
def make_big_chunked_8tb(ctx):
    import netCDF4

    p = ctx.copy("big_chunked_8tb")
    with netCDF4.Dataset(p, "a") as nc:
        nc.createDimension("vast", 10**12)
        nc.createVariable("extra", "f8", ("vast",), chunksizes=(2**20,))


@crafted("a compression bomb: 3 GiB of zeros stored in 3 MB (zlib chunks written directly)", api_refuses=True)
def make_zlib_bomb(ctx):
    import zlib

    p = ctx.copy("zlib_bomb")
    h = ctx.h5
    f = h.open(p)
    chunk = 2**24  # bytes per chunk (16 MiB)
    n_chunks = 192  # 3 GiB
    dcpl = h.ok(h.lib.H5Pcreate(h.DCPL), "dcpl")
    h.ok(h.lib.H5Pset_chunk(dcpl, 1, h.dims(chunk)), "chunk")
    h.ok(h.lib.H5Pset_deflate(dcpl, 1), "deflate")
    d = h.dataset(f, "extra", h.U8, (chunk * n_chunks,), dcpl)
    packed = zlib.compress(bytes(chunk), 9)
    buf = ctypes.create_string_buffer(packed, len(packed))
    for i in range(n_chunks):
        h.ok(h.lib.H5Dwrite_chunk(d, 0, 0, h.dims(i * chunk), len(packed), buf), "write chunk")
    h.lib.H5Pclose(dcpl)
    h.lib.H5Dclose(d)
    h.lib.H5Fclose(f)


@crafted("500 extra variables")
def make_many_variables(ctx):
    import netCDF4

    p = ctx.copy("many_variables")
    with netCDF4.Dataset(p, "a") as nc:
        nc.createDimension("one", 1)
        for i in range(500):
            nc.createVariable(f"v{i}", "f8", ("one",))


@crafted("3,000 extra global attributes")
def make_many_attributes(ctx):
    import netCDF4

    p = ctx.copy("many_attributes")
    with netCDF4.Dataset(p, "a") as nc:
        nc.setncatts({f"a{i}": "x" * 16 for i in range(3000)})


@crafted("a 10 MB title (show would print it, plot would draw it)", slow=True, api_refuses=True)
def make_huge_title(ctx):
    _attr(ctx, "huge_title", "title", "T" * (10 * 2**20))


@crafted("a messages attribute of 400,000 lines (11 MB of notes)", api_refuses=True)
def make_huge_messages(ctx):
    _attr(ctx, "huge_messages", "messages", "\n".join(["note from a crafted archive"] * 400_000))


@crafted("a stored case of 100,000 params (case_text and params of several MB)", slow=True, api_refuses=True)
def make_case_100k_params(ctx):
    import netCDF4

    p = ctx.copy("case_100k_params")
    names = [f"p{i}" for i in range(100_000)]
    text = ("[params]\n" + "".join(f"{n} = {i}.5\n" for i, n in enumerate(names)) +
            '\n[[potential]]\nshape = "point"\ncenter = 0.0\nstrength = "p1"\n')
    with netCDF4.Dataset(p, "a") as nc:
        nc.setncattr_string("case_text", text)
        nc.setncattr_string("params", json.dumps({n: i + 0.25 for i, n in enumerate(names)}))


# ================================================================== attribute types and nesting
@crafted("fdsolver_kind stored as an array of two strings", api_refuses=True)
def make_kind_array(ctx):
    import netCDF4

    p = ctx.copy("kind_array")
    with netCDF4.Dataset(p, "a") as nc:
        nc.setncattr_string("fdsolver_kind", ["solve", "solve"])


@crafted("case_text stored as an integer", api_refuses=True)
def make_case_text_int(ctx):
    _attr(ctx, "case_text_int", "case_text", np.int32(42))


@crafted("case_text stored as an array of strings", api_refuses=True)
def make_case_text_array(ctx):
    import netCDF4

    p = ctx.copy("case_text_array")
    with netCDF4.Dataset(p, "a") as nc:
        nc.setncattr_string("case_text", ["[[potential]]", 'shape = "point"'])


@crafted("params holding JSON nested 100,000 deep", api_refuses=True)
def make_params_deep_json(ctx):
    _attr(ctx, "params_deep_json", "params", "[" * 100_000 + "]" * 100_000)


@crafted("params holding a JSON list instead of an object", api_refuses=True)
def make_params_json_list(ctx):
    _attr(ctx, "params_json_list", "params", "[1, 2, 3]")


@crafted("case_tables that is not JSON", api_refuses=True)
def make_case_tables_not_json(ctx):
    _attr(ctx, "case_tables_not_json", "case_tables", "{not json")


@crafted("case_tables holding JSON nested 100,000 deep", api_refuses=True)
def make_case_tables_deep_json(ctx):
    _attr(ctx, "case_tables_deep_json", "case_tables", '{"t.csv": ' + "[" * 100_000 + "]" * 100_000 + "}")


@crafted("a stored case whose table is /etc/passwd, not stored in case_tables: rebuilding it would read and quote that file",
         no_quote_of="/etc/passwd", api_refuses=True)
def make_case_table_passwd(ctx):
    import netCDF4

    p = ctx.copy("case_table_passwd")
    text = 'title = "x"\nunits = "nm-meV"\n\n[[potential]]\nshape = "table"\nfile = "/etc/passwd"\n'
    with netCDF4.Dataset(p, "a") as nc:
        nc.setncattr("case_text", text)
        nc.setncattr("case_tables", "{}")
        nc.setncattr("params", "{}")


@crafted("a global attribute of a nested compound type (a record inside a record)")
def make_attr_nested_compound(ctx):
    p = ctx.copy("attr_nested_compound")
    h = ctx.h5
    f = h.open(p)
    inner = h.ok(h.lib.H5Tcreate(h.H5T_COMPOUND, 16), "inner type")
    h.lib.H5Tinsert(inner, b"a", 0, h.F64)
    h.lib.H5Tinsert(inner, b"b", 8, h.F64)
    outer = h.ok(h.lib.H5Tcreate(h.H5T_COMPOUND, 20), "outer type")
    h.lib.H5Tinsert(outer, b"inner", 0, inner)
    h.lib.H5Tinsert(outer, b"n", 16, h.I32)
    space = h.lib.H5Screate(h.H5S_SCALAR)
    a = h.ok(h.lib.H5Acreate2(f, b"nested", outer, space, 0, 0), "attribute")
    buf = ctypes.create_string_buffer(np.array([1.0, 2.0]).tobytes() + np.int32(3).tobytes(), 20)
    h.lib.H5Awrite(a, outer, buf)
    h.lib.H5Aclose(a)
    h.lib.H5Sclose(space)
    h.lib.H5Tclose(outer)
    h.lib.H5Tclose(inner)
    h.lib.H5Fclose(f)


@crafted("the title stored as bytes that are not UTF-8")
def make_title_not_utf8(ctx):
    p = ctx.copy("title_not_utf8")
    import netCDF4

    with netCDF4.Dataset(p, "a") as nc:
        nc.delncattr("title")
    h = ctx.h5
    f = h.open(p)
    h.string_attr(f, "title", b"\xff\xfe\xc3(bad)")
    h.lib.H5Fclose(f)


# ================================================================== variables: shape and type
@crafted("energy with two dimensions (state, level)")
def make_energy_2d(ctx):
    def change(ds):
        e = ds["level_energy"].transpose("state", "level").copy()
        e.attrs = dict(ds["energy"].attrs)
        return ds.drop_vars("energy").assign(energy=e)

    _rebuild(ctx, "energy_2d", change)


@crafted("energy stored as strings")
def make_energy_strings(ctx):
    def change(ds):
        e = ds["energy"]
        return ds.assign(energy=(e.dims, np.array([f"{v:.3f} meV" for v in e.values], dtype=object), e.attrs))

    _rebuild(ctx, "energy_strings", change)


@crafted("energies that are +inf, -inf and NaN (never written by fdsolver)")
def make_energy_nonfinite(ctx):
    def change(ds):
        e = ds["energy"]
        vals = np.array([np.inf, -np.inf, np.nan][: e.size] + [np.nan] * max(0, e.size - 3))
        return ds.assign(energy=(e.dims, vals, e.attrs))

    _rebuild(ctx, "energy_nonfinite", change)


@crafted("node counts stored as floats with NaN")
def make_nodes_float_nan(ctx):
    def change(ds):
        n = ds["nodes"]
        return ds.assign(nodes=(n.dims, np.full(n.shape, np.nan), n.attrs))

    _rebuild(ctx, "nodes_float_nan", change)


@crafted("parity stored as strings")
def make_parity_strings(ctx):
    def change(ds):
        v = ds["parity"]
        return ds.assign(parity=(v.dims, np.array(["even"] * v.size, dtype=object), v.attrs))

    _rebuild(ctx, "parity_strings", change)


@crafted("psi with one dimension (x) instead of (state, x)")
def make_psi_1d(ctx):
    def change(ds):
        return ds.assign(psi=("x", ds["psi"].values[0], ds["psi"].attrs))

    _rebuild(ctx, "psi_1d", change)


@crafted("the x coordinate stored as strings")
def make_x_strings(ctx):
    def change(ds):
        x = ds["x"]
        return ds.assign_coords(x=("x", np.array([f"{v:.4f}" for v in x.values], dtype=object), x.attrs))

    _rebuild(ctx, "x_strings", change)


@crafted("level_nodes stored as a 2-D array of strings")
def make_level_nodes_strings_2d(ctx):
    def change(ds):
        v = ds["level_nodes"]
        return ds.assign(level_nodes=(("level", "state"), np.full((ds.sizes["level"], ds.sizes["state"]), "n", dtype=object)))

    _rebuild(ctx, "level_nodes_strings_2d", change)


# ================================================================== missing pieces and kinds
@crafted("a solve archive without its energy variable", api_refuses=True)
def make_missing_energy(ctx):
    _rebuild(ctx, "missing_energy", lambda ds: ds.drop_vars("energy"))


@crafted("a solve archive without psi")
def make_missing_psi(ctx):
    _rebuild(ctx, "missing_psi", lambda ds: ds.drop_vars("psi"))


@crafted("a solve archive without the potential variable (plot needs it)")
def make_missing_potential(ctx):
    _rebuild(ctx, "missing_potential", lambda ds: ds.drop_vars("potential"))


@crafted("an archive without the case_text attribute", api_refuses=True)
def make_missing_case_text(ctx):
    import netCDF4

    p = ctx.copy("missing_case_text")
    with netCDF4.Dataset(p, "a") as nc:
        nc.delncattr("case_text")


@crafted("a solve archive relabelled as a sweep archive")
def make_kind_solve_as_sweep(ctx):
    _attr(ctx, "kind_solve_as_sweep", "fdsolver_kind", "sweep")


@crafted("a sweep archive relabelled as a threshold archive")
def make_kind_sweep_as_threshold(ctx):
    _attr(ctx, "kind_sweep_as_threshold", "fdsolver_kind", "threshold", base=ctx.sweep)


@crafted("a sweep archive whose energy has its dimensions swapped (state, d)")
def make_sweep_energy_swapped(ctx):
    def change(ds):
        return ds.assign(energy=ds["energy"].transpose("state", "d"))

    _rebuild(ctx, "sweep_energy_swapped", change, base=ctx.sweep)


@crafted("a sweep archive with zero points")
def make_sweep_zero_points(ctx):
    _rebuild(ctx, "sweep_zero_points", lambda ds: ds.isel(d=slice(0, 0)), base=ctx.sweep)


@crafted("a sweep archive whose swept_params attribute is JSON nested 100,000 deep")
def make_sweep_params_deep_json(ctx):
    _attr(ctx, "sweep_params_deep_json", "swept_params", "[" * 100_000 + "]" * 100_000, base=ctx.sweep)


@crafted("a threshold archive whose interval attribute is text")
def make_threshold_interval_text(ctx):
    _attr(ctx, "threshold_interval_text", "interval", "from here to there", base=ctx.threshold)


# ================================================================== foreign and broken files
@crafted("a foreign NetCDF file: a gridded temperature field with CF attributes")
def make_foreign_climate(ctx):
    import xarray as xr

    t = np.linspace(0, 1, 4)
    ds = xr.Dataset(
        {"tas": (("time", "lat", "lon"), np.full((4, 3, 5), 288.0), {"units": "K", "standard_name": "air_temperature"})},
        coords={"time": ("time", t, {"units": "days since 2000-01-01"}), "lat": [-10.0, 0.0, 10.0], "lon": np.arange(5.0)},
        attrs={"Conventions": "CF-1.8", "title": "invented temperature field"},
    )
    ds.to_netcdf(ctx.path("foreign_climate"), engine="netcdf4")


@crafted("a plain HDF5 file (not NetCDF) carrying fdsolver-like attributes")
def make_foreign_plain_hdf5(ctx):
    h = ctx.h5
    p = ctx.path("foreign_plain_hdf5")
    f = h.ok(h.lib.H5Fcreate(str(p).encode(), h.H5F_ACC_TRUNC, 0, 0), "create")
    d = h.dataset(f, "energy", h.F64, (3,))
    h.lib.H5Dwrite(d, h.F64, 0, 0, 0, np.array([-1.0, -0.5, -0.1]).ctypes.data)
    h.lib.H5Dclose(d)
    h.string_attr(f, "fdsolver_kind", b"solve")
    h.string_attr(f, "case_text", b'[[potential]]\nshape = "point"\ncenter = 0.0\nstrength = 1.0\n')
    h.lib.H5Fclose(f)


@crafted("an archive cut to half its length")
def make_truncated_half(ctx):
    raw = ctx.solve.read_bytes()
    ctx.path("truncated_half").write_bytes(raw[: len(raw) // 2])


@crafted("an archive cut after its first 4 kB (the superblock and little else)")
def make_truncated_4k(ctx):
    ctx.path("truncated_4k").write_bytes(ctx.solve.read_bytes()[:4096])


@crafted("a sparse file of 10 GiB of zeros named .nc")
def make_sparse_10gib(ctx):
    with open(ctx.path("sparse_10gib"), "wb") as fh:
        fh.truncate(10 * 2**30)


# ================================================================== valid, but with escapes in printed text
@crafted("a valid archive whose title holds an OSC and a clear-screen sequence", code=0, clean_stdout=True)
def make_title_escape(ctx):
    _attr(ctx, "title_escape", "title", "well\x1b]0;owned\x07\x1b[2J (invented)")


@crafted("a valid archive whose energy unit name holds a colour escape", code=0, clean_stdout=True)
def make_units_escape(ctx):
    import netCDF4

    p = ctx.copy("units_escape")
    with netCDF4.Dataset(p, "a") as nc:
        nc["energy"].setncattr("units_name", "meV\x1b[31m")


@crafted("a valid archive whose notes hold a carriage return and escapes", code=0, clean_stdout=True)
def make_messages_escape(ctx):
    _attr(ctx, "messages_escape", "messages", "all good\rFAKE: 0 states\x1b[8m")


# ================================================================== controls: valid archives
@crafted("control: the unaltered solve archive", code=0)
def make_good_solve(ctx):
    ctx.copy("good_solve")


@crafted("control: the unaltered sweep archive", code=0)
def make_good_sweep(ctx):
    ctx.copy("good_sweep", ctx.sweep)


# ------------------------------------------------------------------ driver
def make_all(out: Path = DEFAULT_OUT) -> list[dict]:
    """Write every crafted archive into ``out``; return (and write as archives.json) their descriptions."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    ctx = Context(out)
    spec = []
    for entry in ARCHIVES:
        entry["builder"](ctx)
        spec.append({k: v for k, v in entry.items() if k != "builder"})
    (out / SPEC_NAME).write_text(json.dumps(spec, indent=1))
    return spec


if __name__ == "__main__":
    target = Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT_OUT
    made = make_all(target)
    print(f"wrote {len(made)} archives to {target} ({sum(e['code'] == 2 for e in made)} must be refused)")
