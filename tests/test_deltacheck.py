"""The zero-range check (fdsolver.zerorange.ladder, scans.maps, cli.delta) against outside references.

Sources beside each check:

* Lambert W closed form of the symmetric pair, kappa d = t + W0(+-t e^-t),
  t = g d (scipy.special.lambertw as the reference library);
* single point interaction E = -m alpha^2 / (2 hbar^2) (Griffiths, Introduction
  to Quantum Mechanics, 2nd ed., sec. 2.5; section from memory), evaluated in
  SI with scipy.constants;
* critical separation d_c = hbar^2 / (m alpha) of the symmetric pair (common
  practice, no source);
* finite square wells: the even equation kappa a = z tan z of Griffiths sec. 2.6
  and, for several wells, the same edge matching by exact transfer matrices;
  roots by scipy.optimize.brentq;
* the zero-energy matching of a square pair, d_c = w + 2 cot(q w) / q (derived in
  tests/test_zero_range_correction.py).

Units: nm-meV with C = hbar^2 / (2 m_e) from scipy.constants (CODATA).
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc
from scipy.optimize import brentq
from scipy.special import lambertw

import fdsolver
from fdsolver.cli import main
from fdsolver.io.datasets import ladder_dataset
from fdsolver.scans.options import read_options
from fdsolver.zerorange.ladder import compare, deviation, replacement, run_ladder

ROOT = Path(__file__).resolve().parents[1]
PAIR = ROOT / "cases" / "impurity_pair.toml"
FINITE = ROOT / "cases" / "impurity_pair_finite.toml"
C = sc.hbar**2 / (2.0 * sc.m_e) / (1e-3 * sc.e) / 1e-18  # meV nm^2
M, ALPHA, D = 0.067, 120.0, 12.0  # the bundled pair (invented numbers)
G = M * ALPHA / (2.0 * C)  # m alpha / hbar^2, 1/nm


def square_energies(wells, guesses, mass=M):
    """Exact energies (meV) of square wells [(centre, width, depth)] near ``guesses`` (matching at every edge)."""
    k2 = mass / C
    wells = sorted(wells)

    def mismatch(k):
        psi, dpsi = 1.0, k
        x = wells[0][0] - 0.5 * wells[0][1]
        for c, w, depth in wells:
            gap = c - 0.5 * w - x
            ch, sh = math.cosh(k * gap), math.sinh(k * gap)
            psi, dpsi = psi * ch + dpsi * sh / k, psi * k * sh + dpsi * ch
            q = math.sqrt(k2 * depth - k * k)
            cs, sn = math.cos(q * w), math.sin(q * w)
            psi, dpsi = psi * cs + dpsi * sn / q, -psi * q * sn + dpsi * cs
            s = math.hypot(psi, dpsi / k)
            psi, dpsi = psi / s, dpsi / s
            x = c + 0.5 * w
        return dpsi / k + psi

    out = []
    for e0 in guesses:
        k0 = math.sqrt(k2 * abs(e0))
        grid = k0 * np.linspace(0.999, 1.001, 2001)
        vals = [mismatch(k) for k in grid]
        i = next(i for i in range(len(grid) - 1) if vals[i] * vals[i + 1] < 0)
        k = brentq(mismatch, grid[i], grid[i + 1], xtol=1e-300, rtol=1e-15)
        out.append(-k * k / k2)
    return np.array(out)


def lambert_pair(g, d):
    """(E_even, E_odd) of two equal points (meV): kappa d = t + W0(+-t e^-t), t = g d (scipy lambertw)."""
    t = g * d
    ke = (t + lambertw(t * math.exp(-t)).real) / d
    ko = (t + lambertw(-t * math.exp(-t)).real) / d
    return -C * ke**2 / M, -C * ko**2 / M


@pytest.fixture(scope="module")
def pair():
    case = fdsolver.load_case(PAIR)
    lad = run_ladder(case, read_options(case))
    return case, lad, ladder_dataset(case, lad, "test")


# ------------------------------------------------------------ point model
def test_limit_energies_are_the_lambert_w_closed_form(pair):
    _, _, ds = pair
    np.testing.assert_allclose(ds.energy_limit.values, lambert_pair(G, D), rtol=1e-12)
    assert list(ds.exists_limit.values) == [1, 1]


def test_critical_separation_of_the_pair(pair):
    # d_c = hbar^2 / (m alpha) (common practice, no source), in SI then nm
    m_si, alpha_si = M * sc.m_e, ALPHA * 1e-3 * sc.e * 1e-9
    d_c = sc.hbar**2 / (m_si * alpha_si) * 1e9
    _, lad, ds = pair
    assert ds.critical_separation_limit.values[1] == pytest.approx(d_c, rel=1e-9)
    assert np.isnan(ds.critical_separation_limit.values[0])  # the even state binds at any separation
    # finite square pair: d_c(w) = w + 2 cot(q w) / q with q^2 = m V0 / C, V0 = alpha / w (E = 0 matching)
    w = ds.width.values
    q = np.sqrt(M * (ALPHA / w) / C)
    np.testing.assert_allclose(ds.critical_separation.values[:, 1], w + 2.0 / (q * np.tan(q * w)), rtol=1e-8)


# --------------------------------------------------------- finite widths
def test_square_pair_energies_are_exact_and_converge_linearly(pair):
    _, lad, ds = pair
    e, err = ds.energy.values, ds.energy_error.values
    for i, w in enumerate(ds.width.values):
        depth = ALPHA / w
        exact = square_energies([(-D / 2, w, depth), (D / 2, w, depth)], e[i])
        # the error bars are honest: true error within a few estimated errors (plus round-off)
        assert np.all(np.abs(e[i] - exact) <= 3.0 * err[i] + 1e-12 * np.abs(exact)), (w, e[i] - exact, err[i])
    dev = ds.deviation.values
    assert np.all(np.diff(dev, axis=0) > 0)  # narrower wells are closer to the point model
    assert np.all(dev[0] < 3e-4)
    np.testing.assert_allclose(ds.law_exponent.values, 1.0, atol=0.01)  # deviation proportional to width
    np.testing.assert_allclose(ds.law_coefficient.values, ds.predicted_coefficient.values, rtol=1e-3)


def test_every_point_is_resolved_ten_times_below_its_deviation(pair):
    _, _, ds = pair
    gap = np.abs(ds.energy.values - ds.energy_limit.values)
    assert np.all(ds.resolved.values == 1)
    assert np.all(ds.energy_error.values <= gap / 10.0)
    assert np.all(ds.solve_tolerance.values[:, None] <= np.abs(ds.deviation.values) / 10.0)


def test_validity_width_brackets_the_tolerance(pair):
    case, lad, ds = pair
    tol = ds.attrs["tolerance"]
    assert tol == 1e-2
    for k in range(2):
        v = ds.validity_width.values[k]
        assert int(ds.validity_flag.values[k]) == 0
        inside = ds.width.values <= v
        assert np.all(np.abs(ds.deviation.values[inside, k]) < tol)
        assert np.abs(ds.deviation.values[np.argmax(~inside), k]) >= tol
        for f, below in ((0.97, True), (1.03, False)):
            r = compare(case, replacement(case, "square", f * v))
            assert (abs(deviation(r.energy, r.energy_limit)[k]) < tol) == below


def test_single_point_griffiths_and_the_exact_square_slope():
    """E = -m alpha^2 / (2 hbar^2) (Griffiths sec. 2.5); the measured slope is the exact square well's (sec. 2.6)."""
    mass, alpha = 0.2, 80.0
    case = fdsolver.case_from_dict({"units": "nm-meV", "mass": mass,
                                    "potential": [{"shape": "point", "center": 1.0, "strength": alpha}]})
    lad = run_ladder(case, read_options(case, widths="1e-4:3e-2:6"))
    m_si, a_si = mass * sc.m_e, alpha * 1e-3 * sc.e * 1e-9
    e_point = -m_si * a_si**2 / (2.0 * sc.hbar**2) / (1e-3 * sc.e)
    assert lad.energy_limit[0] == pytest.approx(e_point, rel=1e-12)
    g = mass * alpha / (2.0 * C)

    def exact(w):  # Griffiths sec. 2.6, a = w/2, z0 = a sqrt(2 m V0)/hbar, kappa a = z tan z
        a, z0 = 0.5 * w, math.sqrt(g * w / 2.0)
        z = brentq(lambda z: z * math.tan(z) - math.sqrt(max(z0 * z0 - z * z, 0.0)), 1e-300, z0, xtol=1e-300, rtol=1e-15)
        return -C * (z * math.tan(z) / a) ** 2 / mass

    for w, r in zip(lad.widths, lad.results):
        assert abs(r.energy[0] - exact(w)) <= 3.0 * r.energy_error[0] + 1e-12 * abs(e_point)
    w0 = 1e-6 / g
    slope_exact = (exact(w0) - e_point) / abs(e_point) / w0  # -> 2 g l / w = 2 g / 3 for a square well
    assert slope_exact == pytest.approx(2.0 * g / 3.0, rel=1e-5)
    assert lad.law_coefficient[0] == pytest.approx(slope_exact, rel=1e-3)
    assert lad.predicted_coefficient[0] == pytest.approx(2.0 * g / 3.0, rel=1e-12)


