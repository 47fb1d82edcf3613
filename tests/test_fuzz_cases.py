"""Fuzz tests of the case parser (fdsolver.case_from_text and case_from_dict).

Contract: any text given to ``case_from_text`` returns a :class:`fdsolver.Case`
or raises :class:`fdsolver.CaseError` with a one-line message; nothing else
(no TypeError, KeyError, RecursionError, ...), and quickly.

Inputs are TOML documents built from the schema's own keys (the tables in
``fdsolver.input.schema`` and ``fdsolver.model.shapes.SHAPES``, plus misspellings) filled
with hostile values (NaN, inf, huge and subnormal numbers, booleans, dates,
arrays, inline tables, hostile expressions, control characters), rendered to
TOML by this module and then, for some examples, damaged at the text level
(truncated, a character inserted or deleted, a line doubled).  The seed
documents in ``tests/fuzz_seeds/cases/`` run first, as they are and mutated.
Examples are derandomized (the same on every run); the number of examples
scales with the environment variable FDSOLVER_FUZZ_SCALE (default 1; the CI
budget is about 15 s at 1).
"""

from __future__ import annotations

import datetime
import math
import os
import pathlib
import re
import time

import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

import fdsolver
from fdsolver.input import schema as schema_module
from fdsolver.model import shapes as shapes_module
SEEDS = pathlib.Path(__file__).parent / "fuzz_seeds" / "cases"
SCALE = max(1, int(os.environ.get("FDSOLVER_FUZZ_SCALE", "1")))
FUZZ = settings(
    max_examples=600 * SCALE,
    deadline=None,
    derandomize=settings.default.derandomize,  # the profile tests/conftest.py loads (FDSOLVER_HYPOTHESIS)
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much, HealthCheck.data_too_large],
)
TIME_LIMIT = 2.0  # seconds for one parse, however hostile the input


# ----------------------------------------------------------------- contract
def note(what: str) -> None:
    """A hypothesis event (outcome statistics with --hypothesis-show-statistics); ignored outside hypothesis."""
    try:
        event(what)
    except Exception:  # noqa: BLE001 - InvalidArgument outside a hypothesis test
        pass


def check_contract(text: str, folder: pathlib.Path):
    """Parse ``text`` as a case file in ``folder``: a Case or a one-line CaseError, nothing else."""
    start = time.perf_counter()
    try:
        case = fdsolver.case_from_text(text, path=str(folder / "fuzz.toml"))
    except fdsolver.CaseError as err:
        message = str(err)
        assert message and "\n" not in message and "\r" not in message, repr(message)
        assert len(message) < 3000
        assert err.key is None or isinstance(err.key, str)
        note("CaseError at " + (err.key.split(".")[0].split("[")[0] if err.key else "(no key)"))
        case = None
    else:
        assert isinstance(case, fdsolver.Case)
        assert case.text == text
        assert case.potential.shapes or case.potential.stack is not None
        note("a valid Case")
    assert time.perf_counter() - start < TIME_LIMIT
    return case


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> pathlib.Path:
    """A folder with the table files the generated cases may name (invented profiles)."""
    d = tmp_path_factory.mktemp("fuzzcases")
    (d / "good.csv").write_text("# invented profile\nx,V\n-2,0\n-1,-1\n1,-1\n2,0\n")
    (d / "four.csv").write_text("-3 0\n-1 -2\n1 -2\n3 0\n")
    (d / "bad.csv").write_text("x,V\n0,1\n1,abc\n")
    (d / "backwards.csv").write_text("0,0\n2,1\n1,0\n")
    (d / "one.csv").write_text("0,0\n")
    (d / "binary.csv").write_bytes(b"\xff\xfe\x00junk")
    (d / "folder.csv").mkdir()
    return d


# ------------------------------------------------------------ TOML rendering
BARE = re.compile(r"^[A-Za-z0-9_-]+$")


def toml_key(k: str) -> str:
    return k if BARE.match(k) else toml_string(k)


