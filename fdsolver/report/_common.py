"""What the tables share: the units of a stored variable as a reader calls them, a header with its units, and the
text of an archive (title, notes, names) with every control character escaped, ready for a terminal."""

from __future__ import annotations

from fdsolver.errors import printable

#: what the archive builders write in ``units_note`` of a param whose units the case does not declare
NOT_DECLARED = "not declared"


def declared(ds, name: str) -> bool:
    """False if the archive says the units of ``name`` were not declared (a scanned param without [sweep] units)."""
    return NOT_DECLARED not in str(ds[name].attrs.get("units_note", ""))


def units_of(ds, name: str) -> str:
    """The units of variable ``name`` as a reader calls them (``units_name``, else the UDUNITS ``units``); "" for a
    pure number ("1") or undeclared units."""
    a = ds[name].attrs
    u = str(a.get("units_name") or a.get("units", ""))
    return "" if u == "1" or not declared(ds, name) else printable(u)


def label(ds, name: str, text: str | None = None) -> str:
    """``text [units]`` for a column header or an axis (``text`` defaults to the variable's name); ``[1]`` for a
    pure number, ``[units not declared]`` where the case declared none."""
    text = name if text is None else text
    if not declared(ds, name):
        return f"{text} [units not declared]"
    return f"{text} [{units_of(ds, name) or '1'}]"


def title_of(ds) -> str:
    """The archive's title, escaped for a terminal (a title is the case author's free text)."""
    return printable(ds.attrs.get("title", ""))


def notes_of(ds, key: str) -> list[str]:
    """The lines of a text attribute (``messages``, ``notes``), each escaped for a terminal; blank lines dropped."""
    return [printable(m) for m in str(ds.attrs.get(key, "")).splitlines() if m.strip()]


def name_of(value) -> str:
    """A stored name (a region, a well, a param), escaped for a terminal."""
    return printable(value)


def mass_text(ds) -> str:
    """The effective mass of a run as a reader wants it: one value, or the range over the layers."""
    import numpy as np

    a = ds.attrs
    masses = np.atleast_1d(np.asarray(a.get("layer_masses", []), dtype=float))
    if masses.size == 0 and "mass" in ds and getattr(ds["mass"], "dims", ()) == ("x",):
        masses = np.asarray(ds["mass"].values, dtype=float).ravel()  # only its least and largest are read
    if masses.size == 0:
        return f"{float(a.get('particle_mass', 1.0)):.6g} m_e"
    lo, hi = float(masses.min()), float(masses.max())
    return f"{lo:.6g} m_e" if lo == hi else f"{lo:.6g} to {hi:.6g} m_e (by layer)"


def run_header(ds) -> str:
    """One line every table starts with: unit system, carrier, mass, and the materials with their temperature."""
    a = ds.attrs
    eu = units_of(ds, "energy") if "energy" in ds else str(a.get("units_system", ""))
    system = a.get("units_system", "")
    names = {"nm-meV": "energies in meV, lengths in nm", "atomic": "Hartree atomic units: energies in hartree, "
             "lengths in bohr"}
    parts = [f"units: {system} ({names.get(system, eu)})", f"carrier: {a.get('carrier', 'electron').replace('_', ' ')}",
             f"mass: {mass_text(ds)}"]
    if a.get("fdsolver_kind") == "interband":
        import numpy as np

        def rng(key):
            v = np.atleast_1d(np.asarray(a.get(key, []), dtype=float))
            return "?" if v.size == 0 else (f"{v.min():.6g}" if v.min() == v.max() else f"{v.min():.6g} to {v.max():.6g}")

        parts[1:] = ["carriers: electrons, heavy and light holes",
                     f"masses by layer: electrons {rng('layer_masses')}, heavy holes {rng('heavy_hole_layer_masses')}, "
                     f"light holes {rng('light_hole_layer_masses')} m_e"]
    if a.get("materials"):
        parts.append(f"materials: {printable(a['materials'])} at {float(a.get('temperature', 300.0)):g} K")
    if int(a.get("nonparabolicity", 0)):
        parts.append("energy-dependent (Kane) mass")
    return "; ".join(parts)


def case_notes(ds) -> list[str]:
    """The case's own notes (unit system chosen, lattice mismatch) as 'note: ...' lines."""
    return [f"note: {n}" for n in notes_of(ds, "case_notes")]
