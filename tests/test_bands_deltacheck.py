"""``fdsolver delta-check`` on a periodic case: the delta comb against lattices of finite wells or barriers.

Sources, one beside each check:

* the comb: the Dirac comb of Griffiths, Introduction to Quantum Mechanics (2nd ed.), sec. 5.3.2
  (section number from memory): cos(qL) = cos(kL) + (m beta / (hbar^2 k)) sin(kL), beta = -alpha the
  repulsive strength, continued to E < 0 with k = i kappa;
* square barriers of height alpha / w and width w: the Kronig-Penney relation (Kronig and Penney,
  Proc. R. Soc. A 130, 499 (1931); Kittel, Introduction to Solid State Physics, ch. 7), written over
  complex wave numbers so one formula covers energies below and above the barrier top;
* the first-order law: a narrow component of coupling g and mean distance l acts as a point of
  coupling g (1 - g l) (derived in :mod:`fdsolver.zerorange.combcheck`), so every deviation is linear
  in w with the slope of that comb; the fitted slope must agree with it.

References are solved here with numpy and scipy.optimize.brentq, independent of fdsolver's kernels.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq

import fdsolver
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"
L, ALPHA = 2.0, -1.5  # an invented repulsive comb in atomic units (hbar = m = 1): beta = 1.5 hartree bohr


def comb_case(extra=None):
    data = {"title": "repulsive comb (invented)", "units": "atomic",
            "potential": [{"shape": "point", "center": 0.0, "strength": ALPHA}],
            "domain": {"boundary": "periodic", "period": L}, "solve": {"bands": 3}}
    data.update(extra or {})
    return fdsolver.case_from_dict(data)


def edges_of(d, n, lo=-5.0, hi=60.0):
    """The lowest 2 n roots of D(E) = +-1 of a closed form D (a dense scan, then brentq)."""
    grid = np.linspace(lo, hi, 300001)
    vals = d(grid)
    roots = []
    for s in (1.0, -1.0):
        f = vals - s
        for i in np.flatnonzero(np.sign(f[:-1]) != np.sign(f[1:])):
            roots.append(brentq(lambda e, s=s: float(d(np.array([e]))[0]) - s, grid[i], grid[i + 1], xtol=1e-14,
                                rtol=1e-15))
    return np.sort(roots)[: 2 * n]


def dirac(e):
    k = np.sqrt(2.0 * np.asarray(e) + 0j)
    return np.real(np.cos(k * L) + (-ALPHA) / k * np.sin(k * L))


def barriers(w):
    height = -ALPHA / w

    def d(e):
        e = np.asarray(e, dtype=float)
        k = np.sqrt(2.0 * e + 0j)  # outside the barrier
        kap = np.sqrt(2.0 * (height - e) + 0j)  # inside it
        a, b = L - w, w
        return np.real(np.cos(k * a) * np.cosh(kap * b) + (kap**2 - k**2) / (2 * k * kap) * np.sin(k * a) * np.sinh(kap * b))

    return d


@pytest.fixture(scope="module")
def check():
    return fdsolver.delta_check(comb_case(), widths="0.002:0.2:5")


def test_comb_and_finite_lattices_against_closed_forms(check):
    ds = check
    ref = edges_of(dirac, 3)
    np.testing.assert_allclose(np.sort(np.r_[ds.band_bottom_limit.values, ds.band_top_limit.values]), ref, atol=1e-10)
    for i, w in enumerate(ds.width.values):
        ref_w = edges_of(barriers(w), 3)
        got = np.sort(np.r_[ds.band_bottom.values[i], ds.band_top.values[i]])
        np.testing.assert_allclose(got, ref_w, atol=1e-9)
        scale = np.maximum(np.abs(ref[0::2]), np.abs(ref[1::2]))
        assert ds.deviation.sel(quantity=0).values[i] == pytest.approx((ref_w[0::2] - ref[0::2]) / scale, abs=1e-8)


def test_the_fitted_law_is_the_first_order_law():
    ds = fdsolver.delta_check(comb_case(), widths="0.0002:0.02:5")  # narrow: the linear regime
    fit, first = ds.law_coefficient.values, ds.predicted_coefficient.values
    judged = np.isfinite(fit) & (np.abs(first) > 1e-3 * np.nanmax(np.abs(first)))
    assert judged.sum() == 9 and (ds.resolved.values == 1).all()
    np.testing.assert_allclose(fit[judged], first[judged], rtol=1e-3)
    assert np.all(np.abs(ds.law_exponent.values[judged] - 1.0) < 0.05)
    # barriers strengthen the repulsion: the band bottoms rise to first order (g (1 - g l) with g < 0) ...
    assert np.all(first[0] > 0)
    # ... while the band tops of a one-point comb, sin(n pi x / L) with a node on the point, E = (n pi / L)^2 / 2
    # at any strength (Griffiths' D = cos(kL) = -+1 there), move only at second order
    np.testing.assert_allclose(ds.band_top_limit.values, 0.5 * (np.arange(1, 4) * np.pi / L) ** 2, rtol=1e-12)
    assert np.all(np.abs(first[1]) < 1e-9) and np.all(np.abs(ds.law_exponent.values[1] - 2.0) < 0.05)


def test_from_finite_compares_a_lattice_of_wells_with_its_comb():
    w, depth = 0.05, 30.0  # square wells of strength 1.5 hartree bohr
    case = fdsolver.case_from_dict({
        "units": "atomic", "potential": [{"shape": "square", "center": 0.3, "width": w, "depth": depth}],
        "domain": {"boundary": "periodic", "period": L}, "solve": {"bands": 2}})
    ds = fdsolver.delta_check(case, from_finite=True)
    assert ds.sizes["width"] == 1 and ds.width.values[0] == pytest.approx(w)
    assert ds.point_strength.values[0] == pytest.approx(w * depth) and ds.point_position.values[0] == pytest.approx(0.3)

    def attractive(e):  # the Dirac comb of an attractive strength alpha = w * depth
        k = np.sqrt(2.0 * np.asarray(e) + 0j)
        return np.real(np.cos(k * L) - (w * depth) / k * np.sin(k * L))

    def wells(e):  # Kronig-Penney with wells of depth V0 and width w
        e = np.asarray(e, dtype=float)
        kw = np.sqrt(2.0 * (e + depth) + 0j)
        k = np.sqrt(2.0 * e + 0j)
        return np.real(np.cos(kw * w) * np.cos(k * (L - w)) - (kw**2 + k**2) / (2 * kw * k) * np.sin(kw * w) * np.sin(k * (L - w)))

    comb_ref, finite_ref = edges_of(attractive, 2, lo=-10.0), edges_of(wells, 2, lo=-10.0)
    np.testing.assert_allclose(np.sort(np.r_[ds.band_bottom_limit.values, ds.band_top_limit.values]), comb_ref, atol=1e-10)
    np.testing.assert_allclose(np.sort(np.r_[ds.band_bottom.values[0], ds.band_top.values[0]]), finite_ref, atol=1e-9)
    dev, pred = ds.deviation.values[0, :3], ds.predicted_deviation.values[0, :3]
    first = np.abs(pred) > 1e-3
    assert first.sum() >= 4  # the rest have no first-order term: a node of the Bloch function on the well
    assert np.all(np.abs(dev - pred)[first] <= 0.1 * np.abs(dev)[first])  # first order to O((g l)^2), g l = 0.025
    assert np.all(np.abs(dev[~first]) < 1e-3)


def test_command_writes_shows_and_draws(tmp_path, capsys):
    out, fig = tmp_path / "c.nc", tmp_path / "c.png"
    assert main(["delta-check", str(CASES / "delta_comb.toml"), "--widths", "0.01:0.5:4", "-o", str(out),
                 "--plot", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "delta comb against finite lattices" in text and "valid" in text and f"wrote {out}" in text
    ds = fdsolver.open_run(out)
    assert ds.attrs["fdsolver_kind"] == "comb_check" and list(ds.quantity_name.values) == [
        "band_bottom", "band_top", "band_width", "gap_above"]
    assert fig.stat().st_size > 20_000
    assert main(["show", str(out)]) == 0 and "band 0: comb" in capsys.readouterr().out


@pytest.mark.parametrize("args, key", [(["--widths", "0.5:20:3"], "--widths"), (["--map", "d=1:3:3", "--map",
                                       "width=0.1:1:3"], "domain.boundary"), (["--shape", "cube"], "--shape")])
def test_bad_options_exit_2(args, key, tmp_path, capsys):
    out = tmp_path / "c.nc"
    assert main(["delta-check", str(CASES / "delta_comb.toml"), *args, "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and key in err[0] and not out.exists()
