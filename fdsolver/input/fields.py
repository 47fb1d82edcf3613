"""Typed values of a case table: numbers (or expressions of the params), whole numbers, strings, booleans.

Every reader names the file and the dotted key (``potential[2].width``) in its
:class:`~fdsolver.errors.CaseError`.  Booleans are never taken for numbers.
"""

from __future__ import annotations

from typing import Mapping

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.input._expressions import evaluate_number
from fdsolver.limits import HUGE, MASS_RANGE, TINY  # noqa: F401  (the magnitude ranges, read from here too)

#: keys whose non-zero values must also not be tiny (sizes and strengths; positions may be anything near 0)
AMPLITUDES = ("depth", "height", "strength", "field", "omega", "a")


def dotted(where: str, key: str) -> str:
    return f"{where}.{key}" if where else key


def number(table: Mapping, key: str, params, file, where: str, default=None, positive=False, required=True):
    """The finite number at ``key`` (a number or an expression string of the params)."""
    if key not in table:
        if default is not None or not required:
            return default
        raise CaseError(f"missing required key '{key}'", file=file, key=dotted(where, key))
    kname = dotted(where, key)
    val = evaluate_number(table[key], params, file=file, key=kname)
    if positive and not val > 0:
        raise CaseError(f"must be positive, got {val:g}", file=file, key=kname)
    tiny = (positive or key in AMPLITUDES) and val != 0.0 and abs(val) < TINY
    if tiny or abs(val) > HUGE:
        raise CaseError(f"{val:g} is outside what double precision can carry through a solve ({TINY:g} to {HUGE:g} "
                        "in magnitude); choose units in which it is nearer to 1", file=file, key=kname)
    return val


def mass(table: Mapping, key: str, params, file, where: str, default: float) -> float:
    """A positive mass in m_e, within :data:`MASS_RANGE`."""
    val = number(table, key, params, file, where, default=default, positive=True)
    if not MASS_RANGE[0] <= val <= MASS_RANGE[1]:
        raise CaseError(f"a mass of {val:g} m_e is outside {MASS_RANGE[0]:g} to {MASS_RANGE[1]:g} m_e, where the "
                        "kinetic energy can be resolved in double precision", file=file, key=dotted(where, key))
    return val


def whole(table: Mapping, key: str, file, where: str, default, lo: int, hi: int) -> int:
    """A whole number from ``lo`` to ``hi`` at ``key`` (booleans refused)."""
    if key not in table:
        return default
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, int) or not lo <= v <= hi:
        raise CaseError(f"must be a whole number from {lo} to {hi}, got {v!r}", file=file, key=dotted(where, key))
    return v


def text(table: Mapping, key: str, file, where: str, choices=None, default=None, hint: str = "a string") -> str:
    """The string at ``key``, one of ``choices`` if given (closest one suggested); ``hint`` says what it must be."""
    if key not in table:
        if default is None:
            raise CaseError(f"missing required key '{key}'", file=file, key=dotted(where, key))
        return default
    v = table[key]
    kname = dotted(where, key)
    if not isinstance(v, str):
        raise CaseError(f"must be {hint}, got {v!r}", file=file, key=kname)
    if choices is not None and v not in choices:
        raise CaseError(
            f"'{v}' is not one of {', '.join(repr(c) for c in choices)}{did_you_mean(v, choices)}", file=file, key=kname
        )
    return v


def flag(table: Mapping, key: str, file, where: str, default: bool | None = None) -> bool | None:
    """true/false at ``key``."""
    if key not in table:
        return default
    v = table[key]
    if not isinstance(v, bool):
        raise CaseError(f"must be true or false, got {v!r}", file=file, key=dotted(where, key))
    return v


def name_of(table: Mapping, file, where: str) -> str | None:
    """The optional ``name`` of a component or layer."""
    name = table.get("name")
    if name is not None and not isinstance(name, str):
        raise CaseError("must be a string", file=file, key=dotted(where, "name"))
    return name
