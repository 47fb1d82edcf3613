"""Periodic case files: ``[domain] boundary = "periodic"``, the keys of one period, and what is refused.

Contract (README.md, "Periodic structures"; common practice, no source): the components or layers
describe one period L; a component reaching outside the window wraps around; ``period`` defaults to
the layers' thicknesses; layers without a thickness at the ends are the cladding of finite stacks;
``[solve] bands`` and ``wavevectors`` are read; a period shorter than its components, layers that do
not add up to the period, a field (linear, harmonic, morse), walls given to a periodic case, period
keys given to a non-periodic one, and two point terms at one place of the period are refused with
one line naming the key.  A bound-state command given a periodic case says to run ``bands``.

Outside reference: the wrapped square wells are compared with the exact Kronig-Penney dispersion
relation (Kronig and Penney, Proc. R. Soc. A 130, 499 (1931); Kittel, Introduction to Solid State
Physics, ch. 7), solved here with scipy.optimize.brentq.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq

import fdsolver
from fdsolver.bloch.study import lattice_of, settings_of
from fdsolver.bloch.structure import band_edges
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"


def case(extra: dict | None = None, **domain):
    """An invented square-well lattice in atomic units (well 1 bohr wide, 10 hartree deep, period 3 bohr)."""
    data = {"units": "atomic", "params": {"L": 3.0, "c": 0.0},
            "potential": [{"shape": "square", "center": "c", "width": 1.0, "depth": 10.0}],
            "domain": {"boundary": "periodic", "period": "L", **domain}}
    data.update(extra or {})
    return fdsolver.case_from_dict(data)


def kp_edges(depth: float, a: float, b: float, n_bands: int) -> np.ndarray:
    """Band edges of square wells (width a, depth V0) and gaps (b) from the Kronig-Penney relation, hbar = m = 1.

    Inside the well K = sqrt(2 (E + V0)), in the gap k = sqrt(2 E) (E > 0) or kappa = sqrt(-2 E):
    cos(qL) = cos(K a) cosh(kappa b) + (kappa^2 - K^2) / (2 K kappa) sin(K a) sinh(kappa b), and the analytic
    continuation for E > 0.  Edges: the roots of D -+ 1 bracketed on a fine energy grid.
    """
    def d(e):
        e = np.asarray(e, dtype=float)
        kk = np.sqrt(2.0 * (e + depth))
        kap = np.sqrt(np.abs(2.0 * e)) + 1e-300
        ka, kb = kk * a, kap * b
        below = np.cos(ka) * np.cosh(kb) + (kap**2 - kk**2) / (2 * kk * kap) * np.sin(ka) * np.sinh(kb)
        above = np.cos(ka) * np.cos(kb) - (kk**2 + kap**2) / (2 * kk * kap) * np.sin(ka) * np.sin(kb)
        return np.where(e < 0, below, above)

    grid = np.linspace(-depth + 1e-9, 60.0, 400001)
    vals = d(grid)
    roots = []
    for s in (1.0, -1.0):
        f = vals - s
        idx = np.flatnonzero(np.sign(f[:-1]) != np.sign(f[1:]))
        roots += [brentq(lambda e, s=s: float(d(e)) - s, grid[i], grid[i + 1], xtol=1e-14, rtol=1e-15) for i in idx]
    return np.sort(roots)[: 2 * n_bands]


def test_a_periodic_case_reads_its_period_and_band_settings():
    c = case(start=-1.5, extra={"solve": {"bands": 3, "wavevectors": 17, "tolerance": 1e-10}})
    assert c.domain.periodic and c.domain.period == 3.0 and c.domain.start == -1.5
    s = settings_of(c)
    assert (s.n_bands, s.n_wavevectors, s.tolerance) == (3, 17, 1e-10)
    assert settings_of(case()).n_bands == 10  # the default of the bands command


@pytest.mark.parametrize("centre", [0.0, 1.4, 2.9, -7.3])
def test_components_reaching_outside_wrap_around(centre):
    """A well centred anywhere is the same lattice: its edges are those of Kronig-Penney (exact), to round-off."""
    lat = lattice_of(fdsolver.case_from_dict(
        {"units": "atomic", "potential": [{"shape": "square", "center": centre, "width": 1.0, "depth": 10.0}],
         "domain": {"boundary": "periodic", "period": 3.0, "start": 0.0}}))
    e = band_edges(lat, settings_of(case(), n_bands=3))
    ref = kp_edges(10.0, 1.0, 2.0, 3)
    got = np.sort(np.concatenate([e.band_bottom, e.band_top]))
    np.testing.assert_allclose(got, ref, atol=1e-9)


def test_a_periodic_stack_defaults_its_period_and_cladding():
    c = fdsolver.load_case(CASES / "superlattice.toml")
    stack = c.potential.stack
    assert c.domain.period == pytest.approx(8.0) and c.domain.start == 0.0
    assert [layer.name for layer in stack.layers] == ["barrier", "well", "barrier", "barrier"]
    assert math.isinf(stack.layers[0].thickness) and stack.layers[0].band_edge == 250.0  # the highest band edge
    clad = fdsolver.case_from_dict({
        "units": "nm-meV", "mass": 0.067, "domain": {"boundary": "periodic"},
        "layer": [{"name": "clad", "band_edge": 300.0}, {"thickness": 5.0, "band_edge": 0.0},
                  {"thickness": 3.0, "band_edge": 250.0}]})
    names = [layer.band_edge for layer in clad.potential.stack.layers]
    assert names == [300.0, 0.0, 250.0, 300.0] and clad.domain.period == 8.0  # one cladding serves both sides


BAD = {
    "period too short for one component": (
        {"potential": [{"shape": "square", "center": 0.0, "width": 4.0, "depth": 1.0}]}, {"period": 3.0},
        "potential[1].width", "longer than the period"),
    "components spanning more than the period": (
        {"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 1.0},
                       {"shape": "square", "center": 3.0, "width": 1.0, "depth": 1.0}]}, {"period": 3.0},
        "domain.period", "more than the period"),
    "two points at one place of the period": (
        {"potential": [{"shape": "point", "center": 0.0, "strength": 1.0},
                       {"shape": "point", "center": 3.0, "strength": 1.0}]}, {"period": 3.0},
        "domain.period", "same place"),
    "a field across the lattice": (
        {"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 1.0},
                       {"shape": "linear", "field": 0.1}]}, {"period": 3.0}, "potential[2].shape", "does not repeat"),
    "a harmonic trap": (
        {"potential": [{"shape": "harmonic", "omega": 1.0}]}, {"period": 3.0}, "potential[1].shape", "does not repeat"),
    "no period": (
        {"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 1.0}]}, {}, "domain.period",
        "needs its period"),
    "walls in a periodic case": (
        {"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 1.0}]}, {"period": 3.0, "left": -2.0},
        "domain.left", "no walls"),
    "layers that do not add up to the period": (
        {"layer": [{"thickness": 5.0, "band_edge": 0.0}, {"thickness": 3.0, "band_edge": 1.0}]}, {"period": 7.0},
        "layer", "not the period"),
    "a negative period": (
        {"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 1.0}]}, {"period": -3.0},
        "domain.period", "must be positive"),
}


@pytest.mark.parametrize("name", list(BAD))
def test_bad_periodic_cases_name_the_key(name, tmp_path):
    extra, domain, key, words = BAD[name]
    data = {"units": "atomic", **extra, "domain": {"boundary": "periodic", **domain}}
    with pytest.raises(fdsolver.CaseError) as err:
        fdsolver.case_from_dict(data, path="lattice.toml")
    assert err.value.key == key and words in str(err.value) and err.value.file == "lattice.toml"


def test_period_keys_need_a_periodic_boundary():
    with pytest.raises(fdsolver.CaseError, match="belongs to a periodic case") as err:
        fdsolver.case_from_dict({"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 1.0}],
                                 "domain": {"period": 3.0}})
    assert err.value.key == "domain.period"


@pytest.mark.parametrize("key, value", [("bands", 0), ("bands", 2.5), ("wavevectors", 1), ("wavevectors", True)])
def test_band_settings_are_whole_numbers(key, value):
    with pytest.raises(fdsolver.CaseError) as err:
        case(extra={"solve": {key: value}})
    assert err.value.key == f"solve.{key}"


@pytest.mark.parametrize("command", [["solve"], ["sweep", "--vary", "d=1:3:3", "--executor", "serial"],
                                     ["threshold", "--vary", "d=1:3"]])
def test_bound_state_commands_point_to_bands(command, capsys):
    assert main([command[0], str(CASES / "delta_comb.toml"), *command[1:]]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "domain.boundary" in err[0] and "fdsolver bands" in err[0]


def test_bands_of_a_case_that_is_not_periodic(capsys):
    assert main(["bands", str(CASES / "coupled_wells.toml")]) == 2
    err = capsys.readouterr().err
    assert "domain.boundary" in err and 'boundary = "periodic"' in err
