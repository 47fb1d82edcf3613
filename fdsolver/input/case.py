"""Case files: the TOML contract, validated into a :class:`Case`.

A case is read with :func:`load_case` (a file), :func:`case_from_text` (TOML
text) or :func:`case_from_dict` (the same schema as Python data).  Every
problem raises :class:`~fdsolver.errors.CaseError` naming the file, the key
(components and layers are numbered from 1: ``potential[2].width``) and what
to do.  The keys are declared once, in :mod:`fdsolver.input.schema`; the
shapes and their keys in the registry :data:`fdsolver.model.shapes.SHAPES`.
"""

from __future__ import annotations

import keyword
import math
import os
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Mapping

from fdsolver.boundstates.settings import MIN_LEVELS, SolveSettings
from fdsolver.errors import CaseError, did_you_mean, shorten
from fdsolver.input import fields as F
from fdsolver.input._expressions import (
    FUNCTION_NAMES,
    compile_expression,
    evaluate_number,
    normal_name,
    resolve_params,
)
from fdsolver.input.materials import build_material_stack, is_material_stack, library_for
from fdsolver.input.quantities import convert_case
from fdsolver.input.schema import LAYER, TOP, check_keys, check_section, component_keys
from fdsolver.input.tables import BOM, parse_table, read_table, regular_file
from fdsolver.limits import MAX_COMPONENTS, MAX_LAYERS, MAX_MEMORY_MB, MAX_PARAMS, MAX_STATES, MAX_STORED_CASE_BYTES
from fdsolver.model.domain import Domain
from fdsolver.model.periodic import period_window
from fdsolver.model.potential import Potential
from fdsolver.model.shapes import COUNT, SHAPES, TEXT, BuildContext, Shape
from fdsolver.model.stack import Layer, LayerStack
from fdsolver.model.units import UNIT_SYSTEMS, UnitSystem
from fdsolver.numerics.grid import GridSettings

BOUNDARIES = ("open", "hard", "periodic")
#: names a param may not take (read after Unicode NFKC normalisation): the position, the constants, the functions
RESERVED = frozenset({"x", "pi", "e"}) | FUNCTION_NAMES
#: the two ways to give the amplitude of a signed shape
SIGN_KEYS = ("depth", "height")
#: a component more than this many times its own size from x = 0 gets grid positions rounded to more than 2e-9 of its size
MAX_OFFSET_IN_SIZES = 1e7


@dataclass(frozen=True)
class Case:
    """A validated case: what to solve and how.  Energies/lengths in ``units``."""

    title: str
    units: UnitSystem
    mass: float
    params: dict[str, float]
    potential: Potential
    domain: Domain
    settings: SolveSettings
    text: str
    path: str | None
    data: dict = field(repr=False)
    tables: dict[str, str] = field(default_factory=dict, repr=False)
    overrides: dict = field(default_factory=dict, repr=False)
    #: which band the case describes: "electron", "heavy_hole" or "light_hole" (holes in the hole picture)
    carrier: str = "electron"
    #: lattice temperature in K (the materials library's gaps depend on it)
    temperature: float = 300.0
    #: energy-dependent two-band (Kane) mass, solved state by state (fdsolver.boundstates.nonparabolic)
    nonparabolicity: bool = False
    #: one-line notes of the case itself (the unit system chosen, the lattice mismatch), shown with every run
    notes: tuple[str, ...] = ()
    #: the materials of a stack that names them (fdsolver.input.materials.StackInfo), else None
    stack_info: Any = field(default=None, repr=False)
    #: band gap of every layer in the case energy unit (materials, or the raw layers' ``gap``), else None
    gaps: tuple | None = None
    #: params given with a unit: name -> the unit (their overrides and sweep values are read in it)
    param_units: dict = field(default_factory=dict, repr=False)

    def with_params(self, **overrides) -> "Case":
        """The same case with some params replaced (numbers or expression strings); earlier overrides are kept."""
        merged = {**self.overrides, **overrides}
        return case_from_dict(self.data, path=self.path, text=self.text, overrides=merged, tables=self.tables)


