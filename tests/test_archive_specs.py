"""The variable table behind every archive: its rows are well formed, builders follow it, readers check it.

Contract (DEVELOPERS.md, "Archives"; common practice, no source): adding a
variable to a kind is one row; the reader refuses an archive whose variables
do not match the rows of its kind; a solve archive's regions are a numeric
coordinate with a text label variable (the CF pattern for labels, CF
conventions sec. 6.1), and no global attribute is empty.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
import pytest

import fdsolver
from fdsolver.io import specs
from fdsolver.io.archive import write_dataset
from fdsolver.io.units import units_of
from fdsolver.model.units import UNIT_SYSTEMS
from fdsolver.report._common import label, units_of as shown_units

CASES = Path(__file__).resolve().parents[1] / "cases"
ROWS = [(kind, row) for kind in specs.KINDS.values() for row in kind.rows]


@pytest.mark.parametrize("kind, row", ROWS, ids=[f"{k.name}.{r.name}" for k, r in ROWS])
def test_every_row_is_well_formed(kind, row):
    assert all(isinstance(d, str) and d for d in row.dims)
    assert row.dtype == "str" or np.dtype(row.dtype).kind in "fi"
    assert row.long_name
    if row.units not in (None, specs.PARAM):
        for system in UNIT_SYSTEMS.values():
            units_of(row.units, system)  # a dimension the unit systems can spell (raises otherwise)
    assert (row.units is None) == (row.dtype == "str")
    if row.flags:
        assert len(row.flag_values()) == len(row.meanings()) and row.dtype.startswith("i")
        assert all(" " not in m for m in row.meanings())
    assert [r.name for r in kind.rows].count(row.name) == 1


def test_dimensions_compose_as_udunits():
    nm, atomic = UNIT_SYSTEMS["nm-meV"], UNIT_SYSTEMS["atomic"]
    assert units_of("energy*length", nm) == ("meV nm", "meV nm")
    assert units_of("energy/length", nm) == ("meV/nm", "meV/nm")
    assert units_of("1/length", atomic) == (f"1/({atomic.length_udunits})", "1/bohr")
    assert units_of("mass", atomic) == ("1", "m_e")


@pytest.fixture(scope="module")
def solved():
    case = fdsolver.load_case(CASES / "coupled_wells.toml")
    return case, fdsolver.solve_case(case)


def test_one_row_adds_a_variable(solved, monkeypatch):
    case, sol = solved
    row = specs.Var("node_parity", ("state",), "i1", "parity of the node count", source=lambda s: s.nodes % 2)
    solve = specs.KINDS["solve"]
    monkeypatch.setitem(specs.KINDS, "solve", dataclasses.replace(solve, rows=solve.rows + (row,)))
    ds = fdsolver.api.solve(case)
    np.testing.assert_array_equal(ds.node_parity.values, sol.nodes % 2)
    assert ds.node_parity.dtype == np.int8 and ds.node_parity.attrs == {"long_name": "parity of the node count", "units": "1"}


def test_region_is_numeric_with_labels_and_no_attribute_is_empty(solved, tmp_path):
    case, sol = solved
    back = fdsolver.open_run(write_dataset(fdsolver.api.solve(case), tmp_path / "r.nc"))
    assert back.region.dtype.kind == "i" and list(back.region.values) == list(range(len(sol.region_names)))
    assert list(back.region_name.values) == list(sol.region_names) and back.region_name.dims == ("region",)
    assert "institution" not in back.attrs
    assert all(str(v) != "" for k, v in back.attrs.items() if k not in ("messages", "case_file"))


def test_units_of_swept_params_and_their_labels(tmp_path):
    atomic = fdsolver.case_from_dict({"units": "atomic", "params": {"d": 2.0, "s": 1.0},
                                      "potential": [{"shape": "square", "center": "d", "width": 1.0, "depth": "2*s*s"}]})
    ds = fdsolver.sweep(atomic, ["d=1,2", "s=1,1.5"], executor="serial")
    assert ds.d.attrs["units"] == UNIT_SYSTEMS["atomic"].length_udunits and ds.d.attrs["units_name"] == "bohr"
    assert label(ds, "d") == "d [bohr]" and shown_units(ds, "d") == "bohr"
    assert ds.s.attrs["units"] == "1" and "not declared" in ds.s.attrs["units_note"]
    assert label(ds, "s") == "s [units not declared]" and shown_units(ds, "s") == ""
    assert label(ds, "nodes") == "nodes [1]"


# ---------------------------------------------------------------- reading
@pytest.fixture(scope="module")
def good(tmp_path_factory, solved):
    case, _ = solved
    return write_dataset(fdsolver.api.solve(case), tmp_path_factory.mktemp("specs") / "good.nc")


@pytest.mark.parametrize("damage, words", [
    (lambda ds: ds.assign(energy=(("x",), np.zeros(ds.sizes["x"]))), "energy .* expected f8 over \\(state\\)"),
    (lambda ds: ds.assign(nodes=(("state",), np.array(["a"] * ds.sizes["state"]))), "nodes .* expected i4"),
    (lambda ds: ds.drop_vars("level_nodes"), "lacks the variable\\(s\\) level_nodes"),
    (lambda ds: ds.assign(mass=(("state",), np.ones(ds.sizes["state"]))), "mass .* over \\(x\\)"),
])
def test_reader_refuses_what_the_table_does_not_allow(good, tmp_path, damage, words):
    bad = tmp_path / "bad.nc"
    write_dataset(damage(fdsolver.open_run(good)), bad)
    with pytest.raises(fdsolver.ArchiveError, match=words) as info:
        fdsolver.open_run(bad)
    assert "bad.nc" in str(info.value)


def test_reader_needs_the_scanned_axes_of_a_scan(tmp_path):
    ds = fdsolver.sweep(CASES / "double_square.toml", "d=1,2", executor="serial")
    ok = fdsolver.open_run(write_dataset(ds, tmp_path / "s.nc"))
    assert ok.energy.dims == ("d", "state")
    ds.attrs["swept_params"] = json.dumps(["depth"])
    with pytest.raises(fdsolver.ArchiveError, match="energy .* over \\(depth, state\\)"):
        fdsolver.open_run(write_dataset(ds, tmp_path / "t.nc"))
    del ds.attrs["swept_params"]
    with pytest.raises(fdsolver.ArchiveError, match="no readable swept_params"):
        fdsolver.open_run(write_dataset(ds, tmp_path / "u.nc"))


def test_kind_of_an_archive():
    assert specs.kind_of({"fdsolver_kind": "delta_check", "delta_mode": "replace_map"}).name == "delta_map"
    assert specs.kind_of({"fdsolver_kind": "delta_check", "delta_mode": "from_finite"}).name == "delta_check"
    assert specs.kind_of({"fdsolver_kind": "spectrum"}) is None
