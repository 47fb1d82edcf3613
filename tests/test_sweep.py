"""Sweeps: axes, equality with single solves, labels, the Dataset, checkpoint/resume and bad input."""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import fdsolver
from fdsolver.parallel import checkpoint as ck
from fdsolver.scans import sweep as sw
from fdsolver.scans import thresholds
from fdsolver.scans.axes import parse_axis
from fdsolver.api import solve_case
from fdsolver.cli import main
from fdsolver.errors import CaseError
from fdsolver.parallel.executors import SerialExecutor
from fdsolver.report import format_archive

CASE = str(Path(__file__).resolve().parent.parent / "cases" / "double_square.toml")


def run(case_path, varies, fixed=None, save_psi=False, **kw):
    case = fdsolver.load_case(case_path, **(fixed or {}))
    spec = sw.plan_sweep(case, sw.sweep_axes(varies, case), fixed, save_psi)
    return sw.run_sweep(spec, SerialExecutor(), **kw)


def without_history(ds):
    ds = ds.copy()
    ds.attrs.pop("history", None)
    return ds


# ------------------------------------------------------------------ axes
def test_axis_forms():
    case = fdsolver.load_case(CASE)
    lin = parse_axis("d=1:3:5", case)
    assert np.array_equal(lin.values, np.linspace(1, 3, 5)) and lin.units == "nm"
    log = parse_axis("depth=10:1000:3:log", case)
    assert np.allclose(log.values, [10, 100, 1000], rtol=1e-14) and log.spacing == "log"
    lst = parse_axis("width=2, 2.5,4", case)
    assert list(lst.values) == [2.0, 2.5, 4.0] and lst.spacing == "list"


@pytest.mark.parametrize("spec, words", [
    ("dept=1:2:3", "did you mean 'depth'"), ("d=3:1:5", "reversed"), ("d=1:1:5", "empty"), ("d=1:2:0", "empty"),
    ("d=", "empty"), ("d=1:2:1", "COUNT 1"), ("d=3,2", "increase strictly"), ("d=1,1", "increase strictly"),
    ("d=0:1:3:log", "log spacing"), ("d=a:2:3", "not a number"), ("d=1:2:x", "whole number"), ("d1:2:3", "NAME="),
])
def test_bad_axes(spec, words):
    with pytest.raises(CaseError, match=words.replace("(", r"\(")):
        sw.sweep_axes([spec], fdsolver.load_case(CASE))


def test_same_param_twice_is_refused():
    with pytest.raises(CaseError, match="swept twice"):
        sw.sweep_axes(["d=1:2:3", "d=4,5"], fdsolver.load_case(CASE))


# ------------------------------------------------------------ the values
def test_sweep_equals_single_solves_and_labels_follow_node_count():
    # the reference is the core itself: each point must equal a single `solve` of the same case
    # (single solves with one BLAS thread, as the sweep pins it: large grids change in the last bits with the
    # BLAS thread count; these points have small grids, so the default count gives the same bits too)
    ds = run(CASE, ["d=0.5,2,4", "depth=80,100"])
    assert ds.energy.dims == ("d", "depth", "state")
    for d in (0.5, 2.0, 4.0):
        for depth in (80.0, 100.0):
            with SerialExecutor():
                sol = solve_case(fdsolver.load_case(CASE, d=d, depth=depth))
            pt = ds.sel(d=d, depth=depth)
            lab = sol.nodes
            assert np.array_equal(pt.energy.values[lab], sol.energy)
            assert np.array_equal(pt.energy_error.values[lab], sol.energy_error)
            assert np.array_equal(pt.parity.values[lab], sol.parity)
            assert np.array_equal(pt.nodes.values[lab], lab)
            missing = np.setdiff1d(np.arange(ds.sizes["state"]), lab)
            assert np.all(np.isnan(pt.energy.values[missing])) and np.all(pt.nodes.values[missing] == -1)
            assert int(pt.bound_states) == sol.energy.size  # points away from thresholds
    # at d = 0.5 nm only the ground state exists: NaN for state 1, not a shifted index
    assert np.isnan(ds.energy.sel(d=0.5, depth=80.0, state=1)) and np.isfinite(ds.energy.sel(d=4.0, depth=80.0, state=1))


