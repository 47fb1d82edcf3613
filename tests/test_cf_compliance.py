"""Every archive kind follows the CF conventions and its units are UDUNITS-2 units.

Outside references:

* UDUNITS-2, the unit library CF names for ``units`` (CF conventions sec. 3.1),
  through its Python binding ``cf-units``: every ``units`` attribute must parse
  and not be "unknown";
* the IOOS compliance-checker (``compliance-checker`` on PyPI), a
  general-purpose CF checker: its CF suite of the newest CF version it knows
  must find nothing wrong, except that our declared version (CF-1.13) is newer
  than that one, and must not fail inside (an exception in a check counts as a
  failure: a string coordinate made it crash before).

The archives are written by the API in both unit systems (nm-meV, and atomic
units, whose bohr and hartree UDUNITS does not know), for every kind in the
variable table :data:`fdsolver.io.specs.KINDS`.
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import cf_units  # the test extra installs it: a missing one is an error, never a skip
import compliance_checker.runner as runner  # likewise
import pytest
from scipy.constants import physical_constants

import fdsolver
import fdsolver.api
from fdsolver.io.specs import KINDS, kind_of


ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
ATOMIC = {  # an invented pair of square wells in Hartree atomic units; d and V0 get their units from the keys they set
    "title": "atomic-unit pair (invented)", "units": "atomic", "params": {"d": 2.0, "V0": 1.0, "w": 1.0},
    "potential": [{"shape": "square", "center": "-d/2", "width": "w", "depth": "V0"},
                  {"shape": "square", "center": "d/2", "width": "w", "depth": "V0"}],
}
ATOMIC_LATTICE = {  # an invented lattice of one point per period and a square barrier, in atomic units
    "title": "atomic-unit lattice (invented)", "units": "atomic", "params": {"L": 2.0, "alpha": 1.0},
    "potential": [{"shape": "point", "center": 0.0, "strength": "alpha"},
                  {"shape": "square", "center": 1.0, "width": 0.5, "height": 2.0}],
    "domain": {"boundary": "periodic", "period": "L"}, "solve": {"bands": 3, "wavevectors": 11},
}
ATOMIC_POINTS = {  # the same as two point interactions
    "title": "atomic-unit point pair (invented)", "units": "atomic", "params": {"d": 4.0, "alpha": 1.0},
    "potential": [{"shape": "point", "center": "-d/2", "strength": "alpha"},
                  {"shape": "point", "center": "d/2", "strength": "alpha"}],
}


def _archives(folder: Path) -> dict[str, Path]:
    atomic = fdsolver.case_from_dict(ATOMIC)
    points = fdsolver.case_from_dict(ATOMIC_POINTS)
    pair = fdsolver.load_case(CASES / "impurity_pair.toml")
    lattice = fdsolver.case_from_dict(ATOMIC_LATTICE)
    well = fdsolver.load_case(CASES / "algaas_well.toml")
    well_run = fdsolver.solve(well)
    atomic_run = fdsolver.solve(atomic)
    made = {
        "solve": fdsolver.solve(fdsolver.load_case(CASES / "coupled_wells.toml")),
        "solve atomic": atomic_run,
        "sweep": fdsolver.sweep(CASES / "double_square.toml", ["d=0.5:3:4"], executor="serial", save_psi=True),
        "sweep atomic": fdsolver.sweep(atomic, ["d=0.1:4:5"], executor="serial", save_psi=True),
        "sweep atomic two params": fdsolver.sweep(atomic, ["d=0.5:4:3", "V0=0.5,1"], executor="serial"),
        "threshold": fdsolver.threshold(CASES / "double_square.toml", "d=0.1:6"),
        "threshold atomic": fdsolver.threshold(atomic, "d=0.01:6"),
        "delta_check": fdsolver.delta_check(pair, widths="1e-3:0.1:3"),
        "delta_check atomic": fdsolver.delta_check(points, widths="1e-3:0.1:3"),
        "delta_check from finite": fdsolver.delta_check(CASES / "impurity_pair_finite.toml", from_finite=True),
        "delta_map": fdsolver.delta_map(pair, ["width=0.3:6:3", "d=9.2:10.6:3"], executor="serial"),
        "delta_map atomic": fdsolver.delta_map(points, ["width=0.01:1:3", "d=2:6:3"], executor="serial"),
        "bands": fdsolver.api.bands(CASES / "superlattice.toml", wavevectors=11, bloch="0,1", stacks="2,3"),
        "bands atomic": fdsolver.api.bands(lattice, bloch="0.5", stacks="2", termination="open"),
        "band_sweep": fdsolver.band_sweep(CASES / "superlattice.toml", ["barrier=2:4:3"], executor="serial"),
        "band_sweep atomic": fdsolver.band_sweep(lattice, ["alpha=0.5:1.5:3", "L=2,3"], executor="serial"),
        "comb_check": fdsolver.delta_check(CASES / "delta_comb.toml", widths="0.01:0.5:3"),
        "comb_check atomic": fdsolver.delta_check(fdsolver.case_from_dict({**ATOMIC_LATTICE, "potential":
                                                  ATOMIC_LATTICE["potential"][:1]}), widths="0.01:0.5:3"),
        "solve of materials": well_run,
        "absorption": fdsolver.absorption(well_run, density="1e11 cm^-2", broadening="5 meV", energies="50:300:64"),
        "absorption atomic": fdsolver.absorption(atomic_run, density=1e11, broadening=1e-3, period=20.0),
        "interband": fdsolver.interband(well),
        "transmission": fdsolver.transmit(CASES / "double_barrier.toml", "1:400:40"),
        "transmission atomic": fdsolver.transmit(atomic, "0.05:3"),
        "transmission sweep": fdsolver.transmit(atomic, "0.05:3:20", vary="d=0.5:2:3", executor="serial"),
        "resonances": fdsolver.resonances(CASES / "double_barrier.toml"),
        "resonances sweep": fdsolver.resonances(CASES / "stark_well.toml", vary="F=0:40:3", executor="serial"),
        "current": fdsolver.current(CASES / "double_barrier.toml", "0:0.2:3", executor="serial"),
        "solve quasi-bound": fdsolver.solve(fdsolver.load_case(CASES / "stark_well.toml")),
        "delta_background": fdsolver.delta_check(CASES / "sheet_in_well.toml", widths="0.01:1:3"),
        "delta_transmission": fdsolver.delta_check(points, transmission=True, energies="0.05:2:20", widths="1e-3:0.1:3"),
    }
    out = {}
    for name, ds in made.items():
        out[name] = fdsolver.write_dataset(ds, folder / (name.replace(" ", "_") + ".nc"))
    return out


@pytest.fixture(scope="module")
def archives(tmp_path_factory) -> dict[str, Path]:
    return _archives(tmp_path_factory.mktemp("cf"))


NAMES = ["solve", "solve atomic", "sweep", "sweep atomic", "sweep atomic two params", "threshold", "threshold atomic",
         "delta_check", "delta_check atomic", "delta_check from finite", "delta_map", "delta_map atomic",
         "bands", "bands atomic", "band_sweep", "band_sweep atomic", "comb_check", "comb_check atomic",
         "solve of materials", "absorption", "absorption atomic", "interband",
         "transmission", "transmission atomic", "transmission sweep", "resonances", "resonances sweep", "current", "solve quasi-bound",
         "delta_background", "delta_transmission"]


def test_every_archive_kind_is_covered(archives):
    kinds = {kind_of(fdsolver.open_run(p).attrs).name for p in archives.values()}
    assert kinds == set(KINDS), "add an archive of the new kind to this test"
    assert sorted(archives) == sorted(NAMES)


@pytest.mark.parametrize("name", NAMES)
def test_every_units_attribute_is_a_udunits_unit(archives, name):
    ds = fdsolver.open_run(archives[name])
    seen = 0
    for var, da in ds.variables.items():
        if "units" not in da.attrs:
            assert da.dtype.kind in "OUS", f"{var} is a number without units"
            continue
        text = da.attrs["units"]
        unit = cf_units.Unit(text)  # raises ValueError for a string UDUNITS-2 cannot parse
        assert not unit.is_unknown(), (var, text)
        seen += 1
    assert seen >= 5
    if "atomic" in name:  # bohr and hartree are written as scaled SI units (CODATA, scipy.constants), named beside them
        energy = ds[next(n for n in ("energy", "band_bottom", "photon_energy", "threshold_value") if n in ds.variables)]
        hartree = physical_constants["Hartree energy"][0]
        if energy.name in ("energy", "band_bottom", "photon_energy"):
            assert energy.attrs["units_name"] == "hartree"
            assert cf_units.Unit(energy.attrs["units"]).convert(1.0, "J") == pytest.approx(hartree, rel=1e-12)
        lengths = [v for v in ds.variables.values() if v.attrs.get("units_name") == "bohr"]
        inverse = [v for v in ds.variables.values() if v.attrs.get("units_name") == "1/bohr"]
        has_length = any("length" in str(r.units) for r in kind_of(ds.attrs).rows)  # T(E) has none
        assert lengths or inverse or not has_length, "no length in bohr"
        for v in inverse:  # an absorption coefficient per bohr
            assert cf_units.Unit(v.attrs["units"]).convert(1.0, "m-1") == pytest.approx(1 / physical_constants["Bohr radius"][0], rel=1e-12)
        for v in lengths:
            assert cf_units.Unit(v.attrs["units"]).convert(1.0, "m") == pytest.approx(physical_constants["Bohr radius"][0], rel=1e-12)


@pytest.fixture(scope="module")
def checker():
    suite = runner.CheckSuite()
    with warnings.catch_warnings():  # the checker's plug-ins for other conventions warn about their own deprecation
        warnings.simplefilter("ignore", DeprecationWarning)
        suite.load_all_available_checkers()
    versions = [tuple(int(p) for p in m.groups()) for m in (re.fullmatch(r"cf:(\d+)\.(\d+)", c) for c in suite.checkers) if m]
    newest = "cf:{}.{}".format(*max(versions))
    return suite, newest


def test_the_checker_knows_a_recent_cf_version(checker):
    _, newest = checker
    major, minor = map(int, newest.split(":")[1].split("."))
    assert (major, minor) >= (1, 11)  # compliance-checker 6.1 knows CF up to 1.11 (DEVELOPERS.md)


@pytest.mark.slow
@pytest.mark.parametrize("name", NAMES)
def test_cf_checker_finds_nothing_wrong(archives, checker, name):
    suite, newest = checker
    declared = fdsolver.open_run(archives[name]).attrs["Conventions"]
    scores, crashed = suite.run_all(suite.load_dataset(str(archives[name])), [newest], skip_checks=[])[newest]
    assert not crashed, f"the checker failed inside: {crashed}"
    problems = []
    for result in scores:
        value = result.value
        passed = value[0] == value[1] if isinstance(value, tuple) else bool(value)
        if passed:
            continue
        version_only = [m for m in result.msgs if re.search(r"Conventions global attribute does not contain", m)]
        if version_only and len(version_only) == len(result.msgs) and declared > newest.replace("cf:", "CF-"):
            continue  # our declared version is newer than the checker's: the one allowed complaint
        problems.append((result.weight, result.name, result.msgs))
    assert problems == []


def _layout(path: Path) -> dict:
    """Everything a reader sees of a NetCDF-4 file, read with the netCDF4 library itself: global attributes,
    dimensions in order, and per variable (in order) its type, dimensions, attributes, HDF5 filters, chunking and
    raw values (no masking)."""
    import netCDF4
    import numpy as np

    with netCDF4.Dataset(path) as nc:
        nc.set_auto_mask(False)
        out = {"attributes": {a: repr(nc.getncattr(a)) for a in nc.ncattrs()},
               "dimensions": [(d, len(v)) for d, v in nc.dimensions.items()]}
        for name, var in nc.variables.items():
            raw = var[...]
            values = repr(np.asarray(raw).tolist()) if var.dtype is str else np.asarray(raw).tobytes()
            out[name] = (str(var.dtype), var.dimensions, {a: repr(var.getncattr(a)) for a in var.ncattrs()},
                         var.filters(), var.chunking(), values)
        out["order"] = list(nc.variables)
    return out


@pytest.mark.parametrize("name", NAMES)
def test_the_archive_writer_writes_what_xarray_writes(archives, name, tmp_path):
    """fdsolver writes archives with the netCDF4 library alone (fdsolver/io/netcdf.py).  Reference: xarray's own
    ``Dataset.to_netcdf`` (netCDF4 engine) of the same Dataset with the encoding the writer documents (NaN
    ``_FillValue`` on float data, none on coordinates, Fletcher-32 checksums on numeric data of one dimension or
    more): the two files must hold the same attributes, dimensions, variables, types, filters, chunks and bytes."""
    import numpy as np

    from fdsolver.io.archive import write_dataset

    ds = fdsolver.open_run(archives[name])
    ours = write_dataset(ds, tmp_path / "ours.nc")
    encoding = {}
    for var in ds.variables:
        kind = ds[var].dtype.kind
        enc = {}
        if kind == "f":
            enc["_FillValue"] = None if var in ds.coords else np.nan
        if var in ds.data_vars and kind in "fiu" and ds[var].ndim > 0:
            enc["fletcher32"] = True
        encoding[var] = enc
    reference = tmp_path / "xarray.nc"
    ds.to_netcdf(reference, engine="netcdf4", encoding=encoding)
    assert _layout(ours) == _layout(reference)


def test_the_archive_writer_names_auxiliary_coordinates_as_xarray_does(tmp_path):
    """No archive kind has a coordinate that is not a dimension (a label over a dimension, a scalar); the writer
    still writes one as CF asks (the ``coordinates`` attribute of the data variables over its dimensions,
    CF conventions sec. 5), checked against xarray's ``to_netcdf``.  Booleans and complex values are refused."""
    import numpy as np
    import xarray as xr

    from fdsolver.io.netcdf import store_netcdf

    ds = xr.Dataset({"a": ("t", [1.0, 2.0]), "b": ("s", [5, 6, 7])},
                    coords={"t": [0, 1], "label": ("t", ["near", "far"]), "depth": 3.5}, attrs={"title": "x"})
    store_netcdf(ds, str(tmp_path / "ours.nc"), {})
    ds.to_netcdf(tmp_path / "xarray.nc", engine="netcdf4",
                 encoding={v: {"_FillValue": None} for v in ds.variables if ds[v].dtype.kind == "f"})
    assert _layout(tmp_path / "ours.nc") == _layout(tmp_path / "xarray.nc")
    for bad in (np.array([True, False]), np.array([1j, 2j])):
        with pytest.raises(TypeError, match="cannot be archived"):
            store_netcdf(xr.Dataset({"flag": ("t", bad)}), str(tmp_path / "bad.nc"), {})
