"""What ``import fdsolver``, ``fdsolver --version`` and ``fdsolver --help`` load: nothing heavy.

A fresh interpreter (the fdsolver this test session imported) runs the entry point and reports
``sys.modules``.  No timing: the modules loaded decide the start-up cost (numpy, scipy, xarray with
pandas, netCDF4, matplotlib, numba and dask each cost 0.1 s to over 1 s of CPU to import; common
practice, no source).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import fdsolver

PACKAGE_PARENT = Path(fdsolver.__file__).resolve().parents[1]

#: not loaded by ``import fdsolver`` nor ``fdsolver --version``
LIGHT = ("numpy", "scipy", "xarray", "pandas", "netCDF4", "matplotlib", "dask", "distributed", "numba")
#: not loaded by any ``--help`` (parsers only; the physics is imported when a command runs)
HELP = ("xarray", "pandas", "netCDF4", "matplotlib", "dask", "distributed", "numba")

RUN_ENTRY_POINT = """
import json, runpy, sys
sys.argv = ["fdsolver", *json.loads(sys.argv[1])]
try:
    runpy.run_module("fdsolver", run_name="__main__", alter_sys=True)  # python -m fdsolver ARGS
except SystemExit:
    pass
print("\\nMODULES " + json.dumps(sorted(sys.modules)))
"""


def loaded_by(code: str, *args: str) -> set[str]:
    """Top-level packages in sys.modules after ``code`` ran in a fresh interpreter."""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, env=env, timeout=120)
    assert proc.returncode == 0, proc.stderr
    line = proc.stdout.rsplit("MODULES ", 1)[1]
    return {name.split(".")[0] for name in json.loads(line)}


def test_import_fdsolver_loads_nothing_heavy():
    code = "import json, sys, fdsolver\nprint('MODULES ' + json.dumps(sorted(sys.modules)))"
    loaded = loaded_by(code)
    assert "fdsolver" in loaded
    assert loaded.isdisjoint(LIGHT), sorted(loaded & set(LIGHT))


def test_version_loads_nothing_heavy():
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps(["--version"]))
    assert loaded.isdisjoint(LIGHT), sorted(loaded & set(LIGHT))


@pytest.mark.parametrize("command", [[], ["solve"], ["show"], ["plot"], ["delta-check"], ["sweep"], ["threshold"]],
                         ids=lambda c: " ".join(c) or "top")
def test_help_loads_no_physics(command):
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps([*command, "--help"]))
    assert "argparse" in loaded  # the parser did run
    assert loaded.isdisjoint(HELP), sorted(loaded & set(HELP))


def test_the_check_sees_a_heavy_import(tmp_path):
    """The same probe notices a command that does load the physics: a solve loads the compiled kernels (numba)."""
    case = tmp_path / "point.toml"
    case.write_text('title = "one point interaction (invented)"\n[[potential]]\nshape = "point"\ncenter = 0\nstrength = 1\n')
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps(["solve", str(case)]))
    assert "numba" in loaded and not loaded.isdisjoint(HELP)


def test_writing_an_archive_loads_no_unused_array_library(tmp_path):
    """``solve -o`` writes its archive with the netCDF4 library alone (fdsolver/io/netcdf.py): no xarray, pandas,
    Dask or pint (about 0.3 s of CPU for xarray with pandas, measured).  Reading the archive back (``show``) builds
    an xarray Dataset, and that still imports neither Dask, its scheduler nor pint (installed here: pint is a
    dependency, Dask comes with the test extra), which xarray would otherwise import to ask whether each value is
    one of their arrays (fdsolver/io/lightxr.py)."""
    import importlib.util

    assert importlib.util.find_spec("dask") and importlib.util.find_spec("pint")  # else the check proves nothing
    case = tmp_path / "point.toml"
    case.write_text('title = "one point interaction (invented)"\n[[potential]]\nshape = "point"\ncenter = 0\nstrength = 1\n')
    archive = tmp_path / "run.nc"
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps(["solve", str(case), "-o", str(archive)]))
    assert archive.stat().st_size > 0
    assert "netCDF4" in loaded
    unused = {"xarray", "pandas", "dask", "distributed", "pint"}
    assert loaded.isdisjoint(unused), sorted(loaded & unused)
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps(["show", str(archive)]))
    assert "xarray" in loaded  # the Dataset was built
    assert loaded.isdisjoint({"dask", "distributed", "pint"}), sorted(loaded & {"dask", "distributed", "pint"})


@pytest.mark.parametrize("command", ["transmit", "resonances"])
def test_continuum_tables_and_archives_load_no_xarray(tmp_path, command):
    """``transmit`` and ``resonances`` of one structure print their table, and write their archive, from its
    variables (fdsolver.io.record.Record) like ``solve``: no xarray nor pandas (about 0.3 s of CPU, measured);
    the archive they write reads back as the same table (``show`` builds the Dataset)."""
    case = tmp_path / "barriers.toml"
    case.write_text(BARRIERS)
    archive = tmp_path / "run.nc"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    runs = {}
    for name, args in (("run", [command, str(case), "-o", str(archive)]), ("show", ["show", str(archive)])):
        proc = subprocess.run([sys.executable, "-c", RUN_ENTRY_POINT, json.dumps(args)], check=False,
                              capture_output=True, text=True, env=env, timeout=300)
        assert proc.returncode == 0, proc.stderr
        table, modules = proc.stdout.rsplit("MODULES ", 1)
        runs[name] = (table, {m.split(".")[0] for m in json.loads(modules)})
    table, loaded = runs["run"]
    assert "netCDF4" in loaded and loaded.isdisjoint({"xarray", "pandas"}), sorted(loaded & {"xarray", "pandas"})
    assert "xarray" in runs["show"][1]
    assert runs["show"][0].strip() == table.replace(f"wrote {archive}", "").strip()


def test_deferred_array_checks_answer_as_xarray_does():
    """Once a library is imported, xarray recognises its arrays again (pint Quantity, a Dask array), and a plain
    array is not taken for a Dask collection: the deferral changes imports, not answers.  Dask imported without
    its arrays (as by a cluster) has no array a value could be, and a Dataset built then does not import them."""
    code = """
