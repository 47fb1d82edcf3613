"""``[[layer]]`` stacks of named materials: the case keys ``material``, ``x``, ``overrides``, read into a stack.

A layer that names its material (``material = "AlGaAs", x = 0.3``) gets its band edge, mass and gap
from the library (:mod:`fdsolver.model.materials`) for the case's ``carrier`` and ``temperature``,
in the solver's picture of that carrier (holes mirrored, every edge measured from the stack's band
extremum, see :mod:`fdsolver.model.materials.bands`), in the case units.

Mixing is refused: a stack is either all named materials or all raw layers (``band_edge``,
``mass``).  A raw band edge has no place on the materials' absolute energy scale, and its meaning
would change with the carrier; a layer that must differ from the library names the nearest material
and overrides single parameters (``overrides = { electron_mass = 0.07 }``, values in eV, m_e,
angstrom; units allowed).  ``band_edge``, ``mass`` and ``gap`` on a material layer are refused for
the same reason.

The stack's lattice mismatch against its first layer is checked; above 0.5 % the run carries a
one-line note saying that strain is not modelled.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from fdsolver.errors import CaseError
from fdsolver.input import fields as F
from fdsolver.input.schema import LAYER, check_keys
from fdsolver.model.stack import Layer, LayerStack

#: keys a material layer may not carry (its library values stand for them)
RAW_KEYS = ("band_edge", "mass", "gap")


@dataclass(frozen=True)
class StackInfo:
    """What the library gave a stack: the materials, the bands of the case's carrier, the lattice check."""

    materials: tuple  # MaterialParameters per layer
    bands: object  # StackBands of the case's carrier (energies in the case unit)
    mismatch: object  # LatticeMismatch
    temperature: float
    library_files: tuple[str, ...]

    def describe(self) -> str:
        """One line: the layers' materials, left to right."""
        return " / ".join(p.label for p in self.materials)


def is_material_stack(layers, file) -> bool:
    """True if the layers name materials; CaseError if some do and some do not."""
    if not isinstance(layers, list):
        return False
    named = [i for i, lay in enumerate(layers, start=1) if isinstance(lay, Mapping) and "material" in lay]
    if not named:
        return False
    raw = [i for i, lay in enumerate(layers, start=1) if isinstance(lay, Mapping) and "material" not in lay]
    if raw:
        raise CaseError(
            f"layer {raw[0]} gives no material while layer {named[0]} names one: a stack is either all named "
            "materials or all raw band_edge/mass layers; give this layer a material (with overrides = { ... } "
            "for values that differ from the library) or give every layer band_edge and mass",
            file=file, key=f"layer[{raw[0]}]")
    return True


def library_for(data, file):
    """The built-in library, plus the case's ``materials_file`` (relative to the case file) if it names one."""
    from fdsolver.model.materials import load_library

    extra = data.get("materials_file")
    if extra is None:
        return load_library()
    if not isinstance(extra, str) or not extra:
        raise CaseError("must be the path of a materials data file", file=file, key="materials_file")
    path = Path(extra)
    if not path.is_absolute() and file:
        path = Path(file).resolve().parent / path
    if not path.is_file():
        raise CaseError(f"no such materials file '{path}'", file=file, key="materials_file")
    return load_library(path)


def build_material_stack(layers, params, origin, units, carrier: str, temperature: float, library,
                         file) -> tuple[LayerStack, StackInfo]:
    """The stack of a case whose layers name materials (module doc); band edges and gaps in ``units``."""
    from fdsolver.model.materials import lattice_mismatch, stack_bands, stack_materials

    specs, names, thicknesses = [], [], []
    n = len(layers)
    for i, lay in enumerate(layers, start=1):
        where = f"layer[{i}]"
        if not isinstance(lay, Mapping):
            raise CaseError("each [[layer]] entry must be a table", file=file, key=where)
        check_keys(lay, LAYER, file, where)
        for k in RAW_KEYS:
            if k in lay:
                hint = {"band_edge": "the band edges follow from the materials (valence_band_offset and band_gap)",
                        "mass": "write overrides = { electron_mass = ... } (or heavy_hole_mass, light_hole_mass)",
                        "gap": "write overrides = { band_gap = ... } (eV)"}[k]
                raise CaseError(f"a layer that names its material takes no {k}: {hint}", file=file, key=f"{where}.{k}")
        material = F.text(lay, "material", file, where, hint="a material name such as \"GaAs\"")
        x = F.number(lay, "x", params, file, where, required=False)
        overrides = lay.get("overrides", {})
        if not isinstance(overrides, Mapping):
            raise CaseError("must be a table of parameter = value (eV, m_e, angstrom)", file=file, key=f"{where}.overrides")
        for k, v in overrides.items():
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise CaseError(f"must be a finite number (or a value with a unit), got {v!r}", file=file,
                                key=f"{where}.overrides.{k}")
        outer = i == 1 or i == n
        thick = F.number(lay, "thickness", params, file, where, positive=True, required=not outer)
        specs.append({"material": material, "x": x, "overrides": dict(overrides)})
        names.append(F.name_of(lay, file, where))
        thicknesses.append(float(thick) if thick is not None and not outer else math.inf)
    try:
        mats = stack_materials(specs, temperature, library)
        bands = stack_bands(mats, carrier, units)
    except CaseError as err:
        raise err.located(file=file) from None
    mismatch = lattice_mismatch(mats, names=names)
    # an unnamed layer is named by its position and material ("2:GaAs"), so every layer gets a probability inside
    names = [nm if nm else f"{k + 1}:{mats[k].label}" for k, nm in enumerate(names)]
    out = [Layer(names[k], thicknesses[k], float(bands.band_edge[k]), float(bands.mass[k])) for k in range(n)]
    info = StackInfo(tuple(mats), bands, mismatch, float(temperature), tuple(library.files))
    return LayerStack(tuple(out), origin), info
