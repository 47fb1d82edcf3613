"""The kinetic constant C = hbar^2 / (2 m_e) of both unit systems, in extended precision.

Source: CODATA recommended values as shipped in :mod:`scipy.constants` (h and e exact in the SI
since 2019; m_e measured).  nm-meV: C = hbar^2 / (2 m_e) / (1 meV * 1 nm^2), about
38.0998 meV nm^2.  Atomic units: C = 1/2 hartree bohr^2 exactly.
"""

from __future__ import annotations

import mpmath as mp
import scipy.constants as sc


def hbar2_2me(units: str) -> mp.mpf:
    """C = hbar^2/(2 m_e) in energy * length^2 of ``units`` ("nm-meV" or "atomic"), at the current mp precision."""
    if units == "atomic":
        return mp.mpf(1) / 2
    if units == "nm-meV":
        hbar = mp.mpf(sc.h) / (2 * mp.pi)
        joule_m2 = hbar**2 / (2 * mp.mpf(sc.m_e))
        return joule_m2 / (mp.mpf(sc.e) * mp.mpf("1e-3")) / mp.mpf("1e-18")
    raise ValueError(f"unknown units {units!r}")
