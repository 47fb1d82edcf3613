"""Archives: a damaged or foreign file gives a clear error; an interrupted write never breaks the old file.

Contract (README.md, "Archives" and "Exit codes"; common practice, no source):
``open_run`` raises ArchiveError (a CaseError) naming the file, and
``fdsolver show`` exits with code 2 and one line on stderr, for a truncated,
corrupted or foreign file; ``write_dataset`` writes a temporary file in the
target folder and renames it over the target, so killing the writer at any
moment leaves the old archive or the new one, complete.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import fdsolver
from fdsolver.io.archive import write_dataset
from fdsolver.cli import main


@pytest.fixture(scope="module")
def good(tmp_path_factory) -> Path:
    """A real solve archive of a square well (an invented case)."""
    case = fdsolver.case_from_dict(
        {"title": "square well (invented)", "units": "atomic",
         "potential": [{"shape": "square", "center": 0.0, "width": 2.0, "depth": 10.0}],
         "solve": {"max_states": 3}}
    )
    path = tmp_path_factory.mktemp("good") / "good.nc"
    write_dataset(fdsolver.solve(case), path)
    return path


def show(path, capsys) -> tuple[int, list[str]]:
    code = main(["show", str(path)])
    err = capsys.readouterr().err
    return code, [line for line in err.splitlines() if line.strip()]


def assert_refused(path: Path, capsys, needle: str = "") -> None:
    with pytest.raises(fdsolver.ArchiveError) as info:
        fdsolver.open_run(path)
    assert path.name in str(info.value) and "\n" not in str(info.value)
    code, lines = show(path, capsys)
    assert code == 2 and len(lines) == 1, lines
    assert lines[0].startswith("fdsolver: error: ") and path.name in lines[0] and needle in lines[0], lines[0]
    assert "Traceback" not in lines[0]


def test_good_archive_opens(good, capsys):
    ds = fdsolver.open_run(good)
    assert ds.sizes["state"] == 3
    code, lines = show(good, capsys)
    assert code == 0 and lines == []


# --------------------------------------------------------------- truncation
@pytest.mark.parametrize("keep", [0.0, 0.001, 0.05, 0.25, 0.5, 0.75, 0.95, 0.999, -1])
def test_truncated_archive_is_refused(good, tmp_path, capsys, keep):
    raw = good.read_bytes()
    n = len(raw) - 1 if keep == -1 else int(len(raw) * keep)
    cut = tmp_path / f"cut_{n}.nc"
    cut.write_bytes(raw[:n])
    assert_refused(cut, capsys)


@pytest.mark.parametrize("offset", [0, 8, 64, 200, 512])
def test_garbled_header_is_refused(good, tmp_path, capsys, offset):
    raw = bytearray(good.read_bytes())
    raw[offset : offset + 16] = bytes((b ^ 0xA5) for b in raw[offset : offset + 16])
    bad = tmp_path / f"garbled_{offset}.nc"
    bad.write_bytes(bytes(raw))
    assert_refused(bad, capsys)


def test_flipped_data_byte_is_detected(good, tmp_path, capsys):
    ds = fdsolver.open_run(good)
    raw = bytearray(good.read_bytes())
    probe = ds.psi.values[1, ds.sizes["x"] // 3 : ds.sizes["x"] // 3 + 2].astype("<f8").tobytes()
    at = raw.find(probe)
    assert at > 0, "psi values not found in the file"
    raw[at + 5] ^= 0x01
    bad = tmp_path / "flipped.nc"
    bad.write_bytes(bytes(raw))
    try:
        back = fdsolver.open_run(bad)
    except fdsolver.ArchiveError:
        return
    assert np.array_equal(back.psi.values, ds.psi.values), "corrupted psi was returned as if it were good"


# ------------------------------------------------------------ foreign files
def _foreign(tmp_path: Path, name: str) -> Path:
    p = tmp_path / name
    if name == "text.nc":
        p.write_text("this is a note, not an archive\n")
    elif name == "empty.nc":
        p.write_bytes(b"")
    elif name == "image.nc":
        p.write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(200))
    elif name == "zip.nc":
        import zipfile

        with zipfile.ZipFile(p, "w") as z:
            z.writestr("a.txt", "invented")
    elif name == "netcdf3_other.nc":
        xr.Dataset({"temperature": ("t", np.arange(4.0))}, attrs={"title": "another program"}).to_netcdf(
            p, format="NETCDF3_CLASSIC", engine="scipy")
    elif name == "netcdf4_other_kind.nc":
        xr.Dataset({"a": ("t", [1.0])}, attrs={"fdsolver_kind": "spectrum", "case_text": ""}).to_netcdf(p, engine="netcdf4")
    return p


@pytest.mark.parametrize("name", ["text.nc", "empty.nc", "image.nc", "zip.nc", "netcdf3_other.nc", "netcdf4_other_kind.nc"])
def test_foreign_file_is_refused(tmp_path, capsys, name):
    assert_refused(_foreign(tmp_path, name), capsys)


# Files that claim to be ours (fdsolver_kind and case_text set) but lack what the kind needs.
def _forged(tmp_path: Path, kind: str, good: Path) -> Path:
    p = tmp_path / f"forged_{kind}.nc"
    if kind == "solve_without_energy":
        ds = fdsolver.open_run(good).drop_vars(["energy"])
        write_dataset(ds, p)
    else:
        xr.Dataset({"a": ("t", [1.0])}, attrs={"fdsolver_kind": kind, "case_text": "title = 'x'"}).to_netcdf(p, engine="netcdf4")
    return p




@pytest.mark.parametrize(
    "kind",
    ["solve", "sweep", "delta_check", "solve_without_energy", "threshold"],
)
def test_forged_archive_is_refused(tmp_path, capsys, good, kind):
    assert_refused(_forged(tmp_path, kind, good), capsys)


def test_missing_and_folder(tmp_path, capsys):
    with pytest.raises(fdsolver.ArchiveError, match="no such archive"):
        fdsolver.open_run(tmp_path / "absent.nc")
    with pytest.raises(fdsolver.ArchiveError, match="directory"):
        fdsolver.open_run(tmp_path)


def test_stored_case_text_that_is_not_a_case(good, tmp_path):
    ds = fdsolver.open_run(good)
    ds.attrs["case_text"] = "[[potential]\nshape = "
    bad = tmp_path / "badcase.nc"
    write_dataset(ds, bad)
    back = fdsolver.open_run(bad)
    with pytest.raises(fdsolver.CaseError) as info:
        fdsolver.case_of_run(back)
    assert "\n" not in str(info.value) and "TOML" in str(info.value)


# ------------------------------------------------------ writes that fail or die
def test_failed_write_keeps_the_old_file_and_leaves_nothing(good, tmp_path):
    target = tmp_path / "run.nc"
    target.write_bytes(good.read_bytes())
    before = target.read_bytes()
    ds = fdsolver.open_run(good)
    ds.attrs["unstorable"] = {1, 2, 3}  # a set: netCDF cannot store it, the write fails part way
    with pytest.raises(Exception):
        write_dataset(ds, target)
    assert target.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.nc"]


def _written(target: Path) -> xr.Dataset:
    """The archive as written: ``open_run`` must accept it, but it keeps only what a solve archive declares, so the
    tests' own payload and counter are read back with xarray."""
    fdsolver.open_run(target)
    with xr.open_dataset(target, engine="netcdf4") as ds:
        return ds.load()


