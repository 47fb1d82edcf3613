"""Tests of the safe arithmetic-expression evaluator (fdsolver.input._expressions)."""

from __future__ import annotations

import ast
import math
import pathlib
import pickle
import time

import numpy as np
import pytest
import scipy.special

from fdsolver.errors import CaseError
from fdsolver.input._expressions import (
    CONSTANT_NAMES,
    FUNCTION_NAMES,
    MAX_DEPTH,
    Expression,
    compile_expression,
    evaluate_number,
    resolve_params,
)

KEY = "potential[1].formula"
FILE = "cases/well.toml"


def value(text: str, **env) -> float | np.ndarray:
    return compile_expression(text).evaluate(env)


def refused(text: str, allowed=None) -> CaseError:
    """Compile ``text``; it must be refused with a CaseError carrying file and key."""
    with pytest.raises(CaseError) as info:
        compile_expression(text, allowed, file=FILE, key=KEY)
    err = info.value
    assert err.key == KEY and err.file == FILE
    assert KEY in str(err) and FILE in str(err)
    assert "\n" not in str(err)  # one-line messages (common practice, no source)
    return err


# ---------------------------------------------------------------- values

# Each function against an independent reference: Python's math module (C libm),
# except heaviside (numpy.heaviside documentation: 0 for x<0, h0 at 0, 1 for x>0)
# and erf/erfc, also checked against scipy.special.
SCALAR_CASES = [
    ("sqrt(2.5)", math.sqrt(2.5)),
    ("exp(-1.25)", math.exp(-1.25)),
    ("log(3.5)", math.log(3.5)),
    ("log10(3.5)", math.log10(3.5)),
    ("log2(3.5)", math.log2(3.5)),
    ("sin(0.7)", math.sin(0.7)),
    ("cos(0.7)", math.cos(0.7)),
    ("tan(0.7)", math.tan(0.7)),
    ("arcsin(0.3)", math.asin(0.3)),
    ("arccos(0.3)", math.acos(0.3)),
    ("arctan(3)", math.atan(3.0)),
    ("arctan2(-1, -2)", math.atan2(-1.0, -2.0)),
    ("sinh(1.1)", math.sinh(1.1)),
    ("cosh(1.1)", math.cosh(1.1)),
    ("tanh(1.1)", math.tanh(1.1)),
    ("arcsinh(1.1)", math.asinh(1.1)),
    ("arccosh(1.1)", math.acosh(1.1)),
    ("arctanh(0.4)", math.atanh(0.4)),
    ("abs(-3.25)", 3.25),
    ("min(3, -1, 2)", -1.0),
    ("max(3, -1, 2, 7.5)", 7.5),
    ("floor(-2.5)", math.floor(-2.5)),
    ("ceil(-2.5)", math.ceil(-2.5)),
    ("sign(-0.2)", -1.0),
    ("sign(0)", 0.0),
    ("heaviside(-1, 0.5)", 0.0),
    ("heaviside(0, 0.5)", 0.5),
    ("heaviside(2, 0.5)", 1.0),
    ("erf(0.6)", math.erf(0.6)),
    ("erfc(0.6)", math.erfc(0.6)),
    ("sech(0.9)", 1.0 / math.cosh(0.9)),
    ("hypot(3, 4)", 5.0),
    ("pi", math.pi),
    ("e", math.e),
    ("2*sqrt(3**2 + 1)", 2.0 * math.sqrt(10.0)),
    ("-1.5e3/2", -750.0),
    ("1_000 + 0x10", 1016.0),
]


@pytest.mark.parametrize("text, expected", SCALAR_CASES)
def test_scalar_values_match_math_module(text, expected):
    got = value(text)
    assert isinstance(got, float)
    assert math.isclose(got, expected, rel_tol=1e-14, abs_tol=1e-300)


def _ulps(got: np.ndarray, exact: np.ndarray) -> float:
    """Largest distance of ``got`` from ``exact`` in units of the last place of ``exact``."""
    return float(np.max(np.abs(got - exact) / np.spacing(np.abs(exact))))