# -------------------------------------------------------------------- shapes
def _build_shape(i: int, comp: Mapping, ctx: BuildContext, file) -> Shape:
    shape = _make_shape(i, comp, ctx, file)
    scale = shape.scale()
    feats = shape.features()
    if scale is not None and feats and max(abs(f) for f in feats) > MAX_OFFSET_IN_SIZES * scale:
        raise CaseError(
            f"the component sits at {max(abs(f) for f in feats):.3g}, more than {MAX_OFFSET_IN_SIZES:g} times its own size "
            f"({scale:.3g}) from x = 0, where grid positions are rounded to "
            f"{2.2e-16 * max(abs(f) for f in feats) / scale:.1e} of its size; move the origin closer",
            file=file,
            key=f"potential[{i}].center",
        )
    return shape


def _make_shape(i: int, comp: Mapping, ctx: BuildContext, file) -> Shape:
    """One [[potential]] component from its keys, through the shape registry."""
    where = f"potential[{i}]"
    if not isinstance(comp, Mapping):
        raise CaseError("each [[potential]] entry must be a table", file=file, key=where)
    kind = F.text(comp, "shape", file, where, choices=tuple(SHAPES))
    cls = SHAPES[kind]
    dims = component_keys(kind)
    check_keys(comp, dims, file, where)
    name = F.name_of(comp, file, where)
    for k in cls.required:
        if k not in comp:
            raise CaseError(f"missing required key '{k}' for shape '{kind}'", file=file, key=f"{where}.{k}")
    values: dict[str, Any] = {}
    for k in cls.required + cls.optional:
        if k not in comp:
            continue
        if dims[k] == TEXT:
            values[k] = F.text(comp, k, file, where, hint=cls.hints.get(k, "a string"))
        elif dims[k] == COUNT:
            values[k] = F.whole(comp, k, file, where, 0, 0, 100)
        else:
            values[k] = F.number(comp, k, ctx.params, file, where, positive=k in cls.positive)
    if cls.signed:
        has = [k for k in SIGN_KEYS if k in comp]
        if len(has) != 1:
            raise CaseError(
                f"give exactly one of 'depth' (a well, V = -depth) or 'height' (a barrier, V = +height); got "
                f"{' and '.join(has) if has else 'neither'}",
                file=file,
                key=f"{where}.depth",
            )
        v = F.number(comp, has[0], ctx.params, file, where)
        values["amplitude"] = -v if has[0] == "depth" else v
    try:
        return cls.build(name, values, replace(ctx, where=where))
    except CaseError as err:
        raise err.located(file=file, key_prefix=None if err.key and err.key.startswith(where) else where) from None


def _inside(path: Path, folder) -> bool:
    """True if ``path`` (symbolic links followed) lies inside ``folder``: its lines may be quoted in messages."""
    if folder is None:
        return False
    try:
        return Path(os.path.realpath(path)).is_relative_to(os.path.realpath(folder))
    except (OSError, ValueError):
        return False


def _context(params, units, mass, file, base_dir, tables, read_files=True) -> BuildContext:
    """How shapes read their table files and compile their expressions, for this case.

    Tables already in ``tables`` (the stored ones of an archive) are parsed from there; others are read from
    disk relative to the case file, unless ``read_files`` is false (a stored case re-read from an archive must
    not make fdsolver read other files).
    """
    allowed = frozenset(params) | {"x"}
    parsed: dict = {}  # (file, columns) -> (xs, vs): a table used by many components is parsed once

    def read(fname: str, x_column: int, v_column: int, key: str):
        if (fname, x_column, v_column) in parsed:
            return parsed[fname, x_column, v_column]
        if fname in tables:
            got = parse_table(tables[fname], fname, x_column=x_column, v_column=v_column, key=key)
        elif not read_files:
            raise CaseError(f"the stored case names the table '{shorten(fname)}', which the archive does not hold; "
                            "it is damaged or was not written by fdsolver", file=file, key=key)
        else:
            path = (Path(base_dir) / fname) if base_dir is not None else Path(fname)
            xs, vs, text = read_table(path, file=file, key=key, x_column=x_column, v_column=v_column,
                                      quote=_inside(path, base_dir))
            if sum(len(t) for t in tables.values()) + len(text) > MAX_STORED_CASE_BYTES:
                raise CaseError(f"the case's tables hold more than {MAX_STORED_CASE_BYTES // 2**20} MB together, more "
                                "than an archive stores with its case; use fewer or shorter tables", file=file, key=key)
            tables[fname] = text
            got = (xs, vs)
        parsed[fname, x_column, v_column] = got
        return got

    def compile_v(text: str, key: str):
        return compile_expression(text, allowed, file=file, key=key)

    return BuildContext(mass, units.hbar2_2me, params, read, compile_v)