def test_rewrite_replaces_completely(good, tmp_path):
    target = tmp_path / "run.nc"
    target.write_bytes(b"an older file of another kind, longer than nothing " * 100)
    ds = fdsolver.open_run(good)
    ds.attrs["write_number"] = 7
    write_dataset(ds, target)
    back = _written(target)
    assert back.attrs["write_number"] == 7
    np.testing.assert_array_equal(back.energy.values, ds.energy.values)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.nc"]


# The writer rewrites the target with version k = 1, 2, ... ; before each write it waits for a line on
# stdin ("go", or "run" to stop waiting; end of input stops it), so the parent knows which write it
# interrupts.  Ctrl-C is
# given Python's usual handler even when the test runner was started with SIGINT ignored.
WRITER = textwrap.dedent(
    """
    import signal
    import sys
    import numpy as np
    import fdsolver
    from fdsolver.io.archive import write_dataset

    signal.signal(signal.SIGINT, signal.default_int_handler)
    template = fdsolver.open_run(sys.argv[1])
    target, rows = sys.argv[2], int(sys.argv[3])
    free = False
    for k in range(1, 10000):
        ds = template.copy()
        ds["payload"] = (("row", "col"), np.full((rows, 1000), float(k)))
        ds.attrs["write_number"] = k
        if not free:
            line = sys.stdin.readline()
            if not line:  # the parent closed stdin: stop
                break
            free = line.strip() == "run"
        print("start", k, flush=True)
        write_dataset(ds, target)
        print("done", k, flush=True)
    """
)
ROWS = 5000  # 40 MB of payload: a write takes about 0.1 s, long enough to be caught in the middle


def _start_writer(good: Path, target: Path) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-c", WRITER, str(good), str(target), str(ROWS)],
        stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    )


def _go(proc: subprocess.Popen, word: str = "go") -> None:
    proc.stdin.write(word + "\n")
    proc.stdin.flush()