def test_erf_and_erfc_against_mpmath_and_scipy():
    # references: mpmath.erf / mpmath.erfc at 40 digits, rounded to double (the exact values for this purpose);
    # scipy.special.erf / erfc as a second library.  Points: a uniform sweep, random points, and the tails, where
    # erfc is tiny (down to 1e-300 at x = 26.2) and must keep its relative accuracy.
    import mpmath

    x = np.concatenate([np.linspace(-6.0, 6.0, 241), np.random.default_rng(3).normal(0.0, 2.5, 200),
                        np.linspace(6.0, 26.2, 60), -np.logspace(-12.0, 0.0, 25), np.logspace(-300.0, 0.0, 25)])
    with mpmath.workdps(40):
        exact_erf = np.array([float(mpmath.erf(mpmath.mpf(float(v)))) for v in x])
        exact_erfc = np.array([float(mpmath.erfc(mpmath.mpf(float(v)))) for v in x])
    got_erf, got_erfc = value("erf(x)", x=x), value("erfc(x)", x=x)
    assert _ulps(got_erf, exact_erf) <= 2.0
    assert _ulps(got_erfc, exact_erfc) <= 4.0  # a few ulps over the whole range (the C library's erfc)
    assert np.allclose(got_erf, scipy.special.erf(x), rtol=1e-15, atol=0.0)
    # scipy.special.erfc keeps about 13 digits in the far tail (4e-14 relative near x = 24, measured against
    # mpmath): the bound here is that library's, the mpmath check above is the sharp one
    assert np.allclose(got_erfc, scipy.special.erfc(x), rtol=1e-13, atol=0.0)
    # shapes and special values: elementwise like a numpy ufunc
    assert value("erf(x)", x=np.array([[0.5, -0.5]])).shape == (1, 2)
    assert value("erf(x)", x=np.array([np.inf, -np.inf])).tolist() == [1.0, -1.0]
    assert value("erfc(x)", x=np.array([np.inf, -np.inf])).tolist() == [0.0, 2.0]
    from fdsolver.input._expressions import special

    assert np.isnan(special.erf(np.nan)) and np.isnan(special.erfc(np.nan))  # (an expression refuses NaN itself)


def test_python_operator_precedence():
    # reference: Python Language Reference, section 6.17 "Operator precedence"
    # (the right-hand sides below are Python's own arithmetic on the same literals)
    assert value("-2**2") == -(2.0**2) == -4.0
    assert value("2**-1") == 2.0**-1
    assert value("2**3**2") == 2.0 ** (3.0**2) == 512.0
    assert value("(2**3)**2") == 64.0
    assert value("1 - 2 - 3") == (1.0 - 2.0) - 3.0
    assert value("8/4/2") == (8.0 / 4.0) / 2.0
    assert value("2*3 + 4*5") == 26.0
    assert value("2 + 3*4**2") == 2.0 + 3.0 * 16.0
    assert value("-7 % 3") == -7.0 % 3.0 == 2.0  # sign of the divisor, as Python
    assert value("7 % -3") == 7.0 % -3.0 == -2.0
    assert value("- -3") == 3.0
    assert value("+3") == 3.0


def test_integer_division_is_true_division():
    # reference: Python Language Reference, "/" on ints gives a float
    assert value("7/2") == 3.5


def test_named_values_and_gaussian_well():
    # V(x) = -V0 exp(-(x/a)^2) gives -V0/e at x = a (definition of the Gaussian)
    v = value("-V0*exp(-(x/a)**2)", V0=3.0, x=0.5, a=0.5)
    assert math.isclose(v, -3.0 / math.e, rel_tol=1e-15)


def test_names_are_the_free_variables_only():
    expr = compile_expression("-V0*exp(-(x/a)**2) + pi*e + sqrt(w0)")
    assert isinstance(expr, Expression)
    assert expr.names == frozenset({"V0", "x", "a", "w0"})
    assert expr.text == "-V0*exp(-(x/a)**2) + pi*e + sqrt(w0)"


