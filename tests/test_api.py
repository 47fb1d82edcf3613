"""The Python API: one call per command at package level, returning the Dataset the command line archives.

Contract (README.md, "Python API"; common practice, no source): ``fdsolver.sweep``,
``fdsolver.threshold``, ``fdsolver.delta_check`` and ``fdsolver.delta_map`` sit
beside ``fdsolver.solve``, are listed in ``__all__``, and are imported on first
use (``import fdsolver`` loads neither numpy nor xarray).  Written to a file,
what each returns is the archive the matching command writes, value for value
and attribute for attribute (the history line names the command and its time).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import fdsolver
from fdsolver.cli import main

ROOT = Path(__file__).resolve().parents[1]
SQUARES = ROOT / "cases" / "double_square.toml"
PAIR = ROOT / "cases" / "impurity_pair.toml"
COMMANDS = ("solve", "sweep", "threshold", "delta_check", "delta_map")


def test_every_command_is_a_lazy_package_level_call():
    code = ("import sys, fdsolver; heavy = [m for m in ('numpy', 'xarray', 'scipy', 'numba', 'matplotlib') if m in sys.modules];"
            "print(heavy); print(sorted(fdsolver.__all__))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.splitlines()
    assert out[0] == "[]"
    for name in COMMANDS:
        assert f"'{name}'" in out[1]
        assert callable(getattr(fdsolver, name)) and getattr(fdsolver, name).__module__ == "fdsolver.api"


def same_archive(tmp_path, api_ds, cli_args):
    """The API's Dataset written to a file equals the command's archive, history aside."""
    api_file = fdsolver.write_dataset(api_ds, tmp_path / "api.nc")
    cli_file = tmp_path / "cli.nc"
    assert main([*cli_args, "-o", str(cli_file)]) == 0
    a, b = fdsolver.open_run(api_file), fdsolver.open_run(cli_file)
    for ds in (a, b):
        ds.attrs.pop("history")
    xr.testing.assert_identical(a, b)
    return a


def test_sweep_is_the_command(tmp_path):
    ds = fdsolver.sweep(fdsolver.load_case(SQUARES, depth=120.0), ["d=1:3:3", "width=2,3"], executor="serial")
    back = same_archive(tmp_path, ds, ["sweep", str(SQUARES), "--vary", "d=1:3:3", "--vary", "width=2,3", "--set",
                                       "depth=120", "--executor", "serial", "-q"])
    assert back.energy.dims == ("d", "width", "state") and back.attrs["fixed_params"] == '{"depth": 120.0}'


def test_threshold_is_the_command(tmp_path, capsys):
    ds = fdsolver.threshold(SQUARES, "d=0.1:6")
    same_archive(tmp_path, ds, ["threshold", str(SQUARES), "--vary", "d=0.1:6"])
    assert list(ds.threshold_state.values) == [1] and ds.threshold_value.attrs["units"] == "nm"


def test_delta_check_is_the_command(tmp_path):
    ds = fdsolver.delta_check(PAIR, widths="1e-3:0.1:3")
    same_archive(tmp_path, ds, ["delta-check", str(PAIR), "--widths", "1e-3:0.1:3"])
    assert ds.energy.dims == ("width", "state")


def test_delta_map_is_the_command(tmp_path):
    ds = fdsolver.delta_map(PAIR, ["width=0.3:6:2", "d=9.2:10.6:3"], executor="serial")
    same_archive(tmp_path, ds, ["delta-check", str(PAIR), "--map", "width=0.3:6:2", "--map", "d=9.2:10.6:3",
                                "--executor", "serial", "-q"])
    assert ds.existence.dims == ("width", "d", "state")


def test_solve_takes_a_path_too():
    a = fdsolver.solve(SQUARES)
    b = fdsolver.solve(fdsolver.load_case(SQUARES))
    np.testing.assert_array_equal(a.energy.values, b.energy.values)


def test_a_sweep_with_output_checkpoints_and_reports_progress(tmp_path):
    class Progress:
        def __init__(self):
            self.started, self.points = None, 0

        def start(self, total, text):
            self.started = (total, text)

        def __call__(self, n):
            self.points += n

    p = Progress()
    out = tmp_path / "s.nc"
    fdsolver.sweep(SQUARES, "d=1:3:4", executor="serial", output=out, progress=p)
    assert p.started[0] == 4 and "in this process" in p.started[1] and "checkpoint" in p.started[1]
    assert p.points == 4 and out.exists()


@pytest.mark.parametrize("call, words", [
    (lambda: fdsolver.sweep(SQUARES, "d=1:3:4", resume=True), "beside an output file"),
    (lambda: fdsolver.sweep(SQUARES, "d=1:3:4", output="x.nc", resume=True, restart=True), "not both"),
    (lambda: fdsolver.sweep(SQUARES, "d=1:3:4", chunk=0), "at least 1 point"),
    (lambda: fdsolver.sweep(SQUARES, "d=1:3:4", memory_mb=-1), "positive"),
    (lambda: fdsolver.sweep(SQUARES, "d=1:3:4", workers=0), "at least 1 worker"),
    (lambda: fdsolver.threshold(SQUARES, "d=0.1:6", state=-1), "node count"),
    (lambda: fdsolver.threshold(SQUARES, "d=0.1:6", rtol=1.0), "1e-14 to 1e-3"),
    (lambda: fdsolver.delta_check(PAIR, shape="triangle"), "not a replacement shape"),
    (lambda: fdsolver.delta_map(PAIR, ["d=8:12:3"]), "exactly two"),
])
def test_bad_arguments_raise_case_errors(call, words):
    with pytest.raises(fdsolver.CaseError, match=words):
        call()