def _build_stack(layers, params, mass, origin, file) -> LayerStack:
    if not isinstance(layers, list) or not layers:
        raise CaseError("[[layer]] must be a non-empty array of tables", file=file, key="layer")
    out = []
    n = len(layers)
    for i, lay in enumerate(layers, start=1):
        where = f"layer[{i}]"
        if not isinstance(lay, Mapping):
            raise CaseError("each [[layer]] entry must be a table", file=file, key=where)
        check_keys(lay, LAYER, file, where)
        outer = i == 1 or i == n
        thick = F.number(lay, "thickness", params, file, where, positive=True, required=not outer)
        edge = F.number(lay, "band_edge", params, file, where)
        m = F.mass(lay, "mass", params, file, where, default=mass)
        name = F.name_of(lay, file, where)
        out.append(Layer(name, float(thick) if thick is not None else math.inf, edge, m))
    return LayerStack(tuple(out), origin)  # a single layer is a flat stack over the whole line


def _build_periodic_stack(layers, params, mass, origin, file) -> LayerStack:
    """The layers of a periodic case: those with a thickness are one period, left to right.

    A first and/or last layer without a thickness is the cladding of finite N-period stacks (one
    given serves both sides); without one, the period's layer with the highest band edge is.
    """
    if not isinstance(layers, list) or not layers:
        raise CaseError("[[layer]] must be a non-empty array of tables", file=file, key="layer")
    n = len(layers)
    inner, clad = [], {}
    for i, lay in enumerate(layers, start=1):
        where = f"layer[{i}]"
        if not isinstance(lay, Mapping):
            raise CaseError("each [[layer]] entry must be a table", file=file, key=where)
        check_keys(lay, LAYER, file, where)
        end = i == 1 or i == n
        thick = F.number(lay, "thickness", params, file, where, positive=True, required=not end)
        layer = Layer(F.name_of(lay, file, where), math.inf if thick is None else float(thick),
                      F.number(lay, "band_edge", params, file, where), F.mass(lay, "mass", params, file, where, default=mass))
        if thick is None:
            clad["left" if i == 1 else "right"] = layer
        else:
            inner.append(layer)
    if not inner:
        raise CaseError("a periodic stack needs layers with a thickness (one period); the first and last layers "
                        "without one are only the cladding of finite stacks", file=file, key="layer")
    if not clad:
        top = max(inner, key=lambda layer: layer.band_edge)
        clad = {"left": replace(top, thickness=math.inf)}
    left = clad.get("left", clad.get("right"))
    right = clad.get("right", left)
    return LayerStack((left, *inner, right), origin)


# -------------------------------------------------------------------- entry
def load_case(path, **overrides) -> Case:
    """Read and validate the case file at ``path``; keyword arguments override [params] entries."""
    if not isinstance(path, (str, os.PathLike)) or not str(path).strip():
        raise CaseError(f"give the path of a case file, got {path!r}")
    p = Path(path)
    regular_file(p, str(path), None, "case file")
    try:
        raw = p.read_bytes()
    except IsADirectoryError:
        raise CaseError("is a directory; give a case file (.toml)", file=str(path)) from None
    except FileNotFoundError:
        raise CaseError("no such case file", file=str(path)) from None
    except OSError as exc:
        raise CaseError(f"cannot read: {exc.strerror or exc}", file=str(path)) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise CaseError("is not UTF-8 text; a case file is TOML", file=str(path)) from None
    return case_from_text(text, path=str(path), overrides=overrides)


def case_from_text(text: str, *, path: str | None = None, overrides: Mapping | None = None, tables=None,
                   read_files: bool = True) -> Case:
    """Validate TOML ``text`` (tables, if given, map table file names to their stored text; ``read_files``:
    whether tables not among them may be read from disk).  A leading byte-order mark is dropped."""
    toml = text[1:] if text.startswith(BOM) else text
    try:
        data = tomllib.loads(toml)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(f"TOML syntax error: {exc}", file=path) from None
    except RecursionError:
        raise CaseError("TOML nesting too deep", file=path) from None
    except ValueError as exc:  # an integer of more digits than Python converts (4300)
        raise CaseError(f"cannot read a number: {str(exc).split(';')[0]}; write it with an exponent", file=path) from None
    return case_from_dict(data, path=path, text=text, overrides=overrides, tables=tables, read_files=read_files)


