"""The parameters of one material at one composition and temperature."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import ClassVar


@dataclass(frozen=True)
class MaterialParameters:
    """Parameters of one material at one composition and temperature (see :data:`UNITS`).

    ``sources`` maps each field name to where its value comes from; ``overridden`` names the
    fields the user replaced.  ``gap_law`` states the temperature law with its numbers and
    ``gap_law_parameters`` holds them (empty for alloys, whose gap is interpolated at T).
    """

    name: str
    label: str
    x: float | None
    temperature: float
    band_gap: float
    band_gap_0K: float
    valence_band_offset: float
    electron_mass: float
    gamma1: float
    gamma2: float
    gamma3: float
    heavy_hole_mass: float
    light_hole_mass: float
    spin_orbit: float
    lattice_constant: float
    gap_law: str
    gap_law_parameters: Mapping[str, float] = field(default_factory=dict)
    sources: Mapping[str, str] = field(default_factory=dict)
    overridden: tuple[str, ...] = ()
    description: str = ""

    UNITS: ClassVar[Mapping[str, str]] = MappingProxyType({
        "temperature": "K",
        "band_gap": "eV",
        "band_gap_0K": "eV",
        "valence_band_offset": "eV",
        "conduction_band_edge": "eV",
        "electron_mass": "m_e",
        "gamma1": "1",
        "gamma2": "1",
        "gamma3": "1",
        "heavy_hole_mass": "m_e",
        "light_hole_mass": "m_e",
        "spin_orbit": "eV",
        "lattice_constant": "angstrom",
        "varshni_alpha": "meV/K",
        "varshni_beta": "K",
        "coth_amplitude": "eV",
        "coth_theta": "K",
    })
    #: the numeric fields, in display order
    FIELDS: ClassVar[tuple[str, ...]] = (
        "band_gap", "band_gap_0K", "valence_band_offset", "conduction_band_edge", "electron_mass",
        "gamma1", "gamma2", "gamma3", "heavy_hole_mass", "light_hole_mass", "spin_orbit", "lattice_constant",
    )

    @property
    def conduction_band_edge(self) -> float:
        """Gamma conduction-band edge on the absolute scale: valence_band_offset + band_gap (eV)."""
        return self.valence_band_offset + self.band_gap

    def value(self, name: str) -> float:
        """The value of field ``name`` (including ``conduction_band_edge`` and the gap-law parameters)."""
        if name in self.gap_law_parameters:
            return self.gap_law_parameters[name]
        return float(getattr(self, name))
