"""What the band driver needs from a periodic model: its period, energy scale and discriminant levels.

:class:`Source` adapts any periodic model to :mod:`fdsolver.bloch.structure`: a :class:`Lattice` (cells
of :mod:`fdsolver.bloch.cellgrid`, :func:`lattice_source`) or the closed-form delta comb of
:mod:`fdsolver.zerorange.comb`.  ``levels(e_lo, e_hi)`` returns an object with ``compact`` (one exact
level) and ``at(level)``, a discriminant provider with ``evaluate(energies, count=True)`` (rows D,
dD/dE, error of D, error of dD/dE, Dirichlet count); ``bloch_cells(provider)`` the
:class:`~fdsolver.bloch.cellgrid.PeriodCells` whose transfer matrix gives Bloch functions at that
level.  Energies in the model's energy unit, lengths in its length unit.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from fdsolver.bloch.cellgrid import cell_levels
from fdsolver.bloch.lattice import Lattice, free_mass


@dataclass(frozen=True)
class Source:
    """A periodic model as the band driver sees it (module docstring).

    ``zone_energy`` = C pi^2 / (m_min L^2), the free-particle energy at the
    zone boundary: the energy scale of tolerances and searches.
    ``first_range(n_bands)`` guesses an energy below band 0 and one above the
    bottom of band n_bands (the edge search widens them as needed).
    """

    period: float
    start: float
    hbar2_2me: float
    zone_energy: float
    first_range: Callable
    levels: Callable
    bloch_cells: Callable


def zone_energy(lat: Lattice) -> float:
    """E_L = C pi^2 / (m_min L^2) of a lattice (energy unit)."""
    return lat.hbar2_2me * math.pi**2 / (free_mass(lat) * lat.period**2)


def lattice_source(lat: Lattice) -> Source:
    """The :class:`Source` of a lattice: its nested period cells."""
    e_l = zone_energy(lat)
    pot = lat.cell()

    def first_range(n_bands: int):
        xs = np.linspace(lat.start, lat.start + lat.period, 1025)
        v = pot.value(xs)
        m_max = float(np.max(pot.mass_at(xs)))
        terms = pot.point_terms()
        attract = sum(a for _, a in terms if a > 0)
        repel = sum(-a for _, a in terms if a < 0)
        e_lo = float(np.min(v)) - m_max * attract**2 / (4.0 * lat.hbar2_2me) - 0.1 * e_l
        e_hi = float(np.max(v)) + e_l * (n_bands + 1) ** 2 + repel / lat.period
        return e_lo, e_hi

    return Source(lat.period, lat.start, lat.hbar2_2me, e_l, first_range,
                  lambda e_lo, e_hi: cell_levels(lat, e_lo, e_hi), lambda cells: cells)
