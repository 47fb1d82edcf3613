"""Validity maps run through the one scan runner: chunks, executors, checkpoint, resume and restart.

Contract (README.md, "Is a delta model good enough?" and "Checkpoint and
resume"; common practice, no source): an interrupted map resumed from its
checkpoint writes the same file as an uninterrupted one, a checkpoint of a
different map is refused naming the difference, and local worker processes
give the serial result bit for bit.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import xarray as xr

import fdsolver
from fdsolver.cli import main
from fdsolver.parallel.checkpoint import Checkpoint, path_for
from fdsolver.parallel.executors import ProcessExecutor, SerialExecutor
from fdsolver.scans.maps import plan_map, run_map
from fdsolver.scans.options import read_options

PAIR = Path(__file__).resolve().parents[1] / "cases" / "impurity_pair.toml"
MAP = ["width=0.3:6:3", "d=9.2:10.6:4"]


def spec(chunk=2, tolerance=None):
    case = fdsolver.load_case(PAIR)
    return plan_map(case, read_options(case, maps=MAP, tolerance=tolerance), {}, chunk)


def without_history(ds):
    ds = ds.copy()
    ds.attrs.pop("history")
    return ds


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    out = tmp_path_factory.mktemp("ref") / "ref.nc"
    run_map(spec(), SerialExecutor(), output=out)
    return fdsolver.open_run(out)


def interrupt_after(n_chunks):
    calls = []

    def progress(n):
        calls.append(n)
        if len(calls) >= n_chunks:
            raise KeyboardInterrupt

    return progress


def test_interrupted_map_resumes_to_the_same_file(reference, tmp_path):
    out = tmp_path / "m.nc"
    with pytest.raises(KeyboardInterrupt):
        run_map(spec(), SerialExecutor(), output=out, progress=interrupt_after(2))
    assert not out.exists() and Checkpoint.count_points(path_for(out)) == 4
    seen = []
    run_map(spec(), SerialExecutor(), output=out, resume=True, progress=seen.append)
    assert seen[0] == 4 and sum(seen) == 12  # the 4 checkpointed points are not solved again
    final = fdsolver.open_run(out)
    xr.testing.assert_identical(without_history(final), without_history(reference))
    assert not path_for(out).exists()


def test_processes_give_the_serial_map(reference, tmp_path):
    with ProcessExecutor(2) as ex:
        ds = run_map(spec(chunk=1), ex, output=tmp_path / "p.nc")
    xr.testing.assert_identical(without_history(fdsolver.open_run(tmp_path / "p.nc")), without_history(reference))
    assert ds.sizes["width"] == 3 and ds.sizes["d"] == 4


def test_resume_of_a_different_map_is_refused(tmp_path):
    out = tmp_path / "m.nc"
    with pytest.raises(KeyboardInterrupt):
        run_map(spec(), SerialExecutor(), output=out, progress=interrupt_after(1))
    before = path_for(out).read_bytes()
    with pytest.raises(fdsolver.CaseError, match=r"different validity map \(the tolerance \(--tolerance\) differ"):
        run_map(spec(tolerance=0.05), SerialExecutor(), output=out, resume=True)
    assert path_for(out).read_bytes() == before


def test_cli_map_checkpoint_needs_resume_or_restart(tmp_path, capsys):
    out = tmp_path / "m.nc"
    with pytest.raises(KeyboardInterrupt):
        run_map(spec(), SerialExecutor(), output=out, progress=interrupt_after(1))
    args = ["delta-check", str(PAIR), "--map", MAP[0], "--map", MAP[1], "-o", str(out), "--executor", "serial", "-q"]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert "unfinished validity map" in err and "--resume" in err and len(err.strip().splitlines()) == 1
    assert main(args + ["--resume"]) == 0
    assert out.exists() and not path_for(out).exists()
    shown = capsys.readouterr()
    assert "validity map" in shown.out and f"wrote {out}" in shown.out
    assert main(args + ["--restart"]) == 0  # no checkpoint left: a fresh run


def test_a_ladder_has_no_checkpoint(tmp_path, capsys):
    rc = main(["delta-check", str(PAIR), "--widths", "1e-3:0.1:3", "-o", str(tmp_path / "l.nc"), "--resume"])
    err = capsys.readouterr().err
    assert rc == 2 and "--map" in err and list(tmp_path.iterdir()) == []