def _counts(data: Mapping, file) -> None:
    """The work budget of a case (:mod:`fdsolver.limits`): components and layers, before anything is built."""
    for key, most in (("potential", MAX_COMPONENTS), ("layer", MAX_LAYERS)):
        items = data.get(key)
        if isinstance(items, list) and len(items) > most:
            raise CaseError(f"{len(items)} entries; at most {most} are allowed", file=file, key=key)


def case_from_dict(data: Mapping[str, Any], *, path=None, text=None, overrides=None, tables=None,
                   read_files: bool = True) -> Case:
    """Validate a case given as Python data with the TOML schema (see :func:`case_from_text` for the rest)."""
    raw_overrides = overrides
    file = path
    if not isinstance(data, Mapping):
        raise CaseError("a case must be a table of keys", file=file)
    check_keys(data, TOP, file, "")
    _counts(data, file)
    raw_data = data
    conv = convert_case(data, overrides, file)  # values with units -> plain numbers in the case units
    data, overrides = conv.data, conv.overrides
    units_name = F.text(data, "units", file, "", choices=tuple(UNIT_SYSTEMS), default=conv.system)
    units = UNIT_SYSTEMS[units_name]
    title = data["title"] if "title" in data else (Path(path).stem if path else "untitled case")
    if not isinstance(title, str):
        raise CaseError("must be a string", file=file, key="title")
    params = _params(data, overrides, file)
    mass = F.mass(data, "mass", params, file, "", default=1.0)
    origin = F.number(data, "stack_origin", params, file, "", default=0.0)
    tables = dict(tables or {})
    base_dir = os.path.dirname(os.path.abspath(path)) if path else None
    comps = data.get("potential", [])
    if not isinstance(comps, list):
        raise CaseError("use [[potential]] (an array of tables), one per component", file=file, key="potential")
    ctx = _context(params, units, mass, file, base_dir, tables, read_files)
    shapes = tuple(_build_shape(i, c, ctx, file) for i, c in enumerate(comps, start=1))
    carrier, temperature, nonparabolic = _carrier_keys(data, params, file)
    stack_info, gaps = None, None
    dom = data.get("domain")
    periodic = isinstance(dom, Mapping) and dom.get("boundary") == "periodic"
    if "layer" in data and is_material_stack(data["layer"], file):
        stack, stack_info = build_material_stack(data["layer"], params, origin, units, carrier, temperature,
                                                 library_for(data, file), file)
        gaps = tuple(stack_info.bands.gap)
    else:
        build_stack = _build_periodic_stack if periodic else _build_stack
        stack = build_stack(data["layer"], params, mass, origin, file) if "layer" in data else None
        gaps = _raw_gaps(data, params, file) if stack is not None and not periodic else None
    if not shapes and stack is None:
        raise CaseError("the case defines no potential: add [[potential]] components or a [[layer]] stack", file=file, key="potential")
    potential = Potential(shapes, units, mass, stack)
    domain = _domain(data, params, potential, file)
    settings = _settings(data, params, file)
    for section in ("delta_check", "sweep", "transport"):
        check_section(data, section, file)
    if text is None:
        text = dumps_case(raw_data)
    notes = tuple(n for n in (conv.note, stack_info.mismatch.warning if stack_info else None) if n)
    if nonparabolic:
        check_nonparabolic(stack, gaps, carrier, file)
    return Case(title, units, mass, params, potential, domain, settings, text, path, dict(raw_data), tables,
                dict(raw_overrides or {}), carrier=carrier, temperature=temperature, nonparabolicity=nonparabolic,
                notes=notes, stack_info=stack_info, gaps=gaps, param_units=dict(conv.param_units))


def _carrier_keys(data, params, file) -> tuple[str, float, bool]:
    """The top-level ``carrier``, ``temperature`` (K) and ``nonparabolicity`` keys."""
    from fdsolver.model.materials import CARRIERS

    carrier = F.text(data, "carrier", file, "", choices=CARRIERS, default="electron")
    temperature = F.number(data, "temperature", params, file, "", default=300.0)
    if not (math.isfinite(temperature) and 0.0 <= temperature <= 5000.0):
        raise CaseError(f"must be a temperature from 0 to 5000 K, got {temperature:g}", file=file, key="temperature")
    nonparabolic = bool(F.flag(data, "nonparabolicity", file, "", default=False))
    return carrier, float(temperature), nonparabolic


