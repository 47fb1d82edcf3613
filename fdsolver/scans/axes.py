"""Swept-parameter axes: parsing ``--vary`` specs, the [sweep] table, and the units of a param.

``NAME=START:STOP:COUNT`` (linear), ``NAME=START:STOP:COUNT:log`` (geometric)
or ``NAME=v1,v2,...`` (a strictly increasing list).  Every problem is a
:class:`~fdsolver.errors.CaseError` naming the option and what to write.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError, did_you_mean

SWEEP_KEYS = ("vary", "units", "memory_mb", "psi_points", "psi_range", "chunk")
LENGTH_KEYS = ("center", "width", "sigma", "edge", "thickness", "left", "right", "stack_origin")
ENERGY_KEYS = ("depth", "height", "band_edge", "omega")
MAX_AXIS_POINTS = 10_000_000  # one axis; the whole sweep is checked against the memory budget later


def _suggest(word, choices) -> str:
    return did_you_mean(word, choices, cutoff=0.5)


def sweep_table(case) -> dict:
    """The case's [sweep] table, its keys checked."""
    table = case.data.get("sweep", {})
    for k in table:
        if k not in SWEEP_KEYS:
            raise CaseError(f"unknown key '{k}'{_suggest(k, SWEEP_KEYS)} (allowed: {', '.join(SWEEP_KEYS)})", file=case.path, key=f"sweep.{k}")
    return table


def param_units(case, name: str) -> str:
    """Units of a param: declared in [sweep] units, else inferred where a key is exactly that param ("" if unknown)."""
    declared = sweep_table(case).get("units", {})
    if not isinstance(declared, dict):
        raise CaseError("must be a table of param = \"unit\"", file=case.path, key="sweep.units")
    if name in declared:
        return str(declared[name])
    u = case.units
    kinds = {**{k: u.length for k in LENGTH_KEYS}, **{k: u.energy for k in ENERGY_KEYS},
             "strength": f"{u.energy} {u.length}", "field": f"{u.energy}/{u.length}", "a": f"1/{u.length}", "mass": "m_e"}
    found = set()
    for section in ("potential", "layer"):
        for item in case.data.get(section, []) or []:
            for k, v in item.items():
                if isinstance(v, str) and v.strip() == name and k in kinds:
                    found.add(kinds[k])
    for k, v in (case.data.get("domain") or {}).items():
        if isinstance(v, str) and v.strip() == name and k in kinds:
            found.add(kinds[k])
    return found.pop() if len(found) == 1 else ""


# ----------------------------------------------------------------- axes
@dataclass(frozen=True)
class Axis:
    """One swept param: its name, values (strictly increasing), spec text as given, spacing, units."""

    name: str
    values: np.ndarray
    text: str
    spacing: str
    units: str = ""
    key: str = "--vary"


def _number(s: str, text: str, key: str) -> float:
    try:
        v = float(s)
    except ValueError:
        raise CaseError(f"'{s}' in '{text}' is not a number", key=key) from None
    if not math.isfinite(v):
        raise CaseError(f"'{s}' in '{text}' is not a finite number", key=key)
    return v


def split_spec(text: str, case, key: str = "--vary") -> tuple[str, str]:
    """NAME and the rest of NAME=..., the name checked against the case params."""
    if "=" not in text:
        raise CaseError(f"'{text}' is not NAME=START:STOP:COUNT or NAME=v1,v2,...", key=key)
    name, rest = (s.strip() for s in text.split("=", 1))
    if name not in case.params:
        names = ", ".join(case.params) or "none"
        raise CaseError(f"no param named '{name}' in the case{_suggest(name, case.params)} (params: {names})", file=case.path, key=key)
    if not rest:
        raise CaseError(f"'{text}' gives no values: the range is empty", key=key)
    return name, rest


def parse_axis(text: str, case, key: str = "--vary") -> Axis:
    """NAME=START:STOP:COUNT (linear), NAME=START:STOP:COUNT:log (geometric) or NAME=v1,v2,... (a list)."""
    name, rest = split_spec(text, case, key)
    units = param_units(case, name)
    if ":" in rest:
        parts = rest.split(":")
        log = len(parts) == 4 and parts[3].strip().lower() == "log"
        if len(parts) not in (3, 4) or (len(parts) == 4 and not log):
            raise CaseError(f"'{text}' should be {name}=START:STOP:COUNT or {name}=START:STOP:COUNT:log", key=key)
        lo, hi = _number(parts[0], text, key), _number(parts[1], text, key)
        try:
            count = int(parts[2])
        except ValueError:
            raise CaseError(f"COUNT '{parts[2]}' in '{text}' is not a whole number", key=key) from None
        if count < 1 or (count > 1 and lo == hi):
            raise CaseError(f"'{text}' is an empty range (need START < STOP and COUNT >= 2)", key=key)
        if lo > hi:
            raise CaseError(f"'{text}' is a reversed range: START {lo:g} is above STOP {hi:g}; write {name}={parts[1]}:{parts[0]}:{parts[2]}", key=key)
        if count == 1:
            raise CaseError(f"'{text}' has COUNT 1; a single value is written {name}={parts[0]}", key=key)
        if count > MAX_AXIS_POINTS:
            raise CaseError(
                f"'{text}' asks for {count} values on one axis (at most {MAX_AXIS_POINTS}); "
                f"a sweep of that size would not fit in memory", key=key)
        if log and lo <= 0:
            raise CaseError(f"log spacing needs START > 0 in '{text}'", key=key)
        values = np.geomspace(lo, hi, count) if log else np.linspace(lo, hi, count)
        return Axis(name, values, text.strip(), "log" if log else "linear", units, key)
    values = np.array([_number(s, text, key) for s in rest.split(",") if s.strip()] or [])
    if values.size == 0:
        raise CaseError(f"'{text}' is an empty list", key=key)
    if np.any(np.diff(values) <= 0):
        raise CaseError(f"the values in '{text}' must increase strictly (no repeats, low to high)", key=key)
    return Axis(name, values, text.strip(), "list", units, key)


def parse_axes(texts, case, key: str = "--vary") -> tuple[Axis, ...]:
    """All axes; [sweep] vary of the case when ``texts`` is empty."""
    texts = list(texts or [])
    if not texts:
        texts = sweep_table(case).get("vary", [])
        key = "sweep.vary"
        if not isinstance(texts, list) or not all(isinstance(t, str) for t in texts):
            raise CaseError('must be a list of strings like "d=1:5:20"', file=case.path, key=key)
    if not texts:
        raise CaseError(f"nothing to sweep: give --vary NAME=START:STOP:COUNT (params: {', '.join(case.params)})", key="--vary")
    try:
        axes = tuple(parse_axis(t, case, key) for t in texts)
    except CaseError as err:
        raise err.located(file=case.path) from None
    names = [a.name for a in axes]
    for n in names:
        if names.count(n) > 1:
            raise CaseError(f"param '{n}' is swept twice; give one --vary per param", key=key)
    return axes