import json, sys
from fdsolver.io.lightxr import xarray
xr = xarray()
import numpy as np
from xarray.namedarray.pycompat import array_type, is_chunked_array
before = [array_type("pint") == (), array_type("dask") == (), is_chunked_array(np.zeros(3))]
import dask  # as a Dask cluster does: Dask's arrays are not imported, so no value can be one
xr.Dataset({"v": ("x", np.zeros(3))})
before += [array_type("dask") == (), "dask.array" not in sys.modules]
import pint, dask.array as da
q = pint.UnitRegistry().Quantity(np.ones(3), "m")
after = [isinstance(q, array_type("pint")), isinstance(da.ones(3), array_type("dask")), is_chunked_array(da.ones(3)),
         xr.DataArray(da.ones(4), dims="x").chunks is not None]
print("MODULES " + json.dumps([*before, *after]))
"""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=120)
    assert proc.returncode == 0, proc.stderr
    answers = json.loads(proc.stdout.rsplit("MODULES ", 1)[1])
    assert answers == [True, True, False, True, True, True, True, True, True], answers


PAIR = ('title = "two square wells (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
        '[[potential]]\nshape = "square"\ncenter = -3\nwidth = 4\ndepth = 150\n'
        '[[potential]]\nshape = "square"\ncenter = 3\nwidth = 4\ndepth = 150\n')
#: barriers above a zero baseline: the open line's quasi-bound states (widths), no bound state, no field
BARRIERS = ('title = "two thin barriers (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
            '[[potential]]\nshape = "square"\ncenter = -4\nwidth = 2\ndepth = -300\n'
            '[[potential]]\nshape = "square"\ncenter = 4\nwidth = 2\ndepth = -300\n[solve]\nquasi_bound = true\n')


#: a well in a field that falls without bound at the left end: its levels are quasi-bound, and the open ends'
#: boundary conditions are Airy functions (fdsolver.numerics.airy)
FIELD = ('title = "a well in a field (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
         '[[potential]]\nshape = "square"\ncenter = 0\nwidth = 8\ndepth = 200\n'
         '[[potential]]\nshape = "linear"\nfield = 3.0\n')

HEAVY_SCIPY = ("scipy.linalg", "scipy.special", "scipy.optimize", "scipy.interpolate", "scipy.constants")
#: a cubic spline through a table that leaks at its ends (the open line's check for quasi-bound states)
TABLE = ('title = "a tabulated well (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
         '[[potential]]\nshape = "table"\nfile = "profile.csv"\ninterpolation = "cubic"\n')


#: graded interfaces written with the error function (erf and erfc in one expression)
GRADED = ('title = "erf-graded well (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
          '[[potential]]\nshape = "expression"\nV = "-150 * 0.5 * (erf((x + 4) / 0.7) + erfc((x - 4) / 0.7) - 1)"\n'
          '[domain]\nboundary = "hard"\nleft = -30.0\nright = 30.0\n')


@pytest.mark.parametrize("text", [PAIR, BARRIERS, TABLE, GRADED, FIELD],
                         ids=["square-well pair", "double barrier on the open line", "cubic table", "erf expression",
                              "well in a field"])
def test_a_solve_loads_no_heavy_scipy_subpackage_nor_masked_arrays(tmp_path, text):
    """numba imports scipy.linalg (about 0.25 s of CPU, measured) only to ask whether its ``np.correlate`` and
    ``np.convolve`` may call BLAS; no kernel of fdsolver calls them (fdsolver/compiled.py).  The Airy functions of a field at an
    open end are fdsolver's own (fdsolver.numerics.airy), and scipy.optimize (a bound state's root on the open line) is imported where it is called; erf and
    erfc in an expression are compiled loops of their own (fdsolver.input._expressions.special); the cubic spline of a table and the constants of lifetimes need neither scipy.interpolate nor scipy.constants.  So
    no solve of these structures loads any of them (0.1 to 0.4 s of CPU each, measured; DEVELOPERS.md).  Nor
    numpy's masked arrays (numpy.ma, 14-25 ms, measured), which numpy.unique and numba's typing of a kernel's
    first call would import to ask whether an array is masked (fdsolver/arrays.py, fdsolver/compiled.py), nor
    PyYAML (12-14 ms, measured), which numba imports to read a configuration file there is none of."""
    case = tmp_path / "case.toml"
    case.write_text(text)
    x = np.linspace(-20.0, 20.0, 161)
    np.savetxt(tmp_path / "profile.csv", np.column_stack([x, 150.0 - 150.0 * np.exp(-(x / 4.0) ** 2) + 2.0 * x]),
               delimiter=",")
    code = RUN_ENTRY_POINT.replace("sorted(sys.modules)",
                                   "sorted(m for m in sys.modules if m.startswith('scipy') or m in ('numpy.ma', 'yaml'))")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, "-c", code, json.dumps(["solve", str(case)])], check=False,
                          capture_output=True, text=True, env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "energy [meV]" in proc.stdout  # the solve did run
    scipy_modules = json.loads(proc.stdout.rsplit("MODULES ", 1)[1])
    heavy = [m for m in scipy_modules if ".".join(m.split(".")[:2]) in HEAVY_SCIPY or m in ("numpy.ma", "yaml")]
    assert not heavy, heavy


#: values with units in a field between walls, one of them (bohr) outside the table read without pint
#: (fdsolver.input.quantities.EXACT_UNITS): pint converts it
WITH_UNITS = ('title = "a well given with units (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
              '[[potential]]\nshape = "square"\ncenter = "0 nm"\nwidth = "113.4 bohr"\ndepth = "0.2 eV"\n'
              '[[potential]]\nshape = "linear"\nfield = "15 kV/cm"\n'
              '[domain]\nboundary = "hard"\nleft = "-20 nm"\nright = "20 nm"\n')


def test_values_with_units_load_pint_without_dask(tmp_path):
    """pint imports Dask when it is installed, to support Dask arrays of quantities (about 0.1 s of CPU,
    measured); fdsolver converts plain numbers, so a solve of a case written with a unit pint converts loads pint
    and not Dask."""
    import importlib.util

    assert importlib.util.find_spec("dask") and importlib.util.find_spec("pint")  # else the check proves nothing
    case = tmp_path / "units.toml"
    case.write_text(WITH_UNITS)
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps(["solve", str(case)]))
    assert "pint" in loaded
    assert loaded.isdisjoint({"dask", "distributed"}), sorted(loaded & {"dask", "distributed"})


def test_dask_and_pint_work_after_pint_was_loaded_without_dask():
    """After fdsolver has loaded pint with Dask absent, Dask imports and computes as usual, and pint still
    converts: 1 eV = 1.602176634e-19 J exactly (SI 2019 definition of the elementary charge)."""
    code = """
