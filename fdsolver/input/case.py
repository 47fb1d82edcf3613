"""Case files: the TOML contract, validated into a :class:`Case`.

A case is read with :func:`load_case` (a file), :func:`case_from_text` (TOML
text) or :func:`case_from_dict` (the same schema as Python data).  Every
problem raises :class:`~fdsolver.errors.CaseError` naming the file, the key
(components and layers are numbered from 1: ``potential[2].width``) and what
to do.  The schema is documented in README.md; :data:`TOP_KEYS` and the
``*_KEYS`` tables below are its single source.
"""

from __future__ import annotations

import math
import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from fdsolver.model import shapes as S
from fdsolver.errors import CaseError, did_you_mean
from fdsolver.input._expressions import compile_expression, evaluate_number, resolve_params
from fdsolver.numerics.grid import GridSettings
from fdsolver.model.potential import Layer, LayerStack, Potential
from fdsolver.boundstates.settings import SolveSettings
from fdsolver.model.domain import Domain
from fdsolver.model.units import UNIT_SYSTEMS, UnitSystem

TOP_KEYS = {
    "title": "a short title of the case",
    "description": "free text",
    "units": '"atomic" or "nm-meV"',
    "mass": "particle mass in electron masses (default 1)",
    "stack_origin": "position of the left edge of the first inner layer (default 0)",
    "params": "table of named numbers",
    "potential": "array of tables [[potential]]",
    "layer": "array of tables [[layer]]",
    "domain": "table [domain]",
    "solve": "table [solve]",
    "delta_check": "table [delta_check] (zero-range comparison settings)",
    "sweep": "table [sweep] (parameter scan settings)",
}
COMMON_SHAPE_KEYS = ("shape", "name")
SIGN_KEYS = ("depth", "height")
LAYER_KEYS = ("name", "thickness", "band_edge", "mass")
DOMAIN_KEYS = ("boundary", "left", "right")
SOLVE_KEYS = ("tolerance", "max_states", "energy_window", "memory_mb", "max_levels")
BOUNDARIES = ("open", "hard")


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


# ----------------------------------------------------------------- helpers
_suggest = did_you_mean


def _check_keys(table: Mapping, allowed, file, where: str) -> None:
    for k in table:
        if not isinstance(k, str):
            raise CaseError(f"keys must be strings, got {k!r}", file=file, key=where or None)
        if k not in allowed:
            raise CaseError(
                f"unknown key '{k}'{_suggest(k, allowed)} (allowed: {', '.join(sorted(allowed))})",
                file=file,
                key=f"{where}.{k}" if where else k,
            )


def _num(table, key, params, file, where, default=None, positive=False, required=True):
    if key not in table:
        if default is not None or not required:
            return default
        raise CaseError(f"missing required key '{key}'", file=file, key=f"{where}.{key}" if where else key)
    kname = f"{where}.{key}" if where else key
    val = evaluate_number(table[key], params, file=file, key=kname)
    if positive and not val > 0:
        raise CaseError(f"must be positive, got {val:g}", file=file, key=kname)
    return val


def _int(table, key, file, where, default, lo, hi):
    if key not in table:
        return default
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, int) or not lo <= v <= hi:
        raise CaseError(f"must be a whole number from {lo} to {hi}, got {v!r}", file=file, key=f"{where}.{key}")
    return v


def _str(table, key, file, where, choices=None, default=None):
    if key not in table:
        if default is None:
            raise CaseError(f"missing required key '{key}'", file=file, key=f"{where}.{key}" if where else key)
        return default
    v = table[key]
    kname = f"{where}.{key}" if where else key
    if not isinstance(v, str):
        raise CaseError(f"must be a string, got {v!r}", file=file, key=kname)
    if choices is not None and v not in choices:
        raise CaseError(
            f"'{v}' is not one of {', '.join(repr(c) for c in choices)}{_suggest(v, choices)}", file=file, key=kname
        )
    return v


# ------------------------------------------------------------------ tables
MAX_INPUT_BYTES = 50 * 2**20


def _regular_file(path: Path, file, key, what: str) -> None:
    """Refuse FIFOs, devices and oversized files before reading (they could block or never end)."""
    import stat

    try:
        st = os.stat(path)
    except FileNotFoundError:
        return  # reported by the reader with its own message
    except OSError as exc:
        raise CaseError(f"cannot read {what} '{path}': {exc.strerror or exc}", file=file or str(path), key=key) from None
    if stat.S_ISDIR(st.st_mode):
        return
    if not stat.S_ISREG(st.st_mode):
        raise CaseError(f"{what} '{path}' is not a regular file (a pipe or a device); give a file", file=file or str(path), key=key)
    if st.st_size > MAX_INPUT_BYTES:
        raise CaseError(
            f"{what} '{path}' is {st.st_size / 2**20:.0f} MB; at most {MAX_INPUT_BYTES // 2**20} MB is read",
            file=file or str(path),
            key=key,
        )