def toml_string(s: str) -> str:
    out = []
    for ch in s:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        elif 0xD800 <= ord(ch) <= 0xDFFF:
            out.append("?")  # lone surrogates cannot be written in UTF-8
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return toml_string(v)
    if isinstance(v, (datetime.date, datetime.datetime)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{toml_key(k)} = {toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def render(doc: dict) -> str:
    """TOML text: plain keys, then [tables], then [[arrays of tables]] (lists of dicts)."""
    lines = []
    tables, arrays = {}, {}
    for k, v in doc.items():
        if isinstance(v, dict):
            tables[k] = v
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            arrays[k] = v
        else:
            lines.append(f"{toml_key(k)} = {toml_value(v)}")
    for k, v in tables.items():
        lines.append(f"[{toml_key(k)}]")
        lines.extend(f"{toml_key(kk)} = {toml_value(vv)}" for kk, vv in v.items())
    for k, items in arrays.items():
        for item in items:
            lines.append(f"[[{toml_key(k)}]]")
            lines.extend(f"{toml_key(kk)} = {toml_value(vv)}" for kk, vv in item.items())
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------- strategies
HOSTILE_TEXT = [
    "", " ", "-d/2", "2*sqrt(w0**2 + 1)", "-V0*exp(-(x/a)**2)", "x", "a", "d", "w0", "pi", "e", "nan", "inf",
    "1/0", "0/0", "10**400", "9**9**9", "sqrt(-1)", "log(0)", "(" * 50 + "1" + ")" * 50, "-" * 500 + "1",
    "__import__('os').system('echo no')", "().__class__.__bases__[0]", "x.real", "open('f')", "lambda: 1",
    "[q for q in (1, 2)]", "(q := 1)", "a if b else c", "1e999", "1_000", "0x10", "1j", "'text'", "f'{x}'",
    "min(x)", "heaviside(x)", "sech(x/a)**2", "x % 0", "a b", "#", "\x00", "\u202e-1", "\ufeff1", "é", "😀",
    "1" * 401, "+".join(["1"] * 1200), "square", "atomic", "nm-meV", "open", "hard", "linear", "cubic",
    "good.csv", "four.csv", "bad.csv", "backwards.csv", "one.csv", "binary.csv", "folder.csv", "missing.csv",
    ".", "", "d=0.5:2:5", "d=2:0.5:5", "d=0:1:1000000000000", "d=1,2,3", "nope=1:2:3",
]
numbers = st.one_of(
    st.integers(-10, 10),
    st.sampled_from([0, 1, -1, 2**31, 2**63 - 1, -(2**63), 10**30, 100000, 100001]),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 5e-324, 1e-300, 1e-13, 1e-8, 0.1, 0.5, 1.0, 2.0, 1e300, 1.7976931348623157e308]),
)
scalars = st.one_of(
    numbers,
    numbers,
    st.booleans(),
    st.sampled_from(HOSTILE_TEXT),
    st.text(max_size=12),
    st.dates(),
)
values = st.recursive(
    scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=3),
        st.dictionaries(st.sampled_from(["a", "b", "low", "high", "d"]), inner, max_size=2),
    ),
    max_leaves=6,
)


def near_names(names):
    """The schema's names (nine times in ten) or a close misspelling or a hostile key."""
    names = list(names)
    typos = [n[:-1] for n in names if len(n) > 2] + [n + "s" for n in names] + [n.upper() for n in names[:3]]
    odd = st.sampled_from(typos + ["bogus", "", " ", "__class__", "x.y", "é"])
    return st.integers(0, 9).flatmap(lambda i: st.sampled_from(names) if i < 9 else odd)


PARAM_NAMES = ["a", "b", "d", "w0", "V0"]
sane_numbers = st.one_of(st.floats(-20.0, 20.0), st.integers(-5, 30), st.sampled_from(PARAM_NAMES),
                         st.sampled_from(["-d/2", "2*a", "V0 + 1", "sqrt(w0**2 + 1)", "pi/4", "1e-3"]))
GOOD = {
    "title": st.text(max_size=20), "description": st.text(max_size=40), "name": st.text(max_size=10),
    "units": st.sampled_from(["atomic", "nm-meV"]), "boundary": st.sampled_from(["open", "hard"]),
    "interpolation": st.sampled_from(["linear", "cubic"]),
    "file": st.sampled_from(["good.csv", "four.csv", "bad.csv", "backwards.csv", "one.csv", "binary.csv",
                             "folder.csv", "missing.csv"]),
    "V": st.sampled_from(["-V0*exp(-(x/a)**2)", "-1/(1 + x**2)", "x**2/2", "-a*sech(x)**2", "-heaviside(1 - abs(x), 0.5)"]),
    "max_states": st.integers(-2, 30), "max_levels": st.integers(0, 25),
    "x_column": st.integers(-1, 3), "v_column": st.integers(-1, 3),
    "energy_window": st.lists(sane_numbers, min_size=1, max_size=3),
    "vary": st.lists(st.sampled_from(["a=1:2:3", "d=0.5:2:5", "d=2:0.5:5", "zz=1:2:3", "a=1,2,3", "a=1:2"]), max_size=2),
}


