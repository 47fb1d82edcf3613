"""``fdsolver bands`` and ``fdsolver.bands``: the archive of a periodic case, checked against the outside.

Sources, one beside each check:

* the optical lattice -s E_R cos^2(pi x / L): band edges from the Mathieu characteristic values
  a_r(q), b_r(q) (DLMF 28.2; scipy.special.mathieu_a / mathieu_b), with a = (E + s E_R / 2) / E_R and
  q = s / 4 (the sign of q only swaps a_{2n+1} and b_{2n+1}, DLMF 28.2.26 from memory);
* the superlattice of two masses: the BenDaniel-Duke Kronig-Penney relation
  cos(qL) = cos(k a) cosh(kappa b) + (eta - 1/eta)/2 sin(k a) sinh(kappa b), eta = m_w kappa / (m_b k)
  (psi and psi'/m continuous; Kronig and Penney, Proc. R. Soc. A 130, 499 (1931), with BenDaniel and
  Duke, Phys. Rev. 152, 683 (1966)), derived for this test and continued above the barrier with
  complex wave numbers;
* N periods between hard walls: Abeles' formula for N identical layers, M^N = U_{N-1}(D) M - U_{N-2}(D)
  (Born and Wolf, Principles of Optics, sec. 1.6.5, from memory): the levels are E_n(j pi / N L);
* one state per band and period: the integrated density of states in gap n is n / L (a fact of the
  trade, Kittel ch. 7); Bloch's theorem psi(x + L) = exp(i q L) psi(x).
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from scipy.optimize import brentq
from scipy.special import mathieu_a, mathieu_b

import fdsolver
import fdsolver.api
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"


@pytest.fixture(scope="module")
def optical():
    return fdsolver.api.bands(CASES / "optical_lattice.toml", bloch="0,0.5,1")


@pytest.fixture(scope="module")
def superlattice():
    return fdsolver.api.bands(CASES / "superlattice.toml", stacks="2,4,8")


def test_optical_lattice_edges_are_mathieu_values(optical):
    ds = optical
    p = fdsolver.load_case(CASES / "optical_lattice.toml").params
    e_r = ds.attrs["hbar2_2me"] * math.pi**2 / (p["M"] * p["L"] ** 2)  # the true recoil energy
    s = p["s"] * p["ER"] / e_r  # the depth in true recoil energies
    q = s / 4.0
    chars = [mathieu_a(0, q)] + [f(r, q) for r in range(1, 6) for f in (mathieu_a, mathieu_b)]
    ref = np.sort((np.array(chars) - s / 2.0) * e_r)[: 2 * ds.sizes["band"]]
    got = np.sort(np.concatenate([ds.band_bottom.values, ds.band_top.values]))
    err = np.sort(np.concatenate([ds.band_bottom_error.values, ds.band_top_error.values]))
    assert ds.attrs["zone_energy"] == pytest.approx(e_r, rel=1e-12)
    np.testing.assert_allclose(got, ref, rtol=0, atol=2e-8 * e_r)  # tolerance 1e-8 of max(|E|, E_L)
    assert np.all(np.abs(got - ref) <= np.maximum(3.0 * err.max(), 1e-10 * e_r))
    assert (ds.converged.values == 1).all()


def test_optical_lattice_bloch_functions(optical):
    ds = optical
    x, period = ds.x.values, ds.attrs["period"]
    psi = ds.bloch_real.values + 1j * ds.bloch_imag.values  # (q, band, x)
    c = ds.attrs["hbar2_2me"] / ds.attrs["particle_mass"]
    h = x[1] - x[0]
    for i, q in enumerate(ds.bloch_wavevector.values):
        for n in range(ds.sizes["band"]):
            f = psi[i, n]
            assert f[-1] == pytest.approx(np.exp(1j * q * period) * f[0], abs=1e-9 * np.abs(f).max())  # Bloch
            norm = np.sum(np.abs(f[:-1]) ** 2) * h  # trapezoid over one period on the stored 400 intervals;
            assert norm == pytest.approx(1.0, rel=1e-3)  # psi of midpoint cells has kinks in psi'': O(h^2) here
            # the Schroedinger equation on the stored grid (second differences, O(h^2))
            lap = (f[2:] - 2 * f[1:-1] + f[:-2]) / h**2
            res = -c * lap + (ds.potential.values[1:-1] - ds.bloch_energy.values[i, n]) * f[1:-1]
            scale = ds.attrs["zone_energy"] * (n + 1) ** 2 * np.abs(f).max()
            assert np.abs(res).max() < 2e-3 * scale


def bdd_edges(m_w, m_b, v0, a, b, c, n_edges):
    """Band edges of the two-mass superlattice from the BenDaniel-Duke Kronig-Penney relation (module docstring)."""
    def d(e):
        e = np.asarray(e, dtype=float)
        k = np.sqrt(m_w * e / c + 0j)
        kap = np.sqrt(m_b * (v0 - e) / c + 0j)
        eta = m_w * kap / (m_b * k)
        return np.real(np.cos(k * a) * np.cosh(kap * b) + 0.5 * (eta - 1 / eta) * np.sin(k * a) * np.sinh(kap * b))

    grid = np.linspace(1e-6, 2000.0, 800001)
    vals = d(grid)
    roots = []
    for s in (1.0, -1.0):
        f = vals - s
        for i in np.flatnonzero(np.sign(f[:-1]) != np.sign(f[1:])):
            roots.append(brentq(lambda e, s=s: float(d(e)) - s, grid[i], grid[i + 1], xtol=1e-13, rtol=1e-15))
    return np.sort(roots)[:n_edges]


def test_superlattice_edges_are_bendaniel_duke(superlattice):
    ds = superlattice
    p = fdsolver.load_case(CASES / "superlattice.toml").params
    ref = bdd_edges(0.067, 0.09, p["offset"], p["well"], p["barrier"], ds.attrs["hbar2_2me"], 2 * ds.sizes["band"])
    got = np.sort(np.concatenate([ds.band_bottom.values, ds.band_top.values]))
    np.testing.assert_allclose(got, ref, rtol=1e-11, atol=1e-9)
    assert ds.attrs["method"].startswith("one-period transfer matrix on exact cells")


def test_states_per_band_and_period(superlattice):
    """The integrated density of states is n / L in gap n (one state per band and period, one spin)."""
    ds = superlattice
    e, n_below = ds.dos_energy.values, ds.states_below.values
    top, bottom, period = ds.band_top.values, ds.band_bottom.values, ds.attrs["period"]
    for n in range(ds.sizes["band"] - 1):
        gap = (e > top[n]) & (e < bottom[n + 1])
        assert gap.any()
        np.testing.assert_allclose(n_below[gap], (n + 1) / period, rtol=1e-12)
        assert np.all(ds.density_of_states.values[gap] == 0.0)
    inside = (e > bottom[0]) & (e < top[0])
    assert np.all(ds.density_of_states.values[inside] > 0) and np.all(np.diff(n_below) >= 0)


def test_hard_wall_stacks_are_abeles_levels(superlattice):
    ds = superlattice
    e, p, err = ds.stack_energy.values, ds.stack_predicted_energy.values, ds.stack_energy_error.values
    ok = np.isfinite(e) & np.isfinite(p)
    assert ok.sum() >= 4 * (1 + 3 + 7)  # N - 1 levels per band for N = 2, 4, 8 in the four bands compared
    assert np.all(np.abs(e[ok] - p[ok]) <= 10 * err[ok] + 1e-9 * ds.attrs["zone_energy"])
    ratio = ds.width_ratio.values
    assert np.all(np.diff(ratio[1:], axis=0) > 0)  # the clusters widen toward the band widths as N grows
    assert list(ds.n_periods.values) == [2, 4, 8] and ds.attrs["stack_termination"] == "hard"


def test_api_and_command_write_the_same_archive(tmp_path, capsys):
    ds = fdsolver.api.bands(fdsolver.load_case(CASES / "delta_comb.toml", d=3.0), n_bands=3, wavevectors=21,
                            stacks="2,4", bloch="0,1")
    api_file = fdsolver.write_dataset(ds, tmp_path / "api.nc")
    cli_file = tmp_path / "cli.nc"
    fig = tmp_path / "b.png"
    assert main(["bands", str(CASES / "delta_comb.toml"), "--set", "d=3", "--bands", "3", "--wavevectors", "21",
                 "--stacks", "2,4", "--bloch", "-o", str(cli_file), "--plot", str(fig)]) == 0
    out = capsys.readouterr().out
    assert "finite stacks of N periods" in out and "m* bottom [m_e]" in out and f"wrote {cli_file}" in out
    a, b = fdsolver.open_run(api_file), fdsolver.open_run(cli_file)
    for x in (a, b):
        x.attrs.pop("history")
    xr.testing.assert_identical(a, b)
    assert fig.stat().st_size > 20_000
    assert main(["show", str(cli_file)]) == 0 and "gap above" in capsys.readouterr().out
    assert main(["plot", str(cli_file), "-o", str(tmp_path / "again.png")]) == 0


def test_the_public_function_stays_the_command():
    """fdsolver.bands is the api function, also after the band subpackage (fdsolver.bloch) was imported."""
    code = ("import fdsolver; f = fdsolver.bands; import fdsolver.bloch.lattice; g = fdsolver.bands;"
            "print(f.__module__, g.__module__, 'bands' in fdsolver.__all__, 'band_sweep' in fdsolver.__all__)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["fdsolver.api", "fdsolver.api", "True", "True"]
    import fdsolver.bloch.lattice  # noqa: F401

    ds = fdsolver.bands(CASES / "delta_comb.toml", n_bands=2, wavevectors=5)
    assert ds.attrs["fdsolver_kind"] == "bands" and ds.sizes == {**ds.sizes, "band": 2, "wavevector": 5}


@pytest.mark.parametrize("args, key", [
    (["--bands", "0"], "--bands"), (["--wavevectors", "1"], "--wavevectors"), (["--stacks", "0,2"], "--stacks"),
    (["--stacks", "2,b"], "--stacks"), (["--bloch", "x"], "--bloch"), (["--termination", "open"], "--termination"),
    (["--vary", "d=1:3:3", "--stacks", "2"], "--stacks"), (["--executor", "serial"], "--executor"),
])
def test_bad_options_exit_2_naming_them(args, key, tmp_path, capsys):
    out = tmp_path / "b.nc"
    assert main(["bands", str(CASES / "delta_comb.toml"), *args, "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and key in err[0] and not out.exists()


def test_open_stacks_need_localised_components(capsys):
    assert main(["bands", str(CASES / "optical_lattice.toml"), "--stacks", "2", "--termination", "open"]) == 2
    assert "potential[1].shape" in capsys.readouterr().err


def test_the_printed_table_is_the_archives_table(tmp_path, capsys):
    """Without -o the table prints from the archive's variables before any Dataset exists: it is show's table."""
    args = ["bands", str(CASES / "delta_comb.toml"), "--bands", "2", "--wavevectors", "9", "--stacks", "2,3"]
    assert main(args) == 0
    fresh = capsys.readouterr().out
    out = tmp_path / "b.nc"
    assert main([*args, "-o", str(out)]) == 0
    capsys.readouterr()
    assert main(["show", str(out)]) == 0
    assert capsys.readouterr().out == fresh
