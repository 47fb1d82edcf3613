"""The commands of the materials-to-optics path from the command line: a designer's run end to end, and bad
input (exit 2, one line naming what to fix, nothing written).

Outside references, named per check:

* the 10 nm GaAs/Al0.3Ga0.7As well's e1 near 30 meV (common practice, no source);
* the Thomas-Reiche-Kuhn sum rule: the oscillator strengths from the ground state of a constant-mass
  system sum to 1 over all final states, so the 0->1 strength of a well whose first excited state
  takes almost all of it lies in (0.9, 1] (the strength sum rule; e.g. Bassani and Pastori Parravicini,
  Electronic States and Optical Transitions in Solids, 1975, from memory);
* the VMR2001 parameter set (Vurgaftman, Meyer and Ram-Mohan, J. Appl. Phys. 89, 5815 (2001)): the GaAs
  gap at 0 K 1.519 eV and electron mass 0.067 m_e (typed from memory).
"""

from __future__ import annotations

import io
import json
from contextlib import chdir, nullcontext, redirect_stderr, redirect_stdout
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
CASE = ROOT / "cases" / "algaas_well.toml"


def run_cli(*args, cwd=None):
    """The command line in this process (fdsolver.cli.main): exit code, stdout and stderr."""
    from fdsolver.cli import main

    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err), (chdir(cwd) if cwd else nullcontext()):
        code = main([str(a) for a in args])
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("optics_cli")
    out = folder / "well.nc"
    code, stdout, stderr = run_cli("solve", CASE, "--transitions", "-o", out)
    assert code == 0, stderr
    return out, stdout


def test_solve_prints_levels_and_transitions(run):
    _, stdout = run
    assert "materials: Al0.3Ga0.7As / GaAs / Al0.3Ga0.7As at 300 K" in stdout
    row = next(l for l in stdout.splitlines() if l.split()[:1] == ["0"])
    assert 25.0 < float(row.split()[1]) < 35.0  # e1 near 30 meV
    line = next(l for l in stdout.splitlines() if l.split()[:2] == ["0", "1"])
    assert 0.9 < float(line.split()[6]) <= 1.0  # f_01 within the TRK sum


def test_absorption_export_and_figure(run, tmp_path):
    archive, _ = run
    spec, fig, folder = tmp_path / "a.nc", tmp_path / "a.png", tmp_path / "csv"
    code, stdout, stderr = run_cli("absorption", archive, "--density", "1e11 cm^-2", "--broadening", "5 meV",
                                   "-o", spec, "--plot", fig)
    assert code == 0, stderr
    assert spec.stat().st_size > 0 and fig.stat().st_size > 0
    code, stdout, stderr = run_cli("export", spec, "--csv", folder)
    assert code == 0, stderr
    assert (folder / "spectrum.csv").is_file()


def test_materials_json_vmr2001():
    code, stdout, stderr = run_cli("materials", "GaAs", "--temperature", "0", "--json")
    assert code == 0, stderr
    data = json.loads(stdout)
    text = json.dumps(data)
    assert "1.519" in text and "0.067" in text and "VMR2001" in text


@pytest.mark.parametrize("args, needle", [
    (("absorption", "{run}", "--density", "-1", "--broadening", "5"), "--density"),
    (("absorption", "{run}", "--density", "1e11 kg", "--broadening", "5"), "not a sheet density"),
    (("absorption", "{run}", "--density", "1e11", "--broadening", "5 nm"), "not an energy"),
    (("absorption", "{run}", "--density", "1e11", "--broadening", "0"), "must be positive"),
    (("absorption", "{run}", "--density", "1e11", "--broadening", "5", "--energies", "9:1:3"), "reversed"),
    (("absorption", "{missing}", "--density", "1e11", "--broadening", "5"), "no such archive"),
    (("interband", ROOT / "cases" / "coupled_wells.toml"), "named materials"),
    (("materials", "Unobtainium"), "unknown material"),
    (("materials", "AlGaAs", "--x", "1.5"), "between 0 and 1"),
    (("export", "{case}", "--csv", "{out}"), "not a readable NetCDF"),
])
def test_bad_input_one_line_exit_2(run, tmp_path, args, needle):
    archive, _ = run
    out = tmp_path / "out.nc"
    fill = {"{run}": archive, "{missing}": tmp_path / "missing.nc", "{case}": CASE, "{out}": tmp_path / "csv"}
    args = [fill.get(str(a), a) for a in args]
    code, stdout, stderr = run_cli(*args, "-o", out) if args[0] in ("absorption", "interband") else run_cli(*args)
    assert code == 2, (stdout, stderr)
    lines = [l for l in stderr.splitlines() if l.strip()]
    assert len(lines) == 1 and "Traceback" not in stderr, stderr
    assert needle in lines[0], lines[0]
    assert sorted(p.name for p in tmp_path.iterdir()) == []  # nothing written
