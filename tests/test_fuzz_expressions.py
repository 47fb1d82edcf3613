"""Fuzz tests of the expression evaluator (fdsolver.input._expressions).

Contract checked: any text given to compile_expression + evaluate either gives
a finite float/array or raises CaseError, never another exception; and
well-formed arithmetic trees evaluate to the same value as a direct numpy
evaluation of the same tree.  The examples are derandomized (same inputs on
every run) and the explicit seeds live in this file (@example) and in
tests/fuzz_seeds/expressions.txt.
"""

from __future__ import annotations

import functools
import math
import pathlib
import time

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, example, given, settings
from hypothesis import strategies as st

from fdsolver.errors import CaseError
from fdsolver.input._expressions import compile_expression

SEEDS_FILE = pathlib.Path(__file__).parent / "fuzz_seeds" / "expressions.txt"
GRID = np.linspace(-2.0, 2.0, 9)

FUZZ = settings(
    max_examples=400,
    deadline=None,
    derandomize=settings.default.derandomize,  # the profile tests/conftest.py loads (FDSOLVER_HYPOTHESIS)
    database=None,  # no example database in the working folder
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)


def check_contract(text: str, allowed=None) -> None:
    """compile + evaluate ``text``: a finite result or a CaseError, nothing else."""
    try:
        expr = compile_expression(text, allowed, key="fuzz")
    except CaseError as err:
        assert "fuzz" in str(err) and "\n" not in str(err)
        return
    assert isinstance(expr.names, frozenset)
    env = {name: (GRID if i % 2 == 0 else 0.7) for i, name in enumerate(sorted(expr.names))}
    try:
        out = expr.evaluate(env)
    except CaseError as err:
        assert "fuzz" in str(err)
        return
    if isinstance(out, float):
        assert math.isfinite(out)
    else:
        assert isinstance(out, np.ndarray) and out.dtype == np.float64
        assert np.isfinite(out).all()


# ---------------------------------------------------------------- (1) arbitrary text

TOKENS = [
    *"0123456789", "1e308", "1e-308", "9**9**9", ".", "x", "a", "width", "e", "pi", "j",
    "_", "__class__", "__import__", "__builtins__", "+", "-", "*", "/", "**", "%", "//",
    "^", "@", "~", "(", ")", "[", "]", "{", "}", ",", ":", "=", ":=", "<", "==", "'", '"',
    "f'", "b'", "#", "\\", " ", "\n", "\t", "lambda", "if", "else", "not", "and", "for",
    "in", "yield", "await", "True", "None", "...", "0x", "sqrt", "exp", "log", "sin",
    "arctan2", "min", "max", "heaviside", "erf", "sech", "hypot", "abs", "open", "eval",
    "getattr", "\x00",
]

token_text = st.lists(st.sampled_from(TOKENS), max_size=40).map("".join)


@pytest.mark.slow
@FUZZ
@given(st.text(max_size=60))
@example("")
@example("(" * 200 + "1" + ")" * 200)
@example("-" * 10000 + "1")
@example("-" * 1999 + "1")
@example("9**9**9")
@example("__import__('os').system('echo hi')")
@example("().__class__.__bases__[0].__subclasses__()")
@example("\x00")
@example("1" * 401)
def test_arbitrary_text_gives_a_value_or_a_case_error(text):
    check_contract(text)


@pytest.mark.slow
@FUZZ
@given(token_text, st.booleans())
@example("x.__class__", False)
@example("sqrt(x)**1e308", False)
@example("width/0", True)
@example("min(x)", False)
@example("heaviside(x, a)", True)
@example("wdth*2", True)
def test_token_soup_gives_a_value_or_a_case_error(text, restrict):
    check_contract(text, ["x", "a", "width"] if restrict else None)


def seed_lines() -> list[str]:
    lines = SEEDS_FILE.read_text(encoding="utf-8").splitlines()
    return [line for line in lines if line.strip()]


def test_seed_corpus_is_present():
    assert len(seed_lines()) >= 50


@pytest.mark.parametrize("text", seed_lines())
def test_seed_corpus(text):
    start = time.perf_counter()
    check_contract(text)
    check_contract(text, ["x", "a", "b", "d", "V0", "w0", "y", "z"])
    assert time.perf_counter() - start < 1.0
    if "__" in text or "import" in text or "lambda" in text:
        with pytest.raises(CaseError):
            compile_expression(text)


# ---------------------------------------------------------------- (2) trees vs numpy

# arity of each function; min/max take two or three arguments here
ARITY = {
    "sqrt": 1, "exp": 1, "log": 1, "log10": 1, "log2": 1, "sin": 1, "cos": 1, "tan": 1,
    "arcsin": 1, "arccos": 1, "arctan": 1, "arctan2": 2, "sinh": 1, "cosh": 1, "tanh": 1,
    "arcsinh": 1, "arccosh": 1, "arctanh": 1, "abs": 1, "min": (2, 3), "max": (2, 3),
    "floor": 1, "ceil": 1, "sign": 1, "heaviside": 2, "erf": 1, "erfc": 1, "sech": 1,
    "hypot": 2,
}

