"""Values with physical units in case files: ``field = "20 kV/cm"``, ``thickness = "80 angstrom"``.

Any numeric value of a case may be a string holding a number and a unit.  It is converted once, here,
before the case is read, into the case's unit system (lengths in nm or bohr, energies in meV or
hartree, masses in m_e, temperatures in K), using the dimension the key declares in the schema
(:mod:`fdsolver.input.schema`) or the shape registry; the rest of fdsolver sees plain floats.  pint
does the unit arithmetic for every unit outside the table below, and is imported only when a case holds one.

Conversions (SI values of the case units from the CODATA constants of :mod:`fdsolver.model.units`):

=================  =================================================================================
key dimension      accepted units
=================  =================================================================================
length             any length (nm, angstrom, Å, um, bohr, ...)
energy             any energy (meV, eV, J, hartree, ...), or a spectroscopic one (cm^-1, THz), converted
                   as E = h c / lambda or h nu
energy/length      energy per length (meV/nm), or an electric field (kV/cm, V/m): the potential-energy
                   slope of the carrier in the solver's picture, +e F for electrons and -e F for holes
                   (the hole picture mirrors energies), so the same field acts physically on every carrier
energy*length      meV nm, eV angstrom, ...
1/length           1/nm, cm^-1, ...
mass               m_e (pint's ``m_e``), kg, ...
temperature        K, degC, ...
=================  =================================================================================

A ``[params]`` entry may carry a unit too (``F = "20 kV/cm"``): its own unit says what it is.  Such a
param keeps that unit for overrides: ``--set F=30``, ``load_case(path, F=30)`` and ``--vary F=0:50:11``
are read in kV/cm, and a sweep's axis is labelled with it.

Units defined exactly in SI (SI prefixes of the metre, joule, volt per metre, the angstrom, the electron volt
through the exact elementary charge, the kelvin) and ``m_e`` (the electron mass of :mod:`fdsolver.model.units`)
are read from a table of their own (:data:`EXACT_UNITS`) when the unit text is one of its entries and the key
takes that dimension: no pint, whose import and registry cost a cold solve of ``cases/algaas_well.toml`` about
0.25 s of CPU (``python scripts/bench_pairs.py OLD NEW algaas_well``, 7 same-minute pairs, 2026-12-03).  Every
other unit, and every unit given where another dimension is wanted (a spectroscopic energy, a wrong dimension
refused), goes through pint as before.  Each entry of the table agrees with pint's conversion to a few ulp
(tests/test_units_table.py), and a value in the case's own unit comes back unchanged; ``m_e`` is the electron
mass of :mod:`fdsolver.model.units` (CODATA 2022) exactly, whatever CODATA release the installed pint carries
(pint 0.25.3, installed here, carries the same value).

A case without ``units`` runs in nm-meV if it names a material or holds any value with a unit, else
in Hartree atomic units (as before units were accepted); when plain numbers with a dimension were
read in the chosen system, a one-line note says which (:attr:`Conversion.note`).
"""

from __future__ import annotations

import ast
import functools
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from fdsolver.errors import CaseError

LENGTH, ENERGY, FIELD, STRENGTH, INVERSE_LENGTH, MASS, TEMPERATURE = (
    "length", "energy", "energy/length", "energy*length", "1/length", "mass", "temperature")
#: dimensions whose plain numbers do not depend on the unit system (m_e, K, pure numbers)
SYSTEM_FREE = (MASS, TEMPERATURE, "1", "count")
#: what each dimension is called in messages, with an example of a unit it takes
SPOKEN = {LENGTH: "a length (e.g. nm, angstrom)", ENERGY: "an energy (e.g. meV, eV)",
          FIELD: "an energy per length or an electric field (e.g. meV/nm, kV/cm)",
          STRENGTH: "an energy times a length (e.g. meV nm)", INVERSE_LENGTH: "an inverse length (e.g. 1/nm)",
          MASS: "a mass (e.g. m_e)", TEMPERATURE: "a temperature (e.g. K)", "1": "a pure number"}
