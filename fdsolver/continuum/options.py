"""What a continuum study is asked for: energy ranges, windows, biases, temperature and Fermi level.

Every setting comes from the caller (the command line) if given, else from the
case's ``[transport]`` table, else a default derived from the potential.  A
bad value is a :class:`~fdsolver.errors.CaseError` naming the option or the
table key it came from.  Energies in the case energy unit, biases in V,
temperatures in K.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError

#: most energies of a fixed T(E) grid
MAX_ENERGIES = 1_000_000
#: default temperature of the current (K): room temperature
ROOM_TEMPERATURE = 300.0


@dataclass(frozen=True)
class Setting:
    """A value and where it came from (file, key), for messages."""

    value: object
    file: str | None
    key: str


def setting(case, name: str, given, option: str) -> Setting:
    """The caller's value of ``name`` if given (reported as ``option``), else the ``[transport]`` table's, else None."""
    if given is not None:
        return Setting(given, None, option)
    table = case.data.get("transport") or {}
    return Setting(table.get(name), case.path, f"transport.{name}")


def _num(text: str, whole: str, s: Setting) -> float:
    try:
        v = float(text)
    except ValueError:
        raise CaseError(f"'{text}' in '{whole}' is not a number", file=s.file, key=s.key) from None
    if not math.isfinite(v):
        raise CaseError(f"'{text}' in '{whole}' is not a finite number", file=s.file, key=s.key)
    return v


def parse_span(s: Setting, *, count: bool) -> tuple[float, float, int | None]:
    """'LO:HI' or (with ``count``) 'LO:HI:N', or a two-element list [LO, HI] -> (lo, hi, n or None)."""
    v = s.value
    if isinstance(v, (list, tuple)) and len(v) == 2 and all(isinstance(x, (int, float)) and not isinstance(x, bool)
                                                           for x in v):
        parts, whole = [repr(float(x)) for x in v], f"[{v[0]}, {v[1]}]"
    elif isinstance(v, str):
        parts, whole = [p.strip() for p in v.split(":")], v
    else:
        raise CaseError(f"must be 'LO:HI'{' or LO:HI:N' if count else ''}, got {v!r}", file=s.file, key=s.key)
    if len(parts) not in ((2, 3) if count else (2,)):
        raise CaseError(f"'{whole}' should be LO:HI{' or LO:HI:N' if count else ''}", file=s.file, key=s.key)
    lo, hi = _num(parts[0], whole, s), _num(parts[1], whole, s)
    if not lo < hi:
        raise CaseError(f"'{whole}' is empty or reversed: LO must be below HI", file=s.file, key=s.key)
    n = None
    if len(parts) == 3:
        try:
            n = int(parts[2])
        except ValueError:
            raise CaseError(f"N '{parts[2]}' in '{whole}' is not a whole number", file=s.file, key=s.key) from None
        if not 2 <= n <= MAX_ENERGIES:
            raise CaseError(f"N must be from 2 to {MAX_ENERGIES}, got {n}", file=s.file, key=s.key)
    return lo, hi, n


def value_range(potential) -> tuple[float, float]:
    """Lowest and highest V over the features' span (sampled, and beside every feature), case energy unit."""
    lo, hi = potential.support()
    feats = potential.features()
    d = 1e-9 * max(1.0, abs(hi - lo))
    xs = np.concatenate([np.linspace(lo, hi, 2049) if hi > lo else np.array([lo]), feats])
    with np.errstate(all="ignore"):
        v = potential.value(np.concatenate([xs, xs + d, xs - d]))
    v = v[np.isfinite(v)]
    return (float(np.min(v)), float(np.max(v))) if v.size else (0.0, 0.0)


def point_energy(potential) -> float:
    """C g^2 / m of the strongest point term (g = m |alpha| / 2C): the energy scale of its scattering; 0 without points."""
    alphas = [abs(a) for _, a in potential.point_terms()]
    if not alphas:
        return 0.0
    m = float(potential.mass)
    g = m * max(alphas) / (2.0 * potential.hbar2_2me)
    return potential.hbar2_2me * g * g / m