import json
from fdsolver.input.quantities import registry
ureg = registry()
joule = ureg.Quantity(1.0, "eV").to("J").magnitude
import dask.array as da
total = float(da.ones(10, chunks=5).sum().compute())
print("MODULES " + json.dumps([joule, total]))
"""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, "-c", code], check=False, capture_output=True, text=True, env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr
    joule, total = json.loads(proc.stdout.rsplit("MODULES ", 1)[1])
    assert joule == pytest.approx(1.602176634e-19, rel=1e-15)
    assert total == 10.0


def test_absent_hides_only_what_is_not_imported_and_restores_it():
    """``absent`` blocks an import and a find_spec inside the block, leaves an imported module alone, and
    removes its mark on leaving, even when the block raises."""
    import importlib.util

    from fdsolver.absent import absent

    name = "fdsolver_test_no_such_module_yet"
    with pytest.raises(RuntimeError), absent(name, "json"):
        assert sys.modules[name] is None and importlib.util.find_spec(name) is None
        with pytest.raises(ImportError):
            __import__(name)
        assert sys.modules["json"] is json  # already imported: not hidden
        raise RuntimeError("leave the block by an exception")
    assert name not in sys.modules and sys.modules["json"] is json


def test_numba_linear_algebra_still_works_after_the_kernels_load():
    """With the kernels loaded first (without scipy.linalg), a later kernel's ``np.convolve``, ``np.dot`` and
    ``np.linalg`` (which import scipy.linalg when they compile) give numpy's answers, and scipy.linalg imports
    normally."""
    code = """