def read_table(path: Path, *, file, key, x_column=0, v_column=1) -> tuple[np.ndarray, np.ndarray, str]:
    """Read a CSV profile of (x, V): comma, semicolon, tab or space separated; '#' comments; one header line allowed."""
    _regular_file(path, file, key, "table")
    try:
        text = path.read_text(encoding="utf-8")
    except IsADirectoryError:
        raise CaseError(f"table '{path}' is a directory; give a CSV file of x, V", file=file, key=key) from None
    except FileNotFoundError:
        raise CaseError(f"table file '{path}' not found (paths are relative to the case file)", file=file, key=key) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(f"cannot read table '{path}': {exc}", file=file, key=key) from None
    return parse_table(text, str(path), x_column=x_column, v_column=v_column, key=key) + (text,)


def parse_table(text: str, name: str, *, x_column=0, v_column=1, key="table"):
    """Parse the text of a CSV profile; every bad row is reported with its line number."""
    xs, vs = [], []
    seen_data = False
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        parts = [p for p in line.replace(";", ",").replace("\t", ",").replace(" ", ",").split(",") if p]
        need = max(x_column, v_column) + 1
        try:
            if len(parts) < need:
                raise ValueError
            x, v = float(parts[x_column]), float(parts[v_column])
        except ValueError:
            if not seen_data and not xs:
                seen_data = True  # one header line is allowed
                continue
            raise CaseError(
                f"line {lineno} of table '{name}' is not {need} numbers: {raw.strip()[:60]!r}", key=key
            ) from None
        seen_data = True
        if not (math.isfinite(x) and math.isfinite(v)):
            raise CaseError(f"line {lineno} of table '{name}' has a non-finite number", key=key)
        xs.append(x)
        vs.append(v)
    if len(xs) < 2:
        raise CaseError(f"table '{name}' needs at least 2 rows of x, V; found {len(xs)}", key=key)
    xa = np.asarray(xs)
    bad = np.flatnonzero(np.diff(xa) <= 0)
    if bad.size:
        raise CaseError(
            f"x must increase strictly in table '{name}'; it does not after x = {xa[bad[0]]:g} "
            f"(data row {bad[0] + 2})",
            key=key,
        )
    return xa, np.asarray(vs)


# ------------------------------------------------------------------ shapes
def _build_shape(i: int, comp: Mapping, params, units: UnitSystem, mass: float, file, base_dir, tables) -> S.Shape:
    shape = _make_shape(i, comp, params, units, mass, file, base_dir, tables)
    scale = shape.scale()
    feats = shape.features()
    if scale is not None and feats and max(abs(f) for f in feats) * 1e-15 > scale:
        raise CaseError(
            f"the component sits at {max(abs(f) for f in feats):.3g}, more than 1e15 times its own size "
            f"({scale:.3g}) from x = 0: its shape would be lost to round-off; move the origin closer",
            file=file,
            key=f"potential[{i}].center",
        )
    return shape


