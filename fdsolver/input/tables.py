"""Tabulated profiles: CSV files of (x, V), read once and kept verbatim with the case.

Comma, semicolon, tab or space separated; ``#`` starts a comment; a UTF-8
byte-order mark (what spreadsheets write as "CSV UTF-8") is dropped.  One
header line is allowed before the data, and only where it is not numeric: a
first row none of whose fields starts like a number (``x [nm], V [meV]``).  A
first row that looks like data but does not parse (``-8.0O``, ``-8.0nm``, a
Unicode minus sign) is an error naming its line, never a silent header; so are
decimal commas (``-8,00;100,0``), with a hint.  Every bad row is reported with
its line number; its content is quoted only when the table lies inside the
case file's folder (``quote``), so a case cannot make fdsolver print lines of
other files.  At most :data:`MAX_TABLE_ROWS` rows; files that are not regular
files (pipes, devices) or are larger than :data:`MAX_INPUT_BYTES` are refused
before reading.
"""

from __future__ import annotations

import math
import os
import re
from pathlib import Path

import numpy as np

from fdsolver.errors import CaseError, shorten
from fdsolver.limits import MAX_INPUT_BYTES, MAX_TABLE_ROWS  # noqa: F401  (MAX_INPUT_BYTES is read from here too)

BOM = "\ufeff"
#: a field that starts like a number: optional bracket, sign (ASCII, Unicode minus, dash), then a digit or ".digit"
_NUMBERISH = re.compile(r"^[(\[]?[+\-\u2212\u2012\u2013]?(\d|\.\d)")
#: a field written with a decimal comma (the whole field, after splitting on ';', tabs or spaces)
_DECIMAL_COMMA = re.compile(r"^[+\-]?\d*,\d+([eE][+\-]?\d+)?$")


def regular_file(path: Path, file, key, what: str) -> None:
    """Refuse FIFOs, devices and oversized files before reading (they could block or never end)."""
    import stat

    shown = shorten(path)
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return  # reported by the reader with its own message
    except OSError as exc:
        raise CaseError(f"cannot read {what} '{shown}': {exc.strerror or exc}", file=file or str(path), key=key) from None
    if stat.S_ISDIR(st.st_mode):
        return
    if not stat.S_ISREG(st.st_mode):
        raise CaseError(f"{what} '{shown}' is not a regular file (a pipe or a device); give a file", file=file or str(path), key=key)
    if st.st_size > MAX_INPUT_BYTES:
        raise CaseError(
            f"{what} '{shown}' is {st.st_size / 2**20:.0f} MB; at most {MAX_INPUT_BYTES // 2**20} MB is read",
            file=file or str(path),
            key=key,
        )


def read_table(path: Path, *, file, key, x_column=0, v_column=1, quote=True) -> tuple[np.ndarray, np.ndarray, str]:
    """Read a CSV profile of (x, V) (module docstring); ``quote``: bad lines may be shown in messages."""
    regular_file(path, file, key, "table")
    shown = shorten(path)
    try:
        with open(path, "rb") as fh:  # never more than the limit, whatever the file claims to be
            raw = fh.read(MAX_INPUT_BYTES + 1)
    except IsADirectoryError:
        raise CaseError(f"table '{shown}' is a directory; give a CSV file of x, V", file=file, key=key) from None
    except FileNotFoundError:
        raise CaseError(f"table file '{shown}' not found (paths are relative to the case file)", file=file, key=key) from None
    except OSError as exc:
        raise CaseError(f"cannot read table '{shown}': {exc.strerror or exc}", file=file, key=key) from None
    if len(raw) > MAX_INPUT_BYTES:
        raise CaseError(f"table '{shown}' holds more than {MAX_INPUT_BYTES // 2**20} MB", file=file, key=key)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        hint = " (it looks like UTF-16: save it as UTF-8)" if raw[:2] in (b"\xff\xfe", b"\xfe\xff") else ""
        raise CaseError(f"cannot read table '{shown}': it is not UTF-8 text (byte {exc.start}){hint}", file=file,
                        key=key) from None
    return parse_table(text, str(path), x_column=x_column, v_column=v_column, key=key, quote=quote) + (text,)


def _fields(line: str) -> list[str]:
    return [p for p in re.split(r"[,;\t ]+", line) if p]


def _why(line: str, parts: list[str], first: bool, had_data: bool) -> str:
    """What is wrong with a row that does not parse, as a hint."""
    if re.search(r"[\u2212\u2012\u2013]\s*\d", line):
        return "; it has a Unicode minus sign or dash: write '-'"
    if any(_DECIMAL_COMMA.match(f) for f in re.split(r"[;\t ]+", line) if f):
        return "; decimal commas are not read: write decimal points (1.5, not 1,5)"
    if first:
        return "; a header line is allowed only where no field starts with a number"
    if not had_data and not any(_NUMBERISH.match(f) for f in parts):
        return "; only one header line is allowed: make the others comments with '#'"
    return ""


def _bad_line(name, lineno, raw, need, quote, why, key) -> CaseError:
    shown = f": {raw.strip()[:60]!r}" if quote else " (not quoted: the table lies outside the case file's folder)"
    return CaseError(f"line {lineno} of table '{shorten(name)}' is not {need} numbers{shown}{why}", key=key)


def parse_table(text: str, name: str, *, x_column=0, v_column=1, key="table", quote=True):
    """Parse the text of a CSV profile (module docstring); every bad row is reported with its line number."""
    if text.startswith(BOM):
        text = text[1:]
    xs: list[float] = []
    vs: list[float] = []
    need = max(x_column, v_column) + 1
    first = True  # no content line seen yet: the one place a header may stand
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        parts = _fields(line)
        semicolons = ";" in line or "\t" in line
        try:
            if len(parts) < need or (semicolons and any(_DECIMAL_COMMA.match(f) for f in re.split(r"[;\t ]+", line) if f)):
                raise ValueError
            x, v = float(parts[x_column]), float(parts[v_column])
        except ValueError:
            if first and not any(_NUMBERISH.match(f) for f in parts):
                first = False
                continue  # the header
            raise _bad_line(name, lineno, raw, need, quote, _why(line, parts, first, bool(xs)), key) from None
        first = False
        if not (math.isfinite(x) and math.isfinite(v)):
            raise CaseError(f"line {lineno} of table '{shorten(name)}' has a non-finite number", key=key)
        xs.append(x)
        vs.append(v)
        if len(xs) > MAX_TABLE_ROWS:
            raise CaseError(f"table '{shorten(name)}' has more than {MAX_TABLE_ROWS} rows (line {lineno}); "
                            "thin it out", key=key)
    if len(xs) < 2:
        raise CaseError(f"table '{shorten(name)}' needs at least 2 rows of x, V; found {len(xs)}", key=key)
    xa = np.asarray(xs)
    bad = np.flatnonzero(np.diff(xa) <= 0)
    if bad.size:
        raise CaseError(
            f"x must increase strictly in table '{shorten(name)}'; it does not after x = {xa[bad[0]]:g} "
            f"(data row {bad[0] + 2})",
            key=key,
        )
    return xa, np.asarray(vs)
