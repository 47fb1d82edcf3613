"""Case files with values in physical units and layers of named materials, read into plain numbers.

Outside references, named per check:

* SI definitions: 1 eV is the energy e x 1 V, so a carrier of charge e in a field of 1 kV/cm
  = 1e5 V/m gains 1e5 eV per metre = 0.1 meV/nm (the SI brochure, 9th ed., 2019: the electronvolt);
  1 angstrom = 0.1 nm;
* CODATA through scipy.constants (a general-purpose reference library): the Bohr radius, the
  Hartree energy, h and c for a wavenumber's energy E = h c / lambda;
* the electron's charge is -e, a hole's +e: in the solver's picture (energies upward for the carrier
  itself) one field tilts the two pictures with opposite slopes (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

import fdsolver
from fdsolver.errors import CaseError

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
X = np.linspace(-7.0, 9.0, 5)


def _linear(field, units="nm-meV", carrier=None, **top) -> dict:
    data = {"title": "tilt (invented)", "potential": [{"shape": "linear", "field": field}], **top}
    if units:
        data["units"] = units
    if carrier:
        data["carrier"] = carrier
    return data


def test_field_in_kv_per_cm_is_a_tenth_of_mev_per_nm_si_definition():
    slope = fdsolver.case_from_dict(_linear("20 kV/cm")).potential.value(X) / X
    assert slope == pytest.approx(np.full_like(X, 2.0), rel=1e-12)  # 20 x 0.1 meV/nm
    assert fdsolver.case_from_dict(_linear("2 meV/nm")).potential.value(X) == pytest.approx(2.0 * X, rel=1e-12)


def test_field_acts_with_opposite_sign_in_the_hole_picture_common_practice():
    e = fdsolver.case_from_dict(_linear("20 kV/cm", carrier="electron")).potential.value(X)
    h = fdsolver.case_from_dict(_linear("20 kV/cm", carrier="heavy_hole")).potential.value(X)
    assert h == pytest.approx(-e, rel=1e-12)
    # an energy slope is the carrier's own: the same in both pictures
    assert fdsolver.case_from_dict(_linear("2 meV/nm", carrier="heavy_hole")).potential.value(X) == pytest.approx(2.0 * X)


def test_lengths_and_energies_with_units_scipy_constants():
    data = {"title": "well (invented)", "units": "atomic",
            "potential": [{"shape": "square", "center": "0 nm", "width": "80 angstrom", "depth": "0.24 eV"}]}
    case = fdsolver.case_from_dict(data)
    shape = case.potential.shapes[0]
    bohr_nm = sc.physical_constants["Bohr radius"][0] * 1e9
    hartree_ev = sc.physical_constants["Hartree energy in eV"][0]
    assert shape.width == pytest.approx(8.0 / bohr_nm, rel=1e-10)
    assert -case.potential.value(np.array([0.0]))[0] == pytest.approx(0.24 / hartree_ev, rel=1e-10)  # the well floor


def test_wavenumber_is_a_spectroscopic_energy_scipy_constants():
    data = {"title": "well (invented)", "units": "nm-meV",
            "potential": [{"shape": "square", "center": 0, "width": 5, "depth": "1000 cm^-1"}]}
    depth = -fdsolver.case_from_dict(data).potential.value(np.array([0.0]))[0]
    assert depth == pytest.approx(sc.h * sc.c * 1e5 / sc.e * 1e3, rel=1e-9)  # h c (1e5 m^-1) in meV


@pytest.mark.parametrize("value, needle", [
    ("20 kg", "not an energy per length or an electric field"),
    ("20 furlongz", "not a unit pint knows"),
])
def test_bad_field_units_one_line(value, needle):
    with pytest.raises(CaseError) as err:
        fdsolver.case_from_dict(_linear(value))
    text = str(err.value)
    assert "\n" not in text and needle in text and "potential[1].field" in text


def test_a_wavelength_is_not_an_energy():
    data = {"title": "well (invented)", "units": "nm-meV",
            "potential": [{"shape": "square", "center": 0, "width": 5, "depth": "500 nm"}]}
    with pytest.raises(CaseError, match="not an energy"):
        fdsolver.case_from_dict(data)


def test_no_units_plain_numbers_run_atomic_with_a_note():
    case = fdsolver.case_from_dict(_linear(0.01, units=None))
    assert case.units.name == "atomic"
    assert len(case.notes) == 1 and "atomic" in case.notes[0] and "potential[1].field" in case.notes[0]


def test_no_units_but_unit_values_run_nm_mev():
    case = fdsolver.case_from_dict(_linear("20 kV/cm", units=None))
    assert case.units.name == "nm-meV"
    assert not any("atomic" in n for n in case.notes)


def test_param_with_a_unit_keeps_it_for_overrides(tmp_path):
    path = tmp_path / "tilt.toml"
    path.write_text('title = "tilt (invented)"\nunits = "nm-meV"\n[params]\nF = "10 kV/cm"\n'
                    '[[potential]]\nshape = "linear"\nfield = "F"\n')
    assert fdsolver.load_case(path).potential.value(X) == pytest.approx(1.0 * X, rel=1e-12)
    assert fdsolver.load_case(path, F=30).potential.value(X) == pytest.approx(3.0 * X, rel=1e-12)  # read in kV/cm


def test_material_case_reads_band_edges_from_the_library():
    """The offset of the GaAs/Al0.3Ga0.7As well equals the library's conduction-band-edge difference."""
    from fdsolver.model.materials import load_library, stack_materials

    case = fdsolver.load_case(CASES / "algaas_well.toml")
    mats = stack_materials([{"material": "GaAs", "x": None, "overrides": {}},
                            {"material": "AlGaAs", "x": 0.3, "overrides": {}}], 300.0, load_library())
    offset_mev = 1e3 * (mats[1].conduction_band_edge - mats[0].conduction_band_edge)
    layers = case.potential.stack.layers
    assert layers[0].band_edge - layers[1].band_edge == pytest.approx(offset_mev, rel=1e-12)
    assert layers[1].mass == pytest.approx(mats[0].electron_mass)
    assert case.units.name == "nm-meV" and case.carrier == "electron" and case.temperature == 300.0