def _make_shape(i: int, comp: Mapping, params, units: UnitSystem, mass: float, file, base_dir, tables) -> S.Shape:
    where = f"potential[{i}]"
    if not isinstance(comp, Mapping):
        raise CaseError("each [[potential]] entry must be a table", file=file, key=where)
    kind = _str(comp, "shape", file, where, choices=tuple(S.SHAPES))
    spec = S.SHAPES[kind]
    allowed = set(COMMON_SHAPE_KEYS) | set(spec.required) | set(spec.optional)
    if spec.signed:
        allowed |= set(SIGN_KEYS)
    _check_keys(comp, allowed, file, where)
    name = comp.get("name")
    if name is not None and not isinstance(name, str):
        raise CaseError("must be a string", file=file, key=f"{where}.name")
    for k in spec.required:
        if k not in comp:
            raise CaseError(f"missing required key '{k}' for shape '{kind}'", file=file, key=f"{where}.{k}")

    def num(k, default=None, positive=False):
        return _num(comp, k, params, file, where, default=default, positive=positive or k in spec.positive)

    amp = None
    if spec.signed:
        has = [k for k in SIGN_KEYS if k in comp]
        if len(has) != 1:
            raise CaseError(
                f"give exactly one of 'depth' (a well, V = -depth) or 'height' (a barrier, V = +height); got "
                f"{' and '.join(has) if has else 'neither'}",
                file=file,
                key=f"{where}.depth",
            )
        amp = -num("depth") if has[0] == "depth" else num("height")
    if kind == "square":
        return S.Square(name, num("center"), amp, num("width"))
    if kind == "smooth_square":
        return S.SmoothSquare(name, num("center"), amp, num("width"), num("edge"))
    if kind == "gaussian":
        return S.Gaussian(name, num("center"), amp, num("sigma"))
    if kind == "sech2":
        return S.Sech2(name, num("center"), amp, num("width"))
    if kind == "harmonic":
        hw = num("omega")
        return S.Harmonic(name, num("center", 0.0), hw, mass * hw**2 / (4.0 * units.hbar2_2me))
    if kind == "morse":
        return S.Morse(name, num("center", 0.0), num("depth"), num("a"))
    if kind == "linear":
        return S.Linear(name, num("field"))
    if kind == "point":
        return S.Point(name, num("center"), num("strength"))
    if kind == "expression":
        text = comp["V"]
        if not isinstance(text, str):
            raise CaseError("must be a string expression in x and the params", file=file, key=f"{where}.V")
        expr = compile_expression(text, list(params) + ["x"], file=file, key=f"{where}.V")
        return S.ExpressionShape(name, expr, tuple(sorted(params.items())), text)
    if kind == "table":
        fname = _str(comp, "file", file, where)
        interp = _str(comp, "interpolation", file, where, choices=("linear", "cubic"), default="linear")
        xc = _int(comp, "x_column", file, where, 0, 0, 100)
        vc = _int(comp, "v_column", file, where, 1, 0, 100)
        key = f"{where}.file"
        if fname in tables:
            try:
                xs, vs = parse_table(tables[fname], fname, x_column=xc, v_column=vc, key=key)
            except CaseError as err:
                raise err.located(file=file) from None
        else:
            path = (Path(base_dir) / fname) if base_dir is not None else Path(fname)
            try:
                xs, vs, text = read_table(path, file=file, key=key, x_column=xc, v_column=vc)
            except CaseError as err:
                raise err.located(file=file) from None
            tables[fname] = text
        if interp == "cubic" and xs.size < 4:
            raise CaseError("cubic interpolation needs at least 4 table rows", file=file, key=f"{where}.interpolation")
        return S.Table(name, tuple(xs.tolist()), tuple(vs.tolist()), interp, fname)
    raise CaseError(f"unknown shape '{kind}'", file=file, key=f"{where}.shape")  # pragma: no cover


def _build_stack(layers, params, mass, origin, file) -> LayerStack:
    if not isinstance(layers, list) or not layers:
        raise CaseError("[[layer]] must be a non-empty array of tables", file=file, key="layer")
    out = []
    n = len(layers)
    for i, lay in enumerate(layers, start=1):
        where = f"layer[{i}]"
        if not isinstance(lay, Mapping):
            raise CaseError("each [[layer]] entry must be a table", file=file, key=where)
        _check_keys(lay, LAYER_KEYS, file, where)
        outer = i == 1 or i == n
        thick = _num(lay, "thickness", params, file, where, positive=True, required=not outer)
        edge = _num(lay, "band_edge", params, file, where)
        m = _num(lay, "mass", params, file, where, default=mass, positive=True)
        name = lay.get("name")
        if name is not None and not isinstance(name, str):
            raise CaseError("must be a string", file=file, key=f"{where}.name")
        out.append(Layer(name, float(thick) if thick is not None else math.inf, edge, m))
    if n < 2:
        raise CaseError("a layer stack needs at least two layers (the two outer layers extend to infinity)", file=file, key="layer")
    return LayerStack(tuple(out), origin)


