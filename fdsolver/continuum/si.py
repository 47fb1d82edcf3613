"""SI values of the case units, for lifetimes (s) and current densities (A/m^2); CODATA via scipy.constants."""

from __future__ import annotations

import math

import scipy.constants as sc

HBAR = sc.hbar  # J s
E_CHARGE = sc.e  # C
K_BOLTZMANN = sc.k  # J / K
M_ELECTRON = sc.m_e  # kg


def joule_per_energy_unit(units) -> float:
    """One case energy unit in J (meV or hartree); nan for an unnamed unit system."""
    if units.name == "nm-meV":
        return 1e-3 * sc.e
    if units.name == "atomic":
        return sc.physical_constants["Hartree energy"][0]
    return math.nan


def metre_per_length_unit(units) -> float:
    """One case length unit in m (nm or bohr); nan for an unnamed unit system."""
    if units.name == "nm-meV":
        return 1e-9
    if units.name == "atomic":
        return sc.physical_constants["Bohr radius"][0]
    return math.nan


def lifetime_seconds(width, units):
    """hbar / Gamma in s for full widths Gamma in the case energy unit (inf for Gamma = 0)."""
    import numpy as np

    g = np.asarray(width, dtype=float) * joule_per_energy_unit(units)
    with np.errstate(divide="ignore"):
        return np.where(g > 0, HBAR / np.where(g > 0, g, 1.0), np.inf)