def _raw_gaps(data, params, file) -> tuple | None:
    """The ``gap`` of every raw layer (None where a layer gives none; None overall if none does)."""
    gaps = []
    for i, lay in enumerate(data["layer"], start=1):
        g = F.number(lay, "gap", params, file, f"layer[{i}]", positive=True, required=False) if isinstance(lay, Mapping) else None
        gaps.append(g)
    return tuple(gaps) if any(g is not None for g in gaps) else None


def check_nonparabolic(stack, gaps, carrier: str, file) -> None:
    """``nonparabolicity = true`` needs a layer stack with a gap in every layer, and a carrier the two-band model has."""
    if carrier == "heavy_hole":
        raise CaseError("the two-band (Kane) energy-dependent mass couples the conduction band and the light holes; "
                        "heavy holes are not in it: set nonparabolicity = false for heavy holes", file=file,
                        key="nonparabolicity")
    if stack is None:
        raise CaseError("the energy-dependent mass needs a [[layer]] stack (band edge, mass and gap per layer)",
                        file=file, key="nonparabolicity")
    if gaps is None or any(g is None for g in gaps):
        k = 1 if gaps is None else 1 + [g is None for g in gaps].index(True)
        raise CaseError("the energy-dependent mass needs the band gap of every layer: give gap = ... (an energy) or "
                        "name the layer's material", file=file, key=f"layer[{k}].gap")


def _spelling(name: str) -> str:
    """A name quoted with the code points of its non-ASCII characters (look-alikes differ only there)."""
    odd = [f"U+{ord(c):04X}" for c in name if ord(c) > 127]
    return f"'{name}'" + (f" ({' '.join(odd)})" if odd else "")


def _params(data: Mapping, overrides, file) -> dict[str, float]:
    """[params] with the overrides applied, resolved in dependency order.

    Names are compared as expressions read them (Unicode NFKC): two spellings of one name (``fi`` and the
    ligature ``ﬁ``) are refused with both shown, and so is a look-alike of a reserved name (FULLWIDTH ``ｐｉ``).
    A name is kept in its NFKC form, the form every expression sees.
    """
    raw = data.get("params", {})
    if not isinstance(raw, Mapping):
        raise CaseError("[params] must be a table of name = number", file=file, key="params")
    if len(raw) > MAX_PARAMS:
        raise CaseError(f"{len(raw)} params; at most {MAX_PARAMS} are allowed", file=file, key="params")
    raw_params: dict = {}
    spelled: dict[str, str] = {}
    for k, v in raw.items():
        if not isinstance(k, str):
            raise CaseError(f"param names must be text, got {k!r}", file=file, key="params")
        n = normal_name(k)
        if n in spelled:
            raise CaseError(f"params {_spelling(spelled[n])} and {_spelling(k)} are the same name once "
                            f"Unicode-normalised (NFKC: '{n}'), as expressions read them; rename one",
                            file=file, key=f"params.{k}")
        if n in RESERVED or not n.isidentifier() or n.startswith("_") or keyword.iskeyword(n):
            what = ("the position x" if n == "x" else "the name of a built-in constant" if n in ("pi", "e")
                    else "the name of a built-in function" if n in RESERVED
                    else "not a name (letters, digits and '_', starting with a letter)")
            reads = f" (it reads as '{n}', Unicode NFKC)" if n != k else ""
            raise CaseError(f"'{k}' cannot be a param name: {what}{reads}", file=file, key=f"params.{k}")
        spelled[n] = k
        raw_params[n] = v
    for k, v in (overrides or {}).items():
        n = normal_name(str(k))
        if n not in raw_params:
            raise CaseError(f"no param named '{k}' in [params]{did_you_mean(n, raw_params)}", file=file, key=f"params.{k}")
        raw_params[n] = v
    return resolve_params(raw_params, file=file, key_prefix="params")


