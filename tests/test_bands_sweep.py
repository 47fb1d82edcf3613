"""Band-edge sweeps (``fdsolver bands --vary``, ``fdsolver.band_sweep``) through the one scan runner.

Sources: the cosine lattice's band edges are Mathieu characteristic values (DLMF 28.2; scipy.special
mathieu_a / mathieu_b; a = (E + s E_R / 2) / E_R, q = s / 4 for V = -s E_R cos^2(pi x / L)); the
sweep must give at every point what one ``fdsolver bands`` run gives (README.md, "Periodic
structures"); the runner's contract (the result does not depend on the executor, and a resumed run
writes what an uninterrupted one writes; common practice, no source).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from scipy.special import mathieu_a, mathieu_b

import fdsolver
import fdsolver.api
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"
COSINE = {  # an invented cosine lattice in atomic units: mass 1, period pi, so that E_R = 1/2 hartree
    "title": "cosine lattice (invented)", "units": "atomic", "params": {"s": 4.0, "L": math.pi},
    "potential": [{"shape": "expression", "V": "-s*0.5*cos(pi*x/L)**2"}],
    "domain": {"boundary": "periodic", "period": "L", "start": "-L/2"}, "solve": {"bands": 4, "tolerance": 1e-10},
}


def mathieu_edges(s: float, e_r: float, n: int) -> np.ndarray:
    q = s / 4.0
    chars = [mathieu_a(0, q)] + [f(r, q) for r in range(1, n + 1) for f in (mathieu_a, mathieu_b)]
    return np.sort((np.array(chars) - s / 2.0) * e_r)[: 2 * n]


def test_depth_sweep_follows_mathieu():
    case = fdsolver.case_from_dict(COSINE)
    ds = fdsolver.band_sweep(case, "s=0.5:12:6", executor="serial")
    assert ds.band_bottom.dims == ("s", "band") and (ds.solved.values == 1).all()
    for i, s in enumerate(ds.s.values):
        ref = mathieu_edges(s, 0.5, 4)
        got = np.sort(np.concatenate([ds.band_bottom.values[i], ds.band_top.values[i]]))
        np.testing.assert_allclose(got, ref, rtol=0, atol=1e-8)
    assert ds.s.attrs["units"] == "1"  # s enters the potential only as a product: its units are not declared


def test_each_point_is_one_bands_run_and_executors_agree():
    case = fdsolver.load_case(CASES / "superlattice.toml")
    serial = fdsolver.band_sweep(case, ["barrier=1:5:5", "well=4,6"], executor="serial")
    pool = fdsolver.band_sweep(case, ["barrier=1:5:5", "well=4,6"], workers=2, chunk=3)
    xr.testing.assert_identical(serial.drop_attrs(), pool.drop_attrs())
    assert serial.band_width.dims == ("barrier", "well", "band") and serial.barrier.attrs["units"] == "nm"
    one = fdsolver.api.bands(fdsolver.load_case(CASES / "superlattice.toml", barrier=3.0, well=6.0), wavevectors=3)
    for name in ("band_bottom", "band_top", "gap_above", "effective_mass_bottom"):
        np.testing.assert_array_equal(serial[name].sel(barrier=3.0, well=6.0).values, one[name].values)


def test_invalid_points_are_kept_with_their_reason():
    ds = fdsolver.band_sweep(CASES / "delta_comb.toml", "d=-6:6:3", executor="serial")
    assert list(ds.solved.values) == [1, 0, 1]  # d = 0: both sheets at one place of the period
    assert np.isnan(ds.band_bottom.values[1]).all() and (ds.converged.values[1] == -1).all()
    assert "d = 0" in ds.attrs["notes"] and "same place" in ds.attrs["notes"]


def test_an_interrupted_sweep_resumes_to_the_same_file(tmp_path):
    out = tmp_path / "bs.nc"
    args = dict(executor="serial", chunk=2)

    class Stop:
        n = 0

        def __call__(self, k):
            self.n += k
            if self.n >= 4:
                raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        fdsolver.band_sweep(CASES / "superlattice.toml", "barrier=1:6:9", output=out, progress=Stop(), **args)
    assert not out.exists() and Path(str(out) + ".checkpoint").exists()
    with pytest.raises(fdsolver.CaseError, match="--resume"):
        fdsolver.band_sweep(CASES / "superlattice.toml", "barrier=1:6:9", output=out, **args)
    resumed = fdsolver.band_sweep(CASES / "superlattice.toml", "barrier=1:6:9", output=out, resume=True, **args)
    whole = fdsolver.band_sweep(CASES / "superlattice.toml", "barrier=1:6:9", **args)
    xr.testing.assert_identical(resumed.drop_attrs(), whole.drop_attrs())
    assert fdsolver.open_run(out).attrs["history"] == resumed.attrs["history"]
    assert not Path(str(out) + ".checkpoint").exists()


def test_command_writes_prints_and_draws(tmp_path, capsys):
    out, fig = tmp_path / "bs.nc", tmp_path / "fan.png"
    assert main(["bands", str(CASES / "superlattice.toml"), "--vary", "barrier=1:6:8", "--executor", "serial",
                 "-o", str(out), "--plot", str(fig), "-q"]) == 0
    text = capsys.readouterr().out
    assert "band edges over 8 points" in text and "barrier [nm]" in text and f"wrote {out}" in text
    ds = fdsolver.open_run(out)
    assert ds.attrs["fdsolver_kind"] == "band_sweep" and ds.sizes["band"] == 4
    assert fig.stat().st_size > 20_000


@pytest.mark.parametrize("vary, key", [("nope=1:2:3", "--vary"), ("barrier=2:1:3", "--vary"),
                                       ("band=1:2:3", "--vary")])
def test_bad_axes_are_refused(vary, key):
    with pytest.raises(fdsolver.CaseError) as err:
        fdsolver.band_sweep(CASES / "superlattice.toml", vary, executor="serial")
    assert err.value.key == key
