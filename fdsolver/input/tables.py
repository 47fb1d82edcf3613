"""Tabulated profiles: CSV files of (x, V), read once and kept verbatim with the case.

Comma, semicolon, tab or space separated; ``#`` starts a comment; one header
line is allowed.  Every bad row is reported with its line number.  Files that
are not regular files (pipes, devices) or are larger than
:data:`MAX_INPUT_BYTES` are refused before reading.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np

from fdsolver.errors import CaseError

MAX_INPUT_BYTES = 50 * 2**20


def regular_file(path: Path, file, key, what: str) -> None:
    """Refuse FIFOs, devices and oversized files before reading (they could block or never end)."""
    import stat

    try:
        st = os.stat(path)
    except FileNotFoundError:
        return  # reported by the reader with its own message
    except OSError as exc:
        raise CaseError(f"cannot read {what} '{path}': {exc.strerror or exc}", file=file or str(path), key=key) from None
    if stat.S_ISDIR(st.st_mode):
        return
    if not stat.S_ISREG(st.st_mode):
        raise CaseError(f"{what} '{path}' is not a regular file (a pipe or a device); give a file", file=file or str(path), key=key)
    if st.st_size > MAX_INPUT_BYTES:
        raise CaseError(
            f"{what} '{path}' is {st.st_size / 2**20:.0f} MB; at most {MAX_INPUT_BYTES // 2**20} MB is read",
            file=file or str(path),
            key=key,
        )


def read_table(path: Path, *, file, key, x_column=0, v_column=1) -> tuple[np.ndarray, np.ndarray, str]:
    """Read a CSV profile of (x, V): comma, semicolon, tab or space separated; '#' comments; one header line allowed."""
    regular_file(path, file, key, "table")
    try:
        text = path.read_text(encoding="utf-8")
    except IsADirectoryError:
        raise CaseError(f"table '{path}' is a directory; give a CSV file of x, V", file=file, key=key) from None
    except FileNotFoundError:
        raise CaseError(f"table file '{path}' not found (paths are relative to the case file)", file=file, key=key) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(f"cannot read table '{path}': {exc}", file=file, key=key) from None
    return parse_table(text, str(path), x_column=x_column, v_column=v_column, key=key) + (text,)


def parse_table(text: str, name: str, *, x_column=0, v_column=1, key="table"):
    """Parse the text of a CSV profile; every bad row is reported with its line number."""
    xs: list[float] = []
    vs: list[float] = []
    seen_data = False
    for lineno, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        parts = [p for p in line.replace(";", ",").replace("\t", ",").replace(" ", ",").split(",") if p]
        need = max(x_column, v_column) + 1
        try:
            if len(parts) < need:
                raise ValueError
            x, v = float(parts[x_column]), float(parts[v_column])
        except ValueError:
            if not seen_data and not xs:
                seen_data = True  # one header line is allowed
                continue
            raise CaseError(
                f"line {lineno} of table '{name}' is not {need} numbers: {raw.strip()[:60]!r}", key=key
            ) from None
        seen_data = True
        if not (math.isfinite(x) and math.isfinite(v)):
            raise CaseError(f"line {lineno} of table '{name}' has a non-finite number", key=key)
        xs.append(x)
        vs.append(v)
    if len(xs) < 2:
        raise CaseError(f"table '{name}' needs at least 2 rows of x, V; found {len(xs)}", key=key)
    xa = np.asarray(xs)
    bad = np.flatnonzero(np.diff(xa) <= 0)
    if bad.size:
        raise CaseError(
            f"x must increase strictly in table '{name}'; it does not after x = {xa[bad[0]]:g} "
            f"(data row {bad[0] + 2})",
            key=key,
        )
    return xa, np.asarray(vs)
