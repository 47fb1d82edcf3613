"""Unit systems of a case.

Two systems are supported:

``"atomic"``
    Hartree atomic units: hbar = m_e = 1, lengths in bohr, energies in hartree,
    so hbar^2 / (2 m_e) = 0.5 hartree bohr^2 exactly.
``"nm-meV"``
    Lengths in nanometres, energies in millielectronvolts.  hbar^2 / (2 m_e) is
    computed from the CODATA 2022 constants below (38.0998211... meV nm^2); the
    tests check them against :mod:`scipy.constants`, which is not imported here
    because it costs more start-up than a whole small solve.

Masses are always in units of the free-electron mass m_e.  The kinetic
operator is  -C d/dx (1/m(x)) d/dx  with C = hbar^2 / (2 m_e) in the case's
units and m(x) in m_e.
"""

from __future__ import annotations

from dataclasses import dataclass

import math

#: SI constants: h and e are exact since the 2019 SI; m_e, the Bohr radius and the Hartree energy are CODATA 2022
#: (the values scipy.constants 1.17 carries; checked in the tests)
PLANCK = 6.62607015e-34  # J s
ELEMENTARY_CHARGE = 1.602176634e-19  # C
ELECTRON_MASS = 9.1093837139e-31  # kg
BOHR_RADIUS = 5.29177210544e-11  # m
HARTREE_ENERGY = 4.359744722206e-18  # J
HBAR = PLANCK / (2.0 * math.pi)
SPEED_OF_LIGHT = 299792458.0  # m/s, exact since 1983
BOLTZMANN = 1.380649e-23  # J/K, exact since the 2019 SI
VACUUM_PERMITTIVITY = 8.8541878188e-12  # F/m, CODATA 2022


@dataclass(frozen=True)
class UnitSystem:
    """Names and the kinetic constant of one unit system.

    ``hbar2_2me`` is hbar^2 / (2 m_e) in ``energy * length**2``.
    ``length_si`` and ``energy_si`` are one length unit in metres and one energy unit in joules
    (the CODATA values above; NaN for an unnamed system), for the quantities that
    leave the Schroedinger problem's own units (optical cross-sections, material data in eV).
    ``length_udunits`` and ``energy_udunits`` are the CF/UDUNITS spellings used
    in archives.  UDUNITS knows no bohr or hartree, so atomic-unit archives
    write them as scaled SI units ("5.29177210544e-11 m", the CODATA values
    above) and name them in ``units_name`` beside ``units``.
    """

    name: str
    length: str
    energy: str
    hbar2_2me: float
    length_udunits: str
    energy_udunits: str
    units_note: str
    length_si: float = float("nan")
    energy_si: float = float("nan")


def _hbar2_2me_mev_nm2() -> float:
    joule_m2 = HBAR**2 / (2.0 * ELECTRON_MASS)
    return joule_m2 / (ELEMENTARY_CHARGE * 1e-3) / 1e-18


UNIT_SYSTEMS: dict[str, UnitSystem] = {
    "atomic": UnitSystem(
        name="atomic",
        length="bohr",
        energy="hartree",
        hbar2_2me=0.5,
        length_udunits=f"{BOHR_RADIUS:.12g} m",
        energy_udunits=f"{HARTREE_ENERGY:.14g} J",
        units_note=(
            "Hartree atomic units (hbar = m_e = 1): 'bohr' and 'hartree' are not "
            "UDUNITS names; 1 bohr = 0.0529177210544 nm, 1 hartree = 27211.386 meV."
        ),
        length_si=BOHR_RADIUS,
        energy_si=HARTREE_ENERGY,
    ),
    "nm-meV": UnitSystem(
        name="nm-meV",
        length="nm",
        energy="meV",
        hbar2_2me=_hbar2_2me_mev_nm2(),
        length_udunits="nm",
        energy_udunits="meV",
        units_note="lengths in nm, energies in meV, masses in free-electron masses",
        length_si=1e-9,
        energy_si=1e-3 * ELEMENTARY_CHARGE,
    ),
}


def kinetic_units(hbar2_2me: float) -> UnitSystem:
    """An unnamed unit system with kinetic constant C = ``hbar2_2me`` (for the model functions that take C directly)."""
    return UnitSystem(name="custom", length="length unit", energy="energy unit", hbar2_2me=float(hbar2_2me),
                      length_udunits="1", energy_udunits="1", units_note=f"a unit system with hbar^2/2m_e = {hbar2_2me:g}")