def test_reserved_names_are_exported():
    assert {"sqrt", "heaviside", "erf", "sech", "hypot", "min", "max"} <= FUNCTION_NAMES
    assert CONSTANT_NAMES == {"pi", "e"}


def test_whitespace_and_newlines_are_spaces():
    assert value("  1 +\n 2\t") == 3.0


# ---------------------------------------------------------------- arrays


def test_vectorised_potential_matches_numpy():
    # reference: the same formula written with numpy directly
    x = np.linspace(-2.0, 2.0, 201)
    got = compile_expression("-V0*exp(-(x/a)**2)", ["V0", "a", "x"]).evaluate(
        {"V0": 1.5, "a": 0.7, "x": x}
    )
    assert isinstance(got, np.ndarray) and got.shape == x.shape and got.dtype == np.float64
    np.testing.assert_allclose(got, -1.5 * np.exp(-((x / 0.7) ** 2)), rtol=1e-15, atol=0)


def test_vectorised_min_max_heaviside():
    x = np.array([-2.0, -0.5, 0.0, 0.5, 2.0])
    np.testing.assert_array_equal(value("min(x, 1, -x)", x=x), np.minimum(np.minimum(x, 1), -x))
    np.testing.assert_array_equal(value("max(x, 0)", x=x), np.maximum(x, 0.0))
    np.testing.assert_array_equal(value("heaviside(x, 0.5)", x=x), np.heaviside(x, 0.5))


def test_two_dimensional_and_integer_arrays():
    x = np.arange(6).reshape(2, 3)
    got = value("x**2 + 1", x=x)
    assert got.shape == (2, 3) and got.dtype == np.float64
    np.testing.assert_array_equal(got, x.astype(float) ** 2 + 1)


def test_intermediate_infinity_with_finite_result_is_accepted():
    # exp(-1/x**2) -> 0 as x -> 0: the smooth bump, finite at x = 0 (IEEE 754 inf rules)
    x = np.array([-1.0, 0.0, 1.0])
    np.testing.assert_array_equal(value("exp(-1/x**2)", x=x), [math.exp(-1), 0.0, math.exp(-1)])


def test_result_is_not_the_input_array():
    x = np.array([1.0, 2.0])
    out = value("x", x=x)
    out[0] = 99.0
    assert x[0] == 1.0


def test_constant_expression_with_array_env_is_a_float():
    assert value("2*3", x=np.zeros(4)) == 6.0


def test_array_shapes_that_do_not_broadcast():
    with pytest.raises(CaseError, match="shapes"):
        value("x + y", x=np.ones(3), y=np.ones(4))


# ---------------------------------------------------------------- evaluation errors


def test_missing_name_at_evaluation():
    expr = compile_expression("x + width", file=FILE, key=KEY)
    with pytest.raises(CaseError) as info:
        expr.evaluate({"x": 1.0, "widht": 2.0})
    assert KEY in str(info.value) and "'width'" in str(info.value) and "x + width" in str(info.value)


@pytest.mark.parametrize(
    "text, env",
    [
        ("1/x", {"x": 0.0}),
        ("sqrt(x)", {"x": -1.0}),
        ("log(x)", {"x": 0.0}),
        ("x**1e308", {"x": 2.0}),
        ("exp(x)", {"x": 1000.0}),
        ("x % 0", {"x": 1.0}),
        ("1/x", {"x": np.array([1.0, 0.0, 2.0])}),
        ("arcsin(x)", {"x": np.linspace(0, 2, 5)}),
    ],
)
def test_non_finite_result_is_refused(text, env):
    expr = compile_expression(text, file=FILE, key=KEY)
    with pytest.raises(CaseError) as info:
        expr.evaluate(env)
    msg = str(info.value)
    assert KEY in msg and text in msg and "non-finite" in msg


def test_non_finite_array_message_gives_the_point():
    x = np.array([1.0, 0.0, 2.0])
    with pytest.raises(CaseError, match=r"1 of 3 points, first at index 1 \(x=0\)"):
        value("1/x", x=x)


