"""Safe arithmetic expressions for case files.

Any numeric field of a case may be written as a string such as ``"-d/2"`` or
``"2*sqrt(w0**2 + 1)"``, and the ``expression`` potential shape gives V(x) as a
formula such as ``"-V0*exp(-(x/a)**2)"``.  This module reads such strings with
Python's :mod:`ast` parser and evaluates the resulting tree itself; nothing is
ever handed to ``eval``/``exec`` or compiled to code.

Grammar (Python spelling and precedence, so ``-2**2 == -4`` and ``2**3**2 == 512``):

* numbers: integer and float literals (at most 400 digits; complex refused);
* names: parameter names (and ``x`` where the caller allows it), never starting
  with ``_``; the constants ``pi`` and ``e``;
* unary ``+ -``; binary ``+ - * / % **``; parentheses;
* calls of the functions in :data:`FUNCTION_NAMES` with positional arguments.

All arithmetic is done in IEEE double precision with numpy, so Python big
integers are never built (``9**9**9`` overflows to ``inf`` at once and is
refused) and names bound to numpy arrays give arrays.  A sub-expression made of
constants only is worked out once when the expression is compiled and must be
finite there; the final value must be finite wherever it is evaluated.  Every
problem is reported as :class:`fdsolver.errors.CaseError`.
"""

from __future__ import annotations

import ast
import difflib
import functools
import keyword
import math
import string
import warnings
from collections.abc import Iterable, Mapping
from typing import Callable, NamedTuple

import numpy as np
import scipy.special as _special

from fdsolver.errors import CaseError

__all__ = [
    "CONSTANT_NAMES",
    "FUNCTION_NAMES",
    "MAX_DEPTH",
    "MAX_DIGITS",
    "MAX_LENGTH",
    "RESERVED_NAMES",
    "Expression",
    "compile_expression",
    "evaluate_number",
    "resolve_params",
]

#: Longest expression text accepted, in characters.
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
    "erf": _Function(_special.erf, 1, 1),
    "erfc": _Function(_special.erfc, 1, 1),
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
    close = difflib.get_close_matches(name, pool, n=1)
    if close:
        return f"; did you mean '{close[0]}'?"
    if not pool:
        return "; no names are defined here"
    shown = ", ".join(pool[:12]) + (", ..." if len(pool) > 12 else "")
    return f"; known names: {shown}"


