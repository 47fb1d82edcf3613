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
import functools
import keyword
import math
import warnings
from collections.abc import Iterable, Mapping

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.input._expressions.grammar import (  # noqa: F401  (public names re-exported)
    CONSTANT_NAMES,
    FUNCTION_NAMES,
    MAX_DEPTH,
    MAX_DIGITS,
    MAX_LENGTH,
    RESERVED_NAMES,
    _CONST,
    _NAME,
    _WHITESPACE,
    _show,
    _suggest,
)
from fdsolver.input._expressions.translate import (
    _check_brackets,
    _check_depth,
    _check_nodes,
    _plain_number,
    _translate,
)

__all__ = [
    "normal_name",
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


def normal_name(name: str) -> str:
    """A name as an expression reads it: Unicode NFKC, which Python's parser applies to every identifier
    (so the ligature 'ﬁ' and 'fi', or FULLWIDTH 'ｐｉ' and the constant 'pi', are one name)."""
    import unicodedata

    return unicodedata.normalize("NFKC", name)



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


#: expressions with at most this many allowed names are remembered (the name set is part of the cache key)
CACHED_NAMES = 256


def compile_expression(
    text: str,
    allowed_names: Iterable[str] | None = None,
    *,
    file=None,
    key=None,
) -> Expression:
    """Parse and check an arithmetic expression; return an :class:`Expression` (see :func:`_compile`).

    Compiled expressions are immutable and remembered (a sweep point rebuilds
    its case with new param values, not new expressions).
    """
    if not isinstance(allowed_names, (Mapping, set, frozenset, type(None))):
        allowed_names = frozenset(allowed_names)
    if isinstance(text, str) and (allowed_names is None or len(allowed_names) <= CACHED_NAMES):
        allowed = None if allowed_names is None else frozenset(allowed_names)
        return _compile_cached(text, allowed, None if file is None else str(file), key)
    # many params: a mapping is used through its keys (no copy: compiling stays linear in the number of params)
    allowed = allowed_names.keys() if isinstance(allowed_names, Mapping) else allowed_names
    return _compile(text, allowed, file, key)


@functools.lru_cache(maxsize=4096)
def _compile_cached(text: str, allowed, file, key) -> Expression:
    return _compile(text, allowed, file, key)


def _compile(text, allowed, file, key) -> Expression:
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

    names = _check_nodes(tree, src, text, allowed, fail)
    _check_depth(tree.body, text, fail)
    program = _translate(tree.body, src, text, fail)
    return Expression(text, frozenset(names), tuple(program), file, key)




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
    names = frozenset(raw)
    exprs: dict[str, Expression] = {}
    resolved: dict[str, float] = {}
    for name, value in raw.items():
        if isinstance(name, str) and normal_name(name) != name:
            raise fail(
                f"parameter name '{name}' reads as '{normal_name(name)}' (Unicode NFKC, as expressions read "
                "names); write it so",
                name,
            )
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
            exprs[name] = compile_expression(value, allowed_names=names, file=file, key=where(name))
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