@pytest.mark.parametrize("bad", [True, "1.0", [1.0, 2.0], None, np.array([1j]), np.array(["a"])])
def test_bad_values_in_env(bad):
    with pytest.raises(CaseError, match="value of 'x'"):
        value("x + 1", x=bad)


# ---------------------------------------------------------------- refused constructs

REFUSED = [
    ("__import__('os')", "'_'"),
    ("__import__('os').system('true')", "named functions"),
    ("x.__class__", "attribute"),
    ("().__class__", "attribute"),
    ("().__class__.__bases__[0].__subclasses__()", "named functions"),
    ("open('f')", "unknown function 'open'"),
    ("eval('1')", "unknown function 'eval'"),
    ("lambda: 1", "lambda"),
    ("[1][0]", "indexing"),
    ("[1, 2]", "lists"),
    ("(1, 2)", "tuples"),
    ("{1: 2}", "dicts"),
    ("{1}", "sets"),
    ("'a'", "strings"),
    ("b'a'", "strings"),
    ("f'{x}'", "f-strings"),
    ("1j", "complex"),
    ("2 + 3j", "complex"),
    ("True", "boolean"),
    ("None", "None"),
    ("...", "Ellipsis"),
    ("x < 1", "comparisons"),
    ("x == 1", "comparisons"),
    ("x and y", "'and'/'or'"),
    ("not x", "'not'"),
    ("~x", "'~'"),
    ("x if y else z", "'if ... else'"),
    ("(x := 1)", "':='"),
    ("[i for i in x]", "comprehensions"),
    ("sum(i for i in x)", "unknown function"),
    ("sqrt(x=1)", "keyword"),
    ("sqrt(*x)", "starred"),
    ("x // 2", "'//'"),
    ("x ^ 2", "'^'"),
    ("x @ y", "'@'"),
    ("x << 2", "'<<'"),
    ("x | y", "'|'"),
    ("_x + 1", "'_'"),
    ("sqrt", "is a function"),
    ("x(2)", "unknown function 'x'"),
    ("sqrt(1)(2)", "named functions"),
    ("(yield)", "'yield'"),
    ("await x", "'await'"),
    ("1 # comment", "'#'"),
    ("1\x00", "control character"),
    ("", "empty"),
    ("   ", "empty"),
    ("x = 1", "cannot read"),
    ("import os", "cannot read"),
    ("1 +", "cannot read"),
    ("sqrt(1", "cannot read"),
]


@pytest.mark.parametrize("text, fragment", REFUSED)
def test_refused_constructs(text, fragment):
    err = refused(text)
    assert fragment in str(err)


def test_non_string_text_is_refused():
    err = refused(12)  # type: ignore[arg-type]
    assert "expected an expression string" in str(err)


def test_syntax_error_says_where():
    err = refused("1 + * 2")
    assert "column 5" in str(err)
    err = refused("   2 ** ** 3")  # leading spaces are counted in the column
    assert "column 9" in str(err)


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("sqrt()", "sqrt() takes 1 argument but was given 0"),
        ("sqrt(1, 2)", "sqrt() takes 1 argument but was given 2"),
        ("arctan2(1)", "arctan2() takes 2 arguments but was given 1"),
        ("hypot(1, 2, 3)", "hypot() takes 2 arguments"),
        ("heaviside(1)", "heaviside() takes 2 arguments"),
        ("max(1)", "max() takes at least 2 arguments"),
        ("min()", "min() takes at least 2 arguments"),
    ],
)
def test_wrong_number_of_arguments(text, fragment):
    assert fragment in str(refused(text))


def test_did_you_mean_for_names():
    err = refused("wdth/2", ["width", "depth", "x"])
    assert "unknown name 'wdth'; did you mean 'width'?" in str(err)


def test_did_you_mean_for_functions():
    assert "did you mean 'sqrt'?" in str(refused("sqr(2)"))