CARRIER_SIGN = {"electron": 1, "heavy_hole": -1, "light_hole": -1}

#: an electric field (V/m): the carrier's potential-energy slope is +-e F (module table)
ELECTRIC = "electric field"


def _exact_units() -> dict[str, tuple[str, float]]:
    """unit text -> (dimension, size of one unit in the SI unit of that dimension: m, J, J/m, J m, 1/m, kg, K, and
    V/m for :data:`ELECTRIC`).  The sizes are products and quotients of the SI prefixes and the exact elementary
    charge (SI 2019), formed as :mod:`fdsolver.model.units` forms its unit systems (meV = 1e-3 e J), so a value
    in the case's own unit comes back unchanged ("100 meV" is 100 in nm-meV); ``m_e`` is the electron mass of
    that module."""
    from fdsolver.model.units import ELECTRON_MASS, ELEMENTARY_CHARGE

    micro = ("u", "\u00b5", "\u03bc")  # u, micro sign, Greek mu
    metre = {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "nm": 1e-9, "pm": 1e-12, "angstrom": 1e-10, "\u00c5": 1e-10}
    metre.update({f"{mu}m": 1e-6 for mu in micro})
    joule = {"J": 1.0, "eV": ELEMENTARY_CHARGE, "meV": 1e-3 * ELEMENTARY_CHARGE, "keV": 1e3 * ELEMENTARY_CHARGE}
    joule.update({f"{mu}eV": 1e-6 * ELEMENTARY_CHARGE for mu in micro})
    volt_per_metre = {"V/m": 1.0, "kV/m": 1e3, "V/cm": 1e2, "kV/cm": 1e5, "MV/cm": 1e8, "V/um": 1e6, "V/nm": 1e9,
                      "mV/nm": 1e6}
    table: dict[str, tuple[str, float]] = {u: (LENGTH, f) for u, f in metre.items()}
    table.update({u: (ENERGY, f) for u, f in joule.items()})
    table.update({u: (ELECTRIC, f) for u, f in volt_per_metre.items()})
    for e in ("meV", "eV"):
        for x in ("nm", "angstrom"):
            table[f"{e}/{x}"] = (FIELD, joule[e] / metre[x])
            for joint in (" ", "*"):
                table[f"{e}{joint}{x}"] = (STRENGTH, joule[e] * metre[x])
    for x in ("m", "cm", "nm", "angstrom"):
        table[f"1/{x}"] = (INVERSE_LENGTH, 1.0 / metre[x])
    table["nm^-1"] = table["1/nm"]
    table["m_e"] = (MASS, ELECTRON_MASS)
    table["kg"] = (MASS, 1.0)
    table["K"] = (TEMPERATURE, 1.0)
    return table


#: units read without pint (module docstring): unit text -> (dimension, size in SI)
EXACT_UNITS = _exact_units()

_NUMBER_AND_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([^\d\s.+-].*?)\s*$")
_REGISTRY = None


def pint_module():
    """The pint module, imported without Dask.

    At import pint looks for Dask and, where it is installed, imports it (about 0.1 s of CPU) to support Dask
    arrays of quantities.  fdsolver converts plain numbers, and Dask is for a cluster only, so Dask is made to
    look absent while pint is first imported (:func:`fdsolver.absent.absent`); a Dask cluster started later
    imports Dask as usual.  Once pint is imported nothing is hidden again, so a thread importing Dask later is
    never refused.
    """
    import sys

    if sys.modules.get("pint") is not None:  # imported already: nothing is hidden again
        return sys.modules["pint"]
    from fdsolver.absent import absent

    with absent("dask"):
        import pint
    return pint


