"""Settings of the studies, read from the case's ``[delta_check]`` table and overridden by the caller.

The case schema (:mod:`fdsolver.input.schema`) has already refused unknown
keys when the case loaded; here the values are checked.  A value given by the
caller (the command line) wins over the table, and a bad value is reported
with the option or table key it came from.  Widths are in the case length unit.
"""

from __future__ import annotations

import math

from fdsolver.errors import CaseError
from fdsolver.zerorange.models import SHAPE_NAMES, Options


def parse_widths(text, key: str, file=None) -> tuple[float, float, int]:
    """'LO:HI:N' (N geometric widths) or a single width 'W' -> (lo, hi, n)."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        text = repr(float(text))
    if not isinstance(text, str):
        raise CaseError(f"must be 'LO:HI:N' or a single width, got {text!r}", file=file, key=key)
    parts = [p.strip() for p in text.split(":")]
    try:
        if len(parts) == 1:
            lo = hi = float(parts[0])
            n = 1
        elif len(parts) == 3:
            lo, hi, n = float(parts[0]), float(parts[1]), int(parts[2])
        else:
            raise ValueError
    except ValueError:
        raise CaseError(f"'{text}' is not LO:HI:N (two widths and a count) or a single width", file=file, key=key) from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo > 0 and hi > 0):
        raise CaseError(f"widths must be finite and > 0, got '{text}'", file=file, key=key)
    if n > 1 and not lo < hi:
        raise CaseError(f"LO must be below HI in '{text}'", file=file, key=key)
    if not 1 <= n <= 400:
        raise CaseError(f"the count must be from 1 to 400 (or 2 to 400 for a range), got {n}", file=file, key=key)
    if n == 1 and lo != hi:
        raise CaseError(f"a range needs at least 2 widths, got '{text}'", file=file, key=key)
    return lo, hi, n


def read_options(case, *, shape=None, widths=None, tolerance=None, from_finite=None, maps=None) -> Options:
    """Options of a zero-range check from the case's [delta_check] table, overridden by the given values."""
    table = case.data.get("delta_check", {}) or {}
    f = case.path

    def src(k, v):  # (value, file, key) of a setting: the caller's if given, else the table's
        return (v, None, "--" + k.replace("_", "-")) if v is not None else (table.get(k), f, f"delta_check.{k}")

    sh, sf, sk = src("shape", shape)
    sh = "square" if sh is None else sh
    if sh not in SHAPE_NAMES:
        raise CaseError(f"'{sh}' is not a replacement shape; use one of {', '.join(SHAPE_NAMES)}", file=sf, key=sk)
    wv, wf, wk = src("widths", widths)
    ws = parse_widths(wv, wk, wf) if wv is not None else None
    tv, tf, tk = src("tolerance", tolerance)
    tv = 1e-2 if tv is None else tv
    if isinstance(tv, bool) or not isinstance(tv, (int, float)) or not (math.isfinite(tv) and 1e-9 <= tv <= 0.5):
        raise CaseError(f"must be a relative deviation from 1e-9 to 0.5, got {tv!r}", file=tf, key=tk)
    ff, ffile, fk = src("from_finite", from_finite)
    if ff is not None and not isinstance(ff, bool):
        raise CaseError(f"must be true or false, got {ff!r}", file=ffile, key=fk)
    mv, mf, mk = src("map", list(maps) if maps else None)
    mv = [] if mv is None else mv
    if not isinstance(mv, list) or not all(isinstance(m, str) for m in mv):
        raise CaseError('must be a list of "NAME=LO:HI:N" strings', file=mf, key=mk)
    return Options(sh, ws, float(tv), bool(ff), tuple(mv), (wf, wk))
