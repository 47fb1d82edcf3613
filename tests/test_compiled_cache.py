"""Where fdsolver's compiled kernels are cached (fdsolver.compiled.cache_folder).

The rule (common practice for per-user caches, no source; the XDG base directory specification for
XDG_CACHE_HOME): the user's own NUMBA_CACHE_DIR wins; otherwise fdsolver/numba in XDG_CACHE_HOME or ~/.cache,
a private folder of the user in the temp folder where that cannot be written; never beside the installed
source, where pip's uninstall left the cache files (and so the package's folder) behind.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

import pytest

import fdsolver
from fdsolver.compiled import cache_folder


def test_the_users_numba_cache_dir_wins(monkeypatch, tmp_path):
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path / "mine"))
    assert cache_folder() is None  # numba's own rule applies


def test_the_user_cache_folder(monkeypatch, tmp_path):
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    assert cache_folder() == str(tmp_path / "cache" / "fdsolver" / "numba")
    assert (tmp_path / "cache" / "fdsolver" / "numba").is_dir()


def _private_temp(tmp_path) -> Path:
    return tmp_path / "temp" / (f"fdsolver-{os.getuid()}" if hasattr(os, "getuid") else "fdsolver")


def test_an_unusable_cache_home_falls_back_to_a_private_temp_folder(monkeypatch, tmp_path):
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the cache folder would go")
    monkeypatch.setenv("XDG_CACHE_HOME", str(blocker))
    (tmp_path / "temp").mkdir()
    monkeypatch.setattr(tempfile, "gettempdir", lambda: str(tmp_path / "temp"))
    assert cache_folder() == str(_private_temp(tmp_path) / "numba")
    if hasattr(os, "getuid"):
        assert _private_temp(tmp_path).stat().st_mode & 0o777 == 0o700  # the user's alone


@pytest.mark.skipif(not hasattr(os, "getuid"), reason="POSIX owners and modes")
def test_a_temp_folder_others_may_write_to_is_not_used(monkeypatch, tmp_path):
    # the cache holds machine code the process runs: a folder another user could fill is never trusted
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the cache folder would go")
    monkeypatch.setenv("XDG_CACHE_HOME", str(blocker))
    _private_temp(tmp_path).mkdir(parents=True)
    _private_temp(tmp_path).chmod(0o777)
    monkeypatch.setattr(tempfile, "gettempdir", lambda: str(tmp_path / "temp"))
    assert cache_folder() is None  # numba's own locators decide instead


def test_a_relative_cache_home_is_ignored_and_no_home_falls_back_to_the_temp_folder(monkeypatch, tmp_path):
    # the XDG base directory rule (freedesktop.org): a relative XDG_CACHE_HOME is invalid, ~/.cache is used;
    # without a home, the temp folder; never a folder named "~" or "relative" under the working folder
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", "relative")
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.chdir(tmp_path)
    assert cache_folder() == str(tmp_path / "home" / ".cache" / "fdsolver" / "numba")
    monkeypatch.setattr(os.path, "expanduser", lambda path: path)  # what it returns without a home
    monkeypatch.setattr(tempfile, "gettempdir", lambda: str(tmp_path / "temp"))
    assert cache_folder() == str(_private_temp(tmp_path) / "numba")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["home", "temp"]


def test_a_kernel_is_cached_there_and_not_beside_the_source(tmp_path):
    # a fresh process with an empty cache home compiles one small kernel and writes its cache there
    package = Path(fdsolver.__file__).parent
    before = {p: p.stat().st_mtime_ns for p in package.rglob("*.nb[ic]")}
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"}
    env["XDG_CACHE_HOME"] = str(tmp_path)
    code = textwrap.dedent("""
        import numpy as np
        from fdsolver.numerics import kernels
        print(kernels.sturm_count(np.array([2.0, 2.0, 2.0]), np.array([-1.0, -1.0]), 1.0))
    """)
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=300,
                          check=False)
    assert proc.returncode == 0, proc.stderr
    # tridiag(-1, 2, -1) of size 3 has eigenvalues 2 - sqrt(2), 2, 2 + sqrt(2): one below 1
    # (the discrete Laplacian's spectrum 2 - 2 cos(k pi / 4), common practice, no source)
    assert proc.stdout.split() == ["1"]
    assert list((tmp_path / "fdsolver" / "numba").glob("*/kernels.sturm_count-*.nbi"))
    after = {p: p.stat().st_mtime_ns for p in package.rglob("*.nb[ic]")}
    assert after == before  # nothing new or rewritten beside the source


# ---------------------------------------------------------------- loads with the bitcode left unparsed
def _fresh_library():
    """A small kernel compiled in this process (not cached) and numba's serialized form of its library."""
    import numba
    import numpy as np

    @numba.njit
    def doubled_sum(a):
        return 2.0 * a.sum()

    doubled_sum(np.ones(3))
    cres = next(iter(doubled_sum.overloads.values()))
    return cres, cres.library.serialize_using_object_code()