def value_for(key: str):
    """Three times in four a value of the right kind for ``key``, else anything hostile."""
    good = GOOD.get(key, sane_numbers)
    return st.integers(0, 3).flatmap(lambda i: good if i < 3 else values)


SHAPE_KEYS = sorted({k for spec in shapes_module.SHAPES.values() for k in spec.required + spec.optional})
SHAPE_NAMES = sorted(shapes_module.SHAPES)


@st.composite
def component(draw):
    shape = draw(st.sampled_from(SHAPE_NAMES * 3 + ["sqare", "Square", "", "delta"]))
    spec = shapes_module.SHAPES.get(shape)
    comp = {}
    if draw(st.integers(0, 19)) > 0:
        comp["shape"] = shape if draw(st.integers(0, 19)) > 0 else draw(values)
    if spec is not None:
        wanted = list(spec.required) + list(spec.optional) + ([draw(st.sampled_from(["depth", "height"]))] if spec.signed else [])
        for k in wanted:
            if draw(st.integers(0, 9)) > 0:  # usually present, sometimes missing
                comp[k] = draw(value_for(k))
    if draw(st.integers(0, 3)) == 0:
        comp[draw(near_names(SHAPE_KEYS + ["name", "height", "depth"]))] = draw(value_for("x"))
    return comp


@st.composite
def table_of(draw, keys):
    out = {}
    for _ in range(draw(st.integers(0, 4))):
        k = draw(near_names(keys))
        out[k] = draw(value_for(k))
    return out


@st.composite
def documents(draw):
    doc = {}
    keys = draw(st.lists(near_names([k for k in schema_module.TOP if k not in ("potential", "layer")]),
                         max_size=3, unique=True))
    if draw(st.integers(0, 3)) > 0:
        keys.append("potential")
    if draw(st.integers(0, 3)) == 0:
        keys.append("layer")
    for key in keys:
        if key == "potential":
            doc[key] = draw(st.one_of(st.lists(component(), min_size=1, max_size=3), values)) \
                if draw(st.integers(0, 9)) == 0 else draw(st.lists(component(), min_size=1, max_size=3))
        elif key == "layer":
            doc[key] = draw(st.lists(table_of(schema_module.LAYER), min_size=0, max_size=4))
        elif key == "params":
            names = st.sampled_from(PARAM_NAMES * 4 + ["x", "pi", "e", "sqrt", "_p", "__class__", "1a", "é"])
            doc[key] = draw(st.dictionaries(names, value_for("param"), max_size=5))
        elif key == "domain":
            doc[key] = draw(table_of(schema_module.DOMAIN))
        elif key == "solve":
            doc[key] = draw(table_of(schema_module.SOLVE))
        elif key in ("sweep", "delta_check"):
            doc[key] = draw(st.one_of(table_of(("vary", "units", "memory_mb", "psi_points", "chunk")), values))
        else:
            doc[key] = draw(value_for(key))
    if "params" not in doc and draw(st.integers(0, 3)) > 0:  # usually the params the expressions name exist
        doc["params"] = {n: draw(st.floats(0.1, 10.0)) for n in PARAM_NAMES}
    return doc


INSERTS = ["[", "]", "[[", "=", '"', "'", "\n", "\x00", "#", "{", "}", ",", "\\", "\ufeff", "é", " = 1\n"]


@st.composite
def mutated(draw, text_strategy):
    text = draw(text_strategy)
    how = draw(st.integers(0, 15))
    if how <= 11 or not text:  # three in four examples are left as they are
        return text
    how -= 9
    i = draw(st.integers(0, len(text)))
    if how == 3:
        return text[:i]
    if how == 4:
        return text[:i] + draw(st.sampled_from(INSERTS)) + text[i:]
    if how == 5:
        return text[:i] + text[i + 1 :]
    lines = text.splitlines(keepends=True)
    j = draw(st.integers(0, max(0, len(lines) - 1)))
    return "".join(lines[: j + 1] + lines[j:])


def seed_texts() -> list[str]:
    return [p.read_text(encoding="utf-8") for p in sorted(SEEDS.glob("*.toml"))]


