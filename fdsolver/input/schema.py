"""The case-file schema: every table and every key a case may contain, in one place.

Each table maps its keys to a :class:`Key`: what it means and, for numbers,
its physical dimension (the case's ``units`` give its size).  The keys of a
``[[potential]]`` component come from the shape registry
(:data:`fdsolver.model.shapes.SHAPES`).  :func:`check_keys` refuses a key that
is not declared, with the closest declared one suggested, so a misspelled key
is an error in every table, including the ones only a study reads
(``[sweep]``, ``[delta_check]``).  README.md documents the same keys.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.model.shapes import COUNT, ENERGY, LENGTH, MASS, NUMBER, SHAPES, TEXT

TABLE, ARRAY, BOOL, LIST = "table", "array of tables", "true/false", "list"
#: a temperature in kelvin (the materials library's band gaps depend on it)
TEMPERATURE = "temperature"


@dataclass(frozen=True)
class Key:
    """One key: its meaning and its kind (a physical dimension for numbers, else TEXT, COUNT, BOOL, TABLE, ...)."""

    doc: str
    kind: str = NUMBER


TOP: dict[str, Key] = {
    "title": Key("a short title of the case", TEXT),
    "description": Key("free text", TEXT),
    "units": Key('"atomic" or "nm-meV"', TEXT),
    "mass": Key("particle mass in electron masses (default 1)", MASS),
    "stack_origin": Key("position of the left edge of the first inner layer (default 0)", LENGTH),
    "params": Key("table of named numbers", TABLE),
    "potential": Key("array of tables [[potential]]", ARRAY),
    "layer": Key("array of tables [[layer]]", ARRAY),
    "domain": Key("table [domain]", TABLE),
    "solve": Key("table [solve]", TABLE),
    "delta_check": Key("table [delta_check] (zero-range comparison settings)", TABLE),
    "sweep": Key("table [sweep] (parameter scan settings)", TABLE),
    "temperature": Key("lattice temperature in K for the materials library (default 300)", TEMPERATURE),
    "carrier": Key('"electron", "heavy_hole" or "light_hole" (default electron)', TEXT),
    "nonparabolicity": Key("energy-dependent two-band (Kane) mass, solved per state", BOOL),
    "materials_file": Key("a materials data file of your own, added to the built-in library", TEXT),
    "transport": Key("table [transport] (transmission, resonances and current settings)", TABLE),
}

#: keys every [[potential]] component may have besides its shape's own
COMPONENT: dict[str, Key] = {
    "shape": Key(f"one of {', '.join(SHAPES)}", TEXT),
    "name": Key("a name (named components get a probability inside)", TEXT),
}

LAYER: dict[str, Key] = {
    "name": Key("a name (named layers get a probability inside)", TEXT),
    "thickness": Key("layer thickness (inner layers)", LENGTH),
    "band_edge": Key("band-edge energy of the layer", ENERGY),
    "mass": Key("effective mass in m_e (default: the case mass)", MASS),
    "gap": Key("band gap of the layer, for the energy-dependent mass (nonparabolicity = true)", ENERGY),
    "material": Key('a material of the library ("GaAs", "AlGaAs", ...) instead of band_edge and mass', TEXT),
    "x": Key("alloy composition: the fraction of the first-named cation (Al in AlGaAs)", NUMBER),
    "overrides": Key("table of material parameters replacing the library's (eV, m_e, angstrom)", TABLE),
}

DOMAIN: dict[str, Key] = {
    "boundary": Key('"open" (the whole line), "hard" (walls at left and right) or "periodic" (one period given)', TEXT),
    "left": Key("left wall, or least left extent of the box", LENGTH),
    "right": Key("right wall, or least right extent of the box", LENGTH),
    "period": Key("length L of one period (periodic; default: the thicknesses of the layers with one)", LENGTH),
    "start": Key("left end of the period window [start, start + L) (periodic; default: centred on the components, "
                 "or the stack origin)", LENGTH),
}

SOLVE: dict[str, Key] = {
    "tolerance": Key("target relative error of every energy", NUMBER),
    "max_states": Key("the number of lowest states returned at most", COUNT),
    "energy_window": Key("[low, high]: only states in this energy range", ENERGY),
    "memory_mb": Key("memory budget of the grid, MB", NUMBER),
    "max_levels": Key("most nested grid levels", COUNT),
    "bands": Key("number of Bloch bands from the lowest (periodic; default 10, delta-check 4)", COUNT),
    "wavevectors": Key("wavevectors q on [0, pi/L], both ends included (periodic; default 101)", COUNT),
    "quasi_bound": Key("true: also list the quasi-bound states above the continuum threshold (a well between higher "
                       "barriers) above the bound states; false: not even in a field (refused, use hard walls); default: only in a "
                       "field", BOOL),
}

SWEEP: dict[str, Key] = {
    "vary": Key('list of "NAME=START:STOP:COUNT" axes', LIST),
    "units": Key('table of param = "unit" (UDUNITS spelling)', TABLE),
    "memory_mb": Key("memory budget of the sweep result, MB", NUMBER),
    "psi_points": Key("points of the common x grid of stored wavefunctions", COUNT),
    "psi_range": Key("[low, high] of the common x grid", LENGTH),
    "chunk": Key("points per task", COUNT),
}

DELTA_CHECK: dict[str, Key] = {
    "shape": Key("replacement well: square, smooth_square, gaussian or sech2", TEXT),
    "widths": Key('"LO:HI:N" or a single width', TEXT),
    "tolerance": Key("relative deviation the point model must stay below", NUMBER),
    "map": Key('two "NAME=LO:HI:N" validity-map axes', LIST),
    "from_finite": Key("compare the case's own narrow wells with their point model", BOOL),
}

TRANSPORT: dict[str, Key] = {
    "energies": Key('"LO:HI" (adaptive grid) or "LO:HI:N" (N even energies) of transmit', TEXT),
    "incident": Key('"left" (default) or "right": the side the wave comes from', TEXT),
    "window": Key("[low, high]: the energy window of resonances", ENERGY),
    "max_width": Key("widest resonance searched (default: the window's width)", ENERGY),
    "bias": Key('"LO:HI:N" biases of current, in V', TEXT),
    "temperature": Key("temperature of the current's Fermi-Dirac supply, K (default 300)", NUMBER),
    "fermi_level": Key("emitter Fermi level of the current", ENERGY),
}

#: section name -> its keys ("" is the top level)
SECTIONS: dict[str, dict[str, Key]] = {
    "": TOP,
    "layer": LAYER,
    "domain": DOMAIN,
    "solve": SOLVE,
    "sweep": SWEEP,
    "delta_check": DELTA_CHECK,
    "transport": TRANSPORT,
}


def component_keys(kind: str) -> dict[str, str]:
    """Key -> dimension of a ``[[potential]]`` component of shape ``kind`` (common keys included)."""
    cls = SHAPES[kind]
    return {**{k: v.kind for k, v in COMPONENT.items()}, **cls.dimensions}


def dimension_of(section: str, key: str, kind: str | None = None) -> str | None:
    """The dimension of ``key`` in ``section`` ("potential" needs the shape ``kind``), None if unknown."""
    if section == "potential":
        return component_keys(kind).get(key) if isinstance(kind, str) and kind in SHAPES else None
    entry = SECTIONS.get(section, {}).get(key)
    return entry.kind if entry else None


def check_keys(table: Mapping, allowed, file, where: str) -> None:
    """CaseError for the first key of ``table`` that is not in ``allowed`` (closest one suggested)."""
    for k in table:
        if not isinstance(k, str):
            raise CaseError(f"keys must be strings, got {k!r}", file=file, key=where or None)
        if k not in allowed:
            raise CaseError(
                f"unknown key '{k}'{did_you_mean(k, allowed)} (allowed: {', '.join(sorted(allowed))})",
                file=file,
                key=f"{where}.{k}" if where else k,
            )


def check_section(data: Mapping, section: str, file) -> Mapping:
    """The table ``section`` of a case (empty if absent), checked to be a table of declared keys."""
    table = data.get(section, {})
    if not isinstance(table, Mapping):
        raise CaseError(f"[{section}] must be a table", file=file, key=section)
    check_keys(table, SECTIONS[section], file, section)
    return table