def test_the_object_files_symbols_are_names_the_bitcode_defines():
    """``_object_file_symbols`` reads the ELF symbol table of numba's machine code for a library.  Reference:
    llvmlite's parse of the same library's bitcode (what numba reads at a load): every name read from the
    object file is defined there, and the kernel's entry point and its Python wrapper are among them."""
    import llvmlite.binding as ll

    from fdsolver.compiled import _object_file_symbols

    cres, (_name, kind, (object_code, bitcode)) = _fresh_library()
    assert kind == "object"
    names = _object_file_symbols(object_code)
    module = ll.parse_bitcode(bitcode)
    defined = {g.name for table in (module.functions, module.global_variables) for g in table if not g.is_declaration}
    assert names is not None and names <= defined
    assert {cres.fndesc.llvm_func_name, cres.fndesc.llvm_cpython_wrapper_name} <= names


def test_bytes_that_are_not_a_64_bit_elf_object_are_left_to_numba():
    from fdsolver.compiled import _object_file_symbols

    _cres, (_name, _kind, (object_code, _bitcode)) = _fresh_library()
    thirty_two_bit = object_code[:4] + b"\x01" + object_code[5:]  # EI_CLASS = ELFCLASS32
    for data in (b"", b"not an object file", object_code[:200], thirty_two_bit, b"\xcf\xfa\xed\xfe" + object_code[4:]):
        assert _object_file_symbols(data) is None


def test_a_kernel_loaded_from_the_cache_parses_its_bitcode_only_when_a_compile_links_it(tmp_path):
    """A fresh process loads ``sturm_count`` from the cache with its bitcode unparsed; a kernel compiled later
    that calls it links it in (the bitcode is parsed then) and gets the same count.  Reference for the count:
    numpy's eigenvalues of the same tridiagonal matrix.  The first of two runs may compile (an empty cache);
    the second loads.  fdsolver/compiled.py, ``_deferred_linking``."""
    code = textwrap.dedent("""
        import json
        import numba
        import numpy as np
        from fdsolver.numerics import kernels
        d, e = np.array([2.0, 1.0, 3.0, -1.0]), np.array([0.5, 0.2, 0.1])
        count = kernels.sturm_count(d, e, 1.5)
        library = next(iter(kernels.sturm_count.overloads.values())).library
        deferred = "_pending_bitcode" in vars(library)

        @numba.njit
        def twice(d, e, sigma):
            return 2 * kernels.sturm_count(d, e, sigma)

        linked = twice(d, e, 1.5)
        matrix = np.diag(d) + np.diag(e, 1) + np.diag(e, -1)
        reference = int(np.sum(np.linalg.eigvalsh(matrix) < 1.5))
        print("RESULT " + json.dumps([deferred, int(count), int(linked), "_pending_bitcode" in vars(library),
                                      reference]))
    """)
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"}
    env["XDG_CACHE_HOME"] = str(tmp_path)
    env["PYTHONPATH"] = os.pathsep.join([str(Path(fdsolver.__file__).resolve().parents[1]),
                                         os.environ.get("PYTHONPATH", "")])
    runs = [subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=300,
                           check=False) for _ in range(2)]
    for proc in runs:
        assert proc.returncode == 0, proc.stderr
    deferred, count, linked, still_pending, reference = json.loads(runs[1].stdout.rsplit("RESULT ", 1)[1])
    assert deferred and not still_pending  # loaded unparsed; parsed when the new kernel linked it in
    assert count == reference == 2 and linked == 2 * reference