class Expression:
    """An arithmetic expression, parsed and checked once.

    Made by :func:`compile_expression`.  ``text`` is the expression as given,
    ``names`` the free variable names it uses (function names and the
    constants ``pi``/``e`` excluded).  :meth:`evaluate` runs the stored
    instruction list and never re-parses the text.
    """

    __slots__ = ("text", "names", "_program", "_file", "_key")

    def __init__(self, text: str, names: frozenset[str], program: tuple, file, key):
        self.text = text
        self.names = names
        self._program = program
        self._file = None if file is None else str(file)
        self._key = key

    def __repr__(self) -> str:
        return f"Expression({self.text!r})"

    def __reduce__(self):
        return (_rebuild, (self.text, self._file, self._key))

    def _error(self, message: str) -> CaseError:
        return CaseError(message, file=self._file, key=self._key)

    def evaluate(self, env: Mapping[str, float | np.ndarray]) -> float | np.ndarray:
        """Evaluate the expression with the names bound as in ``env``.

        Values may be numbers or real numpy arrays; arrays are combined
        elementwise with numpy broadcasting, and the result is a numpy float64
        array if any used name is an array, otherwise a Python float.  (An
        expression without array names gives a float; use
        ``numpy.broadcast_to`` to spread it over a grid.)  Names in ``env``
        that the expression does not use are ignored.

        Raises :class:`CaseError` if a used name has no value, a value is not
        a real number or array, array shapes do not broadcast, or the result
        is not finite anywhere (overflow, division by zero, or an argument
        outside a function's domain such as ``sqrt(-1)``).
        """
        values: dict[str, object] = {}
        for name in sorted(self.names):
            if name not in env:
                raise self._error(
                    f"expression {_show(self.text)} needs a value for '{name}'"
                    + _suggest(name, (k for k in env if isinstance(k, str)))
                )
            values[name] = self._operand(name, env[name])
        try:
            with np.errstate(all="ignore"):
                result = _run(self._program, values)
        except CaseError:
            raise
        except (ArithmeticError, ValueError, TypeError, MemoryError, RecursionError) as ex:
            shapes = ", ".join(
                f"{n} {np.shape(v)}" for n, v in values.items() if isinstance(v, np.ndarray)
            )
            detail = f"array shapes {shapes} do not combine" if shapes else type(ex).__name__
            raise self._error(
                f"expression {_show(self.text)} cannot be evaluated ({detail}); "
                "give arrays of one shape or single numbers"
            ) from None
        return self._finish(result, values)

    def _operand(self, name: str, value):
        if isinstance(value, (bool, np.bool_)):
            raise self._error(
                f"value of '{name}' in expression {_show(self.text)} is a boolean; give a number"
            )
        if isinstance(value, (int, float, np.integer, np.floating)):
            try:
                return np.float64(value)
            except OverflowError:
                raise self._error(
                    f"value of '{name}' in expression {_show(self.text)} is too large for a float"
                ) from None
        if isinstance(value, np.ndarray) and value.dtype.kind in "iuf":
            if value.ndim == 0:
                return np.float64(value[()])
            return value.astype(np.float64, copy=False)
        raise self._error(
            f"value of '{name}' in expression {_show(self.text)} is "
            f"{type(value).__name__}{'' if not isinstance(value, np.ndarray) else ' of ' + str(value.dtype)}; "
            "give a real number or a real numpy array"
        )

    def _finish(self, result, values: dict):
        array = np.asarray(result)
        if array.ndim == 0:
            number = float(array)
            if not math.isfinite(number):
                scalars = ", ".join(f"{n}={float(v):g}" for n, v in list(values.items())[:6])
                raise self._error(
                    f"expression {_show(self.text)} gives a non-finite value ({number})"
                    + (f" at {scalars}" if scalars else "")
                    + " (overflow, division by zero or an argument outside a function's "
                    "domain); change the expression or its parameters"
                )
            return number
        finite = np.isfinite(array)
        if not finite.all():
            bad = int(array.size - np.count_nonzero(finite))
            first = np.unravel_index(int(np.argmin(finite.ravel())), array.shape)
            where = [
                f"{n}={float(v[first]):g}"
                for n, v in values.items()
                if isinstance(v, np.ndarray) and v.shape == array.shape
            ][:6]
            raise self._error(
                f"expression {_show(self.text)} gives a non-finite value "
                f"(overflow, division by zero or an argument outside a function's domain) "
                f"at {bad} of {array.size} points, first at index "
                f"{first[0] if len(first) == 1 else tuple(int(i) for i in first)}"
                + (f" ({', '.join(where)})" if where else "")
                + "; change the expression or its parameters"
            )
        if any(result is v for v in values.values()):
            array = array.copy()
        return array.astype(np.float64, copy=False)


def _rebuild(text: str, file, key) -> Expression:
    return compile_expression(text, None, file=file, key=key)


def _run(program: tuple, values: Mapping[str, object]):
    """Run a postfix instruction list on a value stack."""
    stack: list = []
    push = stack.append
    for ins in program:
        op = ins[0]
        if op == _CONST:
            push(ins[1])
        elif op == _NAME:
            push(values[ins[1]])
        else:
            n = ins[2]
            args = stack[-n:]
            del stack[-n:]
            push(ins[1](*args))
    return stack[0]


