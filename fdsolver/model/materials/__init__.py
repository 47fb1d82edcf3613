"""Materials library: III-V band parameters by name, composition and temperature.

``lookup("AlGaAs", x=0.3, temperature=300)`` returns a frozen :class:`MaterialParameters` (energies in
eV on the common absolute scale of the source, masses in m_e, lattice constant in angstrom) with the
source of every value.  :mod:`.bands` turns a stack of them into band edges and masses for one
carrier (electron, heavy or light hole) in a unit system, and checks the lattice mismatch;
:mod:`.describe` formats a material as text or JSON.  The data live in ``iii_v.toml``.
"""

from fdsolver.model.materials.bands import (
    CARRIERS,
    LatticeMismatch,
    StackBands,
    band_energy,
    carrier_mass,
    effective_gap,
    lattice_mismatch,
    stack_bands,
    stack_materials,
)
from fdsolver.model.materials.describe import format_material
from fdsolver.model.materials.library import OVERRIDABLE, MaterialLibrary, builtin_library, load_library, lookup
from fdsolver.model.materials.parameters import MaterialParameters

__all__ = [
    "CARRIERS", "OVERRIDABLE", "LatticeMismatch", "MaterialLibrary", "MaterialParameters", "StackBands",
    "band_energy", "builtin_library", "carrier_mass", "effective_gap", "format_material", "lattice_mismatch",
    "load_library", "lookup", "stack_bands", "stack_materials",
]
