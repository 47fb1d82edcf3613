"""Units read without pint (fdsolver.input.quantities.EXACT_UNITS), checked against pint's own conversions.

Reference: pint's unit registry (a general-purpose units library), which converts every other unit.  The
table's sizes are formed from the SI prefixes and the exact elementary charge (SI 2019), so the two agree to a
few ulp; ``m_e`` is the electron mass of fdsolver.model.units (CODATA 2022, as scipy.constants has it).  pint
0.25.3, installed here, carries the same value; a release within the declared floor (pint >= 0.23) may carry an
earlier CODATA release (not checked here), so ``m_e`` is compared at 1e-9.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import fdsolver
from fdsolver.errors import CaseError
from fdsolver.input.quantities import (ELECTRIC, EXACT_UNITS, FIELD, _pint_si, _si_of, dimension_of_unit,
                                       to_case_units)
from fdsolver.model.units import UNIT_SYSTEMS

from test_import_budget import RUN_ENTRY_POINT, loaded_by

NUMBERS = (1.0, 0.3, 20.0, 100.0, -7.5, 0.067, 2.5e-3, 1234.5678)


@pytest.mark.parametrize("unit", sorted(EXACT_UNITS))
@pytest.mark.parametrize("system", ["nm-meV", "atomic"])
def test_each_unit_agrees_with_pint(unit, system):
    kind, _ = EXACT_UNITS[unit]
    dim = FIELD if kind == ELECTRIC else kind
    units = UNIT_SYSTEMS[system]
    rtol = 1e-9 if unit == "m_e" else 4 * np.finfo(float).eps  # m_e: pint's CODATA release may differ (docstring)
    for carrier in (("electron", "heavy_hole") if kind == ELECTRIC else ("electron",)):
        for x in NUMBERS:
            ours = to_case_units(x, unit, dim, units, carrier)
            theirs = float(_pint_si(x, unit, dim, carrier, None, "k")) / _si_of(units)[dim]
            assert ours == pytest.approx(theirs, rel=rtol, abs=0.0), (unit, system, carrier, x)
    assert dimension_of_unit(unit) == dim


def test_a_value_in_the_case_unit_comes_back_unchanged():
    nm_mev = UNIT_SYSTEMS["nm-meV"]
    for x in NUMBERS:
        assert to_case_units(x, "meV", "energy", nm_mev) == x
        assert to_case_units(x, "nm", "length", nm_mev) == x
        assert to_case_units(x, "meV/nm", "energy/length", nm_mev) == x
        assert to_case_units(x, "m_e", "mass", nm_mev) == x
        assert to_case_units(x, "K", "temperature", nm_mev) == x


def test_a_field_acts_on_holes_with_the_opposite_sign():
    # 1 kV/cm = 0.1 meV/nm for an electron (e * 1e5 V/m = 1.602176634e-14 J/m; common practice, no source)
    nm_mev = UNIT_SYSTEMS["nm-meV"]
    assert to_case_units(20.0, "kV/cm", FIELD, nm_mev) == pytest.approx(2.0, rel=1e-15)
    assert to_case_units(20.0, "kV/cm", FIELD, nm_mev, "light_hole") == pytest.approx(-2.0, rel=1e-15)


@pytest.mark.parametrize("value, dim, needle", [
    ("500 nm", "energy", "not an energy"),            # a wavelength is no energy: pint decides and refuses
    ("20 kg", FIELD, "not an energy per length"),
    ("3 eV", "length", "not a length"),
])
def test_a_table_unit_of_another_dimension_is_refused_as_before(value, dim, needle):
    number, unit = value.split()
    with pytest.raises(CaseError, match=needle):
        to_case_units(float(number), unit, dim, UNIT_SYSTEMS["nm-meV"], file="c.toml", key="k")


def test_a_spectroscopic_energy_still_goes_through_pint():
    # 1/cm is in the table as an inverse length; as an energy it is h c / lambda (pint's spectroscopy context)
    import scipy.constants as sc

    e = to_case_units(1000.0, "1/cm", "energy", UNIT_SYSTEMS["nm-meV"])
    assert e == pytest.approx(sc.h * sc.c * 1e5 / sc.e * 1e3, rel=1e-9)  # source: scipy.constants


#: a well and a field given only in table units, between walls (invented)
TABLE_UNITS = ('title = "a well given with units (invented)"\nunits = "nm-meV"\nmass = "0.067 m_e"\n'
               '[[potential]]\nshape = "square"\ncenter = "0 nm"\nwidth = "60 angstrom"\ndepth = "0.2 eV"\n'
               '[[potential]]\nshape = "linear"\nfield = "15 kV/cm"\n'
               '[domain]\nboundary = "hard"\nleft = "-20 nm"\nright = "20 nm"\n')


def test_a_case_in_table_units_loads_no_pint(tmp_path):
    case = tmp_path / "units.toml"
    case.write_text(TABLE_UNITS)
    loaded = loaded_by(RUN_ENTRY_POINT, json.dumps(["solve", str(case)]))
    assert "fdsolver" in loaded and "numpy" in loaded  # the solve ran
    assert "pint" not in loaded


def test_a_case_in_table_units_solves_as_its_plain_twin():
    plain = TABLE_UNITS.replace('"0.067 m_e"', "0.067").replace('"0 nm"', "0.0").replace('"60 angstrom"', "6.0")
    plain = plain.replace('"0.2 eV"', "200.0").replace('"15 kV/cm"', "1.5").replace('"-20 nm"', "-20.0")
    plain = plain.replace('"20 nm"', "20.0")
    a = fdsolver.solve_case(fdsolver.case_from_text(TABLE_UNITS))
    b = fdsolver.solve_case(fdsolver.case_from_text(plain))
    assert a.energy.size == b.energy.size > 0
    np.testing.assert_allclose(a.energy, b.energy, rtol=1e-12, atol=0.0)


@pytest.mark.parametrize("key, value", [("band_gap", "1500 meV"), ("electron_mass", "0.07 m_e"),
                                        ("lattice_constant", "0.565 nm"), ("varshni_beta", "204 K"),
                                        ("spin_orbit", "0.34 eV")])
def test_material_overrides_in_table_units_agree_with_pint(key, value):
    from fdsolver.input.quantities import _library_overrides, _quantity
    from fdsolver.model.materials.parameters import MaterialParameters

    units = MaterialParameters.UNITS
    ours = _library_overrides({key: value}, units, None, "layer[1].overrides")[key]
    number, unit = value.split()
    target = {"m_e": "electron_mass"}.get(units[key], units[key])
    theirs = float(_quantity(float(number), unit, None, "k").to(target).magnitude)
    rtol = 1e-9 if "m_e" in value else 4 * np.finfo(float).eps  # pint's CODATA release may differ (docstring)
    assert ours == pytest.approx(theirs, rel=rtol, abs=0.0)
