"""The materials library: III-V parameters looked up by (name, x, temperature).

Data come from TOML files in the format documented at the top of ``iii_v.toml`` (shipped with the
package); a user file of extra materials in the same format is merged in by
:meth:`MaterialLibrary.with_file`.  Every value carries its source.

Formulas (all energies in eV, temperatures in K):

* Gamma gap of a compound: Varshni, Eg(T) = Eg(0) - alpha T^2/(T + beta) with alpha in meV/K; or,
  where the data file says ``gap_law = "coth"`` (GaP in the source), Eg(T) = Eg(0) + A [1 - coth(theta/T)].
* Alloy A(x)B(1-x)C between compounds P1 (x = 1) and P0 (x = 0):
  P(x) = x P1 + (1 - x) P0 - x (1 - x) C with the bowing C = c0 + c1 x of the data file; parameters
  without a bowing entry are linear (Vegard's law for the lattice constant).  The alloy gap at T is
  interpolated from the end compounds' gaps at T (temperature-independent bowing).
* Lattice constant a(T) = a(300 K) + (da/dT)(T - 300 K), in angstrom.
* Hole masses along [001] from the Luttinger parameters: m_hh = 1/(gamma1 - 2 gamma2),
  m_lh = 1/(gamma1 + 2 gamma2), in m_e (alloys: gammas interpolated, then the masses).
* Conduction-band edge (Gamma) = valence_band_offset + band_gap on the source's absolute scale.

Not modelled: strain (band edges and masses are those of unstrained bulk), the temperature
dependence of masses and offsets, the X and L valleys (AlGaAs above x ~ 0.4, AlAs, AlSb and GaP have
an indirect gap: the Gamma edge given here is then not the lowest conduction band).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, replace
from importlib import resources
from types import MappingProxyType

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.model.materials.datafile import GAP_LAWS, INTERPOLATED, Alloy, Compound, Datum, parse, read
from fdsolver.model.materials.parameters import MaterialParameters

#: parameters a user may override per layer (final values at the temperature of the lookup)
OVERRIDABLE = (
    "band_gap", "band_gap_0K", "valence_band_offset", "electron_mass", "gamma1", "gamma2", "gamma3",
    "heavy_hole_mass", "light_hole_mass", "spin_orbit", "lattice_constant",
    "varshni_alpha", "varshni_beta", "coth_amplitude", "coth_theta",
)

#: where a value must lie to be taken (generous bounds around every III-V band: a unit slip lands far outside;
#: common practice, no source)
PLAUSIBLE = MappingProxyType({
    "electron_mass": (1e-3, 1e2), "heavy_hole_mass": (1e-3, 1e2), "light_hole_mass": (1e-3, 1e2),
    "lattice_constant": (1.0, 20.0),
})


@dataclass(frozen=True)
class MaterialLibrary:
    """Compounds and alloys from one or more data files; see :func:`builtin_library`."""

    compounds: Mapping[str, Compound]
    alloys: Mapping[str, Alloy]
    references: Mapping[str, str]
    files: tuple[str, ...]

    @classmethod
    def from_text(cls, text: str, file: str = "<materials>") -> MaterialLibrary:
        refs, comps, alloys = parse(read(file, text), file)
        lib = cls(MappingProxyType(comps), MappingProxyType(alloys), MappingProxyType(refs), (file,))
        lib._check_alloys()
        return lib

    def with_file(self, path) -> MaterialLibrary:
        """This library plus the materials of the user file ``path`` (same format).

        A user file may add compounds and alloys (alloys may use built-in compounds as ends) but
        may not redefine a name that already exists: give it a new name, or override single
        parameters per layer instead.
        """
        path = str(path)
        refs, comps, alloys = parse(read(path), path)
        for kind, new in (("compound", comps), ("alloy", alloys)):
            for name in new:
                if self.find(name, quiet=True) is not None or (kind == "alloy" and name in comps):
                    raise CaseError(f"'{name}' is already defined; choose another name (e.g. '{name}_custom') "
                                    "or override its parameters per layer", file=path, key=f"{kind}.{name}")
        lib = MaterialLibrary(MappingProxyType({**self.compounds, **comps}), MappingProxyType({**self.alloys, **alloys}),
                              MappingProxyType({**self.references, **refs}), self.files + (path,))
        lib._check_alloys()
        return lib

    def _check_alloys(self) -> None:
        for a in self.alloys.values():
            for end in (a.x1, a.x0):
                if end not in self.compounds:
                    raise CaseError(f"end compound '{end}' is not defined{did_you_mean(end, self.compounds)}",
                                    file=a.file, key=f"alloy.{a.name}")

    def names(self) -> list[str]:
        """All material names: compounds first, then alloys."""
        return list(self.compounds) + list(self.alloys)

    def find(self, name: str, quiet: bool = False) -> Compound | Alloy | None:
        """The entry called ``name`` (exact, else case-insensitive), or a :class:`CaseError` naming the closest."""
        for table in (self.compounds, self.alloys):
            if name in table:
                return table[name]
        folded = {n.lower(): n for n in self.names()}
        if str(name).lower() in folded:
            return self.find(folded[str(name).lower()])
        if quiet:
            return None
        raise CaseError(f"unknown material '{name}'{did_you_mean(name, self.names())}; "
                        f"known: {', '.join(self.names())}", key="material")

    def lookup(self, name: str, x: float | None = None, temperature: float = 300.0,
               overrides: Mapping[str, float] | None = None) -> MaterialParameters:
        """Parameters of ``name`` (composition ``x`` for an alloy) at ``temperature`` in K.

        ``overrides`` maps field names of :class:`MaterialParameters` (see :data:`OVERRIDABLE`) to
        values in its :data:`~MaterialParameters.UNITS`; derived values follow (a changed gamma
        changes the hole masses unless those are overridden too; a changed gap-law parameter of
        a compound changes the gap at T; a changed ``band_gap_0K`` shifts the gap at T by the same
        amount).  Raises :class:`CaseError` (key ``material``, ``x``, ``temperature`` or
        ``overrides.NAME``) on bad input.
        """
        entry = self.find(name)
        t = _temperature(temperature)
        overrides = dict(overrides or {})
        for k, v in overrides.items():
            if k not in OVERRIDABLE:
                raise CaseError(f"cannot override '{k}'{did_you_mean(k, OVERRIDABLE)}", key=f"overrides.{k}")
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise CaseError(f"override must be a finite number, got {v!r}", key=f"overrides.{k}")
        if isinstance(entry, Compound):
            if x is not None:
                raise CaseError(f"{entry.name} is a compound and takes no composition x; remove x", key="x")
            return _apply(self._compound(entry, t, overrides), overrides)
        xv = _composition(entry, x)
        return _apply(self._alloy(entry, xv, t, overrides), overrides)

    def _compound(self, c: Compound, t: float, overrides: Mapping[str, float]) -> MaterialParameters:
        law_keys = [n for n, _ in GAP_LAWS[c.gap_law]]
        for k in overrides:
            if k in ("varshni_alpha", "varshni_beta", "coth_amplitude", "coth_theta") and k not in law_keys:
                raise CaseError(f"{c.name} uses the {c.gap_law} gap law, whose parameters are {law_keys}", key=f"overrides.{k}")
        law_over = {k: v for k, v in overrides.items() if k in law_keys or k == "band_gap_0K"}
        if law_over:
            data = dict(c.data)
            for k, v in law_over.items():
                data[k] = Datum(float(v), "override")
            c = replace(c, data=MappingProxyType(data))
        params = {k: c.data[k].value for k in law_keys}
        return _assemble(c.name, c.name, None, t, c.at(t), c.gap(t)[1], params, c.description)

    def _alloy(self, a: Alloy, x: float, t: float, overrides: Mapping[str, float]) -> MaterialParameters:
        bad = [k for k in overrides if k in ("varshni_alpha", "varshni_beta", "coth_amplitude", "coth_theta")]
        if bad:
            raise CaseError(f"{a.name} has no gap law of its own (its gap is interpolated at T); "
                            "override band_gap or band_gap_0K instead", key=f"overrides.{bad[0]}")
        p1, p0 = self.compounds[a.x1].at(t), self.compounds[a.x0].at(t)
        vals = {}
        for k in INTERPOLATED:
            c0, c1, bsrc = a.bowing.get("band_gap" if k == "band_gap_0K" else k, (0.0, 0.0, None))
            bow = c0 + c1 * x
            v = x * p1[k].value + (1.0 - x) * p0[k].value - x * (1.0 - x) * bow
            how = f"bowing C = {c0:g}{f' + {c1:g} x' if c1 else ''} ({bsrc})" if bsrc else (
                "Vegard's law (linear)" if k == "lattice_constant" else "linear, no bowing in the data file")
            vals[k] = Datum(v, f"x {a.x1} + (1-x) {a.x0}, {how}; {a.x1}: {p1[k].source}; {a.x0}: {p0[k].source}")
        law = f"interpolated at T from the gaps of {a.x1} and {a.x0}"
        if "band_gap_0K" in overrides and "band_gap" not in overrides:
            shift = overrides["band_gap_0K"] - vals["band_gap_0K"].value
            vals["band_gap"] = Datum(vals["band_gap"].value + shift, "band_gap_0K override minus the alloy's thermal shift")
        return _assemble(a.name, a.label(x), x, t, vals, law, {}, a.description)

def _assemble(name, label, x, t, vals: Mapping[str, Datum], law, law_params, description) -> MaterialParameters:
    g1, g2 = vals["gamma1"].value, vals["gamma2"].value
    src = {k: d.source for k, d in vals.items()}
    src["heavy_hole_mass"] = "1/(gamma1 - 2 gamma2) along [001]"
    src["light_hole_mass"] = "1/(gamma1 + 2 gamma2) along [001]"
    src["conduction_band_edge"] = "valence_band_offset + band_gap"
    return MaterialParameters(
        name=name, label=label, x=x, temperature=t,
        band_gap=vals["band_gap"].value, band_gap_0K=vals["band_gap_0K"].value,
        valence_band_offset=vals["valence_band_offset"].value, electron_mass=vals["electron_mass"].value,
        gamma1=g1, gamma2=g2, gamma3=vals["gamma3"].value,
        heavy_hole_mass=_hole_mass(g1 - 2.0 * g2, name), light_hole_mass=_hole_mass(g1 + 2.0 * g2, name),
        spin_orbit=vals["spin_orbit"].value, lattice_constant=vals["lattice_constant"].value,
        gap_law=law, gap_law_parameters=MappingProxyType(dict(law_params)), sources=MappingProxyType(src),
        description=description,
    )


def _hole_mass(denominator: float, name: str) -> float:
    return 1.0 / denominator if denominator > 0 else math.inf


def _apply(p: MaterialParameters, overrides: Mapping[str, float]) -> MaterialParameters:
    """Apply the final-value overrides, recompute what depends on them, and check the result."""
    law_params = {n for laws in GAP_LAWS.values() for n, _ in laws}
    fields = {k: float(v) for k, v in overrides.items() if k not in law_params}
    p2 = replace(p, **fields)
    if "gamma1" in fields or "gamma2" in fields:
        if "heavy_hole_mass" not in fields:
            p2 = replace(p2, heavy_hole_mass=_hole_mass(p2.gamma1 - 2 * p2.gamma2, p.name))
        if "light_hole_mass" not in fields:
            p2 = replace(p2, light_hole_mass=_hole_mass(p2.gamma1 + 2 * p2.gamma2, p.name))
    where = "overrides" if overrides else "material"
    for k in ("electron_mass", "heavy_hole_mass", "light_hole_mass", "lattice_constant"):
        if not (0 < p2.value(k) < math.inf):
            shown = "gamma1 - 2 gamma2 <= 0" if k == "heavy_hole_mass" and p2.value(k) == math.inf else f"{p2.value(k):g}"
            raise CaseError(f"{k} of {p.label} must be positive and finite ({shown}); check its parameters",
                            key=f"{where}.{k}" if overrides else "material")
        lo, hi = PLAUSIBLE[k]
        if not lo <= p2.value(k) <= hi:  # a unit slip ("0.07 kg" for a mass) lands far outside
            raise CaseError(f"{k} of {p.label} is {p2.value(k):g} {p2.UNITS[k]}, outside the accepted {lo:g} to "
                            f"{hi:g} {p2.UNITS[k]}; check its value and unit",
                            key=f"{where}.{k}" if overrides else "material")
    if p2.band_gap <= 0:
        raise CaseError(f"band_gap of {p.label} must be positive, got {p2.band_gap:g} eV at {p.temperature:g} K",
                        key="overrides.band_gap" if overrides else "material")
    if not overrides:
        return p2
    src = dict(p2.sources)
    for k in overrides:
        src[k] = "override"
    if "band_gap_0K" in overrides and "band_gap" not in overrides:
        src["band_gap"] = f"{p.sources['band_gap']} (with the band_gap_0K override)"
    if ("gamma1" in fields or "gamma2" in fields):
        for k in ("heavy_hole_mass", "light_hole_mass"):
            if k not in fields:
                src[k] += " (with the overridden gammas)"
    return replace(p2, sources=MappingProxyType(src), overridden=tuple(sorted(overrides)))


def _temperature(t) -> float:
    if isinstance(t, bool) or not isinstance(t, (int, float)) or not math.isfinite(t) or t < 0:
        raise CaseError(f"temperature must be a number of kelvin >= 0, got {t!r}", key="temperature")
    return float(t)


def _composition(a: Alloy, x) -> float:
    if x is None:
        raise CaseError(f"{a.name} is an alloy {a.formula.replace('{x}', '(x)').replace('{1-x}', '(1-x)')}: "
                        "give its composition x between 0 and 1", key="x")
    if isinstance(x, bool) or not isinstance(x, (int, float)) or not (0.0 <= x <= 1.0):
        raise CaseError(f"x must be a number between 0 and 1 (fraction of the first-named cation in "
                        f"{a.formula.replace('{x}', '(x)').replace('{1-x}', '(1-x)')}), got {x!r}", key="x")
    return float(x)


_BUILTIN: MaterialLibrary | None = None


def builtin_library() -> MaterialLibrary:
    """The library shipped with fdsolver (``iii_v.toml``), read once."""
    global _BUILTIN
    if _BUILTIN is None:
        res = resources.files("fdsolver.model.materials").joinpath("iii_v.toml")
        _BUILTIN = MaterialLibrary.from_text(res.read_text(encoding="utf-8"), file="fdsolver/model/materials/iii_v.toml")
    return _BUILTIN


def load_library(user_file=None) -> MaterialLibrary:
    """The built-in library, plus the materials of ``user_file`` (a path) if given."""
    lib = builtin_library()
    return lib.with_file(user_file) if user_file is not None else lib


def lookup(name: str, x: float | None = None, temperature: float = 300.0,
           overrides: Mapping[str, float] | None = None, library: MaterialLibrary | None = None) -> MaterialParameters:
    """Parameters of material ``name`` at composition ``x`` and ``temperature`` (K); see :meth:`MaterialLibrary.lookup`."""
    return (library or builtin_library()).lookup(name, x, temperature, overrides)