def compile_expression(
    text: str,
    allowed_names: Iterable[str] | None = None,
    *,
    file=None,
    key=None,
) -> Expression:
    """Parse and check an arithmetic expression; return an :class:`Expression`.

    ``allowed_names``: if given, the only free names the expression may use
    (a mapping counts by its keys); an unknown name is refused with the
    closest allowed one suggested.  ``None`` allows any name that is not
    reserved and does not start with ``_``.  ``file`` and ``key`` locate the
    field in the case for error messages.

    Raises :class:`CaseError` for: text that is not a string, is empty or
    longer than :data:`MAX_LENGTH`; syntax errors (with the column); nesting
    deeper than :data:`MAX_DEPTH`; any construct outside the grammar in the
    module docstring; unknown functions or names; a wrong number of
    arguments; number literals with more than :data:`MAX_DIGITS` digits or
    not finite; and constant sub-expressions that are not finite.
    """

    def fail(message: str) -> CaseError:
        return CaseError(message, file=file, key=key)

    if not isinstance(text, str):
        raise fail(f"expected an expression string, got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise fail(
            f"expression is {len(text)} characters long; at most {MAX_LENGTH} are allowed, "
            "so split it into parameters"
        )
    src = text.translate(_WHITESPACE)
    if not src.strip(" "):
        raise fail("expression is empty; give a number or a formula such as '-d/2'")
    for ch in src:
        if ch != " " and not ch.isprintable():
            raise fail(
                f"expression {_show(text)} contains the control character "
                f"U+{ord(ch):04X}; remove it"
            )
    if "#" in src:
        raise fail(f"expression {_show(text)} contains '#'; comments are not allowed, remove it")
    _check_brackets(src, text, fail)

    lead = len(src) - len(src.lstrip(" "))
    src = src.strip(" ")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            tree = ast.parse(src, mode="eval")
    except SyntaxError as ex:
        column = (ex.offset or 1) + lead
        reason = " ".join(str(ex.msg or "invalid syntax").split())
        near = text[column - 1 : column + 9] if 0 < column <= len(text) else ""
        raise fail(
            f"cannot read expression {_show(text)}: {reason} at column {column}"
            + (f" (near {near!r})" if near.strip() else "")
            + "; write arithmetic such as '-V0*exp(-(x/a)**2)'"
        ) from None
    except (ValueError, RecursionError, MemoryError, OverflowError):
        raise fail(
            f"expression {_show(text)} is too complex to read; simplify it or split it "
            "into parameters"
        ) from None

    allowed = None if allowed_names is None else frozenset(allowed_names)
    names = _check_nodes(tree, src, text, allowed, fail)
    _check_depth(tree.body, text, fail)
    program = _translate(tree.body, src, text, fail)
    return Expression(text, frozenset(names), tuple(program), file, key)


def _check_brackets(src: str, text: str, fail) -> None:
    depth = 0
    deepest = 0
    for ch in src:
        if ch in "([{":
            depth += 1
            if depth > deepest:
                deepest = depth
                if deepest > MAX_DEPTH:
                    raise fail(
                        f"expression {_show(text)} nests brackets more than {MAX_DEPTH} "
                        "levels deep; simplify it or split it into parameters"
                    )
        elif ch in ")]}":
            depth -= 1


def _segment(src: str, node: ast.AST) -> str:
    try:
        seg = ast.get_source_segment(src, node)
    except Exception:  # positions missing on odd nodes: show nothing rather than fail
        seg = None
    return seg or ""