# -------------------------------------------------------------------- entry
def load_case(path, **overrides) -> Case:
    """Read and validate the case file at ``path``; keyword arguments override [params] entries."""
    p = Path(path)
    _regular_file(p, str(path), None, "case file")
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
    _check_keys(data, TOP_KEYS, file, "")
    units_name = _str(data, "units", file, "", choices=tuple(UNIT_SYSTEMS), default="atomic")
    units = UNIT_SYSTEMS[units_name]
    title = data.get("title", Path(path).stem if path else "untitled case")
    if not isinstance(title, str):
        raise CaseError("must be a string", file=file, key="title")
    raw_params = data.get("params", {})
    if not isinstance(raw_params, Mapping):
        raise CaseError("[params] must be a table of name = number", file=file, key="params")
    raw_params = dict(raw_params)
    for k, v in (overrides or {}).items():
        if k not in raw_params:
            raise CaseError(
                f"no param named '{k}' in [params]{_suggest(k, raw_params)}", file=file, key=f"params.{k}"
            )
        raw_params[k] = v
    reserved = {"x", "pi", "e"}
    for k in raw_params:
        if k in reserved or not isinstance(k, str) or not k.isidentifier() or k.startswith("_"):
            raise CaseError(f"'{k}' cannot be a param name (reserved or not an identifier)", file=file, key=f"params.{k}")
    params = resolve_params(raw_params, file=file, key_prefix="params")
    mass = _num(data, "mass", params, file, "", default=1.0, positive=True)
    origin = _num(data, "stack_origin", params, file, "", default=0.0)
    tables = dict(tables or {})
    base_dir = os.path.dirname(os.path.abspath(path)) if path else None
    comps = data.get("potential", [])
    if not isinstance(comps, list):
        raise CaseError("use [[potential]] (an array of tables), one per component", file=file, key="potential")
    shapes = tuple(
        _build_shape(i, c, params, units, mass, file, base_dir, tables) for i, c in enumerate(comps, start=1)
    )
    stack = _build_stack(data["layer"], params, mass, origin, file) if "layer" in data else None
    if not shapes and stack is None:
        raise CaseError("the case defines no potential: add [[potential]] components or a [[layer]] stack", file=file, key="potential")
    potential = Potential(shapes, units, mass, stack)
    domain = _domain(data.get("domain", {}), params, potential, file)
    settings = _settings(data.get("solve", {}), params, file)
    for sect in ("delta_check", "sweep"):
        if sect in data and not isinstance(data[sect], Mapping):
            raise CaseError(f"[{sect}] must be a table", file=file, key=sect)
    if text is None:
        text = dumps_case(data)
    return Case(title, units, mass, params, potential, domain, settings, text, path, dict(data), tables, dict(overrides or {}))


def _domain(table, params, potential: Potential, file) -> Domain:
    if not isinstance(table, Mapping):
        raise CaseError("[domain] must be a table", file=file, key="domain")
    _check_keys(table, DOMAIN_KEYS, file, "domain")
    boundary = _str(table, "boundary", file, "domain", choices=BOUNDARIES, default="open")
    left = _num(table, "left", params, file, "domain", required=False)
    right = _num(table, "right", params, file, "domain", required=False)
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


def _settings(table, params, file) -> SolveSettings:
    if not isinstance(table, Mapping):
        raise CaseError("[solve] must be a table", file=file, key="solve")
    _check_keys(table, SOLVE_KEYS, file, "solve")
    tol = _num(table, "tolerance", params, file, "solve", default=1e-8, positive=True)
    if not 1e-13 <= tol <= 0.1:
        raise CaseError(f"tolerance must be between 1e-13 and 0.1 (relative), got {tol:g}", file=file, key="solve.tolerance")
    max_states = _int(table, "max_states", file, "solve", 10, 1, 100000)
    mem = _num(table, "memory_mb", params, file, "solve", default=1500.0, positive=True)
    levels = _int(table, "max_levels", file, "solve", 9, 3, 20)
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
    return SolveSettings(tol, max_states, window, mem, levels, 3, GridSettings())


# ---------------------------------------------------------------- writing
def _toml_value(v) -> str:
    if isinstance(v, np.generic):
        v = v.item()  # numpy scalars as plain Python numbers
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v) if not isinstance(v, float) or math.isfinite(v) else ("nan" if math.isnan(v) else ("inf" if v > 0 else "-inf"))
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, Mapping):
        return "{" + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def dumps_case(data: Mapping) -> str:
    """TOML text of a case given as data (plain keys first, then tables, then arrays of tables)."""
    lines = []
    plain = {k: v for k, v in data.items() if not isinstance(v, (Mapping, list)) or (isinstance(v, list) and not all(isinstance(x, Mapping) for x in v))}
    for k, v in plain.items():
        lines.append(f"{k} = {_toml_value(v)}")
    for k, v in data.items():
        if isinstance(v, Mapping):
            lines.append(f"\n[{k}]")
            lines.extend(f"{kk} = {_toml_value(vv)}" for kk, vv in v.items())
    for k, v in data.items():
        if isinstance(v, list) and v and all(isinstance(x, Mapping) for x in v):
            for item in v:
                lines.append(f"\n[[{k}]]")
                lines.extend(f"{kk} = {_toml_value(vv)}" for kk, vv in item.items())
    return "\n".join(lines) + "\n"
