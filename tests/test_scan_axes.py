"""One axis parser for sweeps, validity maps and threshold searches; the units of a param; names a scan may not take.

The units of a param follow from dimensional analysis of the keys it is given
to (common practice, no source): a param that enters a length linearly
(alone, times a number, in a sum) is a length; one multiplied by another
param has no dimension we can tell.  The dimensions of the keys are those the
shape registry and the case schema declare.  UDUNITS-2 spellings are checked
with cf-units.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import fdsolver
from fdsolver.cli import main
from fdsolver.errors import CaseError
from fdsolver.scans.axes import Extra, param_units, parse_axes, parse_axis, parse_interval
from fdsolver.scans.maps import map_axes
from fdsolver.scans.sweep import plan_sweep, sweep_axes

CASES = Path(__file__).resolve().parents[1] / "cases"
BOHR_M = "5.29177210544e-11 m"  # CODATA 2022 Bohr radius in metres (scipy.constants, the unit system's source)


def case(units="nm-meV", **extra):
    data = {
        "units": units, "mass": 0.067,
        "params": {"d": 2.0, "w": 3.0, "V0": 100.0, "s": 1.0, "F": 0.1, "m": 0.07, "level": 1.0, "energy": 5.0},
        "potential": [
            {"shape": "square", "center": "-(d + w)/2", "width": "w", "depth": "V0"},
            {"shape": "square", "center": "(d + w)/2", "width": "w", "depth": "V0*s"},
        ],
    }
    data.update(extra)
    return fdsolver.case_from_dict(data)


# ----------------------------------------------------------- one grammar
@pytest.mark.parametrize("text, spacing, values", [
    ("d=1:3:5", "linear", np.linspace(1, 3, 5)),
    ("d=1:100:3:log", "log", [1.0, 10.0, 100.0]),
    ("d=1:3:3:lin", "linear", [1.0, 2.0, 3.0]),
    ("d=1, 2.5,4", "list", [1.0, 2.5, 4.0]),
])
def test_the_same_grammar_for_sweeps_and_maps(text, spacing, values):
    c = case()
    sweep_axis = parse_axis(text, c)
    map_axis = map_axes(c, [text, "w=1:2:2"], replacing=False)[0]
    for ax in (sweep_axis, map_axis):
        assert ax.spacing == spacing and np.allclose(ax.values, values, rtol=1e-14, atol=0)
    assert sweep_axis.key == "--vary" and map_axis.key == "--map"


def test_the_map_width_axis_is_log_and_positive_by_default():
    pair = fdsolver.load_case(CASES / "impurity_pair.toml")
    width, d = map_axes(pair, ["width=0.01:1:3", "d=8:12:3"], replacing=True)
    assert width.spacing == "log" and np.allclose(width.values, [0.01, 0.1, 1.0], rtol=1e-14)
    assert not width.param and width.units == "nm" and d.param and d.spacing == "linear"
    with pytest.raises(CaseError, match="'width' must be > 0"):
        map_axes(pair, ["width=0:1:3", "d=8:12:3"], replacing=True)
    with pytest.raises(CaseError, match="neither a param of the case nor 'width'"):
        map_axes(pair, ["widht=0.1:1:3", "d=8:12:3"], replacing=True)
    with pytest.raises(CaseError, match="not a param"):  # no width axis when the case's own wells are compared
        map_axes(pair, ["width=0.1:1:3", "d=8:12:3"], replacing=False)


@pytest.mark.parametrize("text, words", [
    ("V=1:2:3", "did you mean 'V0'"), ("d=3:1:5", "reversed"), ("d=1:2:1", "COUNT 1"), ("d=1:2:3:cubic", "START:STOP:COUNT"),
    ("d=1:2:3000", "at most 2000"), ("d=-1:2:3:log", "log spacing"), ("d", "NAME="),
])
def test_map_axes_get_the_sweep_messages(text, words):
    with pytest.raises(CaseError, match=words) as info:
        map_axes(case(), [text, "w=1:2:2"], replacing=False)
    assert info.value.key == "--map"


def test_interval():
    assert parse_interval("d=0.5:2", case()) == ("d", 0.5, 2.0)
    with pytest.raises(CaseError, match="LO:HI"):
        parse_interval("d=0.5:2:3", case())


# ------------------------------------------------------------- units
@pytest.mark.parametrize("name, units, units_name", [
    ("d", "nm", "nm"),     # in a sum inside a length: -(d + w)/2
    ("w", "nm", "nm"),     # a length twice, alone and in the sum
    ("V0", "meV", "meV"),  # alone in a depth; V0*s is a product, which tells nothing
    ("s", "", ""),         # only in a product with another param: not known
])
def test_units_from_the_keys_a_param_enters_linearly(name, units, units_name):
    assert param_units(case(), name) == (units, units_name)


def test_units_in_atomic_cases_are_udunits_strings():
    c = case("atomic")
    assert param_units(c, "d") == (BOHR_M, "bohr")
    assert param_units(c, "V0")[1] == "hartree" and param_units(c, "V0")[0].endswith(" J")


def test_units_of_other_dimensions_come_from_the_registry():
    c = fdsolver.case_from_dict({
        "units": "nm-meV", "mass": "m", "params": {"F": 1.0, "a": 0.5, "m": 0.067, "alpha": 10.0, "L": 50.0},
        "potential": [{"shape": "linear", "field": "F"}, {"shape": "morse", "depth": 20.0, "a": "a"},
                      {"shape": "point", "center": 0.0, "strength": "2*alpha"}],
        "domain": {"boundary": "hard", "left": "-L", "right": "L"},
    })
    assert param_units(c, "F") == ("meV/nm", "meV/nm")
    assert param_units(c, "a") == ("1/nm", "1/nm")
    assert param_units(c, "alpha") == ("meV nm", "meV nm")
    assert param_units(c, "m") == ("1", "m_e")  # masses are in units of the free-electron mass
    assert param_units(c, "L") == ("nm", "nm")  # from [domain], through the schema


def test_uses_that_disagree_leave_the_units_undeclared():
    c = case(potential=[{"shape": "square", "center": "d", "width": 1.0, "depth": "d"}])
    assert param_units(c, "d") == ("", "")


def test_declared_units_win_and_are_checked():
    c = case(sweep={"units": {"s": "1", "d": "angstrom"}})
    assert param_units(c, "s") == ("1", "1") and param_units(c, "d") == ("angstrom", "angstrom")
    bad = case(sweep={"units": {"d": "bohr"}})  # UDUNITS-2 knows no bohr
    with pytest.raises(CaseError, match="UDUNITS-2") as info:
        plan_sweep(bad, sweep_axes(["w=1,2"], bad))
    assert info.value.key == "sweep.units.d"
    stray = case(sweep={"units": {"dd": "nm"}})
    with pytest.raises(CaseError, match="did you mean 'd'") as info:
        plan_sweep(stray, sweep_axes(["w=1,2"], stray))
    assert info.value.key == "sweep.units.dd"


def test_bad_declared_units_exit_2_before_any_work(tmp_path, capsys):
    text = (CASES / "double_square.toml").read_text().replace('units = { d = "nm"', 'units = { d = "nanometre per"')
    path = tmp_path / "c.toml"
    path.write_text(text)
    rc = main(["sweep", str(path), "--vary", "d=1,2", "-o", str(tmp_path / "s.nc"), "--executor", "serial", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "sweep.units.d" in err and len(err.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.toml"]


# ------------------------------------------------------ reserved names
@pytest.mark.parametrize("name", ["energy", "state"])
def test_a_param_named_like_a_result_variable_is_refused_up_front(tmp_path, capsys, monkeypatch, name):
    data = {"units": "nm-meV", "params": {name: 2.0},
            "potential": [{"shape": "square", "center": 0.0, "width": name, "depth": 50.0}]}
    path = tmp_path / "c.toml"
    from fdsolver.input.case import dumps_case

    path.write_text(dumps_case(data))
    import fdsolver.scans.sweep as sw

    monkeypatch.setattr(sw, "solve_points", lambda *a: pytest.fail("a point was solved"))
    rc = main(["sweep", str(path), "--vary", f"{name}=1,2", "-o", str(tmp_path / "s.nc"), "--executor", "serial", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "--vary" in err and f"'{name}'" in err and "rename" in err and len(err.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.toml"]


def test_a_map_axis_named_like_a_map_variable_is_refused():
    c = case(params={"deviation": 1.0, "d": 2.0},
             potential=[{"shape": "point", "center": "-d/2", "strength": "deviation"},
                        {"shape": "point", "center": "d/2", "strength": 1.0}])
    with pytest.raises(CaseError, match="rename") as info:
        map_axes(c, ["deviation=1:2:2", "width=0.1:1:2"], replacing=True)
    assert info.value.key == "--map"


def test_names_of_other_archive_kinds_are_free():
    # "level" is a dimension of solve archives only: a sweep may scan it
    c = case(potential=[{"shape": "square", "center": 0.0, "width": "level", "depth": 100.0}])
    ds = fdsolver.sweep(c, ["level=1,2"], executor="serial")
    assert ds.energy.dims == ("level", "state")


def test_a_fixed_param_that_is_also_swept_takes_the_swept_values():
    fixed = fdsolver.load_case(CASES / "double_square.toml", d=4.0, depth=120.0)
    ds = fdsolver.sweep(fixed, ["d=1,3"], executor="serial")
    ref = fdsolver.sweep(fdsolver.load_case(CASES / "double_square.toml", depth=120.0), ["d=1,3"], executor="serial")
    np.testing.assert_array_equal(ds.energy.values, ref.energy.values)
    assert json.loads(ds.attrs["fixed_params"]) == {"depth": 120.0}


def test_parse_axes_refuses_a_param_twice_and_reserved_names():
    with pytest.raises(CaseError, match="swept twice"):
        parse_axes(["d=1,2", "d=3,4"], case())
    with pytest.raises(CaseError, match="rename"):
        parse_axes(["level=1,2"], case(), reserved={"level"})


def test_an_extra_axis_needs_no_param():
    ax = parse_axis("q=1:2:2", case(), extra={"q": Extra("nm", "nm", "a study's own axis")})
    assert not ax.param and ax.long_name == "a study's own axis"