KERNELS = '''
import numpy as np
from fdsolver.compiled import njit


@njit
def filled(n, value):
    out = np.empty(n)
    out[:] = value
    return out


@njit
def shifted(a, b):
    a[1:] = b
    return a
'''

USE_KERNELS = '''
import json, sys
import numba
import numpy as np
import scratch_kernels as k
report = [k.filled(3, 2.0).tolist()]
for call in (lambda: k.filled(-1, 0.0), lambda: k.shifted(np.zeros(4), np.ones(2))):
    try:
        call()
        report.append(None)
    except ValueError as exc:
        report.append(str(exc))
report.append("numba.np.arrayobj" in sys.modules)

@numba.njit
def later(n):  # a compile after the loads: numba sets its compiler up and imports its array module then
    return np.empty(n).size + k.filled(2, 1.0).size

report += [later(4), "numba.np.arrayobj" in sys.modules, k.filled(2, 5.0).tolist()]
print("RESULT " + json.dumps(report))
'''


def _scratch_runs(tmp_path, script: str, times: int = 2) -> list:
    """``script`` run ``times`` times, each in a fresh process with the scratch kernels (KERNELS) importable and
    a cache folder of its own in ``tmp_path`` (the first run compiles, the later ones load); each run's report."""
    (tmp_path / "scratch_kernels.py").write_text(KERNELS)
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"}
    env["XDG_CACHE_HOME"] = str(tmp_path / "cache")
    env["PYTHONPATH"] = os.pathsep.join([str(tmp_path), str(Path(fdsolver.__file__).resolve().parents[1]),
                                         os.environ.get("PYTHONPATH", "")])
    reports = []
    for _ in range(times):
        proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, env=env, timeout=300,
                              check=False)
        assert proc.returncode == 0, proc.stderr
        reports.append(json.loads(proc.stdout.rsplit("RESULT ", 1)[1]))
    return reports


def test_kernels_loaded_without_numbas_array_module_run_and_raise_as_compiled(tmp_path):
    """Two small kernels made with fdsolver's ``njit``, in a fresh process that compiles them and in one that
    loads them from the cache: the loading process does not import ``numba.np.arrayobj`` (its helpers'
    environments are rebuilt without it: fdsolver/compiled.py, ``_helper_environments``), and gets the same
    values and the same errors, a negative size and a shape mismatch (reference: the compiling process), and a
    compile afterwards works and imports that module as usual."""
    compiled, loaded = _scratch_runs(tmp_path, USE_KERNELS)
    assert compiled[3] is True and loaded[3] is False  # the compiling process imports it; the loading one not
    assert loaded[:3] == compiled[:3] and loaded[4:] == compiled[4:]
    assert loaded[0] == [2.0, 2.0, 2.0] and "negative" in loaded[1] and loaded[2]  # numpy: np.empty(-1) fails
    assert loaded[4:] == [6, True, [5.0, 5.0]]


USE_KERNELS_EXTENSIONS = '''
import json
import numba
from numba.core import entrypoints
import scratch_kernels as k
report = [k.filled(2, 3.0).tolist(), entrypoints._already_initialized]

@numba.njit
def later(n):
    return n + 1

report += [later(1), entrypoints._already_initialized]
print("RESULT " + json.dumps(report))
'''