import json, sys
import numpy as np
from fdsolver.numerics import kernels
kernels.sturm_count(np.array([1.0, 2.0]), np.array([0.5]), 1.5)
hidden = "scipy.linalg" not in sys.modules
import numba
@numba.njit
def dot(a, b):
    return np.dot(a, b)
@numba.njit
def convolve(a, b):
    return np.convolve(a, b)
@numba.njit
def eigvals(m):
    return np.linalg.eigvalsh(m)
rng = np.random.default_rng(3)
a, b = rng.random(50), rng.random(50)
m = rng.random((4, 4)); m = m + m.T
conv = bool(np.allclose(convolve(a, b[:7]), np.convolve(a, b[:7]), rtol=1e-14, atol=0))
import scipy.linalg
ok = [hidden and conv, bool(abs(dot(a, b) - a @ b) <= 1e-13 * (a @ b)), bool(np.allclose(eigvals(m), np.linalg.eigvalsh(m), rtol=0, atol=1e-12)),
      bool(np.allclose(scipy.linalg.eigvalsh(m), np.linalg.eigvalsh(m), rtol=0, atol=1e-12))]
print("MODULES " + json.dumps(ok))
"""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, "-c", code], check=False, capture_output=True, text=True, env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout.rsplit("MODULES ", 1)[1]) == [True, True, True, True]


#: modules numba imports only to set its compiler up (its lowering registries), not to load a cached kernel; its
#: numpy array-math module, which only a kernel calling one of its functions needs (fdsolver's kernels call
#: none: their binary searches and interpolation are written out, in kernels.py and in the table's spline); and
#: its array module, whose globals numba's own helpers in a loaded kernel never read (fdsolver/compiled.py,
#: ``_helper_environments``)
COMPILER_SET_UP = ("numba.np.random.generator_methods", "numba.np.polynomial.polynomial_functions",
                   "numba.typed.typeddict", "numba.experimental.jitclass.base", "numba.np.arraymath",
                   "numba.np.arrayobj")


@pytest.mark.parametrize("text", [PAIR, TABLE], ids=["square-well pair", "cubic table"])
def test_kernels_load_from_the_cache_without_numbas_compiler_set_up(tmp_path, text):
    """A cold solve with the kernels in numba's cache loads them without numba's compile set-up (0.1 to 0.2 s
    of CPU, measured: DEVELOPERS.md, session 15), and gives the energies of a process that compiled them.
    The first run may compile (a fresh cache); the second loads.  fdsolver/compiled.py, ``_lean_cache_loads``."""
    case = tmp_path / "case.toml"
    case.write_text(text)
    x = np.linspace(-20.0, 20.0, 161)
    np.savetxt(tmp_path / "profile.csv", np.column_stack([x, 150.0 - 150.0 * np.exp(-(x / 4.0) ** 2) + 2.0 * x]),
               delimiter=",")
    code = RUN_ENTRY_POINT.replace("sorted(sys.modules)",
                                   "sorted(m for m in sys.modules if m.startswith(('numba', 'scipy')))")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    runs = [subprocess.run([sys.executable, "-c", code, json.dumps(["solve", str(case)])], check=False,
                           capture_output=True, text=True, env=env, timeout=600) for _ in range(2)]
    for proc in runs:
        assert proc.returncode == 0, proc.stderr
    tables = [proc.stdout.rsplit("MODULES ", 1)[0] for proc in runs]
    assert "energy [meV]" in tables[1] and tables[1] == tables[0]
    loaded = set(json.loads(runs[1].stdout.rsplit("MODULES ", 1)[1]))
    assert "numba.core.runtime" in loaded  # numba did run
    assert loaded.isdisjoint(COMPILER_SET_UP), sorted(loaded & set(COMPILER_SET_UP))
    assert "scipy.linalg" not in loaded


SWEEP_WORKER = """
import json, sys
from fdsolver.parallel.executors import ProcessExecutor
from fdsolver.scans.runner import warm_up  # the sweeps' initializer: a tiny solve types the kernels' arguments