def _wait_for(proc: subprocess.Popen, word: str, k: int) -> float:
    while True:
        line = proc.stdout.readline()
        assert line, f"writer ended early: {proc.stderr.read()[-2000:]}"
        if line.split() == [word, str(k)]:
            return time.perf_counter()


def _check_target(target: Path, good: Path, allowed: set[int]) -> int:
    back = _written(target)
    k = int(back.attrs["write_number"])
    assert k in allowed, (k, allowed)
    assert back.payload.shape == (ROWS, 1000) and np.all(back.payload.values == float(k))
    np.testing.assert_array_equal(back.psi.values, fdsolver.open_run(good).psi.values)
    return k


@pytest.mark.slow
def test_kill_during_write_leaves_old_or_new_file(good, tmp_path):
    """SIGKILL the writer at spread-out moments of a write; the target opens and is one complete version."""
    fractions = (0.05, 0.3, 0.6, 0.9, 1.5)
    interrupted = 0
    for i, frac in enumerate(fractions):
        folder = tmp_path / f"trial{i}"
        folder.mkdir()
        target = folder / "run.nc"
        proc = _start_writer(good, target)
        try:
            _go(proc)
            t0 = _wait_for(proc, "start", 1)
            duration = _wait_for(proc, "done", 1) - t0  # one full write, to place the kill inside the next
            _go(proc)
            _wait_for(proc, "start", 2)
            time.sleep(frac * duration)
            proc.kill()
            proc.wait(timeout=30)
        finally:
            if proc.poll() is None:
                proc.kill()
                proc.wait()
        _check_target(target, good, {1, 2})
        others = [p.name for p in folder.iterdir() if p.name != "run.nc"]
        # a kill leaves at most the writer's own temporary file, never a second archive
        assert all(n.startswith(".run.nc.") and n.endswith(".tmp") for n in others), others
        interrupted += bool(others)
    assert interrupted >= 1, "no kill landed inside a write; the test did not test anything"


# Ctrl-C at an exact moment: the writer delivers SIGINT to itself right after the n-th variable that the
# NetCDF writer (fdsolver.io.netcdf.store_netcdf) creates in the file during the second write (netCDF4.Dataset
# is replaced by a subclass that counts them).
INTERRUPT_AT_VARIABLE = """
import os
import netCDF4 as _nc
_count, _armed = [0], [False]
class _Counting(_nc.Dataset):
    def createVariable(self, *args, **kwargs):
        var = super().createVariable(*args, **kwargs)
        if _armed[0]:
            _count[0] += 1
            if _count[0] == int(sys.argv[4]):
                os.kill(os.getpid(), signal.SIGINT)
        return var
_nc.Dataset = _Counting
"""

@pytest.mark.slow
@pytest.mark.parametrize("nth_variable", [3, 10])
def test_interrupt_during_write_cleans_up(good, tmp_path, nth_variable):
    """Ctrl-C (SIGINT) in the middle of a write: the process ends (no hang), the target is one complete
    version (the write in progress is finished before the interrupt is raised), no temporary file is left."""
    code = WRITER.replace("signal.signal(signal.SIGINT, signal.default_int_handler)\n",
                          "signal.signal(signal.SIGINT, signal.default_int_handler)\n" + INTERRUPT_AT_VARIABLE)
    code = code.replace('    print("start", k, flush=True)', '    _armed[0] = k == 2\n    print("start", k, flush=True)')
    assert code.count("_armed[0] = k == 2") == 1
    target = tmp_path / "run.nc"
    proc = subprocess.Popen(
        [sys.executable, "-c", code, str(good), str(target), "500", str(nth_variable)],
        stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    )
    try:
        _go(proc)
        _wait_for(proc, "done", 1)
        _go(proc)
        proc.stdin.close()
        try:
            proc.wait(timeout=5)
        except subprocess.TimeoutExpired:
            pytest.fail("the writer hangs after Ctrl-C")
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert "KeyboardInterrupt" in proc.stderr.read()
    back = _written(target)
    assert back.attrs["write_number"] in (1, 2)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.nc"]


@pytest.mark.slow
def test_reads_during_rewrites_see_complete_versions(good, tmp_path):
    """Reading while another process rewrites the archive: every read sees a complete version."""
    target = tmp_path / "run.nc"
    proc = _start_writer(good, target)
    try:
        _go(proc, "run")
        _wait_for(proc, "done", 1)
        seen = set()
        deadline = time.perf_counter() + 30.0
        while len(seen) < 3 and time.perf_counter() < deadline:
            seen.add(_check_target(target, good, set(range(1, 10000))))
    finally:
        proc.kill()
        proc.wait()
    assert len(seen) >= 2, "the writer did not replace the file while we read"
