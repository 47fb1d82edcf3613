"""Reading materials data files (format "fdsolver-materials 1", documented at the top of ``iii_v.toml``).

:func:`parse` turns a TOML document into compounds and alloys; :class:`Compound` knows its gap law
(Varshni, or the coth law the source uses for GaP) and its lattice constant at T.  Energies in eV,
temperatures in K, masses in m_e, lengths in angstrom.  Bad files raise :class:`CaseError` naming the
file and the dotted key.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType

from fdsolver.errors import CaseError, did_you_mean

FORMAT = "fdsolver-materials 1"

#: parameters interpolated between the end compounds of an alloy (and that may carry a bowing)
INTERPOLATED = (
    "band_gap",
    "band_gap_0K",
    "valence_band_offset",
    "electron_mass",
    "gamma1",
    "gamma2",
    "gamma3",
    "spin_orbit",
    "lattice_constant",
)
#: temperature-law parameters of each gap law, with units
GAP_LAWS = {
    "varshni": (("varshni_alpha", "meV/K"), ("varshni_beta", "K")),
    "coth": (("coth_amplitude", "eV"), ("coth_theta", "K")),
}
COMPOUND_KEYS = ("band_gap_0K", "valence_band_offset", "electron_mass", "gamma1", "gamma2", "gamma3",
                 "spin_orbit", "lattice_constant")
#: parameters a user may override per layer (final values at the temperature of the lookup)
@dataclass(frozen=True)
class Datum:
    """One tabulated number with its source text."""

    value: float
    source: str

def _source_text(entry: Mapping, references: Mapping[str, str]) -> str:
    ref = str(entry.get("ref", "no source given"))
    recall = entry.get("recall")
    return f"{ref} (typed from memory: {recall})" if recall and recall != "checked" else ref


def _datum(table: Mapping, key: str, where: str, references, file, required: bool = True) -> Datum | None:
    raw = table.get(key)
    if raw is None:
        if required:
            raise CaseError(f"missing parameter '{key}'; add {key} = {{ value = ..., ref = \"...\" }}", file=file, key=f"{where}.{key}")
        return None
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        raw = {"value": raw}
    if not isinstance(raw, Mapping) or "value" not in raw:
        raise CaseError("must be an inline table { value = ..., ref = \"...\" }", file=file, key=f"{where}.{key}")
    value = raw["value"]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise CaseError(f"value must be a finite number, got {value!r}", file=file, key=f"{where}.{key}.value")
    return Datum(float(value), _source_text(raw, references))


@dataclass(frozen=True)
class Compound:
    """A binary compound as read from a data file (values at the file's reference conditions)."""

    name: str
    description: str
    gap_law: str
    data: Mapping[str, Datum]
    file: str

    def gap(self, temperature: float) -> tuple[float, str]:
        """Gamma gap at ``temperature`` (K) in eV, and the law with its numbers as text."""
        d = self.data
        eg0 = d["band_gap_0K"].value
        t = float(temperature)
        if self.gap_law == "varshni":
            alpha, beta = d["varshni_alpha"].value * 1e-3, d["varshni_beta"].value
            eg = eg0 - alpha * t * t / (t + beta) if t > 0 else eg0
            return eg, f"Varshni: Eg(T) = {eg0:g} eV - {alpha * 1e3:g} meV/K T^2/(T + {beta:g} K)"
        amp, theta = d["coth_amplitude"].value, d["coth_theta"].value
        eg = eg0 + amp * (1.0 - 1.0 / math.tanh(theta / t)) if t > 0 else eg0
        return eg, f"Eg(T) = {eg0:g} eV + {amp:g} eV [1 - coth({theta:g} K/T)]"

    def at(self, temperature: float) -> dict[str, Datum]:
        """Parameters at ``temperature`` (K) with their sources: the interpolable ones and the gap law's."""
        d = self.data
        t = float(temperature)
        eg, law = self.gap(t)
        law_keys = ("band_gap_0K",) + tuple(n for n, _ in GAP_LAWS[self.gap_law])
        srcs = "; ".join(dict.fromkeys(d[k].source for k in law_keys))
        out = {k: d[k] for k in COMPOUND_KEYS + law_keys}
        out["band_gap"] = Datum(eg, f"{law} at {t:g} K; {srcs}")
        a300 = d["lattice_constant"]
        expansion = d.get("lattice_expansion")
        if expansion is not None:
            out["lattice_constant"] = Datum(a300.value + expansion.value * (t - 300.0),
                                            f"a(300 K) + da/dT (T - 300 K); a: {a300.source}; da/dT: {expansion.source}")
        return out


@dataclass(frozen=True)
class Alloy:
    """A ternary A(x)B(1-x)C between two compounds with the bowing of each parameter that has one."""

    name: str
    description: str
    formula: str
    x1: str
    x0: str
    bowing: Mapping[str, tuple[float, float, str]]  # name -> (c0, c1, source): C = c0 + c1 x
    file: str

    def label(self, x: float) -> str:
        def num(v: float) -> str:
            return f"{v:.4f}".rstrip("0").rstrip(".") or "0"

        return self.formula.replace("{x}", num(x)).replace("{1-x}", num(1.0 - x))


def read(path, text: str | None = None) -> dict:
    try:
        if text is None:
            text = Path(path).read_text(encoding="utf-8")
        return tomllib.loads(text)
    except OSError as exc:
        raise CaseError(f"cannot read the materials file ({exc.strerror or exc})", file=str(path)) from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise CaseError(f"not a valid TOML materials file ({exc})", file=str(path)) from None


def parse(doc: Mapping, file: str) -> tuple[dict, dict, dict]:
    if doc.get("format") != FORMAT:
        raise CaseError(f"the first key must be format = \"{FORMAT}\"", file=file, key="format")
    unknown = set(doc) - {"format", "references", "compound", "alloy"}
    if unknown:
        bad = sorted(unknown)[0]
        raise CaseError(f"unknown table{did_you_mean(bad, ['references', 'compound', 'alloy'])}", file=file, key=bad)
    references = {str(k): str(v) for k, v in dict(doc.get("references", {})).items()}
    compounds: dict[str, Compound] = {}
    for name, table in dict(doc.get("compound", {})).items():
        where = f"compound.{name}"
        if not isinstance(table, Mapping):
            raise CaseError("must be a table", file=file, key=where)
        law = table.get("gap_law", "varshni")
        if law not in GAP_LAWS:
            raise CaseError(f"gap_law must be one of {sorted(GAP_LAWS)}, got {law!r}", file=file, key=f"{where}.gap_law")
        keys = COMPOUND_KEYS + tuple(n for n, _ in GAP_LAWS[law])
        data = {k: _datum(table, k, where, references, file) for k in keys}
        exp = _datum(table, "lattice_expansion", where, references, file, required=False)
        if exp is not None:
            data["lattice_expansion"] = exp
        allowed = set(keys) | {"lattice_expansion", "gap_law", "description"}
        extra = sorted(set(table) - allowed)
        if extra:
            raise CaseError(f"unknown parameter{did_you_mean(extra[0], sorted(allowed))}", file=file, key=f"{where}.{extra[0]}")
        compounds[str(name)] = Compound(str(name), str(table.get("description", "")), law, MappingProxyType(data), file)
    alloys: dict[str, Alloy] = {}
    for name, table in dict(doc.get("alloy", {})).items():
        where = f"alloy.{name}"
        if not isinstance(table, Mapping):
            raise CaseError("must be a table", file=file, key=where)
        for k in ("formula", "x1", "x0"):
            if not isinstance(table.get(k), str):
                raise CaseError(f"missing or not a string: give {k} = \"...\"", file=file, key=f"{where}.{k}")
        bowing = {}
        for k, raw in dict(table.get("bowing", {})).items():
            if k not in INTERPOLATED or k == "band_gap_0K":
                raise CaseError(f"no bowing for this parameter{did_you_mean(k, INTERPOLATED)}", file=file, key=f"{where}.bowing.{k}")
            d = _datum(table["bowing"], k, f"{where}.bowing", references, file)
            slope = raw.get("slope", 0.0) if isinstance(raw, Mapping) else 0.0
            if isinstance(slope, bool) or not isinstance(slope, (int, float)) or not math.isfinite(slope):
                raise CaseError("slope must be a finite number", file=file, key=f"{where}.bowing.{k}.slope")
            bowing[k] = (d.value, float(slope), d.source)
        alloys[str(name)] = Alloy(str(name), str(table.get("description", "")), table["formula"], table["x1"], table["x0"],
                                  MappingProxyType(bowing), file)
    return references, compounds, alloys