def test_label_is_the_node_count_not_the_energy_order(tmp_path):
    # an energy window above the ground state: the lowest state returned has 1 node and must sit at state = 1
    path = tmp_path / "window.toml"
    path.write_text(Path(CASE).read_text().replace("[solve]", "[solve]\nenergy_window = [-30.0, 0.0]"))
    ds = run(str(path), ["d=4,5"])
    sol = solve_case(fdsolver.load_case(str(path), d=4.0))
    assert list(sol.nodes) == [1]
    assert np.isnan(ds.energy.sel(d=4.0, state=0)) and ds.energy.sel(d=4.0, state=1) == sol.energy[0]
    assert int(ds.nodes.sel(d=4.0, state=1)) == 1 and np.isnan(ds.tunnel_splitting.sel(d=4.0))


def test_derived_quantities():
    ds = run(CASE, ["d=0.5,3"])
    e = ds.energy.values
    assert np.isnan(ds.tunnel_splitting.values[0])
    # the splitting is extrapolated as a sequence of its own (issue: splittings are results of their own); it agrees
    # with the difference of the two energies within the error bars of the three
    err = ds.energy_error.values
    assert abs(ds.tunnel_splitting.values[1] - (e[1, 1] - e[1, 0])) <= ds.tunnel_splitting_error.values[1] + err[1, 0] + err[1, 1]
    assert ds.tunnel_splitting_error.values[1] < err[1, 0] + err[1, 1]
    assert np.array_equal(ds.binding_energy.values, ds.continuum_threshold.values[:, None] - e, equal_nan=True)


def test_fixed_params_hold_at_every_point():
    ds = run(CASE, ["d=1,3"], fixed={"depth": 140.0})
    sol = solve_case(fdsolver.load_case(CASE, d=3.0, depth=140.0))
    assert np.array_equal(ds.energy.sel(d=3.0).values[sol.nodes], sol.energy)


def test_psi_on_a_common_grid(tmp_path):
    text = Path(CASE).read_text().replace("[sweep]", "[sweep]\npsi_range = [-60.0, 60.0]\npsi_points = 4001")
    path = tmp_path / "wide.toml"
    path.write_text(text)
    ds = run(str(path), ["d=2,4"], save_psi=True)
    assert ds.psi.dims == ("d", "state", "x") and ds.sizes["x"] == 4001
    sol = solve_case(fdsolver.load_case(str(path), d=4.0))
    for k in sol.nodes:
        ref = np.interp(ds.x.values, sol.x, sol.psi[k], left=0.0, right=0.0)
        assert np.array_equal(ds.psi.sel(d=4.0, state=k).values, ref)
    # normalisation survives the interpolation (trapezoid rule on the 0.03 nm grid; the states decay within the range)
    norm = np.trapezoid(ds.psi.sel(d=4.0, state=0).values ** 2, ds.x.values)
    assert abs(norm - 1.0) < 1e-3


