"""CSV export of archives: every table written, units in the header lines, numbers that read back exactly.

Outside references, named per check:

* the CSV files are read back with numpy's general-purpose text reader (``numpy.genfromtxt``), as a
  user without fdsolver would, and compared with the archive read by xarray;
* a bound state is normalised, integral of |psi|^2 over the line = 1 (a textbook fact of quantum
  mechanics, common practice, no source), checked on the exported psi(x) with the trapezoid rule
  (scipy.integrate.trapezoid) on the exported x;
* the Lorentzian line of unit area: the exported spectrum integrates (trapezoid) to the sum of the
  exported lines' areas, less the tails outside the window, 1 - (2/pi) arctan(2 W / FWHM) per line
  for a half-window W (closed form of the Lorentzian's integral).
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import trapezoid

import fdsolver
from fdsolver.errors import CaseError

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"


def _read(path: Path):
    """(comment lines, header, rows as a float array) of one exported CSV file."""
    lines = path.read_text().splitlines()
    comments = [l for l in lines if l.startswith("#")]
    header = next(csv.reader([next(l for l in lines if not l.startswith("#"))]))
    data = np.genfromtxt(path, delimiter=",", comments="#", skip_header=len(comments) + 1, dtype=float)
    return comments, header, np.atleast_2d(data)


@pytest.fixture(scope="module")
def well_run():
    return fdsolver.solve(fdsolver.load_case(CASES / "algaas_well.toml"))


def test_solve_archive_tables(well_run, tmp_path):
    written = {Path(p).name for p in fdsolver.export_csv(well_run, tmp_path)}
    assert {"states.csv", "potential.csv", "wavefunctions.csv", "transitions.csv"} <= written
    comments, header, rows = _read(tmp_path / "states.csv")
    assert any("units: nm-meV" in c and "carrier: electron" in c and "materials:" in c for c in comments)
    assert header[:2] == ["state", "energy [meV]"]
    np.testing.assert_array_equal(rows[:, 1], well_run.energy.values)  # repr of a float reads back exactly
    i = header.index("mean_x [nm]")
    np.testing.assert_array_equal(rows[:, i], well_run.mean_x.values)

    _, header, rows = _read(tmp_path / "transitions.csv")
    assert header[:2] == ["state", "final_state"] and "dipole [nm]" in header
    f = rows[:, header.index("oscillator_strength")]
    np.testing.assert_array_equal(f, well_run.oscillator_strength.values.ravel())


def test_exported_wavefunctions_are_normalised(well_run, tmp_path):
    fdsolver.export_csv(well_run, tmp_path)
    _, header, rows = _read(tmp_path / "wavefunctions.csv")
    assert header[0] == "x [nm]"
    x = rows[:, 0]
    for k in range(1, rows.shape[1]):
        assert trapezoid(rows[:, k] ** 2, x) == pytest.approx(1.0, abs=2e-3), header[k]


def test_absorption_spectrum_area(well_run, tmp_path):
    ds = fdsolver.absorption(well_run, density="1e11 cm^-2", broadening="5 meV", energies="0:400:4001")
    fdsolver.export_csv(ds, tmp_path)
    comments, header, spec = _read(tmp_path / "spectrum.csv")
    assert header[0] == "photon_energy [meV]" and any("absorption" in c for c in comments)
    _, lheader, lines = _read(tmp_path / "absorption_lines.csv")
    centre = lines[:, lheader.index("transition_energy [meV]")]
    area = lines[:, lheader.index("integrated_absorption [meV]")]
    e, a = spec[:, 0], spec[:, header.index("absorption")]
    inside = sum(ar * (np.arctan(2 * (e[-1] - c) / 5.0) - np.arctan(2 * (e[0] - c) / 5.0)) / np.pi
                 for ar, c in zip(area, centre))
    assert trapezoid(a, e) == pytest.approx(inside, rel=1e-3)


def test_sweep_tables_keep_position_and_strength(tmp_path):
    ds = fdsolver.sweep(CASES / "double_square.toml", ["d=1:3:3"], executor="serial", save_psi=True)
    written = {Path(p).name for p in fdsolver.export_csv(ds, tmp_path)}
    assert {"points.csv", "points_states.csv", "points_transitions.csv", "points_wavefunctions.csv"} <= written
    _, header, rows = _read(tmp_path / "points_states.csv")
    assert header[:2] == ["d [nm]", "state"]
    for name in ("mean_x [nm]", "spread [nm]", "psi_norm"):
        assert name in header
    # two identical wells: every state is centred between them (mirror symmetry)
    mx = rows[:, header.index("mean_x [nm]")]
    assert np.nanmax(np.abs(mx)) < 1e-6
    _, theader, trows = _read(tmp_path / "points_transitions.csv")
    assert "oscillator_strength" in theader

    from fdsolver.report.sweep import format_sweep

    text = format_sweep(ds).splitlines()
    head = next(i for i, l in enumerate(text) if l.startswith("position and strength"))
    assert text[head + 1].split()[-1] == "f01"
    last = text[head + 1 + ds.sizes["d"]].split()  # the row of d = 3: both states bound, <x> = 0 by symmetry
    assert float(last[1]) == 0.0 and float(last[-1]) == pytest.approx(float(ds.oscillator_strength.values[-1, 0, 1]), rel=1e-4)


def test_export_refuses_a_file_as_folder(well_run, tmp_path):
    target = tmp_path / "not_a_folder"
    target.write_text("keep")
    with pytest.raises(CaseError, match="not a folder"):
        fdsolver.export_csv(well_run, target)
    assert target.read_text() == "keep"