def test_numba_extensions_wait_for_a_compile(tmp_path):
    """numba runs the ``numba_extensions`` entry points of the installed packages before a dispatcher's first
    call; fdsolver's kernels run them only where they must compile (fdsolver/compiled.py,
    ``_lean_cache_loads``).  A fresh process that compiles the kernels has run them; one that loads the kernels
    from the cache has not, and gets the same values; a numba compile afterwards runs them as numba does."""
    compiled, loaded = _scratch_runs(tmp_path, USE_KERNELS_EXTENSIONS)
    assert compiled == [[3.0, 3.0], True, 2, True]
    assert loaded == [[3.0, 3.0], False, 2, True]


USE_KERNELS_RUNTIME = '''
import json
import numba
import numpy as np
from numba.core.runtime import nrtdynmod
made = []
real = nrtdynmod.create_nrt_module
nrtdynmod.create_nrt_module = lambda ctx: made.append(1) or real(ctx)
import scratch_kernels as k
report = [k.filled(3, 2.0).tolist(), len(made)]

@numba.njit
def later(n):  # a compile after the runtime was loaded: its arrays use the runtime's reference counts
    a = np.ones(n)
    b = a.copy()
    return (a + b).sum()

report += [later(5), k.shifted(np.zeros(3), np.ones(2)).tolist()]
print("RESULT " + json.dumps(report))
'''


def test_numbas_runtime_is_compiled_once_and_loaded_from_the_cache(tmp_path):
    """numba's runtime library (reference counts, memory helpers) is compiled by the first process and kept in
    fdsolver's cache folder; the next process loads it (numba's compiler never builds it), its kernels and a
    numba compile that makes arrays give the same values (reference: the first process); an unreadable file
    is compiled again and replaced (fdsolver/compiled.py, ``_runtime_from_cache``)."""

    def run():
        return _scratch_runs(tmp_path, USE_KERNELS_RUNTIME, times=1)[0]

    first = run()
    files = list((tmp_path / "cache" / "fdsolver" / "numba").glob("runtime-*.bin"))
    assert len(files) == 1 and files[0].stat().st_size > 0
    second = run()
    assert first == [[2.0, 2.0, 2.0], 1, 10.0, [0.0, 1.0, 1.0]]
    assert second == [[2.0, 2.0, 2.0], 0, 10.0, [0.0, 1.0, 1.0]]
    files[0].write_bytes(b"not a runtime library")
    assert run() == first  # compiled again
    assert files[0].stat().st_size > 100 and run() == second  # and replaced


READ_NUMBA_CONFIG = '''
import json, sys
from fdsolver.numerics import kernels
from numba.core import config
before = "yaml" in sys.modules
print("RESULT " + json.dumps([before, int(config.OPT), config._HAVE_YAML, config.yaml.safe_load("a: 1")]))
'''


@pytest.mark.parametrize("with_file", [False, True], ids=["no config file", "a config file"])
def test_numba_reads_its_config_file_as_before(tmp_path, with_file):
    """fdsolver imports numba with PyYAML deferred (fdsolver/compiled.py, ``_import_numba``): with no
    ``.numba_config.yaml`` in the working folder PyYAML is not imported, yet numba knows it is there and gets it
    at the first use; with one, numba reads it as it is imported (its ``opt: '2'`` sets the optimisation level,
    3 by default)."""
    import importlib.util

    assert importlib.util.find_spec("yaml") is not None  # PyYAML is installed here, else the check proves nothing
    if with_file:
        (tmp_path / ".numba_config.yaml").write_text("opt: '2'\n")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(Path(fdsolver.__file__).resolve().parents[1]),
                                                        os.environ.get("PYTHONPATH", "")]))
    env.pop("NUMBA_OPT", None)
    proc = subprocess.run([sys.executable, "-W", "error", "-c", READ_NUMBA_CONFIG], capture_output=True, text=True,
                          env=env, cwd=tmp_path, timeout=300, check=False)
    assert proc.returncode == 0, proc.stderr
    report = json.loads(proc.stdout.rsplit("RESULT ", 1)[1])
    assert report == ([True, 2, True, {"a": 1}] if with_file else [False, 3, True, {"a": 1}])