def test_from_finite_against_exact_square_pair():
    case = fdsolver.load_case(FINITE)
    lad = run_ladder(case, read_options(case, from_finite=True))
    ds = ladder_dataset(case, lad, "test")
    w = 0.3
    exact = square_energies([(-D / 2, w, ALPHA / w), (D / 2, w, ALPHA / w)], ds.energy.values[0])
    assert np.all(np.abs(ds.energy.values[0] - exact) <= 3.0 * ds.energy_error.values[0] + 1e-12)
    np.testing.assert_allclose(ds.energy_limit.values, lambert_pair(G, D), rtol=1e-12)
    np.testing.assert_allclose(ds.deviation.values[0], (exact - ds.energy_limit.values) / np.abs(ds.energy_limit.values), rtol=1e-6)
    assert int(ds.exists.values[0].sum()) == int(ds.exists_limit.values.sum()) == 2
    q = math.sqrt(M * (ALPHA / w) / C)
    assert ds.critical_separation.values[0, 1] == pytest.approx(w + 2.0 / (q * math.tan(q * w)), rel=1e-8)
    assert ds.well_strength.values == pytest.approx([ALPHA, ALPHA])


# ----------------------------------------------------------------- map
def test_map_marks_where_the_models_disagree_on_existence():
    from fdsolver.scans.maps import plan_map, run_map
    from fdsolver.parallel.executors import SerialExecutor

    case = fdsolver.load_case(PAIR)
    opts = read_options(case, maps=["width=0.3:6:3", "d=9.2:10.6:8"])
    spec = plan_map(case, opts, {})
    with SerialExecutor() as ex:
        ds = run_map(spec, ex, action="test")
    d_point = 1.0 / G  # point model: odd state for d > 1/g (common practice, no source)
    for i, w in enumerate(ds.width.values):
        q = math.sqrt(M * (ALPHA / w) / C)
        d_fin = w + 2.0 / (q * math.tan(q * w))  # finite square pair (E = 0 matching)
        for j, d in enumerate(ds.d.values):
            expect = (1 if d > d_point else 0) + (2 if d > d_fin else 0)
            assert int(ds.existence.values[i, j, 1]) == expect, (w, d)
            assert int(ds.existence.values[i, j, 0]) == 3
    assert (ds.existence.values[:, :, 1] == 1).any()  # the plane does hold a disagreement region
    assert ds.d.attrs["units"] == "nm"  # inferred from center = "d/2"