def registry():
    """pint's unit registry, made once (cached on disk by pint where it can)."""
    global _REGISTRY
    if _REGISTRY is None:
        pint = pint_module()
        try:
            _REGISTRY = pint.UnitRegistry(cache_folder=":auto:")
        except Exception:  # a read-only home: no cache
            _REGISTRY = pint.UnitRegistry()
    return _REGISTRY


def split_quantity(value) -> tuple[float, str] | None:
    """(number, unit text) if ``value`` is a string "NUMBER UNIT" that is not an expression, else None.

    ``"20 kV/cm"`` -> (20.0, "kV/cm"); ``"-d/2"``, ``"5"``, ``"2*w"`` -> None.  Nothing is imported.
    """
    if not isinstance(value, str):
        return None
    m = _NUMBER_AND_UNIT.match(value)
    if m is None:
        return None
    try:
        ast.parse(value.strip(), mode="eval")
        return None  # a valid expression ("2*w", "3e-2") is never a quantity
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        pass
    return float(m.group(1)), m.group(2)


def has_unit(value) -> bool:
    return split_quantity(value) is not None


def _si_of(system) -> dict[str, float]:
    from fdsolver.model.units import ELECTRON_MASS

    L, E = system.length_si, system.energy_si
    return {LENGTH: L, ENERGY: E, FIELD: E / L, STRENGTH: E * L, INVERSE_LENGTH: 1.0 / L, MASS: ELECTRON_MASS,
            TEMPERATURE: 1.0, "1": 1.0}


_SI_UNIT = {LENGTH: "m", ENERGY: "J", FIELD: "J/m", STRENGTH: "J*m", INVERSE_LENGTH: "1/m", MASS: "kg",
            TEMPERATURE: "K", "1": "dimensionless"}


def dimension_of_unit(unit: str) -> str | None:
    """Our dimension of a pint unit text ("kV/cm" -> "energy/length"), None if none of ours."""
    exact = EXACT_UNITS.get(unit)
    if exact is not None:
        return FIELD if exact[0] == ELECTRIC else exact[0]
    q = _quantity(1.0, unit, None, None)
    for dim in (LENGTH, ENERGY, FIELD, STRENGTH, INVERSE_LENGTH, MASS, TEMPERATURE, "1"):
        if q.check(_dimensionality(dim)):
            return dim
    if q.check("[length] / [time] ** 3 / [current] * [mass]"):  # an electric field
        return FIELD
    if q.check("1 / [time]"):  # a frequency: a spectroscopic energy
        return ENERGY
    return None


def _dimensionality(dim: str) -> str:
    return {LENGTH: "[length]", ENERGY: "[energy]", FIELD: "[energy] / [length]", STRENGTH: "[energy] * [length]",
            INVERSE_LENGTH: "1 / [length]", MASS: "[mass]", TEMPERATURE: "[temperature]", "1": "[]"}[dim]


def _quantity(number: float, unit: str, file, key):
    ureg = registry()
    pint = pint_module()

    try:
        return ureg.Quantity(number, unit)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError, TypeError,
            ValueError, AssertionError, SyntaxError, KeyError) as exc:
        raise CaseError(f"'{unit}' is not a unit pint knows ({type(exc).__name__}); write e.g. \"10 nm\", "
                        "\"0.24 eV\", \"20 kV/cm\"", file=file, key=key) from None


def to_case_units(number: float, unit: str, dimension: str, system, carrier: str = "electron", *, file=None,
                  key=None) -> float:
    """``number unit`` in the case units of ``system`` for a key of ``dimension`` (module table)."""
    size = _exact_size(unit, dimension, carrier)
    if size is not None:  # one unit in the case unit first: a value in the case's own unit comes back unchanged
        value = number * (size / _si_of(system)[dimension])
    else:
        value = float(_pint_si(number, unit, dimension, carrier, file, key)) / _si_of(system)[dimension]
    if not math.isfinite(value):
        raise CaseError(f"'{number:g} {unit}' is not a finite value", file=file, key=key)
    return value