def _domain(data, params, potential: Potential, file) -> Domain:
    table = check_section(data, "domain", file)
    boundary = F.text(table, "boundary", file, "domain", choices=BOUNDARIES, default="open")
    if boundary == "periodic":
        return _periodic_domain(table, params, potential, file)
    for key in ("period", "start"):
        if key in table:
            raise CaseError(f'{key} belongs to a periodic case; set boundary = "periodic" or remove it', file=file,
                            key=f"domain.{key}")
    left = F.number(table, "left", params, file, "domain", required=False)
    right = F.number(table, "right", params, file, "domain", required=False)
    if boundary == "hard" and (left is None or right is None):
        raise CaseError('hard walls need both left and right positions', file=file, key="domain.left" if left is None else "domain.right")
    if left is not None and right is not None and left < right and (
        right - left <= 1e-9 * max(abs(left), abs(right)) or right - left < 1e-100
    ):
        raise CaseError(
            f"the walls at {left:g} and {right:g} are too close to resolve in double precision; widen [domain]",
            file=file,
            key="domain.right",
        )
    if left is not None and right is not None and not left < right:
        raise CaseError(f"left ({left:g}) must be below right ({right:g})", file=file, key="domain.left")
    if boundary == "hard":
        for pos, _ in potential.point_terms():
            if not left < pos < right:
                raise CaseError(
                    f"a point interaction at {pos:g} is not strictly inside the walls [{left:g}, {right:g}]",
                    file=file,
                    key="domain",
                )
    return Domain(boundary, left, right)


def _periodic_domain(table, params, potential: Potential, file) -> Domain:
    """One period: ``period`` and ``start`` checked against the potential (:func:`fdsolver.model.periodic.period_window`)."""
    for key in ("left", "right"):
        if key in table:
            raise CaseError("a periodic case has no walls and no box: give period (and start), not left and right",
                            file=file, key=f"domain.{key}")
    period = F.number(table, "period", params, file, "domain", positive=True, required=False)
    start = F.number(table, "start", params, file, "domain", required=False)
    try:
        period, start = period_window(potential, period, start)
    except CaseError as err:
        raise err.located(file=file) from None
    return Domain("periodic", None, None, period, start)


def _settings(data, params, file) -> SolveSettings:
    table = check_section(data, "solve", file)
    tol = F.number(table, "tolerance", params, file, "solve", default=1e-8, positive=True)
    if not 1e-13 <= tol <= 0.1:
        raise CaseError(f"tolerance must be between 1e-13 and 0.1 (relative), got {tol:g}", file=file, key="solve.tolerance")
    max_states = F.whole(table, "max_states", file, "solve", 10, 1, MAX_STATES)
    mem = F.number(table, "memory_mb", params, file, "solve", default=1500.0, positive=True)
    if mem > MAX_MEMORY_MB:
        raise CaseError(f"a budget of {mem:g} MB is more than the {MAX_MEMORY_MB:g} MB fdsolver accepts", file=file,
                        key="solve.memory_mb")
    levels = F.whole(table, "max_levels", file, "solve", 9, 3, 20)
    window = None
    if "energy_window" in table:
        w = table["energy_window"]
        if not isinstance(w, list) or len(w) != 2:
            raise CaseError("must be a pair [low, high] of energies", file=file, key="solve.energy_window")
        lo = evaluate_number(w[0], params, file=file, key="solve.energy_window")
        hi = evaluate_number(w[1], params, file=file, key="solve.energy_window")
        if not lo < hi:
            raise CaseError(f"low ({lo:g}) must be below high ({hi:g})", file=file, key="solve.energy_window")
        window = (lo, hi)
    bands = F.whole(table, "bands", file, "solve", None, 1, 10000)
    wavevectors = F.whole(table, "wavevectors", file, "solve", 101, 2, 100000)
    quasi = F.flag(table, "quasi_bound", file, "solve")
    return SolveSettings(tol, max_states, window, mem, levels, min(MIN_LEVELS, levels), GridSettings(), bands, wavevectors,
                         quasi_bound=quasi)


# ---------------------------------------------------------------- writing
def dumps_case(data: Mapping) -> str:
    """TOML text of a case given as data (numpy numbers as plain numbers), written by tomli-w."""
    import tomli_w

    def plain(v):
        if hasattr(v, "item") and not isinstance(v, (str, bytes)):
            try:
                return plain(v.item())
            except (TypeError, ValueError):
                pass
        if isinstance(v, Mapping):
            return {str(k): plain(x) for k, x in v.items()}
        if isinstance(v, (list, tuple)):
            return [plain(x) for x in v]
        return v

    try:
        return tomli_w.dumps(plain(data))
    except (TypeError, ValueError) as exc:
        raise CaseError(f"the case data cannot be written as TOML ({exc})") from None