def _check_nodes(tree: ast.Expression, src: str, text: str, allowed, fail) -> set[str]:
    """Refuse every node outside the grammar; return the free names used."""
    names: set[str] = set()
    callees: set[int] = set()
    where = f" in expression {_show(text)}"
    for node in ast.walk(tree):  # breadth first, iterative: safe on deep trees
        if isinstance(node, (ast.Expression, ast.expr_context, ast.operator, ast.unaryop)):
            continue
        if isinstance(node, ast.Constant):
            _check_constant(node, src, text, fail)
        elif isinstance(node, ast.Name):
            ident = node.id
            if ident.startswith("_"):
                raise fail(f"name '{ident}'{where} starts with '_'; such names are not allowed")
            if id(node) in callees:
                continue
            if ident in _FUNCTIONS:
                raise fail(f"'{ident}'{where} is a function; call it as {ident}(...)")
            if ident in _CONSTANTS:
                continue
            if allowed is not None and ident not in allowed:
                raise fail(
                    f"unknown name '{ident}'"
                    + _suggest(ident, set(allowed) | CONSTANT_NAMES)
                    + f" (expression {_show(text)})"
                )
            names.add(ident)
        elif isinstance(node, ast.UnaryOp):
            if type(node.op) not in _UNARY:
                raise fail(
                    f"{_REFUSED_UNARY.get(type(node.op), type(node.op).__name__)} is not "
                    f"allowed{where}; {_ALLOWED_HINT}"
                )
        elif isinstance(node, ast.BinOp):
            if type(node.op) not in _BINARY:
                raise fail(
                    f"{_REFUSED_BINARY.get(type(node.op), type(node.op).__name__)} is not "
                    f"allowed{where}; {_ALLOWED_HINT}"
                )
        elif isinstance(node, ast.Call):
            _check_call(node, text, fail)
            callees.add(id(node.func))
        else:
            what = _REFUSED_NODES.get(type(node), f"'{type(node).__name__}'")
            raise fail(f"{what} not allowed{where}; {_ALLOWED_HINT}")
    return names


def _check_constant(node: ast.Constant, src: str, text: str, fail) -> None:
    value = node.value
    where = f" in expression {_show(text)}"
    if type(value) not in (int, float):
        if isinstance(value, bool):
            what = f"'{value}' (a boolean)"
        elif isinstance(value, complex):
            what = "complex number literals"
        elif isinstance(value, (str, bytes)):
            what = "strings"
        else:
            what = f"'{value!r}'"
        raise fail(f"{what} not allowed{where}; {_ALLOWED_HINT}")
    literal = _segment(src, node)
    digits = sum(ch in string.hexdigits for ch in literal)
    if digits > MAX_DIGITS:
        raise fail(
            f"a number{where} has {digits} digits; at most {MAX_DIGITS} are allowed, "
            "write it with an exponent such as 1.5e30"
        )
    try:
        number = float(value)
    except OverflowError:
        number = math.inf
    if not math.isfinite(number):
        raise fail(
            f"number {_show(literal or str(value), 30)}{where} is too large for a float "
            "(largest about 1.8e308); use a smaller value"
        )


def _check_call(node: ast.Call, text: str, fail) -> None:
    where = f" in expression {_show(text)}"
    func = node.func
    if not isinstance(func, ast.Name):
        raise fail(
            f"only named functions may be called{where}; "
            f"known functions: {', '.join(sorted(_FUNCTIONS))}"
        )
    ident = func.id
    if ident.startswith("_"):
        raise fail(f"name '{ident}'{where} starts with '_'; such names are not allowed")
    spec = _FUNCTIONS.get(ident)
    if spec is None:
        close = difflib.get_close_matches(ident, sorted(_FUNCTIONS), n=1)
        hint = (
            f"did you mean '{close[0]}'?"
            if close
            else f"known functions: {', '.join(sorted(_FUNCTIONS))}"
        )
        raise fail(f"unknown function '{ident}'{where}; {hint}")
    if node.keywords:
        raise fail(f"keyword arguments are not allowed{where}; give arguments by position")
    if any(isinstance(arg, ast.Starred) for arg in node.args):
        raise fail(f"starred arguments ('*') are not allowed{where}; give arguments one by one")
    n = len(node.args)
    lo, hi = spec.min_args, spec.max_args
    if n < lo or (hi is not None and n > hi):
        if hi is None:
            wanted = f"at least {lo} arguments"
        elif lo == hi:
            wanted = f"{lo} argument{'s' if lo != 1 else ''}"
        else:
            wanted = f"{lo} to {hi} arguments"
        raise fail(f"{ident}() takes {wanted} but was given {n}{where}")


