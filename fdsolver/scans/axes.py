"""Scanned axes: one parser for ``sweep --vary``, ``delta-check --map`` and ``threshold --vary``; the units of a param.

An axis is written ``NAME=START:STOP:COUNT`` (linear spacing),
``NAME=START:STOP:COUNT:log`` (geometric; ``:lin`` forces linear) or
``NAME=v1,v2,...`` (a strictly increasing list); a search interval is
``NAME=LO:HI``.  NAME is a param of the case, or one of the extra axes a
study offers (the validity map's ``width``).  Every problem is a
:class:`~fdsolver.errors.CaseError` naming the option and what to write.

Units of a param (:func:`param_units`): those declared in the case's
``[sweep] units`` table (checked as UDUNITS-2 strings), else inferred from
the keys the param is given to.  A key's dimension comes from the shape
registry and the case schema (:func:`fdsolver.input.schema.dimension_of`);
a param takes it where it enters the key's value linearly: alone, times or
over a number, or in a sum or difference (``center = "-(d + width)/2"``
gives ``d`` and ``width`` the dimension of a length).  Uses that disagree
leave the units undeclared.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.input._expressions import normal_name
from fdsolver.input.schema import dimension_of
from fdsolver.io.units import parses_as_udunits, units_of

SPACINGS = {"log": "log", "lin": "linear", "linear": "linear"}
#: names that are numbers in an expression, not params
CONSTANTS = ("pi", "e")
#: dimensions that are not physical quantities (no units to infer)
NOT_QUANTITIES = ("text", "count", "table", "array of tables", "true/false", "list")


@dataclass(frozen=True)
class Axis:
    """One scanned axis: ``name``, strictly increasing ``values``, the ``text`` as given, ``spacing``
    ("linear", "log" or "list"), ``units`` (UDUNITS-2, "" if not declared) and ``units_name`` (what a reader
    calls them), the option ``key`` it came from, its ``long_name``, and whether it is a case ``param``."""

    name: str
    values: np.ndarray
    text: str
    spacing: str
    units: str = ""
    units_name: str = ""
    key: str = "--vary"
    long_name: str = ""
    param: bool = True


@dataclass(frozen=True)
class Extra:
    """An axis that is not a case param (the validity map's ``width``): its units, long name, default spacing."""

    units: str
    units_name: str
    long_name: str
    spacing: str = "linear"
    positive: bool = False


# ------------------------------------------------------------------ units
def declared_units(case) -> dict[str, str]:
    """The case's ``[sweep] units`` table, checked: each key a param, each value a UDUNITS-2 unit string."""
    table = (case.data.get("sweep") or {}).get("units", {})
    if not isinstance(table, Mapping):
        raise CaseError('must be a table of param = "unit"', file=case.path, key="sweep.units")
    out = {}
    for name, unit in table.items():
        key = f"sweep.units.{name}"
        if normal_name(str(name)) not in case.params:
            raise CaseError(f"no param named '{name}' in [params]{did_you_mean(name, case.params, cutoff=0.5)}",
                            file=case.path, key=key)
        if not isinstance(unit, str) or not parses_as_udunits(unit):
            raise CaseError(f"{unit!r} is not a unit UDUNITS-2 understands; write e.g. \"nm\", \"meV\", \"meV nm\", \"1\"",
                            file=case.path, key=key)
        out[normal_name(str(name))] = unit
    return out


def _linear_names(node, out: set) -> None:
    """Names that enter ``node`` linearly with a number coefficient (they share the expression's dimension)."""
    if isinstance(node, ast.Name):
        if node.id not in CONSTANTS:
            out.add(node.id)
    elif isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.UAdd, ast.USub)):
        _linear_names(node.operand, out)
    elif isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
        _linear_names(node.left, out)
        _linear_names(node.right, out)
    elif isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div)):
        left_number, right_number = _is_number(node.left), _is_number(node.right)
        if right_number:
            _linear_names(node.left, out)
        elif left_number and isinstance(node.op, ast.Mult):
            _linear_names(node.right, out)


def _is_number(node) -> bool:
    if isinstance(node, ast.Constant):
        return isinstance(node.value, (int, float)) and not isinstance(node.value, bool)
    if isinstance(node, ast.Name):
        return node.id in CONSTANTS
    if isinstance(node, ast.UnaryOp):
        return _is_number(node.operand)
    if isinstance(node, ast.BinOp):
        return _is_number(node.left) and _is_number(node.right)
    return False