# --------------------------------------------------------------------- tests
def test_seed_corpus_is_present():
    assert len(seed_texts()) >= 20


@pytest.mark.parametrize("name", sorted(p.name for p in SEEDS.glob("*.toml")))
def test_seed(name, folder):
    check_contract((SEEDS / name).read_text(encoding="utf-8"), folder)


def test_valid_seeds_give_cases(folder):
    # seeds whose name starts with "valid_" must parse: the contract is not met by refusing everything
    valid = [p for p in sorted(SEEDS.glob("valid_*.toml"))]
    assert len(valid) >= 5
    for p in valid:
        assert check_contract(p.read_text(encoding="utf-8"), folder) is not None, p.name


@pytest.mark.slow
@FUZZ
@given(mutated(st.sampled_from(seed_texts())))
def test_mutated_seeds(folder, text):
    check_contract(text, folder)


@pytest.mark.slow
@settings(FUZZ, max_examples=1500 * SCALE)
@given(mutated(documents().map(render)))
def test_generated_documents(folder, text):
    check_contract(text, folder)


@pytest.mark.slow
@settings(FUZZ, max_examples=400 * SCALE)
@given(st.text(max_size=200))
def test_arbitrary_text(folder, text):
    check_contract(text, folder)


# case_from_dict takes the same schema as Python data; Python values TOML cannot hold must be refused too
PYTHON_ONLY = [None, 1 + 2j, b"1", np.float64(1.5), np.array([1.0]), (1.0,), {1, 2}, object(), float("nan")]


@pytest.mark.slow
@settings(FUZZ, max_examples=300 * SCALE)
@given(documents(), st.sampled_from(["width", "depth", "center", "sigma", "max_states", "tolerance", "title", "left"]),
       st.sampled_from(PYTHON_ONLY))
def test_dict_documents_with_python_values(folder, doc, key, value):
    # put the Python value somewhere the schema reads
    for comp in doc.get("potential", []) if isinstance(doc.get("potential"), list) else []:
        if isinstance(comp, dict):
            comp[key] = value
    try:
        fdsolver.case_from_dict(doc, path=str(folder / "fuzz.toml"))
    except fdsolver.CaseError as err:
        assert "\n" not in str(err)


def test_dict_numpy_integer_value():
    """A numpy integer is a number: the case is the one the Python int gives (the dict stands for TOML data)."""
    case = fdsolver.case_from_dict({"potential": [{"shape": "square", "center": np.int64(2), "width": 1.0, "depth": 1.0}]})
    same = fdsolver.case_from_dict({"potential": [{"shape": "square", "center": 2, "width": 1.0, "depth": 1.0}]})
    assert case.potential == same.potential
    assert type(case.potential.shapes[0].center) is float and case.potential.shapes[0].center == 2.0


def test_dict_non_string_key():
    """TOML keys are strings; any other key is refused with one line that says so (it cannot be a misspelling)."""
    with pytest.raises(fdsolver.CaseError) as info:
        fdsolver.case_from_dict({None: 1, "potential": [{"shape": "point", "center": 0.0, "strength": 1.0}]})
    message = str(info.value)
    assert "keys must be strings" in message and "None" in message and "\n" not in message


# Found by the fuzz at FDSOLVER_FUZZ_SCALE=15 (a mutated seed with "linea\r"): user text is echoed raw
CONTROL_TEXTS = [
    'units = "SI\\nfdsolver: all good"\n[[potential]]\nshape = "point"\ncenter = 0\nstrength = 1\n',
    '[[potential]]\nshape = "table"\nfile = "good.csv"\ninterpolation = "linea\\r"\n',
    '"ti\\u001b[2Jtle" = 1\n[[potential]]\nshape = "point"\ncenter = 0\nstrength = 1\n',
    '[params]\n"a\\nb" = 1\n[[potential]]\nshape = "point"\ncenter = 0\nstrength = 1\n',
]


@pytest.mark.parametrize("text", CONTROL_TEXTS, ids=["newline_in_value", "cr_in_value", "escape_in_key", "newline_in_param"])
def test_control_characters_in_messages_are_escaped(folder, text):
    with pytest.raises(fdsolver.CaseError) as info:
        fdsolver.case_from_text(text, path=str(folder / "fuzz.toml"))
    assert all(ch.isprintable() for ch in str(info.value)), repr(str(info.value))