def _exact_size(unit: str, dimension: str, carrier: str) -> float | None:
    """One ``unit`` in SI from :data:`EXACT_UNITS` for a key of ``dimension``, or None where pint must decide
    (another unit, or one of another dimension)."""
    exact = EXACT_UNITS.get(unit)
    if exact is None:
        return None
    kind, size = exact
    if kind == dimension:
        return size
    if kind == ELECTRIC and dimension == FIELD:  # the carrier's potential-energy slope, +-e F
        from fdsolver.model.units import ELEMENTARY_CHARGE

        return size * ELEMENTARY_CHARGE * CARRIER_SIGN.get(carrier, 1)
    return None


def _pint_si(number: float, unit: str, dimension: str, carrier: str, file, key) -> float:
    """``number unit`` in SI for a key of ``dimension``, by pint (any unit it knows; a refusal as a CaseError)."""
    pint = pint_module()

    q = _quantity(number, unit, file, key)
    try:
        if dimension == FIELD and not q.check(_dimensionality(FIELD)) and \
                q.check("[mass] * [length] / [time] ** 3 / [current]"):
            q = q * registry().elementary_charge * CARRIER_SIGN.get(carrier, 1)
        if dimension == ENERGY and not q.check("[energy]"):
            if not (q.check("1 / [length]") or q.check("1 / [time]")):  # a wavelength is no energy (refused)
                raise pint.errors.DimensionalityError(unit, "J")
            si = q.to("J", "sp").magnitude
        elif dimension == TEMPERATURE:
            si = q.to("K").magnitude
        else:
            si = q.to(_SI_UNIT[dimension]).magnitude
    except pint.errors.DimensionalityError:
        raise CaseError(f"'{number:g} {unit}' is not {SPOKEN.get(dimension, dimension)}", file=file, key=key) from None
    return si


@dataclass
class Conversion:
    """The outcome of :func:`convert_case`: the data with plain numbers, the unit system, and what was seen."""

    data: dict
    system: str
    overrides: dict
    units_given: bool
    seen_units: bool = False  # a value with a unit was met (read in full only for a case without a units key)
    plain: list = field(default_factory=list)  # keys whose plain numbers depend on the unit system
    param_units: dict = field(default_factory=dict)  # param -> its unit text

    @property
    def note(self) -> str | None:
        """One line when the case gives no ``units`` and plain numbers were read in the chosen system."""
        if self.units_given or not self.plain:
            return None
        if self.system == "atomic":
            return ("no units given: plain numbers were read in Hartree atomic units (lengths in bohr, energies in "
                    f"hartree; e.g. {self.plain[0]}); write units = \"nm-meV\" or values with units (\"10 nm\") "
                    "if that was not meant")
        return (f"no units given: plain numbers were read as nm and meV (e.g. {self.plain[0]}), the default for a case "
                "that names materials or gives values with units")


@functools.lru_cache(maxsize=4096)
def _names(text: str) -> frozenset[str]:
    """The param names an expression uses (not its function names, nor pi, e and x); remembered per text, since
    every sweep point converts the same case text again."""
    return frozenset(_parse_names(text))


def _parse_names(text: str) -> set[str]:
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        return set()
    calls = {n.func.id for n in ast.walk(tree) if isinstance(n, ast.Call) and isinstance(n.func, ast.Name)}
    return {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)} - calls - {"pi", "e", "x"}


