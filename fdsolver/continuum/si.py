"""SI values of the case units, for lifetimes (s) and current densities (A/m^2); CODATA values from
:mod:`fdsolver.model.units` (the one table of constants; its tests check it against scipy.constants, which is not
imported here: it costs a cold start about 0.1 s of CPU)."""

from __future__ import annotations

import math

from fdsolver.model.units import BOHR_RADIUS, ELEMENTARY_CHARGE, HARTREE_ENERGY, HBAR


def joule_per_energy_unit(units) -> float:
    """One case energy unit in J (meV or hartree); nan for an unnamed unit system."""
    if units.name == "nm-meV":
        return 1e-3 * ELEMENTARY_CHARGE
    if units.name == "atomic":
        return HARTREE_ENERGY
    return math.nan


def metre_per_length_unit(units) -> float:
    """One case length unit in m (nm or bohr); nan for an unnamed unit system."""
    if units.name == "nm-meV":
        return 1e-9
    if units.name == "atomic":
        return BOHR_RADIUS
    return math.nan


def lifetime_seconds(width, units):
    """hbar / Gamma in s for full widths Gamma in the case energy unit (inf for Gamma = 0)."""
    import numpy as np

    g = np.asarray(width, dtype=float) * joule_per_energy_unit(units)
    with np.errstate(divide="ignore"):
        return np.where(g > 0, HBAR / np.where(g > 0, g, 1.0), np.inf)
