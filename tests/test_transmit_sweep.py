"""`fdsolver transmit --vary`: T(E) over swept params through the scan runner.  Outside reference: the rectangular
barrier T = [1 + V0^2 sinh^2(kappa a) / (4E(V0 - E))]^-1 (Griffiths, Introduction to Quantum Mechanics, problem
2.33).  Invented parameters, atomic units (hbar = m = 1)."""

from __future__ import annotations

import numpy as np

import fdsolver
from fdsolver.cli import main

BARRIER = ('title = "one barrier (invented)"\nunits = "atomic"\n[params]\na = 1.0\n'
           '[[potential]]\nshape = "square"\ncenter = 0.0\nwidth = "a"\nheight = 1.3\n')


def _griffiths(e, v0, a):
    kap = np.sqrt(2 * (v0 - e))
    return 1 / (1 + v0**2 * np.sinh(kap * a) ** 2 / (4 * e * (v0 - e)))


def test_barrier_width_sweep_against_the_closed_form(tmp_path, capsys):
    case = tmp_path / "barrier.toml"
    case.write_text(BARRIER)
    out, fig = tmp_path / "ts.nc", tmp_path / "ts.png"
    assert main(["transmit", str(case), "--energies", "0.05:1.2:30", "--vary", "a=0.5:3:4", "--executor", "serial",
                 "-q", "-o", str(out), "--plot", str(fig)]) == 0
    assert "max T" in capsys.readouterr().out
    ds = fdsolver.open_run(out)
    assert ds.transmission.dims == ("a", "energy") and fig.stat().st_size > 20_000
    e = ds.energy.values
    for a in ds.a.values:
        assert np.allclose(ds.transmission.sel(a=a).values, _griffiths(e, 1.3, a), rtol=1e-10)
    # the same point alone gives the same numbers (one engine)
    one = fdsolver.transmit(fdsolver.load_case(case).with_params(a=float(ds.a.values[1])), "0.05:1.2:30")
    assert np.array_equal(one.transmission.values, ds.transmission.isel(a=1).values)
    assert main(["show", str(out)]) == 0


def test_a_sweep_needs_a_common_grid(tmp_path, capsys):
    case = tmp_path / "barrier.toml"
    case.write_text(BARRIER)
    out = tmp_path / "x.nc"
    assert main(["transmit", str(case), "--energies", "0.05:1.2", "--vary", "a=0.5:3:4", "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert "give a count" in err and err.count("\n") == 1 and not out.exists()