class _Walker:
    def __init__(self, system, carrier, file, params_with_units):
        self.system, self.carrier, self.file = system, carrier, file
        self.params_with_units = params_with_units
        self.seen = False
        self.plain: list[str] = []

    def value(self, value, dimension: str | None, key: str):
        """The value with any unit converted; plain values with a system-dependent dimension are noted."""
        q = split_quantity(value)
        if q is not None:
            self.seen = True
            if dimension is None or dimension in ("text", "count", "true/false", "table", "list", "array of tables"):
                raise CaseError(f"takes no unit (got '{value}')", file=self.file, key=key)
            return to_case_units(q[0], q[1], dimension, self.system, self.carrier, file=self.file, key=key)
        if dimension in (LENGTH, ENERGY, FIELD, STRENGTH, INVERSE_LENGTH) and not isinstance(value, bool):
            if isinstance(value, (int, float)) and value != 0:
                self.plain.append(key)
            elif isinstance(value, str) and not (_names(value) and _names(value) <= self.params_with_units):
                self.plain.append(key)
        return value

    def table(self, table, dims: Mapping[str, str], where: str):
        if not isinstance(table, Mapping):
            return table
        out = dict(table)
        for k, v in table.items():
            if not isinstance(k, str) or k not in dims:
                continue
            key = f"{where}.{k}" if where else k
            if isinstance(v, list):
                out[k] = [self.value(item, dims[k], key) for item in v]
            else:
                out[k] = self.value(v, dims[k], key)
        return out


def uses_units(data) -> bool:
    """True if any value anywhere in the case data is a number with a unit."""
    if isinstance(data, Mapping):
        return any(uses_units(v) for v in data.values())
    if isinstance(data, list):
        return any(uses_units(v) for v in data)
    return has_unit(data)


def names_materials(data) -> bool:
    layers = data.get("layer") if isinstance(data, Mapping) else None
    return isinstance(layers, list) and any(isinstance(lay, Mapping) and "material" in lay for lay in layers)


def convert_case(data: Mapping[str, Any], overrides: Mapping | None, file) -> Conversion:
    """Every value with a unit in the case ``data`` (and the param ``overrides``) converted to the case units.

    The keys' dimensions come from :mod:`fdsolver.input.schema` (tables) and the shape registry
    (``[[potential]]``); unknown keys are left for the schema check to refuse.
    """
    from fdsolver.input.schema import SECTIONS, component_keys
    from fdsolver.model.materials.parameters import MaterialParameters
    from fdsolver.model.shapes import SHAPES
    from fdsolver.model.units import UNIT_SYSTEMS

    given = "units" in data
    # without a units key the system follows what the case uses (walking the data only then)
    seen = not given and (uses_units(data) or uses_units(dict(overrides or {})))
    name = data.get("units") if given else ("nm-meV" if seen or names_materials(data) else "atomic")
    if not isinstance(name, str) or name not in UNIT_SYSTEMS:  # the case reader refuses it with its own message
        return Conversion(dict(data), name if isinstance(name, str) else "atomic", dict(overrides or {}), given, seen)
    system = UNIT_SYSTEMS[name]
    carrier = data.get("carrier", "electron") if isinstance(data.get("carrier", "electron"), str) else "electron"
    out = dict(data)
    # params: a unit says what each is; overrides of such a param are read in its unit
    raw_params = data.get("params")
    param_units: dict[str, str] = {}
    new_overrides = dict(overrides or {})
    walker = _Walker(system, carrier, file, set())
    if isinstance(raw_params, Mapping):
        params = dict(raw_params)
        for k, v in raw_params.items():
            q = split_quantity(v)
            if q is None:
                continue
            key = f"params.{k}"
            dim = dimension_of_unit(q[1])
            if dim is None:
                raise CaseError(f"'{v}' is none of the quantities a case uses (length, energy, field, mass, ...)",
                                file=file, key=key)
            params[k] = to_case_units(q[0], q[1], dim, system, carrier, file=file, key=key)
            param_units[str(k)] = q[1]
            if k in new_overrides:
                new_overrides[k] = _override(new_overrides[k], q[1], dim, system, carrier, key)
        out["params"] = params
    for k, v in list(new_overrides.items()):
        if k not in param_units and split_quantity(v) is not None:
            q = split_quantity(v)
            dim = dimension_of_unit(q[1])
            if dim is None:
                raise CaseError(f"'{v}' is none of the quantities a case uses", file=file, key=f"params.{k}")
            new_overrides[k] = to_case_units(q[0], q[1], dim, system, carrier, file=file, key=f"params.{k}")
    walker.params_with_units = set(param_units)
    top = {k: v.kind for k, v in SECTIONS[""].items()}
    out.update(walker.table({k: v for k, v in data.items() if k in ("mass", "stack_origin", "temperature")}, top, ""))
    layer_dims = {k: v.kind for k, v in SECTIONS["layer"].items()}
    if isinstance(data.get("layer"), list):
        layers = []
        for i, lay in enumerate(data["layer"], start=1):
            new = walker.table(lay, layer_dims, f"layer[{i}]")
            if isinstance(lay, Mapping) and isinstance(lay.get("overrides"), Mapping):
                new["overrides"] = _library_overrides(lay["overrides"], MaterialParameters.UNITS, file, f"layer[{i}].overrides")
                walker.seen = walker.seen or uses_units(lay["overrides"])
            layers.append(new)
        out["layer"] = layers
    if isinstance(data.get("potential"), list):
        comps = []
        for i, comp in enumerate(data["potential"], start=1):
            shape = comp.get("shape") if isinstance(comp, Mapping) else None
            dims = component_keys(shape) if isinstance(shape, str) and shape in SHAPES else {}
            comps.append(walker.table(comp, dims, f"potential[{i}]"))
        out["potential"] = comps
    for section in ("domain", "solve", "sweep"):
        if isinstance(data.get(section), Mapping):
            dims = {k: v.kind for k, v in SECTIONS[section].items()}
            out[section] = walker.table(data[section], dims, section)
    return Conversion(out, name, new_overrides, given, seen or walker.seen, walker.plain, param_units)


