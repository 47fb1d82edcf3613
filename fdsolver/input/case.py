"""Case files: the TOML contract, validated into a :class:`Case`.

A case is read with :func:`load_case` (a file), :func:`case_from_text` (TOML
text) or :func:`case_from_dict` (the same schema as Python data).  Every
problem raises :class:`~fdsolver.errors.CaseError` naming the file, the key
(components and layers are numbered from 1: ``potential[2].width``) and what
to do.  The keys are declared once, in :mod:`fdsolver.input.schema`; the
shapes and their keys in the registry :data:`fdsolver.model.shapes.SHAPES`.
"""

from __future__ import annotations

import math
import os
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Mapping

from fdsolver.boundstates.settings import SolveSettings
from fdsolver.errors import CaseError, did_you_mean
from fdsolver.input import fields as F
from fdsolver.input._expressions import compile_expression, evaluate_number, resolve_params
from fdsolver.input.schema import LAYER, TOP, check_keys, check_section, component_keys
from fdsolver.input.tables import parse_table, read_table, regular_file
from fdsolver.model.domain import Domain
from fdsolver.model.potential import Potential
from fdsolver.model.shapes import COUNT, SHAPES, TEXT, BuildContext, Shape
from fdsolver.model.stack import Layer, LayerStack
from fdsolver.model.units import UNIT_SYSTEMS, UnitSystem
from fdsolver.numerics.grid import GridSettings

BOUNDARIES = ("open", "hard")
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


def _context(params, units, mass, file, base_dir, tables) -> BuildContext:
    """How shapes read their table files and compile their expressions, for this case."""

    def read(fname: str, x_column: int, v_column: int, key: str):
        if fname in tables:
            return parse_table(tables[fname], fname, x_column=x_column, v_column=v_column, key=key)
        path = (Path(base_dir) / fname) if base_dir is not None else Path(fname)
        xs, vs, text = read_table(path, file=file, key=key, x_column=x_column, v_column=v_column)
        tables[fname] = text
        return xs, vs

    def compile_v(text: str, key: str):
        return compile_expression(text, list(params) + ["x"], file=file, key=key)

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


# -------------------------------------------------------------------- entry
def load_case(path, **overrides) -> Case:
    """Read and validate the case file at ``path``; keyword arguments override [params] entries."""
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


def case_from_text(text: str, *, path: str | None = None, overrides: Mapping | None = None, tables=None) -> Case:
    """Validate TOML ``text`` (tables, if given, map table file names to their stored text)."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(f"TOML syntax error: {exc}", file=path) from None
    except RecursionError:
        raise CaseError("TOML nesting too deep", file=path) from None
    return case_from_dict(data, path=path, text=text, overrides=overrides, tables=tables)


def case_from_dict(data: Mapping[str, Any], *, path=None, text=None, overrides=None, tables=None) -> Case:
    """Validate a case given as Python data with the TOML schema."""
    file = path
    if not isinstance(data, Mapping):
        raise CaseError("a case must be a table of keys", file=file)
    check_keys(data, TOP, file, "")
    units_name = F.text(data, "units", file, "", choices=tuple(UNIT_SYSTEMS), default="atomic")
    units = UNIT_SYSTEMS[units_name]
    title = data.get("title", Path(path).stem if path else "untitled case")
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
    ctx = _context(params, units, mass, file, base_dir, tables)
    shapes = tuple(_build_shape(i, c, ctx, file) for i, c in enumerate(comps, start=1))
    stack = _build_stack(data["layer"], params, mass, origin, file) if "layer" in data else None
    if not shapes and stack is None:
        raise CaseError("the case defines no potential: add [[potential]] components or a [[layer]] stack", file=file, key="potential")
    potential = Potential(shapes, units, mass, stack)
    domain = _domain(data, params, potential, file)
    settings = _settings(data, params, file)
    for section in ("delta_check", "sweep", "transport"):
        check_section(data, section, file)
    if text is None:
        text = dumps_case(data)
    return Case(title, units, mass, params, potential, domain, settings, text, path, dict(data), tables, dict(overrides or {}))


def _params(data: Mapping, overrides, file) -> dict[str, float]:
    """[params] with the overrides applied, resolved in dependency order."""
    raw_params = data.get("params", {})
    if not isinstance(raw_params, Mapping):
        raise CaseError("[params] must be a table of name = number", file=file, key="params")
    raw_params = dict(raw_params)
    for k, v in (overrides or {}).items():
        if k not in raw_params:
            raise CaseError(f"no param named '{k}' in [params]{did_you_mean(k, raw_params)}", file=file, key=f"params.{k}")
        raw_params[k] = v
    reserved = {"x", "pi", "e"}
    for k in raw_params:
        if k in reserved or not isinstance(k, str) or not k.isidentifier() or k.startswith("_"):
            raise CaseError(f"'{k}' cannot be a param name (reserved or not an identifier)", file=file, key=f"params.{k}")
    return resolve_params(raw_params, file=file, key_prefix="params")


def _domain(data, params, potential: Potential, file) -> Domain:
    table = check_section(data, "domain", file)
    boundary = F.text(table, "boundary", file, "domain", choices=BOUNDARIES, default="open")
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


def _settings(data, params, file) -> SolveSettings:
    table = check_section(data, "solve", file)
    tol = F.number(table, "tolerance", params, file, "solve", default=1e-8, positive=True)
    if not 1e-13 <= tol <= 0.1:
        raise CaseError(f"tolerance must be between 1e-13 and 0.1 (relative), got {tol:g}", file=file, key="solve.tolerance")
    max_states = F.whole(table, "max_states", file, "solve", 10, 1, 100000)
    mem = F.number(table, "memory_mb", params, file, "solve", default=1500.0, positive=True)
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
    quasi = F.flag(table, "quasi_bound", file, "solve")
    return SolveSettings(tol, max_states, window, mem, levels, 3, GridSettings(), quasi_bound=quasi)


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
