"""The command line: tables with units, archives, figures, and bad input (exit 2, one line, nothing written)."""

from __future__ import annotations

import contextlib
import io
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import fdsolver
from fdsolver.cli import main

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"


def run_cli(*args, process=False):
    """Run the command line on ``args``; returns (code, stdout, stderr).

    In this process through :func:`fdsolver.cli.main` by default (what the entry point calls); with
    ``process=True`` as a user would, ``python -m fdsolver`` in its own process, where output written
    by C libraries to the file descriptors counts too.
    """
    argv = [str(a) for a in args]
    if process:
        proc = subprocess.run([sys.executable, "-m", "fdsolver", *argv], capture_output=True, text=True)
        return proc.returncode, proc.stdout, proc.stderr
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = main(argv)
        except SystemExit as exc:  # argparse refusals exit through SystemExit
            code = exc.code if isinstance(exc.code, int) else 1
    return code, out.getvalue(), err.getvalue()


def test_solve_show_plot(tmp_path, capsys):
    out = tmp_path / "run.nc"
    fig = tmp_path / "levels.png"
    assert main(["solve", str(CASES / "coupled_wells.toml"), "-o", str(out), "--plot", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "energy [meV]" in text and "<x> [nm]" in text
    assert out.exists() and fig.stat().st_size > 10_000
    assert main(["show", str(out)]) == 0
    shown = capsys.readouterr().out
    ds = fdsolver.open_run(out)
    assert f"{ds.energy.values[0]:.12g}" in shown
    fig2 = tmp_path / "again.png"
    assert main(["plot", str(out), "-o", str(fig2)]) == 0
    assert fig2.stat().st_size > 10_000


@pytest.mark.parametrize("barrier", ["1.5", "2", "3.25"])
def test_symmetric_doublet_names_its_wells_in_case_order(barrier):
    """A mirror-symmetric double well puts equal probability in both wells (to round-off), so the table
    names them in the order the case lists them, whatever the last bits of the two shares."""
    code, out, _ = run_cli("solve", CASES / "coupled_wells.toml", "--set", f"barrier={barrier}")
    rows = [line for line in out.splitlines() if line.strip()[:1].isdigit() and "well" in line]
    assert code == 0 and len(rows) >= 2
    assert all("left well + right well" in line for line in rows), rows


def test_set_override_changes_result(capsys):
    base = fdsolver.solve(fdsolver.load_case(CASES / "coupled_wells.toml"))
    wide = fdsolver.solve(fdsolver.load_case(CASES / "coupled_wells.toml", barrier="2*1.5"))
    assert wide.energy.values[1] - wide.energy.values[0] < base.energy.values[1] - base.energy.values[0]


def test_no_bound_state_exit_zero(tmp_path):
    case = tmp_path / "bump.toml"
    case.write_text('units = "atomic"\n[[potential]]\nshape = "gaussian"\ncenter = 0\nsigma = 1\nheight = 1\n')
    code, out, err = run_cli("solve", case)
    assert code == 0, err
    assert "no bound state" in out


BAD = {
    "syntax": ("title = 'x'\n[[potential]\nshape = 'square'\n", "TOML syntax error"),
    "unknown_key": ("[[potential]]\nshape = 'square'\ncenter = 0\nwidht = 1\ndepth = 1\n", "did you mean 'width'"),
    "unknown_shape": ("[[potential]]\nshape = 'sqare'\ncenter = 0\n", "did you mean 'square'"),
    "missing_key": ("[[potential]]\nshape = 'square'\ncenter = 0\ndepth = 1\n", "potential[1].width"),
    "negative_width": ("[[potential]]\nshape = 'square'\ncenter = 0\nwidth = -1\ndepth = 1\n", "must be positive"),
    "zero_sigma": ("[[potential]]\nshape = 'gaussian'\ncenter = 0\nsigma = 0\ndepth = 1\n", "must be positive"),
    "zero_mass": ("mass = 0\n[[potential]]\nshape = 'point'\ncenter = 0\nstrength = 1\n", "mass"),
    "nan": ("[[potential]]\nshape = 'square'\ncenter = nan\nwidth = 1\ndepth = 1\n", "potential[1].center"),
    "inf": ("[[potential]]\nshape = 'square'\ncenter = 0\nwidth = inf\ndepth = 1\n", "potential[1].width"),
    "both_signs": ("[[potential]]\nshape = 'square'\ncenter = 0\nwidth = 1\ndepth = 1\nheight = 1\n", "exactly one of"),
    "neither_sign": ("[[potential]]\nshape = 'square'\ncenter = 0\nwidth = 1\n", "exactly one of"),
    "unsafe_expr": ("[params]\na = 1\n[[potential]]\nshape = 'square'\ncenter = \"__import__('os')\"\nwidth = 1\ndepth = 1\n", "potential[1].center"),
    "malformed_expr": ("[params]\na = 1\n[[potential]]\nshape = 'square'\ncenter = 'a +* 2'\nwidth = 1\ndepth = 1\n", "potential[1].center"),
    "missing_table": ("[[potential]]\nshape = 'table'\nfile = 'nowhere.csv'\n", "not found"),
    "thin_layer": ("[[layer]]\nband_edge = 1\n[[layer]]\nthickness = 0\nband_edge = 0\n[[layer]]\nband_edge = 1\n", "layer[2].thickness"),
    "open_field": ("[[potential]]\nshape = 'linear'\nfield = 1\n", "hard"),
    "budget": ("[solve]\nmemory_mb = 0.001\n[[potential]]\nshape = 'square'\ncenter = 0\nwidth = 1\ndepth = 1\n", "memory"),
    "no_potential": ("title = 'empty'\n", "no potential"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_input_one_line_exit_2(tmp_path, name):
    text, needle = BAD[name]
    case = tmp_path / f"{name}.toml"
    case.write_text(text)
    out = tmp_path / "run.nc"
    out.write_bytes(b"precious")  # an existing file must not be overwritten
    code, stdout, stderr = run_cli("solve", case, "-o", out)
    assert code == 2, (stdout, stderr)
    lines = [l for l in stderr.splitlines() if l.strip()]
    assert len(lines) == 1, stderr
    assert "Traceback" not in stderr
    assert str(case) in lines[0] or case.name in lines[0]
    assert needle in lines[0], lines[0]
    assert out.read_bytes() == b"precious"
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([case.name, "run.nc"])


def test_bad_table_rows(tmp_path):
    (tmp_path / "p.csv").write_text("x,V\n0,1\n1,abc\n2,3\n")
    case = tmp_path / "c.toml"
    case.write_text("[[potential]]\nshape = 'table'\nfile = 'p.csv'\n")
    code, _, err = run_cli("solve", case)
    assert code == 2 and "line 3" in err and "p.csv" in err
    (tmp_path / "p.csv").write_text("0,1\n2,3\n1,2\n")
    code, _, err = run_cli("solve", case)
    assert code == 2 and "increase" in err


def test_missing_file_and_directory(tmp_path):
    code, _, err = run_cli("solve", tmp_path / "absent.toml", process=True)  # the entry point itself
    assert code == 2 and "no such case file" in err
    code, _, err = run_cli("solve", tmp_path)
    assert code == 2 and "directory" in err
    code, _, err = run_cli("show", tmp_path / "absent.nc")
    assert code == 2 and "no such archive" in err


@pytest.mark.slow
def test_foreign_and_corrupt_archives(tmp_path):
    import xarray as xr

    foreign = tmp_path / "foreign.nc"
    xr.Dataset({"a": ("t", np.arange(3.0))}).to_netcdf(foreign, engine="netcdf4")
    code, _, err = run_cli("show", foreign, process=True)  # the HDF5 library writes to the descriptors
    assert code == 2 and "not an fdsolver archive" in err
    junk = tmp_path / "junk.nc"
    junk.write_bytes(b"\x89HDF\r\n\x1a\n" + os.urandom(200))
    code, _, err = run_cli("show", junk, process=True)
    assert code == 2 and "truncated or corrupt" in err and len(err.strip().splitlines()) == 1


def test_unknown_set_param(tmp_path):
    code, _, err = run_cli("solve", CASES / "coupled_wells.toml", "--set", "wel=3")
    assert code == 2 and "did you mean 'well'" in err


def test_bad_output_path_writes_nothing(tmp_path):
    code, _, err = run_cli("solve", CASES / "coupled_wells.toml", "-o", tmp_path / "no" / "run.nc")
    assert code == 2 and "does not exist" in err
    assert not (tmp_path / "no").exists()
