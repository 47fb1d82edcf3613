"""The grammar of safe expressions: limits, the whitelisted functions and constants, the refused constructs.

See :mod:`fdsolver.expressions` for what is evaluated and how."""

from __future__ import annotations

import ast
import functools
import math
from collections.abc import Iterable
from typing import Callable, NamedTuple

import numpy as np

from fdsolver.errors import did_you_mean


def _special(name: str):
    """erf or erfc (:mod:`fdsolver.input._expressions.special`, compiled), imported when an expression first calls
    it (loading it costs start-up)."""
    from fdsolver.input._expressions import special

    return getattr(special, name)


MAX_LENGTH = 2000
#: Deepest nesting accepted: brackets, and operations inside operations.
MAX_DEPTH = 40
#: Most digits accepted in one number literal.
MAX_DIGITS = 400


class _Function(NamedTuple):
    func: Callable
    min_args: int
    max_args: int | None  # None: no upper limit


def _sech(v):
    return np.true_divide(1.0, np.cosh(v))


def _minimum(*args):
    return functools.reduce(np.minimum, args)


def _maximum(*args):
    return functools.reduce(np.maximum, args)


_FUNCTIONS: dict[str, _Function] = {
    "sqrt": _Function(np.sqrt, 1, 1),
    "exp": _Function(np.exp, 1, 1),
    "log": _Function(np.log, 1, 1),
    "log10": _Function(np.log10, 1, 1),
    "log2": _Function(np.log2, 1, 1),
    "sin": _Function(np.sin, 1, 1),
    "cos": _Function(np.cos, 1, 1),
    "tan": _Function(np.tan, 1, 1),
    "arcsin": _Function(np.arcsin, 1, 1),
    "arccos": _Function(np.arccos, 1, 1),
    "arctan": _Function(np.arctan, 1, 1),
    "arctan2": _Function(np.arctan2, 2, 2),
    "sinh": _Function(np.sinh, 1, 1),
    "cosh": _Function(np.cosh, 1, 1),
    "tanh": _Function(np.tanh, 1, 1),
    "arcsinh": _Function(np.arcsinh, 1, 1),
    "arccosh": _Function(np.arccosh, 1, 1),
    "arctanh": _Function(np.arctanh, 1, 1),
    "abs": _Function(np.abs, 1, 1),
    "min": _Function(_minimum, 2, None),
    "max": _Function(_maximum, 2, None),
    "floor": _Function(np.floor, 1, 1),
    "ceil": _Function(np.ceil, 1, 1),
    "sign": _Function(np.sign, 1, 1),
    "heaviside": _Function(np.heaviside, 2, 2),
    "erf": _Function(lambda v: _special("erf")(v), 1, 1),
    "erfc": _Function(lambda v: _special("erfc")(v), 1, 1),
    "sech": _Function(_sech, 1, 1),
    "hypot": _Function(np.hypot, 2, 2),
}

_CONSTANTS: dict[str, np.float64] = {"pi": np.float64(math.pi), "e": np.float64(math.e)}

#: Names of the functions an expression may call.
FUNCTION_NAMES: frozenset[str] = frozenset(_FUNCTIONS)
#: Names of the built-in constants.
CONSTANT_NAMES: frozenset[str] = frozenset(_CONSTANTS)
#: Names a parameter may not take.
RESERVED_NAMES: frozenset[str] = FUNCTION_NAMES | CONSTANT_NAMES

_UNARY = {ast.UAdd: np.positive, ast.USub: np.negative}
_BINARY = {
    ast.Add: np.add,
    ast.Sub: np.subtract,
    ast.Mult: np.multiply,
    ast.Div: np.true_divide,
    ast.Mod: np.mod,
    ast.Pow: np.power,
}
# Left-associative operators of one precedence level: "a+b-c+d" is a flat chain,
# not nesting, so a left operand of the same level does not add depth.
_LEVEL = {ast.Add: 1, ast.Sub: 1, ast.Mult: 2, ast.Div: 2, ast.Mod: 2}

_REFUSED_UNARY = {ast.Not: "'not'", ast.Invert: "'~'"}
_REFUSED_BINARY = {
    ast.FloorDiv: "'//' (write floor(a/b))",
    ast.MatMult: "'@'",
    ast.BitXor: "'^' (write powers as a**b)",
    ast.BitAnd: "'&'",
    ast.BitOr: "'|'",
    ast.LShift: "'<<'",
    ast.RShift: "'>>'",
}
_REFUSED_NODES = {
    ast.Attribute: "attribute access ('.')",
    ast.Subscript: "indexing ('[...]')",
    ast.Slice: "slices",
    ast.Lambda: "lambda",
    ast.ListComp: "comprehensions",
    ast.SetComp: "comprehensions",
    ast.DictComp: "comprehensions",
    ast.GeneratorExp: "comprehensions",
    ast.Compare: "comparisons",
    ast.BoolOp: "'and'/'or'",
    ast.IfExp: "'if ... else'",
    ast.NamedExpr: "assignment (':=')",
    ast.List: "lists",
    ast.Tuple: "tuples (a bare ',')",
    ast.Set: "sets",
    ast.Dict: "dicts",
    ast.JoinedStr: "f-strings",
    ast.FormattedValue: "f-strings",
    ast.Starred: "starred arguments ('*')",
    ast.Yield: "'yield'",
    ast.YieldFrom: "'yield'",
    ast.Await: "'await'",
    ast.keyword: "keyword arguments",
}

_ALLOWED_HINT = (
    "use numbers, names, + - * / % **, parentheses and functions such as sqrt(...)"
)

_WHITESPACE = str.maketrans({"\t": " ", "\n": " ", "\r": " ", "\f": " ", "\v": " "})

_CONST = 0
_NAME = 1
_APPLY = 2


def _show(text: str, limit: int = 60) -> str:
    """Quote ``text`` for a one-line message, shortened if long."""
    if len(text) > limit:
        text = text[: limit - 3] + "..."
    return repr(text)


def _suggest(name: str, candidates: Iterable[str]) -> str:
    """Return ``"; did you mean 'x'?"`` or a short list of known names."""
    pool = sorted(str(c) for c in candidates)
    hint = did_you_mean(name, pool)
    if hint:
        return hint
    if not pool:
        return "; no names are defined here"
    shown = ", ".join(pool[:12]) + (", ..." if len(pool) > 12 else "")
    return f"; known names: {shown}"