def test_unknown_name_without_close_match_lists_known_names():
    err = refused("q*2", ["width", "depth"])
    assert "unknown name 'q'" in str(err) and "depth, e, pi, width" in str(err)


def test_allowed_names_accept_a_mapping():
    assert compile_expression("a*2", {"a": 1.0}).names == {"a"}


# ---------------------------------------------------------------- hostile sizes


def _quick_refusal(text: str) -> CaseError:
    start = time.perf_counter()
    err = refused(text)
    assert time.perf_counter() - start < 1.0
    return err


@pytest.mark.parametrize(
    "text",
    ["9**9**9", "10**10**10", "2**(2**(2**(2**10)))", "(10**400.0)", "9.0**9**9**9", "exp(1000)"],
)
def test_huge_exponents_are_refused_quickly(text):
    assert "non-finite" in str(_quick_refusal(text))


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("(" * 200 + "1" + ")" * 200, "nests brackets"),
        ("(" * (MAX_DEPTH + 1) + "1" + ")" * (MAX_DEPTH + 1), "nests brackets"),
        ("sqrt(" * 100 + "1" + ")" * 100, "nests brackets"),
        ("[" * 300, "nests brackets"),
        ("-" * 10000 + "1", "characters long"),
        ("-" * 1999 + "1", "nests operations"),
        ("-" * (MAX_DEPTH + 1) + "1", "nests operations"),
        ("2**" * 600 + "2", "nests operations"),
        ("1+" * 3000 + "1", "characters long"),
        ("x" * 2001, "characters long"),
    ],
)
def test_deep_or_long_input_is_refused_quickly(text, fragment):
    assert fragment in str(_quick_refusal(text))


def test_nesting_at_the_limit_is_accepted():
    depth = MAX_DEPTH
    assert value("(" * depth + "1" + ")" * depth) == 1.0
    assert value("-" * depth + "1") == (-1.0) ** depth


def test_long_flat_sums_are_not_nesting():
    # a+b+c+... is a chain, not nesting: 600 terms within the length limit
    assert value("+".join(["1"] * 600)) == 600.0
    assert value("*".join(["1.001"] * 300)) == pytest.approx(1.001**300, rel=1e-12)


def test_long_literals_are_refused():
    assert "401 digits" in str(refused("1" * 401))
    assert "digits" in str(refused("0." + "1" * 401))
    assert "too large" in str(refused("1" * 400))  # 1e399 does not fit a double
    assert "too large" in str(refused("1e999"))
    assert "too large" in str(refused("0x" + "f" * 300))
    assert value("1" * 300) == float("1" * 300)


def test_module_never_calls_eval_exec_or_compile():
    # common practice, no source: the evaluator must walk the tree itself
    import fdsolver.input._expressions as module

    tree = ast.parse(pathlib.Path(module.__file__).read_text())
    called = {
        node.func.id
        for node in ast.walk(tree)
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
    }
    assert not called & {"eval", "exec", "compile", "__import__"}


def test_expression_pickles():
    # needed to ship cases to worker processes (common practice, no source)
    expr = compile_expression("a*x + 1", file=FILE, key=KEY)
    back = pickle.loads(pickle.dumps(expr))
    assert back.text == expr.text and back.names == expr.names
    assert back.evaluate({"a": 2.0, "x": 3.0}) == 7.0


# ---------------------------------------------------------------- evaluate_number


def test_evaluate_number_plain_numbers():
    assert evaluate_number(3, {}) == 3.0 and isinstance(evaluate_number(3, {}), float)
    assert evaluate_number(-2.5, {}) == -2.5
    assert evaluate_number(np.float32(0.5), {}) == 0.5


def test_evaluate_number_expressions():
    params = {"d": 4.0, "w0": 1.5}
    assert evaluate_number("-d/2", params) == -2.0
    assert evaluate_number("2*sqrt(w0**2+1)", params) == 2.0 * math.sqrt(1.5**2 + 1)