def test_material_layer_refuses_raw_band_edge():
    data = {"title": "mixed (invented)", "units": "nm-meV",
            "layer": [{"material": "AlGaAs", "x": 0.3}, {"material": "GaAs", "thickness": 10, "band_edge": 0.0},
                      {"material": "AlGaAs", "x": 0.3}]}
    with pytest.raises(CaseError, match="layer\\[2\\].band_edge"):
        fdsolver.case_from_dict(data)


@pytest.mark.parametrize("carrier", ["electron", "heavy_hole"])
def test_states_reported_on_the_absolute_band_scale(carrier):
    """Electrons sit above the well's conduction-band edge, holes below its valence-band maximum, by their
    confinement energy (the hole picture mirrors energies: common practice, no source)."""
    from fdsolver.model.materials import load_library, stack_materials

    data = {"title": "well (invented)", "units": "nm-meV", "carrier": carrier,
            "layer": [{"material": "AlGaAs", "x": 0.3}, {"material": "GaAs", "thickness": "10 nm"},
                      {"material": "AlGaAs", "x": 0.3}], "solve": {"max_states": 2}}
    ds = fdsolver.solve(fdsolver.case_from_dict(data))
    gaas = stack_materials([{"material": "GaAs", "x": None, "overrides": {}}], 300.0, load_library())[0]
    e = ds.energy.values
    assert np.all(e > 0)
    if carrier == "electron":
        expected = 1e3 * gaas.conduction_band_edge + e
    else:
        expected = 1e3 * gaas.valence_band_offset - e
    np.testing.assert_allclose(ds.band_energy.values, expected, rtol=1e-12)
    assert ds.band_energy.attrs["units"] == "meV"


def test_override_with_a_wrong_unit_is_refused():
    """A mass typed in kg (a unit slip) is converted by pint to ~1e29 m_e and refused with the layer's key."""
    data = {"title": "slip (invented)", "units": "nm-meV",
            "layer": [{"material": "AlGaAs", "x": 0.3},
                      {"material": "GaAs", "thickness": 10, "overrides": {"electron_mass": "0.07 kg"}},
                      {"material": "AlGaAs", "x": 0.3}]}
    with pytest.raises(CaseError, match="electron_mass") as err:
        fdsolver.case_from_dict(data)
    assert "layer[2]" in str(err.value) and "outside the accepted" in str(err.value)