# the reference: numpy called directly on the tree, and for erf / erfc the C library's functions through Python's
# math module, elementwise (their accuracy against mpmath: tests/test_expressions.py)
REFERENCE_FUNCS = {
    "sqrt": np.sqrt, "exp": np.exp, "log": np.log, "log10": np.log10, "log2": np.log2,
    "sin": np.sin, "cos": np.cos, "tan": np.tan, "arcsin": np.arcsin, "arccos": np.arccos,
    "arctan": np.arctan, "arctan2": np.arctan2, "sinh": np.sinh, "cosh": np.cosh,
    "tanh": np.tanh, "arcsinh": np.arcsinh, "arccosh": np.arccosh, "arctanh": np.arctanh,
    "abs": np.abs, "min": lambda *v: functools.reduce(np.minimum, v),
    "max": lambda *v: functools.reduce(np.maximum, v), "floor": np.floor, "ceil": np.ceil,
    "sign": np.sign, "heaviside": np.heaviside, "erf": np.vectorize(math.erf, otypes=[float]),
    "erfc": np.vectorize(math.erfc, otypes=[float]), "sech": lambda v: 1.0 / np.cosh(v), "hypot": np.hypot,
}
REFERENCE_OPS = {
    "+": np.add, "-": np.subtract, "*": np.multiply, "/": np.true_divide, "%": np.mod,
    "**": np.power,
}
ENV = {"x": GRID, "a": np.float64(0.75), "b": np.float64(-1.25)}

numbers = st.one_of(
    st.integers(min_value=0, max_value=40).map(lambda n: ("int", n)),
    st.floats(min_value=-50.0, max_value=50.0, allow_nan=False).map(lambda v: ("num", v)),
    st.sampled_from([0.0, 0.5, 1e-300, 1e300, 1e308]).map(lambda v: ("num", v)),
)
variables = st.sampled_from(["x", "x", "a", "b"]).map(lambda n: ("var", n))
leaves = st.one_of(
    variables,
    numbers,
    variables,
    st.sampled_from(["pi", "e"]).map(lambda n: ("const", n)),
)


def _branches(children):
    def call(name):
        arity = ARITY[name]
        lo, hi = (arity, arity) if isinstance(arity, int) else arity
        return st.lists(children, min_size=lo, max_size=hi).map(lambda args: ("call", name, args))

    return st.one_of(
        st.tuples(st.sampled_from(["neg", "pos"]), children),
        st.tuples(st.just("bin"), st.sampled_from(sorted(REFERENCE_OPS)), children, children),
        st.sampled_from(sorted(ARITY)).flatmap(call),
    )


trees = st.recursive(leaves, _branches, max_leaves=12)


def render(tree) -> str:
    """Fully parenthesised text of a tree."""
    kind = tree[0]
    if kind == "int":
        return str(tree[1])
    if kind == "num":
        return repr(tree[1]) if tree[1] >= 0 else f"({tree[1]!r})"
    if kind in ("var", "const"):
        return tree[1]
    if kind == "neg":
        return f"(-{render(tree[1])})"
    if kind == "pos":
        return f"(+{render(tree[1])})"
    if kind == "bin":
        return f"({render(tree[2])} {tree[1]} {render(tree[3])})"
    return f"{tree[1]}({', '.join(render(a) for a in tree[2])})"


def depth(tree) -> int:
    kind = tree[0]
    if kind in ("int", "num", "var", "const"):
        return 0
    if kind in ("neg", "pos"):
        return 1 + depth(tree[1])
    if kind == "bin":
        return 1 + max(depth(tree[2]), depth(tree[3]))
    return 1 + max(depth(a) for a in tree[2])


def reference(tree):
    """Evaluate a tree with numpy; return (value, uses_names, constant_part_not_finite)."""
    kind = tree[0]
    if kind in ("int", "num"):
        return np.float64(tree[1]), False, False
    if kind == "const":
        return np.float64(math.pi if tree[1] == "pi" else math.e), False, False
    if kind == "var":
        return ENV[tree[1]], True, False
    if kind in ("neg", "pos"):
        parts = [reference(tree[1])]
        func = np.negative if kind == "neg" else np.positive
    elif kind == "bin":
        parts = [reference(tree[2]), reference(tree[3])]
        func = REFERENCE_OPS[tree[1]]
    else:
        parts = [reference(a) for a in tree[2]]
        func = REFERENCE_FUNCS[tree[1]]
    value = func(*(p[0] for p in parts))
    uses = any(p[1] for p in parts)
    bad = any(p[2] for p in parts) or (not uses and not np.isfinite(value))
    return value, uses, bad


@pytest.mark.slow
@settings(FUZZ, max_examples=800)
@given(trees)
@example(("bin", "**", ("int", 9), ("bin", "**", ("int", 9), ("int", 9))))
@example(("call", "exp", [("neg", ("bin", "/", ("int", 1), ("bin", "**", ("var", "x"), ("int", 2))))]))
@example(("neg", ("bin", "**", ("int", 2), ("int", 2))))
@example(("bin", "%", ("num", -7.0), ("int", 3)))
@example(("call", "max", [("var", "x"), ("var", "a"), ("neg", ("var", "x"))]))
@example(("call", "sqrt", [("var", "x")]))
@example(("call", "heaviside", [("var", "x"), ("num", 0.5)]))
@example(("call", "sech", [("bin", "/", ("var", "x"), ("var", "a"))]))
@example(("call", "arctan2", [("var", "b"), ("neg", ("var", "x"))]))
def test_trees_match_numpy_reference(tree):
    assume(depth(tree) <= 30)
    text = render(tree)
    with np.errstate(all="ignore"):
        expected, _, constant_bad = reference(tree)
    if constant_bad:
        # a constant sub-expression that is not finite is refused when compiling
        with pytest.raises(CaseError, match="non-finite"):
            compile_expression(text, ["x", "a", "b"])
        return
    expr = compile_expression(text, ["x", "a", "b"])
    if not np.all(np.isfinite(expected)):
        with pytest.raises(CaseError, match="non-finite"):
            expr.evaluate(ENV)
        return
    got = expr.evaluate(ENV)
    if np.ndim(expected) == 0:
        assert isinstance(got, float)
    else:
        assert isinstance(got, np.ndarray) and got.shape == np.shape(expected)
    np.testing.assert_array_equal(got, expected, err_msg=text)
