"""Writes that fail: a full disk, a read-only folder, a figure that cannot be drawn, a scan stopped before its write.

Contract (README.md, "What fdsolver checks"; issue 11; common practice, no
source): a failed write is one line naming what to do (a full disk says so,
although the NetCDF library reports only "HDF error"), exit code 2, and
nothing is left behind: no archive, no temporary file, the old target intact.
A figure is drawn before the archive is written, so a figure that fails
leaves no archive; a scan whose result cannot be finished keeps its
checkpoint and writes nothing.
"""

from __future__ import annotations

import errno
import os
from pathlib import Path

import pytest

import fdsolver
from fdsolver.cli import main
from fdsolver.errors import CaseError, write_failure
from fdsolver.io import archive

WELL = {"title": "square well (invented)", "units": "atomic",
        "potential": [{"shape": "square", "center": 0.0, "width": 2.0, "depth": 4.0}], "solve": {"tolerance": 1e-6}}
CASE_TEXT = ('title = "square pair (invented)"\nunits = "atomic"\n[params]\nd = 2.0\n'
             '[[potential]]\nshape = "square"\ncenter = "-d/2"\nwidth = 1.0\ndepth = 4.0\n'
             '[[potential]]\nshape = "square"\ncenter = "d/2"\nwidth = 1.0\ndepth = 4.0\n'
             '[solve]\ntolerance = 1e-6\n')


@pytest.fixture(scope="module")
def solved():
    return fdsolver.solve(fdsolver.case_from_dict(WELL))


@pytest.mark.parametrize("code, words", [
    (errno.ENOSPC, "is full"), (errno.EDQUOT, "is full"), (errno.EROFS, "read-only"), (errno.EACCES, "no permission"),
    (errno.ENAMETOOLONG, "too long"), (errno.EIO, "cannot write"),
])
def test_write_failure_says_what_happened_in_one_line(code, words):
    err = write_failure(OSError(code, os.strerror(code)), "/some/where/run.nc")
    assert words in str(err) and "\n" not in str(err) and err.key == "--output"


def _before(tmp_path: Path) -> tuple[Path, bytes]:
    target = tmp_path / "run.nc"
    target.write_bytes(b"an older result that must survive\n")
    return target, target.read_bytes()


def test_disk_full_while_writing(solved, tmp_path, monkeypatch):
    target, old = _before(tmp_path)

    def full(ds, path, encoding):  # the NetCDF write (fdsolver.io.lightxr.store_netcdf) stops half way
        Path(path).write_bytes(b"half an archive")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(archive, "store_netcdf", full)
    with pytest.raises(CaseError, match="is full"):
        archive.write_dataset(solved, target)
    assert target.read_bytes() == old and sorted(p.name for p in tmp_path.iterdir()) == ["run.nc"]


def test_hdf_error_on_a_full_disk_is_called_a_full_disk(solved, tmp_path, monkeypatch):
    """The NetCDF library reports a full disk as "NetCDF: HDF error"; the free space decides what is said."""
    target, old = _before(tmp_path)
    calls = []

    def hdf_error(ds, path, encoding):
        raise RuntimeError("NetCDF: HDF error")

    def free(folder):
        calls.append(folder)
        return 10**12 if len(calls) == 1 else 1000  # room before the write, none after it

    monkeypatch.setattr(archive, "store_netcdf", hdf_error)
    monkeypatch.setattr(archive, "_free_bytes", free)
    with pytest.raises(CaseError, match="is full"):
        archive.write_dataset(solved, target)
    assert target.read_bytes() == old and sorted(p.name for p in tmp_path.iterdir()) == ["run.nc"]


def test_too_little_space_is_refused_before_writing(solved, tmp_path, monkeypatch):
    monkeypatch.setattr(archive, "_free_bytes", lambda folder: 100)
    with pytest.raises(CaseError, match="MB free"):
        archive.write_dataset(solved, tmp_path / "run.nc")
    assert list(tmp_path.iterdir()) == []


def test_read_only_folder_is_refused_before_the_work(tmp_path, monkeypatch, capsys):
    case = tmp_path / "well.toml"
    case.write_text(CASE_TEXT)
    real = os.access
    monkeypatch.setattr(os, "access", lambda p, mode: False if Path(p) == tmp_path / "out" else real(p, mode))
    (tmp_path / "out").mkdir()
    code = main(["solve", str(case), "-o", str(tmp_path / "out" / "run.nc")])
    captured = capsys.readouterr()
    lines = [ln for ln in captured.err.splitlines() if ln.strip()]
    assert code == 2 and len(lines) == 1 and "--output" in lines[0] and "write" in lines[0], lines
    assert captured.out == "" and list((tmp_path / "out").iterdir()) == []


def test_a_figure_that_fails_leaves_no_archive(tmp_path, monkeypatch, capsys):
    import fdsolver.plot

    case = tmp_path / "well.toml"
    case.write_text(CASE_TEXT)

    def broken(ds, path):
        Path(path).write_bytes(b"half a figure")
        raise CaseError("the figure cannot be drawn (a test)", key="--plot")

    monkeypatch.setattr(fdsolver.plot, "plot_archive", broken)
    code = main(["solve", str(case), "-o", str(tmp_path / "run.nc"), "--plot", str(tmp_path / "levels.png")])
    err = [ln for ln in capsys.readouterr().err.splitlines() if ln.strip()]
    assert code == 2 and len(err) == 1 and "cannot be drawn" in err[0]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["well.toml"]


def test_a_scan_stopped_before_its_write_keeps_the_checkpoint(tmp_path):
    case = fdsolver.case_from_text(CASE_TEXT, path=str(tmp_path / "pair.toml"))
    out = tmp_path / "sweep.nc"

    def refuse(ds):
        assert ds.sizes["d"] == 3  # called with the finished result
        raise CaseError("not now (a test)")

    with pytest.raises(CaseError, match="not now"):
        fdsolver.sweep(case, "d=1:2:3", executor="serial", output=out, before_write=refuse)
    assert not out.exists() and Path(str(out) + ".checkpoint").exists()
    ds = fdsolver.sweep(case, "d=1:2:3", executor="serial", output=out, resume=True)
    assert out.exists() and ds.sizes["d"] == 3 and not Path(str(out) + ".checkpoint").exists()
