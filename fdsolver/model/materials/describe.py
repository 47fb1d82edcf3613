"""Text and JSON-able views of the materials library (for a ``materials [NAME]`` command).

:func:`format_material` returns ``(text, data)``: a table for people and a dict of plain Python
types for ``json.dumps``.  Units are those of :data:`MaterialParameters.UNITS` (eV, K, m_e, angstrom).
"""

from __future__ import annotations

from fdsolver.model.materials.library import MaterialLibrary, builtin_library
from fdsolver.model.materials.parameters import MaterialParameters

_STRAIN_NOTE = "strain is not modelled: values are for unstrained bulk material"


def _listing(lib: MaterialLibrary) -> tuple[str, dict]:
    rows = [(n, "compound", n, c.description) for n, c in lib.compounds.items()]
    rows += [(n, "alloy", a.formula.replace("{x}", "(x)").replace("{1-x}", "(1-x)"), a.description)
             for n, a in lib.alloys.items()]
    width = max(len(r[0]) for r in rows)
    fwidth = max(len(r[2]) for r in rows)
    lines = [f"{'name':<{width}}  {'kind':<8}  {'formula':<{fwidth}}  description"]
    lines += [f"{n:<{width}}  {k:<8}  {f:<{fwidth}}  {d}" for n, k, f, d in rows]
    lines.append("")
    lines.append("x is the fraction of the first-named cation; " + _STRAIN_NOTE + ".")
    lines += [f"[{k}] {v}" for k, v in lib.references.items()]
    data = {
        "materials": [{"name": n, "kind": k, "formula": f, "description": d} for n, k, f, d in rows],
        "references": dict(lib.references),
        "files": list(lib.files),
        "note": _STRAIN_NOTE,
    }
    return "\n".join(lines), data


def _parameters(p: MaterialParameters, lib: MaterialLibrary) -> tuple[str, dict]:
    names = list(MaterialParameters.FIELDS) + list(p.gap_law_parameters)
    rows = [(n, p.value(n), MaterialParameters.UNITS[n], p.sources.get(n, "")) for n in names]
    head = f"{p.label}  ({p.description})" if p.description else p.label
    lines = [head, f"temperature: {p.temperature:g} K;  gap law: {p.gap_law}"]
    nw = max(len(r[0]) for r in rows)
    lines.append(f"{'parameter':<{nw}}  {'value':>12}  {'unit':<9}  source")
    for n, v, u, s in rows:
        lines.append(f"{n:<{nw}}  {v:>12.6g}  {u:<9}  {s}")
    lines.append("")
    lines.append("energies on the common absolute scale of the source (valence-band maximum = valence_band_offset; "
                 "conduction_band_edge = valence_band_offset + band_gap); " + _STRAIN_NOTE + ".")
    lines += [f"[{k}] {v}" for k, v in lib.references.items() if any(k in r[3] for r in rows)]
    data = {
        "name": p.name,
        "label": p.label,
        "x": p.x,
        "temperature": {"value": p.temperature, "unit": "K"},
        "gap_law": p.gap_law,
        "parameters": {n: {"value": v, "unit": u, "source": s} for n, v, u, s in rows},
        "overridden": list(p.overridden),
        "references": {k: v for k, v in lib.references.items() if any(k in r[3] for r in rows)},
        "note": _STRAIN_NOTE,
    }
    return "\n".join(lines), data


def format_material(name: str | None = None, *, x: float | None = None, temperature: float = 300.0,
                    overrides=None, library: MaterialLibrary | None = None) -> tuple[str, dict]:
    """``(text, data)`` for material ``name`` at ``x`` and ``temperature`` (K), or the list of all materials.

    Raises :class:`~fdsolver.errors.CaseError` for an unknown name or a bad x or temperature (key
    ``material``, ``x`` or ``temperature``), which a command line shows as one line with exit code 2.
    """
    lib = library or builtin_library()
    if name is None:
        return _listing(lib)
    return _parameters(lib.lookup(name, x, temperature, overrides), lib)