def default_energies(potential, incident: str = "left") -> tuple[float, float]:
    """From just above the incident asymptote (or the lowest V if it falls without bound) to the top of the
    structure plus half its height (above-barrier oscillations), or 4 C g^2 / m for point interactions."""
    side = -1 if incident == "left" else 1
    v_in = potential.asymptote(side)
    vmin, vmax = value_range(potential)
    lo = v_in if math.isfinite(v_in) else vmin
    span = max(vmax - lo, 4.0 * point_energy(potential))
    if not span > 0:
        span = 1.0
    return lo + 1e-3 * span, lo + 1.5 * span


def energies_of(case, energies=None, incident: str = "left") -> tuple[float, float, int | None, Setting]:
    """The energy range of ``transmit``: --energies, else [transport] energies, else :func:`default_energies`."""
    s = setting(case, "energies", energies, "--energies")
    if s.value is None:
        lo, hi = default_energies(case.potential, incident)
        return lo, hi, None, s
    return (*parse_span(s, count=True), s)


def window_of(case, window=None) -> tuple[float, float, Setting]:
    """The resonance window: --window, else [transport] window, else the lowest to highest V over the structure
    (:func:`fdsolver.continuum.quasibound.default_window`)."""
    from fdsolver.continuum.quasibound import default_window

    s = setting(case, "window", window, "--window")
    if s.value is None:
        lo, hi = default_window(case.potential)
        return lo, hi, s
    lo, hi, _ = parse_span(s, count=False)
    return lo, hi, s


def positive_energy(case, name: str, given, option: str) -> float | None:
    """A positive energy setting (``max_width``), None when unset."""
    s = setting(case, name, given, option)
    if s.value is None:
        return None
    v = s.value
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not (math.isfinite(v) and v > 0):
        raise CaseError(f"must be a positive energy ({case.units.energy}), got {v!r}", file=s.file, key=s.key)
    return float(v)


def temperature_of(case, given=None) -> float:
    """Temperature in K: --temperature, else [transport] temperature, else 300 K."""
    s = setting(case, "temperature", given, "--temperature")
    if s.value is None:
        return ROOM_TEMPERATURE
    v = s.value
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not (math.isfinite(v) and 0 <= v <= 1e5):
        raise CaseError(f"must be a temperature from 0 to 1e5 K, got {v!r}", file=s.file, key=s.key)
    return float(v)


def fermi_level_of(case, given=None) -> float:
    """Emitter Fermi level (case energy unit): --fermi-level, else [transport] fermi_level; required."""
    s = setting(case, "fermi_level", given, "--fermi-level")
    if s.value is None:
        raise CaseError(f"the current needs the emitter Fermi level: give --fermi-level EF ({case.units.energy}) or "
                        "fermi_level in a [transport] table", file=case.path, key="--fermi-level")
    v = s.value
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise CaseError(f"must be an energy in {case.units.energy}, got {v!r}", file=s.file, key=s.key)
    return float(v)


def incident_of(case, given=None) -> str:
    """'left' or 'right': --incident, else [transport] incident, else 'left'."""
    s = setting(case, "incident", given, "--incident")
    v = "left" if s.value is None else s.value
    if v not in ("left", "right"):
        raise CaseError(f"must be 'left' or 'right', got {v!r}", file=s.file, key=s.key)
    return str(v)


def biases_of(case, given=None) -> tuple[np.ndarray, Setting]:
    """Biases in V: --bias, else [transport] bias; 'LO:HI:N' (N even biases), 'V1,V2,...' or one value."""
    s = setting(case, "bias", given, "--bias")
    if s.value is None:
        raise CaseError("give the biases: --bias LO:HI:N (V), or bias in a [transport] table", file=case.path,
                        key="--bias")
    v = s.value
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        v = repr(float(v))
    if not isinstance(v, str):
        raise CaseError(f"must be 'LO:HI:N' or 'V1,V2,...' in V, got {v!r}", file=s.file, key=s.key)
    if ":" in v:
        lo, hi, n = parse_span(Setting(v, s.file, s.key), count=True)
        if n is None:
            raise CaseError(f"'{v}' needs a count: LO:HI:N", file=s.file, key=s.key)
        return np.linspace(lo, hi, n), s
    vals = np.array([_num(p.strip(), v, s) for p in v.split(",") if p.strip()])
    if vals.size == 0:
        raise CaseError("give at least one bias", file=s.file, key=s.key)
    return vals, s