def _check_depth(body: ast.expr, text: str, fail) -> None:
    """Refuse operations nested more than MAX_DEPTH deep (iterative walk).

    Each operation or call counts one level; a left operand of the same
    left-associative level (the ``a+b`` in ``a+b-c``) counts none, so long
    flat sums and products are fine.
    """
    stack = [(body, 1)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, ast.UnaryOp):
            kids = [(node.operand, depth + 1)]
        elif isinstance(node, ast.BinOp):
            level = _LEVEL.get(type(node.op))
            flat = (
                level is not None
                and isinstance(node.left, ast.BinOp)
                and _LEVEL.get(type(node.left.op)) == level
            )
            kids = [(node.left, depth if flat else depth + 1), (node.right, depth + 1)]
        elif isinstance(node, ast.Call):
            kids = [(arg, depth + 1) for arg in node.args]
        else:
            continue
        if depth > MAX_DEPTH:
            raise fail(
                f"expression {_show(text)} nests operations more than {MAX_DEPTH} levels "
                "deep; simplify it or split it into parameters"
            )
        stack.extend(kids)


def _translate(body: ast.expr, src: str, text: str, fail) -> list:
    """Turn the checked tree into a postfix instruction list (iteratively).

    Sub-trees made of constants only are evaluated here, once, and must be
    finite.
    """
    done: dict[int, list] = {}
    todo: list[tuple[ast.expr, bool]] = [(body, False)]
    while todo:
        node, ready = todo.pop()
        if isinstance(node, ast.Constant):
            done[id(node)] = [(_CONST, np.float64(float(node.value)))]
            continue
        if isinstance(node, ast.Name):
            if node.id in _CONSTANTS:
                done[id(node)] = [(_CONST, _CONSTANTS[node.id])]
            else:
                done[id(node)] = [(_NAME, node.id)]
            continue
        if isinstance(node, ast.UnaryOp):
            kids = [node.operand]
            func = _UNARY[type(node.op)]
        elif isinstance(node, ast.BinOp):
            kids = [node.left, node.right]
            func = _BINARY[type(node.op)]
        else:  # ast.Call, checked already
            kids = list(node.args)
            func = _FUNCTIONS[node.func.id].func
        if not ready:
            todo.append((node, True))
            todo.extend((k, False) for k in reversed(kids))
            continue
        parts = [done.pop(id(k)) for k in kids]
        if all(len(p) == 1 and p[0][0] == _CONST for p in parts):
            done[id(node)] = [(_CONST, _fold(func, [p[0][1] for p in parts], node, src, text, fail))]
        else:
            code: list = []
            for p in parts:
                code.extend(p)
            code.append((_APPLY, func, len(kids)))
            done[id(node)] = code
    return done[id(body)]


def _fold(func, args, node, src: str, text: str, fail) -> np.float64:
    try:
        with np.errstate(all="ignore"):
            value = np.float64(func(*args))
    except (ArithmeticError, ValueError, TypeError, MemoryError) as ex:
        value = None
        reason = type(ex).__name__
    else:
        reason = None
    if value is None or not math.isfinite(float(value)):
        part = _segment(src, node) or text
        inside = "" if part.strip() == text.strip() else f" in {_show(part, 40)}"
        raise fail(
            f"expression {_show(text)} gives a non-finite value{inside} "
            f"({reason or value}: overflow, division by zero or an argument outside a "
            "function's domain); change the numbers"
        )
    return value


def _plain_number(value, fail) -> float:
    """Return ``value`` as a finite float, or raise; ``None`` if it is not a number."""
    if isinstance(value, (bool, np.bool_)):
        raise fail(
            f"expected a number or an expression string, got a boolean ({value}); "
            "give a number such as 1.5"
        )
    if not isinstance(value, (int, float, np.integer, np.floating)):
        return None
    try:
        number = float(value)
    except OverflowError:
        number = math.inf
    if not math.isfinite(number):
        raise fail(f"value {_show(repr(value), 40)} is not a finite number; give a finite number")
    return number


