"""The physical constants of the unit systems, against scipy.constants (CODATA 2022 as scipy 1.17 carries it)."""

import scipy.constants as sc

from fdsolver.model import units


def test_constants_are_codata_as_scipy_has_them():
    # source: scipy.constants (CODATA recommended values; h and e exact in the 2019 SI)
    assert units.PLANCK == sc.h
    assert units.ELEMENTARY_CHARGE == sc.e
    assert units.ELECTRON_MASS == sc.m_e
    assert units.BOHR_RADIUS == sc.physical_constants["Bohr radius"][0]
    assert units.HARTREE_ENERGY == sc.physical_constants["Hartree energy"][0]
    assert units.SPEED_OF_LIGHT == sc.c
    assert units.BOLTZMANN == sc.k
    assert units.VACUUM_PERMITTIVITY == sc.epsilon_0
    assert units.HBAR == sc.hbar


def test_kinetic_constant_in_nm_mev():
    # hbar^2 / (2 m_e) in meV nm^2 from scipy's constants, computed independently here
    expected = sc.hbar**2 / (2.0 * sc.m_e) / (sc.e * 1e-3) / 1e-18
    assert abs(units.UNIT_SYSTEMS["nm-meV"].hbar2_2me - expected) <= 4e-16 * expected
    assert units.UNIT_SYSTEMS["atomic"].hbar2_2me == 0.5