def _override(value, unit: str, dim: str, system, carrier: str, key: str):
    """An override of a param given with ``unit``: a plain number is read in that unit."""
    q = split_quantity(value)
    if q is not None:
        return to_case_units(q[0], q[1], dim, system, carrier, key=key)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise CaseError(f"this param is given in {unit}: override it with a number (read in {unit}) or a value with a "
                        f"unit, got {value!r}", key=key)
    return to_case_units(float(value), unit, dim, system, carrier, key=key)


def _library_overrides(table: Mapping, units: Mapping[str, str], file, where: str) -> dict:
    """Material parameter overrides with units converted to the library's (eV, m_e, angstrom, K): from
    :data:`EXACT_UNITS` where both units are in it, by pint otherwise."""
    out = dict(table)
    for k, v in table.items():
        q = split_quantity(v)
        if q is None or k not in units:
            continue
        own, lib = EXACT_UNITS.get(q[1]), EXACT_UNITS.get(units[k])
        if own is not None and lib is not None and own[0] == lib[0]:  # both in the table: no pint
            out[k] = q[0] * (own[1] / lib[1])
            continue
        target = {"m_e": "electron_mass", "1": "dimensionless"}.get(units[k], units[k])
        pint = pint_module()

        qty = _quantity(q[0], q[1], file, f"{where}.{k}")
        try:
            out[k] = float(qty.to(target).magnitude)
        except pint.errors.DimensionalityError:
            raise CaseError(f"'{v}' cannot be expressed in {units[k]}", file=file, key=f"{where}.{k}") from None
    return out


def factor(unit: str, dimension: str, system, carrier: str = "electron") -> float:
    """The size of one ``unit`` in the case units (``value_case = value_given * factor``)."""
    return to_case_units(1.0, unit, dimension, system, carrier)


def as_given(case, name: str, value: float) -> float:
    """A value of param ``name`` in the case units, back in the unit the case gives it in (for overrides)."""
    unit = getattr(case, "param_units", {}).get(name)
    if not unit:
        return value
    return float(value) / factor(unit, dimension_of_unit(unit), case.units, case.carrier)