def evaluate_number(
    text: str | int | float,
    params: Mapping[str, float],
    *,
    file=None,
    key=None,
) -> float:
    """Return a numeric case field as a finite float.

    ``text`` is a number (returned as a float) or an expression string that
    may use the names in ``params`` (e.g. ``"-d/2"``), evaluated with those
    values.  Raises :class:`CaseError` (at ``file``/``key``) for booleans,
    other types, unknown names, or a value that is not a single finite number.
    """

    def fail(message: str) -> CaseError:
        return CaseError(message, file=file, key=key)

    number = _plain_number(text, fail)
    if number is not None:
        return number
    if not isinstance(text, str):
        raise fail(
            f"expected a number or an expression string, got {type(text).__name__}; "
            "give a number such as 1.5 or a string such as '-d/2'"
        )
    expr = compile_expression(text, allowed_names=params, file=file, key=key)
    value = expr.evaluate(params)
    if not isinstance(value, float):
        raise fail(
            f"expression {_show(text)} gives an array, not a single number; "
            "use only scalar parameters here"
        )
    return value


def resolve_params(
    raw: Mapping[str, object],
    *,
    file=None,
    key_prefix: str | None = "params",
) -> dict[str, float]:
    """Resolve a table of named parameters to finite floats.

    Values are numbers or expression strings that may refer to other
    parameters (``b = "a*2"``), in any order; they are worked out in
    dependency order.  Returns a new dict in the order of ``raw``.

    Raises :class:`CaseError` with key ``"<key_prefix>.NAME"`` for: a name that
    is not an identifier, starts with ``_`` or is a function/constant name; a
    value of the wrong type; an unknown name (closest suggested); parameters
    that refer to each other in a cycle (the cycle is named); and results
    that are not finite.
    """

    def where(name) -> str | None:
        return f"{key_prefix}.{name}" if key_prefix else str(name)

    def fail(message: str, name=None) -> CaseError:
        return CaseError(message, file=file, key=key_prefix if name is None else where(name))

    if not isinstance(raw, Mapping):
        raise fail(
            f"parameters must be a table of name = value, got {type(raw).__name__}", None
        )
    exprs: dict[str, Expression] = {}
    resolved: dict[str, float] = {}
    for name, value in raw.items():
        if not isinstance(name, str) or not name.isidentifier() or keyword.iskeyword(name):
            raise fail(
                f"parameter name {name!r} is not a valid name; use letters, digits and '_', "
                "starting with a letter",
                name,
            )
        if name.startswith("_"):
            raise fail(f"parameter name '{name}' starts with '_'; start it with a letter", name)
        if name in RESERVED_NAMES:
            kind = "function" if name in FUNCTION_NAMES else "constant"
            raise fail(
                f"parameter name '{name}' is the name of a built-in {kind}; rename it", name
            )
        if isinstance(value, str):
            exprs[name] = compile_expression(value, allowed_names=raw, file=file, key=where(name))
            continue
        number = _plain_number(value, lambda m, n=name: fail(m, n))
        if number is None:
            raise fail(
                f"expected a number or an expression string, got {type(value).__name__}; "
                "give a number such as 1.5 or a string such as 'a*2'",
                name,
            )
        resolved[name] = number

    for name in _dependency_order(exprs, fail):
        value = exprs[name].evaluate(resolved)
        resolved[name] = float(value)
    return {name: resolved[name] for name in raw}


def _dependency_order(exprs: Mapping[str, Expression], fail) -> list[str]:
    """Order expression parameters so each comes after those it uses.

    Iterative depth-first search; a cycle is reported as ``a -> b -> a``.
    """
    order: list[str] = []
    state: dict[str, int] = {}  # 1: on the current path, 2: finished
    for start in exprs:
        if state.get(start) == 2:
            continue
        path = [start]
        state[start] = 1
        pending = [iter(sorted(exprs[start].names & exprs.keys()))]
        while pending:
            nxt = next(pending[-1], None)
            if nxt is None:
                pending.pop()
                done = path.pop()
                state[done] = 2
                order.append(done)
                continue
            mark = state.get(nxt)
            if mark == 2:
                continue
            if mark == 1:
                cycle = path[path.index(nxt) :] + [nxt]
                raise fail(
                    "parameters refer to each other in a cycle: "
                    + " -> ".join(cycle)
                    + "; give one of them a number",
                    cycle[0],
                )
            state[nxt] = 1
            path.append(nxt)
            pending.append(iter(sorted(exprs[nxt].names & exprs.keys())))
    return order