# ------------------------------------------------------------------ CLI
def test_cli_writes_archive_show_and_plot(tmp_path, capsys):
    out, fig = tmp_path / "check.nc", tmp_path / "check.png"
    assert main(["delta-check", str(PAIR), "--widths", "1e-3:0.1:3", "-o", str(out), "--plot", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "width [nm]" in text and "energy [meV]" in text and "valid" in text
    ds = fdsolver.open_run(out)
    assert ds.attrs["fdsolver_kind"] == "delta_check" and ds.attrs["Conventions"].startswith("CF-")
    assert ds.attrs["case_text"] == PAIR.read_text()
    for name in ("energy", "energy_limit", "deviation", "validity_width"):
        assert name in ds
    assert ds.energy.dims == ("width", "state") and ds.energy_limit.dims == ("state",)
    for name, var in ds.variables.items():
        if var.dtype.kind in "fi":
            assert "units" in var.attrs, name
    assert main(["show", str(out)]) == 0
    shown = capsys.readouterr().out
    assert f"{ds.energy.values[0, 0]:.10g}" in shown
    assert fig.stat().st_size > 20_000
    fig2 = tmp_path / "again.png"
    assert main(["plot", str(out), "-o", str(fig2)]) == 0 and fig2.stat().st_size > 20_000


def _case(tmp_path, text, name="bad.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


POINT = '[[potential]]\nshape = "point"\ncenter = {c}\nstrength = {a}\n'
BAD = {
    "no_points": (lambda t: [str(FINITE)], "not a point"),
    "zero_strength": (lambda t: [str(_case(t, POINT.format(c=0, a=0)))], "strength must be > 0"),
    "negative_strength": (lambda t: [str(_case(t, POINT.format(c=0, a=-2) + POINT.format(c=3, a=1)))], "strength must be > 0"),
    "overlap": (lambda t: [str(PAIR), "--widths", "1:13:3"], "overlap"),
    "bad_widths": (lambda t: [str(PAIR), "--widths", "0.1:x:3"], "LO:HI:N"),
    "barrier_from_finite": (lambda t: [str(_case(t, '[[potential]]\nshape = "square"\ncenter = 0\nwidth = 0.1\nheight = 5\n')),
                                       "--from-finite"], "attractive"),
    "points_from_finite": (lambda t: [str(PAIR), "--from-finite"], "already a point"),
    "unknown_table_key": (lambda t: [str(_case(t, POINT.format(c=0, a=1) + '[delta_check]\nshap = "square"\n'))], "did you mean 'shape'"),
    "one_map_axis": (lambda t: [str(PAIR), "--map", "d=8:12:3"], "exactly two"),
    "map_unknown_param": (lambda t: [str(PAIR), "--map", "dd=8:12:3", "--map", "width=0.01:1:3"], "neither a param"),
    "bad_shape": (lambda t: [str(PAIR), "--shape", "triangle"], "not a replacement shape"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_input_exit_2_nothing_written(name, tmp_path, capsys):
    make, needle = BAD[name]
    out = tmp_path / "old.nc"
    out.write_bytes(b"previous result")
    code = main(["delta-check", *make(tmp_path), "-o", str(out)])
    err = capsys.readouterr().err
    assert code == 2
    assert needle in err and err.count("\n") == 1 and "Traceback" not in err
    assert out.read_bytes() == b"previous result"


@pytest.mark.slow
def test_bad_input_from_a_shell_is_one_line():
    proc = subprocess.run([sys.executable, "-m", "fdsolver", "delta-check", str(FINITE)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr and proc.stdout == ""


def test_points_below_the_round_off_floor_are_reported_not_resolved():
    # common practice, no source: a deviation smaller than the solver's round-off floor cannot be measured
    case = fdsolver.load_case(PAIR)
    lad = run_ladder(case, read_options(case, widths="3e-7:1e-4:2"))
    ds = ladder_dataset(case, lad, "test")
    assert list(ds.resolved.values[0]) == [0, 0] and list(ds.resolved.values[1]) == [1, 1]
    assert "round-off floor" in ds.attrs["messages"]
    assert list(ds.validity_flag.values) == [1, 1]  # judged only where resolved: holds at 1e-4 nm
    from fdsolver.report.delta import format_delta

    assert "NOT RESOLVED" in format_delta(ds)


def test_settings_from_the_delta_check_table(tmp_path):
    text = PAIR.read_text() + '\n[delta_check]\nshape = "gaussian"\nwidths = "1e-3:1e-2:3"\ntolerance = 1e-3\n'
    case = fdsolver.load_case(_case(tmp_path, text, "table.toml"))
    opts = read_options(case)
    assert (opts.shape, opts.widths, opts.tolerance) == ("gaussian", (1e-3, 1e-2, 3), 1e-3)
    assert read_options(case, shape="sech2", tolerance=0.05).shape == "sech2"  # the command line wins
    lad = run_ladder(case, opts)
    # each gaussian keeps the strength: depth * sigma * sqrt(2 pi) = alpha (Gaussian integral)
    assert all(abs(w.amplitude) * w.sigma * math.sqrt(2 * math.pi) == pytest.approx(ALPHA) for w in lad.models[0].wells)