def _uses(case):
    """(dimension, value) of every value of the case data that has a physical dimension."""
    data = case.data

    def entries(section, table, kind=None):
        if not isinstance(table, Mapping):
            return
        for key, value in table.items():
            dim = dimension_of(section, key, kind)
            if dim is None or dim in NOT_QUANTITIES:
                continue
            for v in value if isinstance(value, list) else [value]:
                yield dim, v

    yield from entries("", {k: v for k, v in data.items() if k in ("mass", "stack_origin")})
    for item in data.get("potential") or []:
        if isinstance(item, Mapping):
            yield from entries("potential", item, item.get("shape"))
    for item in data.get("layer") or []:
        yield from entries("layer", item)
    for section in ("domain", "solve"):
        yield from entries(section, data.get(section) or {})


def inferred_dimension(case, name: str) -> str | None:
    """The one dimension of the keys ``name`` enters linearly (module docstring), None if none or several."""
    found = set()
    for dim, value in _uses(case):
        if not isinstance(value, str):
            continue
        try:
            tree = ast.parse(value.strip(), mode="eval")
        except (SyntaxError, ValueError, RecursionError, MemoryError):
            continue
        names: set = set()
        _linear_names(tree.body, names)
        if name in names:
            found.add(dim)
    return found.pop() if len(found) == 1 else None


def param_units(case, name: str) -> tuple[str, str]:
    """(UDUNITS-2 units, plain name) of the param ``name``: declared in [sweep] units, else inferred; ("", "") if unknown."""
    declared = declared_units(case)
    if name in declared:
        return declared[name], declared[name]
    given = getattr(case, "param_units", {}).get(name)
    if given:  # a param written with a unit ([params] F = "20 kV/cm") is swept in that unit
        return (given if parses_as_udunits(given) else ""), given
    dim = inferred_dimension(case, name)
    return units_of(dim, case.units) if dim else ("", "")


# ------------------------------------------------------------------ parsing
def _number(s: str, text: str, key: str) -> float:
    try:
        v = float(s)
    except ValueError:
        raise CaseError(f"'{s}' in '{text}' is not a number", key=key) from None
    if not math.isfinite(v):
        raise CaseError(f"'{s}' in '{text}' is not a finite number", key=key)
    return v


def split_spec(text, case, key: str = "--vary", extra: Mapping[str, Extra] | None = None) -> tuple[str, str]:
    """NAME and the rest of NAME=..., the name checked against the case params (and the study's extra axes)."""
    if not isinstance(text, str) or "=" not in text:
        raise CaseError(f"'{text}' is not NAME=START:STOP:COUNT or NAME=v1,v2,...", key=key)
    name, rest = (s.strip() for s in text.split("=", 1))
    name = normal_name(name)  # as the case's params are named (Unicode NFKC)
    extra = dict(extra or {})
    if name not in case.params and name not in extra:
        choices = list(extra) + list(case.params)
        what = f"neither a param of the case nor {' or '.join(repr(e) for e in extra)}" if extra else "not a param of the case"
        raise CaseError(f"'{name}' is {what}{did_you_mean(name, choices, cutoff=0.5)} "
                        f"(choose from: {', '.join(choices) or 'none'})", file=case.path, key=key)
    if not rest:
        raise CaseError(f"'{text}' gives no values: the range is empty", key=key)
    return name, rest


def _range(name, parts, text, key, max_count):
    lo, hi = _number(parts[0], text, key), _number(parts[1], text, key)
    try:
        count = int(parts[2])
    except ValueError:
        raise CaseError(f"COUNT '{parts[2]}' in '{text}' is not a whole number", key=key) from None
    if count < 1 or (count > 1 and lo == hi):
        raise CaseError(f"'{text}' is an empty range (need START < STOP and COUNT >= 2)", key=key)
    if lo > hi:
        raise CaseError(f"'{text}' is a reversed range: START {lo:g} is above STOP {hi:g}; "
                        f"write {name}={parts[1]}:{parts[0]}:{parts[2]}", key=key)
    if count == 1:
        raise CaseError(f"'{text}' has COUNT 1; a single value is written {name}={parts[0]}", key=key)
    if count > max_count:
        raise CaseError(f"'{text}' asks for {count} values on one axis (at most {max_count} here); use fewer", key=key)
    return lo, hi, count


