"""The core solver against published closed forms.

Each test pairs a potential with its exact spectrum (source beside it) and
checks (a) relative energy error <= 1e-8 at default settings and (b) that the
reported ``energy_error`` bounds the true error.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import ai_zeros

import fdsolver
from fdsolver.model.units import UNIT_SYSTEMS

CASES = Path(__file__).resolve().parents[1] / "cases"
C_NM = UNIT_SYSTEMS["nm-meV"].hbar2_2me  # hbar^2/2m_e from scipy.constants (CODATA)


def solve(data):
    return fdsolver.solve(fdsolver.case_from_dict(data))


def check(ds, exact, rtol=1e-8):
    e = ds.energy.values
    assert e.size == len(exact), (e, exact)
    exact = np.asarray(exact)
    err = np.abs(e - exact)
    assert np.all(err <= rtol * np.abs(exact)), (e - exact) / exact
    assert np.all(ds.converged.values == 1)
    # the error bar must bound the true error (plus a round-off allowance of a few ulps)
    assert np.all(err <= ds.energy_error.values + 1e-14 * np.abs(exact)), (err, ds.energy_error.values)
    assert np.all(ds.energy_error.values > 0)


def square_well_levels(depth, half_width, mass, c):
    """Griffiths, Introduction to Quantum Mechanics, sec. 2.6: even tan z = sqrt((z0/z)^2 - 1),
    odd -cot z = sqrt((z0/z)^2 - 1), z = k a, z0 = a sqrt(2 m V0)/hbar; roots by scipy brentq."""
    z0 = half_width * math.sqrt(mass * depth / c)
    out = []
    n = 0
    while n * math.pi / 2 < z0:
        lo, hi = n * math.pi / 2 + 1e-13, min((n + 1) * math.pi / 2 - 1e-13, z0 - 1e-15)
        if n % 2 == 0:
            f = lambda z: math.tan(z) - math.sqrt((z0 / z) ** 2 - 1)  # noqa: E731
        else:
            f = lambda z: -1.0 / math.tan(z) - math.sqrt((z0 / z) ** 2 - 1)  # noqa: E731
        if f(lo) * f(hi) < 0:
            z = brentq(f, lo, hi, xtol=1e-300, rtol=1e-15)
            # E = -hbar^2 kappa^2 / 2m with kappa a = z tan z (even) or -z cot z (odd): no cancellation
            # against the depth, which E = hbar^2 k^2/2m - V0 would suffer for narrow deep wells
            ka = z * math.tan(z) if n % 2 == 0 else -z / math.tan(z)
            out.append(-c * ka**2 / (mass * half_width**2))
        n += 1
    return out


@pytest.mark.parametrize("depth,width", [(10.0, 2.0), (1.0, 1.0), (50.0, 0.5)])
def test_finite_square_well_atomic(depth, width):
    ds = solve({"units": "atomic", "potential": [{"shape": "square", "center": 0.3, "width": width, "depth": depth}]})
    check(ds, square_well_levels(depth, width / 2, 1.0, 0.5))
    assert list(ds.parity.values) == [(-1) ** k for k in range(ds.sizes["state"])]


def test_finite_square_well_nm_mev_with_mass():
    depth, width, m = 300.0, 8.0, 0.067
    ds = solve(
        {"units": "nm-meV", "mass": m, "potential": [{"shape": "square", "center": 0.0, "width": width, "depth": depth}]}
    )
    check(ds, square_well_levels(depth, width / 2, m, C_NM))


def test_infinite_well():
    """E_n = n^2 pi^2 hbar^2 / (2 m L^2) (Griffiths sec. 2.2); walls at 0 and L; lowest 10 states."""
    L, m = 3.0, 2.0
    ds = solve(
        {"units": "atomic", "mass": m, "potential": [{"shape": "linear", "field": 0.0}], "domain": {"boundary": "hard", "left": 0.0, "right": L}}
    )
    n = np.arange(1, 11)
    check(ds, n**2 * math.pi**2 * 0.5 / (m * L**2))
    assert list(ds.nodes.values) == list(range(10))


def test_harmonic_oscillator():
    """E_n = (n + 1/2) hbar omega (Griffiths sec. 2.3); omega given as hbar*omega in meV."""
    hw, m = 12.0, 0.2
    ds = solve({"units": "nm-meV", "mass": m, "potential": [{"shape": "harmonic", "center": 1.0, "omega": hw}]})
    check(ds, (np.arange(10) + 0.5) * hw)


def test_poschl_teller_sech2():
    """V = -D sech^2(x/a): E_n = -(hbar^2 / 2 m a^2) (lam - n)^2, lam (lam + 1) = 2 m D a^2 / hbar^2
    (Landau & Lifshitz, Quantum Mechanics, sec. 23, problem 4)."""
    D, a = 8.0, 1.3
    ds = solve({"units": "atomic", "potential": [{"shape": "sech2", "center": 0.0, "width": a, "depth": D}]})
    s = 2 * D * a**2
    lam = 0.5 * (-1 + math.sqrt(1 + 4 * s))
    exact = [-((lam - n) ** 2) / (2 * a**2) for n in range(int(math.ceil(lam))) if lam - n > 0]
    check(ds, exact)


def test_single_point_interaction():
    """E = -m alpha^2 / (2 hbar^2) (Griffiths sec. 2.5.2), atomic and nm-meV units."""
    ds = solve({"units": "atomic", "potential": [{"shape": "point", "center": 0.5, "strength": 1.7}]})
    check(ds, [-(1.7**2) / 2])
    m, alpha = 0.067, 150.0  # meV nm
    ds = solve({"units": "nm-meV", "mass": m, "potential": [{"shape": "point", "center": 0.0, "strength": alpha}]})
    hbar2 = 2 * C_NM  # hbar^2 / m_e
    check(ds, [-m * alpha**2 / (2 * hbar2)])


def test_morse_levels():
    """Morse: E_n = -D + hw (n + 1/2) - [hw (n + 1/2)]^2 / (4 D), hw = hbar a sqrt(2 D / m)
    (Landau & Lifshitz, Quantum Mechanics, sec. 23, problem 3)."""
    D, a = 5.0, 1.2
    ds = solve({"units": "atomic", "potential": [{"shape": "morse", "center": 0.0, "depth": D, "a": a}]})
    hw = a * math.sqrt(2 * D)
    nmax = int(math.floor(math.sqrt(2 * D) / a - 0.5))
    exact = [-D + hw * (n + 0.5) - (hw * (n + 0.5)) ** 2 / (4 * D) for n in range(nmax + 1)]
    check(ds, [e for e in exact if e < 0])


def test_triangular_well_airy():
    """V = F x for x > 0 with a wall at 0: E_n = -a_n (hbar^2 F^2 / 2m)^(1/3), a_n the zeros of Ai
    (scipy.special.ai_zeros as reference)."""
    F = 2.0
    ds = solve(
        {
            "units": "atomic",
            "potential": [{"shape": "linear", "field": F}],
            "domain": {"boundary": "hard", "left": 0.0, "right": 40.0},
            "solve": {"max_states": 6},
        }
    )
    zeros = ai_zeros(6)[0]
    check(ds, -zeros * (0.5 * F**2) ** (1 / 3))


def test_bendaniel_duke_unequal_masses():
    """Finite well with well mass m_w and barrier mass m_b: psi and psi'/m continuous gives
    even: (k/m_w) tan(k a) = kappa/m_b, odd: -(k/m_w) cot(k a) = kappa/m_b
    (Bastard, Phys. Rev. B 24, 5693 (1981)); roots by scipy brentq."""
    mw, mb, V0, w = 0.067, 0.092, 250.0, 7.0
    a = w / 2
    ds = solve(
        {
            "units": "nm-meV",
            "layer": [
                {"band_edge": V0, "mass": mb},
                {"thickness": w, "band_edge": 0.0, "mass": mw},
                {"band_edge": V0, "mass": mb},
            ],
        }
    )

    def f(E, odd):
        k = math.sqrt(mw * E / C_NM)
        kap = math.sqrt(mb * (V0 - E) / C_NM)
        if odd:
            return -(k / mw) * math.cos(k * a) - (kap / mb) * math.sin(k * a)
        return (k / mw) * math.sin(k * a) - (kap / mb) * math.cos(k * a)

    grid = np.linspace(1e-9, V0 - 1e-9, 20001)
    exact = []
    for odd in (False, True):
        vals = np.array([f(E, odd) for E in grid])
        for i in np.flatnonzero(np.sign(vals[1:]) != np.sign(vals[:-1])):
            exact.append(brentq(f, grid[i], grid[i + 1], args=(odd,), xtol=1e-14, rtol=1e-15))
    check(ds, sorted(exact))
    # a single-mass solve would differ by far more than the tolerance: the masses matter
    assert abs(ds.energy.values[0] - square_well_levels(V0, a, mw, C_NM)[0]) > 1e-3


def test_orthonormal_and_node_theorem():
    """States are orthonormal in the grid inner product, and state n has n nodes (oscillation theorem)."""
    ds = solve(
        {
            "units": "atomic",
            "potential": [
                {"shape": "gaussian", "center": -1.0, "sigma": 0.6, "depth": 6.0},
                {"shape": "square", "center": 1.4, "width": 1.5, "depth": 4.0},
            ],
        }
    )
    psi = ds.psi.values
    x = ds.x.values
    h = np.diff(x)
    w = np.zeros_like(x)
    w[1:-1] = 0.5 * (h[:-1] + h[1:])
    gram = (psi * w) @ psi.T
    assert np.max(np.abs(gram - np.eye(len(psi)))) < 1e-9
    assert list(ds.nodes.values) == list(range(len(psi)))
    assert np.all(ds.parity.values == 0)  # not mirror-symmetric


def test_archive_roundtrip_and_rerun(tmp_path):
    """A run written to NetCDF reads back with CF attributes, and its stored case reproduces the energies."""
    case = fdsolver.load_case(CASES / "coupled_wells.toml")
    ds = fdsolver.solve(case)
    path = fdsolver.write_dataset(ds, tmp_path / "run.nc")
    back = fdsolver.open_run(path)
    assert back.attrs["Conventions"] == "CF-1.13"
    assert back.attrs["case_text"] == case.text
    for name in back.variables:
        if name == "region_name":  # the text labels of the numeric region coordinate
            continue
        assert "units" in back[name].attrs and "long_name" in back[name].attrs, name
    np.testing.assert_array_equal(back.energy.values, ds.energy.values)
    rerun = fdsolver.solve(fdsolver.case_of_run(back))
    np.testing.assert_array_equal(rerun.energy.values, ds.energy.values)


def test_no_bound_state_is_a_result():
    ds = solve({"units": "atomic", "potential": [{"shape": "gaussian", "center": 0.0, "sigma": 1.0, "height": 2.0}]})
    assert ds.sizes["state"] == 0


@pytest.mark.parametrize("width", [1e-2, 1e-3, 1e-4])
def test_narrow_deep_square_well_needs_thousands_of_nodes(width):
    """A square well 1e-4 times narrower than the decay length (alpha = depth * width = 1, so 1/kappa ~ 1):
    energy against Griffiths sec. 2.6 to 1e-8, with a finest grid of thousands of nodes, not millions."""
    ds = solve({"units": "atomic", "potential": [{"shape": "square", "center": 0.0, "width": width, "depth": 1.0 / width}]})
    check(ds, square_well_levels(1.0 / width, width / 2, 1.0, 0.5))
    assert int(ds.level_nodes.values[-1]) < 20_000
