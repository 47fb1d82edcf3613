"""Validation and translation of a parsed expression: bracket depth, whitelisted nodes, literals, calls,
nesting, and the flat instruction list that :class:`fdsolver.expressions.Expression` runs.

Every refusal is raised through the caller's ``fail`` callback as a one-line
:class:`fdsolver.errors.CaseError`."""

from __future__ import annotations

import ast
import math
import string
from typing import Any, Callable, cast

import numpy as np

from fdsolver.errors import did_you_mean
from fdsolver.input._expressions.grammar import (  # noqa: F401
    _ALLOWED_HINT,
    _APPLY,
    _BINARY,
    _CONST,
    _CONSTANTS,
    _FUNCTIONS,
    _LEVEL,
    _NAME,
    _REFUSED_BINARY,
    _REFUSED_NODES,
    _REFUSED_UNARY,
    _UNARY,
    CONSTANT_NAMES,
    MAX_DEPTH,
    MAX_DIGITS,
    _show,
    _suggest,
)


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
    value: Any = node.value
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
        hint = did_you_mean(ident, sorted(_FUNCTIONS)) or f"; known functions: {', '.join(sorted(_FUNCTIONS))}"
        raise fail(f"unknown function '{ident}'{where}{hint}")
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
            done[id(node)] = [(_CONST, np.float64(float(cast(float, node.value))))]  # a number: checked already
            continue
        if isinstance(node, ast.Name):
            if node.id in _CONSTANTS:
                done[id(node)] = [(_CONST, _CONSTANTS[node.id])]
            else:
                done[id(node)] = [(_NAME, node.id)]
            continue
        func: Callable[..., Any]
        if isinstance(node, ast.UnaryOp):
            kids = [node.operand]
            func = _UNARY[type(node.op)]
        elif isinstance(node, ast.BinOp):
            kids = [node.left, node.right]
            func = _BINARY[type(node.op)]
        else:  # ast.Call of a whitelisted name, checked already
            call = cast(ast.Call, node)
            kids = list(call.args)
            func = _FUNCTIONS[cast(ast.Name, call.func).id].func
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
    value: np.float64 | None
    reason: str | None
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


def _plain_number(value, fail) -> float | None:
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
