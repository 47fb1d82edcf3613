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