def parse_axis(text, case, key: str = "--vary", *, extra: Mapping[str, Extra] | None = None,
               max_count: int = 10_000_000, long_name: str = "swept param {name}") -> Axis:
    """One axis: NAME=START:STOP:COUNT[:log|:lin] or NAME=v1,v2,... (module docstring)."""
    name, rest = split_spec(text, case, key, extra)
    ex = (extra or {}).get(name) if name not in case.params else None
    units, units_name = (ex.units, ex.units_name) if ex else param_units(case, name)
    description = ex.long_name if ex else long_name.format(name=name)

    def made(values, spacing) -> Axis:
        return Axis(name, values, text.strip(), spacing, units, units_name, key, description, ex is None)

    if ":" in rest:
        parts = [p.strip() for p in rest.split(":")]
        spacing = ex.spacing if ex else "linear"
        if len(parts) == 4 and parts[3].lower() in SPACINGS:
            spacing = SPACINGS[parts[3].lower()]
        elif len(parts) != 3:
            raise CaseError(f"'{text}' should be {name}=START:STOP:COUNT or {name}=START:STOP:COUNT:log", key=key)
        lo, hi, count = _range(name, parts, text, key, max_count)
        if (spacing == "log" or (ex and ex.positive)) and lo <= 0:
            what = f"'{name}' must be > 0" if ex and ex.positive else "log spacing needs START > 0"
            raise CaseError(f"{what} in '{text}'", key=key)
        return made(np.geomspace(lo, hi, count) if spacing == "log" else np.linspace(lo, hi, count), spacing)
    values = np.array([_number(s, text, key) for s in rest.split(",") if s.strip()] or [])
    if values.size == 0:
        raise CaseError(f"'{text}' is an empty list", key=key)
    if np.any(np.diff(values) <= 0):
        raise CaseError(f"the values in '{text}' must increase strictly (no repeats, low to high)", key=key)
    if values.size > max_count:
        raise CaseError(f"'{text}' lists {values.size} values on one axis (at most {max_count} here)", key=key)
    if ex and ex.positive and values[0] <= 0:
        raise CaseError(f"'{name}' must be > 0 in '{text}'", key=key)
    return made(values, "list")


def parse_axes(texts, case, key: str = "--vary", *, reserved=(), **kw) -> tuple[Axis, ...]:
    """Every axis of ``texts``, each name once and none of the ``reserved`` names (the result's own variables)."""
    try:
        axes = tuple(parse_axis(t, case, key, **kw) for t in texts)
    except CaseError as err:
        raise err.located(file=case.path) from None
    names = [a.name for a in axes]
    for n in names:
        if names.count(n) > 1:
            raise CaseError(f"param '{n}' is swept twice; give one {key} per param", key=key)
        if n in reserved:
            raise CaseError(f"param '{n}' has the name of a variable or dimension of the result "
                            f"({', '.join(sorted(reserved))}); rename it in [params] to scan it",
                            file=case.path, key=key)
    return axes


def parse_interval(text, case, key: str = "--vary") -> tuple[str, float, float]:
    """NAME=LO:HI with LO < HI (a search interval)."""
    name, rest = split_spec(text, case, key)
    parts = rest.split(":")
    if len(parts) != 2:
        raise CaseError(f"'{text}' should be {name}=LO:HI (the interval to search)", key=key)
    lo, hi = _number(parts[0], text, key), _number(parts[1], text, key)
    if lo == hi:
        raise CaseError(f"'{text}' is an empty interval", key=key)
    if lo > hi:
        raise CaseError(f"'{text}' is reversed: LO {lo:g} is above HI {hi:g}; write {name}={parts[1]}:{parts[0]}", key=key)
    return name, lo, hi


class OnAxes:
    """The points of a scan over the cartesian product of its ``axes`` (a tuple of :class:`Axis`), numbered in C
    order: the shape, the exact count, one point's param values, and the axes as compared on resume.  Mixed into
    the frozen dataclasses of the point-based scans (sweeps, band sweeps, continuum scans; a validity map has a
    field named ``shape`` and numbers its two axes itself)."""

    axes: tuple

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(a.values.size for a in self.axes)

    @property
    def n_points(self) -> int:
        return math.prod(self.shape)  # exact: 64 axes of 2 values do not overflow

    def point(self, flat: int) -> dict:
        idx = np.unravel_index(int(flat), self.shape)
        return {a.name: float(a.values[i]) for a, i in zip(self.axes, idx)}

    def axes_identity(self) -> list[dict]:
        return axes_identity(self.axes)


def axes_identity(axes) -> list[dict]:
    """Scanned axes as a scan's identity records them, compared on resume (exact float values)."""
    return [{"name": a.name, "text": a.text, "values": [float(v) for v in a.values]} for a in axes]