LOOKED_FOR = ("numpy.ma", "scipy.linalg", "yaml")


def job(_):
    from fdsolver.input.case import case_from_dict
    from fdsolver.runs import solve_case

    solve_case(case_from_dict({"potential": [{"shape": "square", "center": c, "width": 1.0, "depth": 9.0}
                                             for c in (-1.5, 1.5)]}))
    return [m for m in LOOKED_FOR if m in sys.modules]


if __name__ == "__main__":
    assert not [m for m in LOOKED_FOR if m in sys.modules]
    with ProcessExecutor(1, initializer=warm_up) as ex:
        print("MODULES", json.dumps(list(ex.imap_unordered(job, [0]))[0]))
"""


def test_a_sweep_worker_loads_neither_scipy_linalg_nor_masked_arrays(tmp_path):
    """A local sweep worker of a parent that has solved nothing sets its BLAS to one thread without importing
    scipy.linalg (0.1-0.2 s of CPU per worker, measured; fdsolver.parallel.executors._pin_worker), and types
    its kernels' arguments without numpy's masked arrays although its watch on the parent is a second thread
    (fdsolver.compiled.TOUCHES_NO_MODULES; 24-28 ms per worker, measured), as a solve in one process does."""
    script = tmp_path / "worker.py"
    script.write_text(SWEEP_WORKER)
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(PACKAGE_PARENT), os.environ.get("PYTHONPATH", "")]))
    proc = subprocess.run([sys.executable, str(script)], check=False, capture_output=True, text=True, env=env,
                          cwd=tmp_path, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout.rsplit("MODULES ", 1)[1]) == []