@pytest.mark.parametrize(
    "bad, fragment",
    [
        (True, "got a boolean"),
        (False, "got a boolean"),
        (None, "got NoneType"),
        ([1.0], "got list"),
        ({"a": 1}, "got dict"),
        (float("nan"), "not a finite number"),
        (float("inf"), "not a finite number"),
        (10**400, "not a finite number"),
        ("d + q", "unknown name 'q'"),
        ("1/(d-4)", "non-finite"),
    ],
)
def test_evaluate_number_refusals(bad, fragment):
    with pytest.raises(CaseError) as info:
        evaluate_number(bad, {"d": 4.0}, file=FILE, key="grid.left")
    assert "grid.left" in str(info.value) and fragment in str(info.value)


@pytest.mark.parametrize("bad", [True, None, [1.0], b"1", 1 + 2j])
def test_evaluate_number_wrong_type_message(bad):
    with pytest.raises(CaseError, match="expected a number or an expression string, got"):
        evaluate_number(bad, {})


# ---------------------------------------------------------------- resolve_params


def test_params_in_dependency_order():
    raw = {"c": "b + a", "b": "a*2", "a": 1.5, "d": "c**2"}
    got = resolve_params(raw)
    assert got == {"c": 4.5, "b": 3.0, "a": 1.5, "d": 20.25}
    assert list(got) == ["c", "b", "a", "d"]


def test_params_may_use_constants_and_functions():
    assert resolve_params({"w": "2*pi", "h": "sqrt(w)"})["h"] == math.sqrt(2 * math.pi)


@pytest.mark.parametrize(
    "raw, cycle, key",
    [
        ({"a": "b + 1", "b": "a*2"}, "a -> b -> a", "params.a"),
        ({"a": "a + 1"}, "a -> a", "params.a"),
        ({"x0": 1, "a": "b", "b": "c", "c": "a*x0"}, "a -> b -> c -> a", "params.a"),
        ({"p": "q", "q": "r", "r": "q"}, "q -> r -> q", "params.q"),
    ],
)
def test_params_cycles_are_named(raw, cycle, key):
    with pytest.raises(CaseError) as info:
        resolve_params(raw, file=FILE)
    assert cycle in str(info.value)
    assert info.value.key == key and info.value.file == FILE


def test_params_unknown_name_suggests():
    with pytest.raises(CaseError) as info:
        resolve_params({"width": 2.0, "half": "wdth/2"})
    assert info.value.key == "params.half"
    assert "unknown name 'wdth'; did you mean 'width'?" in str(info.value)


def test_params_key_prefix():
    with pytest.raises(CaseError) as info:
        resolve_params({"a": "1/b", "b": 0}, key_prefix="sweep.params")
    assert info.value.key == "sweep.params.a" and "non-finite" in str(info.value)


@pytest.mark.parametrize(
    "raw, key, fragment",
    [
        ({"pi": 3.0}, "params.pi", "built-in constant"),
        ({"sqrt": 1.0}, "params.sqrt", "built-in function"),
        ({"_a": 1.0}, "params._a", "'_'"),
        ({"1a": 1.0}, "params.1a", "not a valid name"),
        ({"for": 1.0}, "params.for", "not a valid name"),
        ({"a b": 1.0}, "params.a b", "not a valid name"),
        ({"a": True}, "params.a", "boolean"),
        ({"a": [1]}, "params.a", "got list"),
        ({"a": float("inf")}, "params.a", "not a finite"),
        ({"a": "1e308*10"}, "params.a", "non-finite"),
        ({"a": "2**", "b": 1}, "params.a", "cannot read"),
    ],
)
def test_params_refusals(raw, key, fragment):
    with pytest.raises(CaseError) as info:
        resolve_params(raw, file=FILE)
    assert info.value.key == key and fragment in str(info.value)


def test_params_must_be_a_table():
    with pytest.raises(CaseError, match="table"):
        resolve_params([("a", 1)])  # type: ignore[arg-type]


def test_params_non_finite_from_other_params():
    with pytest.raises(CaseError) as info:
        resolve_params({"big": 1e200, "huge": "big*big"})
    assert info.value.key == "params.huge" and "non-finite" in str(info.value)
