"""Units of stored values: a physical dimension of the case vocabulary -> its UDUNITS-2 spelling and its plain name.

Dimensions are the strings of :mod:`fdsolver.model.shapes` (``"length"``,
``"energy"``, ``"energy*length"``, ``"energy/length"``, ``"1/length"``,
``"mass"``, ``"1"``, and the SI quantities ``"time"``, ``"voltage"``,
``"current_density"``, ``"temperature"``): products and quotients of ``length``, ``energy``,
``mass`` and ``1``.  In a unit system (:mod:`fdsolver.model.units`) each
becomes a pair

* ``units``: the UDUNITS-2 string CF archives need (``"meV nm"``; atomic
  units as scaled SI units, ``"(4.3597447222060e-18 J) (5.29177210544e-11 m)"``,
  since UDUNITS knows no bohr or hartree);
* ``units_name``: what a reader calls it (``"meV nm"``, ``"hartree bohr"``).

Masses are in units of the free-electron mass: a ratio, ``units = "1"``
with ``units_name = "m_e"``.
"""

from __future__ import annotations

import re

#: plain names and UDUNITS spellings of the one-word dimensions that need no unit system
_FIXED = {"1": ("1", "1"), "mass": ("1", "m_e"),
          # SI quantities of the continuum studies (lifetimes, biases, current densities, temperatures)
          "time": ("s", "s"), "voltage": ("V", "V"), "current_density": ("A m-2", "A/m^2"), "temperature": ("K", "K")}
_TOKEN = re.compile(r"\s*([*/])\s*")


def _base(word: str, system) -> tuple[str, str]:
    if word in _FIXED:
        return _FIXED[word]
    if word == "length":
        return system.length_udunits, system.length
    if word == "energy":
        return system.energy_udunits, system.energy
    raise ValueError(f"'{word}' is not a physical dimension (length, energy, mass or 1)")


def _wrap(udunits: str) -> str:
    """A scaled unit ("5.29e-11 m") in parentheses, so it composes as one factor."""
    return f"({udunits})" if " " in udunits else udunits


def units_of(dimension: str, system) -> tuple[str, str]:
    """(UDUNITS string, plain name) of ``dimension`` in the unit system ``system``.

    >>> from fdsolver.model.units import UNIT_SYSTEMS
    >>> units_of("energy*length", UNIT_SYSTEMS["nm-meV"])
    ('meV nm', 'meV nm')
    >>> units_of("1/length", UNIT_SYSTEMS["nm-meV"])
    ('1/nm', '1/nm')
    """
    parts = _TOKEN.split(dimension.strip())
    ud, name = _base(parts[0], system)
    if len(parts) > 1:
        ud = _wrap(ud)
    for op, word in zip(parts[1::2], parts[2::2]):
        u2, n2 = _base(word, system)
        ud = f"{ud} {_wrap(u2)}" if op == "*" else f"{ud}/{_wrap(u2)}"
        name = f"{name} {n2}" if op == "*" else f"{name}/{n2}"
    if ud.startswith("(") and ud.endswith(")") and ud.count("(") == 1:
        ud = ud[1:-1]
    return ud, name


def parses_as_udunits(text: str) -> bool:
    """True if ``text`` is a unit string UDUNITS-2 understands (checked with cf-units)."""
    import cf_units

    try:
        return not cf_units.Unit(text).is_unknown()
    except ValueError:
        return False