def test_invalid_point_is_recorded_not_fatal(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text('units = "nm-meV"\nmass = 0.067\n[params]\ns = 0.0\n'
                    '[[potential]]\nshape = "square"\ncenter = 0.0\nwidth = "(s - 1)**2"\ndepth = 100.0\n')
    ds = run(str(path), ["s=0:2:3"])
    assert list(ds.solved.values) == [1, 0, 1]
    assert np.all(np.isnan(ds.energy.values[1])) and "must be positive" in ds.attrs["notes"]


def test_thresholds_located_along_one_axis():
    ds = run(CASE, ["d=0.5:3:6"])
    ref = thresholds.find_thresholds(fdsolver.load_case(CASE), "d", 0.5, 3.0).thresholds
    assert list(ds.threshold_state.values) == [1]
    assert ds.threshold_value.values[0] == pytest.approx(ref[0].value, rel=1e-12)
    assert ds.threshold_value.attrs["units"] == "nm"


def test_show_and_plot_through_the_archive(tmp_path, capsys):
    out = tmp_path / "s.nc"
    assert main(["sweep", CASE, "--vary", "d=1:3:4", "--vary", "depth=80,120", "-o", str(out), "--executor", "serial", "-q"]) == 0
    ds = fdsolver.open_run(out)
    assert "sweep of 8 points" in format_archive(ds)
    assert main(["plot", str(out), "-o", str(tmp_path / "map.png")]) == 0
    one = tmp_path / "one.nc"
    assert main(["sweep", CASE, "--vary", "d=1:3:5", "-o", str(one), "--executor", "serial", "-q", "--plot", str(tmp_path / "e.png")]) == 0
    assert (tmp_path / "map.png").stat().st_size > 1000 and (tmp_path / "e.png").stat().st_size > 1000
    assert not ck.path_for(out).exists()  # the checkpoint goes once the result is written


# -------------------------------------------------------------- bad input
def test_result_too_big_is_refused_before_any_work(tmp_path, capsys):
    case = fdsolver.load_case(CASE)
    # psi alone is 4e6 points x 10 states x 401 x 8 bytes = 119.5 GiB; the other variables (with <x>, the spread, the
    # probability inside 2 wells, psi's norm, the transitions to the 8 lowest states and the widths) add ~11 GiB
    with pytest.raises(CaseError, match=r"about 130 GB .*4000000 points x 10 states x 401 x-points"):
        sw.plan_sweep(case, sw.sweep_axes(["d=0.1:6:2000", "depth=50:150:2000"], case), save_psi=True)
    out = tmp_path / "big.nc"
    rc = main(["sweep", CASE, "--vary", "d=0.1:6:100000", "--vary", "depth=1:2:1000", "-o", str(out), "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "GB" in err and len(err.strip().splitlines()) == 1
    assert list(tmp_path.iterdir()) == []


def test_unknown_param_on_the_command_line(tmp_path, capsys):
    out = tmp_path / "s.nc"
    rc = main(["sweep", CASE, "--vary", "widht=1:2:3", "-o", str(out)])
    err = capsys.readouterr().err
    assert rc == 2 and "did you mean 'width'" in err and len(err.strip().splitlines()) == 1
    assert list(tmp_path.iterdir()) == []


# ------------------------------------------------------- checkpoint/resume
def interrupted(case_path, varies, out, after_chunks):
    """Run a sweep and stop it (KeyboardInterrupt) after some chunks; the checkpoint stays."""
    calls = []

    def progress(n):
        calls.append(n)
        if len(calls) >= after_chunks:
            raise KeyboardInterrupt

    case = fdsolver.load_case(case_path)
    spec = sw.plan_sweep(case, sw.sweep_axes(varies, case), chunk=3)
    with pytest.raises(KeyboardInterrupt):
        sw.run_sweep(spec, SerialExecutor(), output=out, progress=progress)
    return spec


def test_partial_and_damaged_lines_are_tolerated(tmp_path):
    import json

    ref = run(CASE, ["d=2:5:15"])
    out = tmp_path / "s.nc"
    spec = interrupted(CASE, ["d=2:5:15"], out, after_chunks=3)
    path = ck.path_for(out)
    lines = path.read_bytes().splitlines(keepends=True)
    assert len(lines) == 4 and not out.exists()
    header = json.loads(lines[0])
    header["history"] = "2000-01-01T00:00:00Z: the run that started this sweep"
    lines[0] = json.dumps(header).encode() + b"\n"
    at = lines[2].index(b'"energy":{') + lines[2][lines[2].index(b'"energy":{'):].index(b'"b64":"') + 12
    lines[2] = lines[2][:at] + (b"A" if lines[2][at:at + 1] != b"A" else b"B") + lines[2][at + 1:]  # valid JSON, bad CRC
    path.write_bytes(b"".join(lines) + b"0badf00d {\"index\": {\"nd\"")  # and a partial last line (a kill mid-write)
    seen = []

    def stop_after_one(n):
        seen.append(n)
        if len(seen) == 2:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        sw.run_sweep(spec, SerialExecutor(), output=out, resume=True, progress=stop_after_one)
    assert seen == [6, 3]  # 2 good records kept; the damaged one is solved again
    assert ck.Checkpoint.count_points(path) == 9  # the new record was not glued to the partial line
    seen.clear()
    sw.run_sweep(spec, SerialExecutor(), output=out, resume=True, progress=seen.append)
    assert seen[0] == 9 and sum(seen) == 15
    final = fdsolver.open_run(out)
    xr.testing.assert_identical(without_history(final), without_history(ref))
    assert final.attrs["history"] == header["history"]  # the history line of the run that started it


@pytest.mark.slow
def test_sigkill_then_resume_gives_the_same_file(tmp_path):
    out = tmp_path / "kill.nc"
    path = ck.path_for(out)
    cmd = [sys.executable, "-m", "fdsolver", "sweep", CASE, "--vary", "d=2:6:240", "-o", str(out), "--executor", "serial", "--chunk", "2", "-q"]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.time() + 60
        while time.time() < deadline and (not path.exists() or path.read_bytes().count(b"\n") < 4):
            time.sleep(0.01)
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        proc.wait()
    assert path.exists() and not out.exists()  # really interrupted, nothing half-written
    done = ck.Checkpoint.count_points(path)
    assert 0 < done < 240
    assert main(["sweep", CASE, "--vary", "d=2:6:240", "-o", str(out), "--executor", "serial", "--resume", "-q"]) == 0
    ref_out = tmp_path / "ref.nc"
    assert main(["sweep", CASE, "--vary", "d=2:6:240", "-o", str(ref_out), "--executor", "serial", "-q"]) == 0
    a, b = fdsolver.open_run(out), fdsolver.open_run(ref_out)
    xr.testing.assert_identical(without_history(a), without_history(b))
    assert not path.exists()


def test_resume_of_a_different_case_is_refused(tmp_path, capsys):
    case_path = tmp_path / "c.toml"
    case_path.write_text(Path(CASE).read_text())
    out = tmp_path / "s.nc"
    interrupted(str(case_path), ["d=2:5:12"], out, after_chunks=1)
    before = ck.path_for(out).read_bytes()
    case_path.write_text(Path(CASE).read_text().replace("depth = 100.0", "depth = 120.0"))
    rc = main(["sweep", str(case_path), "--vary", "d=2:5:12", "-o", str(out), "--resume", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "different sweep" in err and "depth = 120.0" in err and "line" in err
    rc = main(["sweep", CASE, "--vary", "d=2:5:13", "-o", str(out), "--resume", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "values of d differ" in err
    assert ck.path_for(out).read_bytes() == before and not out.exists()


def test_old_checkpoint_needs_resume_or_restart(tmp_path, capsys):
    out = tmp_path / "s.nc"
    interrupted(CASE, ["d=2:5:12"], out, after_chunks=1)
    before = ck.path_for(out).read_bytes()
    rc = main(["sweep", CASE, "--vary", "d=2:5:12", "-o", str(out), "--executor", "serial", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "--resume" in err and "3 of its points" in err
    assert ck.path_for(out).read_bytes() == before
    assert main(["sweep", CASE, "--vary", "d=2:5:12", "-o", str(out), "--executor", "serial", "--restart", "-q"]) == 0
    assert out.exists() and not ck.path_for(out).exists()
