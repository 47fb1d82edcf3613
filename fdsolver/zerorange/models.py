"""Zero-range check, part 1: options of a study and the two models (point interactions, finite wells).

See :mod:`fdsolver.deltacheck` for the study as a whole.  Lengths and energies in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.model import shapes as S
from fdsolver.errors import CaseError, did_you_mean
from fdsolver.zerorange.narrow import WELL_SHAPES, mean_distance, width_of

TABLE_KEYS = ("shape", "widths", "tolerance", "map", "from_finite")
SHAPE_NAMES = tuple(S.FINITE_REPLACEMENTS)
#: full width at half maximum of each replacement, in units of its width parameter
FWHM = {"square": 1.0, "smooth_square": 1.0, "gaussian": 2.0 * math.sqrt(2.0 * math.log(2.0)),
        "sech2": 2.0 * math.acosh(math.sqrt(2.0))}
#: memory budget of one study solve (MB): a point that needs more is reported as not resolved
STUDY_MEMORY_MB = 200.0
EPS = float(np.finfo(float).eps)


# ------------------------------------------------------------------ options
@dataclass(frozen=True)
class Options:
    """What to compare: replacement ``shape``, ``widths`` (lo, hi, n) or None (automatic), ``tolerance``."""

    shape: str = "square"
    widths: tuple | None = None
    tolerance: float = 1e-2
    from_finite: bool = False
    maps: tuple[str, ...] = ()
    widths_key: tuple = (None, "--widths")  # (file, key) the widths came from, for messages


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
    """Options from the case's [delta_check] table, overridden by the given (command-line) values."""
    table = case.data.get("delta_check", {}) or {}
    f = case.path
    for k in table:
        if k not in TABLE_KEYS:
            raise CaseError(f"unknown key '{k}'{did_you_mean(k, TABLE_KEYS)} (allowed: {', '.join(TABLE_KEYS)})", file=f, key=f"delta_check.{k}")
    src = lambda k, v: (v, None, "--" + k.replace("_", "-")) if v is not None else (table.get(k), f, f"delta_check.{k}")  # noqa: E731
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


# ------------------------------------------------------------------- models
@dataclass(frozen=True)
class Model:
    """One comparison: the finite wells and their zero-range model (same order, sorted by position)."""

    wells: tuple
    names: tuple
    positions: np.ndarray
    strengths: np.ndarray
    lengths: np.ndarray  # mean distance l_j of each well profile (length unit)
    widths: np.ndarray  # width parameter of each well (length unit)


def _plain(case):
    if case.potential.stack is not None:
        raise CaseError("the zero-range check needs a constant mass and no layer stack; remove the [[layer]] tables",
                        file=case.path, key="layer")
    if case.domain.boundary != "open":
        raise CaseError('the point model lives on the open line; use boundary = "open" in [domain]', file=case.path,
                        key="domain.boundary")


def point_terms(case) -> tuple[tuple, np.ndarray, np.ndarray]:
    """Names, positions and strengths of the case's point components (all attractive, nothing else)."""
    _plain(case)
    names, xs, alphas = [], [], []
    for i, s in enumerate(case.potential.shapes, start=1):
        if not isinstance(s, S.Point):
            raise CaseError(
                f"component {i} is a '{s.kind}', not a point; the replacement check needs a case of point components only "
                "(for finite wells use --from-finite)", file=case.path, key=f"potential[{i}].shape")
        if not s.alpha > 0:
            raise CaseError(f"strength must be > 0 (attractive) to be replaced by a well, got {s.alpha:g}",
                            file=case.path, key=f"potential[{i}].strength")
        names.append(s.name or f"point {i}")
        xs.append(float(s.center))
        alphas.append(float(s.alpha))
    if not xs:
        raise CaseError("the case has no point components to compare with; add [[potential]] shape = \"point\" entries "
                        "or use --from-finite for a case of finite wells", file=case.path, key="potential")
    order = np.argsort(xs, kind="stable")
    return tuple(names[i] for i in order), np.asarray(xs)[order], np.asarray(alphas)[order]


def replacement(case, shape: str, width: float, names=None, xs=None, alphas=None) -> Model:
    """The finite model of a point case: every point a ``shape`` well of width parameter ``width``."""
    if names is None:
        names, xs, alphas = point_terms(case)
    make = S.FINITE_REPLACEMENTS[shape]
    wells = tuple(make(n, float(x), float(a), float(width)) for n, x, a in zip(names, xs, alphas))
    return Model(wells, tuple(names), np.asarray(xs, float), np.asarray(alphas, float),
                 np.array([mean_distance(w) for w in wells]), np.full(len(wells), float(width)))


def from_finite(case) -> Model:
    """The zero-range model of a case of narrow wells: alpha_j = int |V_j| dx, x_j = centroid of each."""
    if any(isinstance(s, S.Point) for s in case.potential.shapes):
        i = next(i for i, s in enumerate(case.potential.shapes, 1) if isinstance(s, S.Point))
        raise CaseError("--from-finite needs finite wells only; this component is already a point interaction "
                        "(drop --from-finite to replace points by wells)", file=case.path, key=f"potential[{i}].shape")
    _plain(case)
    wells = []
    for i, s in enumerate(case.potential.shapes, start=1):
        if not isinstance(s, WELL_SHAPES):
            raise CaseError(f"a '{s.kind}' component has no zero-range model; use square, smooth_square, gaussian or "
                            "sech2 wells", file=case.path, key=f"potential[{i}].shape")
        if not s.amplitude < 0:
            raise CaseError(f"a zero-range model needs attractive wells (depth > 0), got V = {s.amplitude:+g} "
                            f"{case.units.energy}", file=case.path, key=f"potential[{i}].depth")
        wells.append(s)
    order = sorted(range(len(wells)), key=lambda j: wells[j].centroid())
    wells = tuple(wells[j] for j in order)
    names = tuple(w.name or f"well {order[k] + 1}" for k, w in enumerate(wells))
    return Model(wells, names, np.array([w.centroid() for w in wells]), np.array([w.strength() for w in wells]),
                 np.array([mean_distance(w) for w in wells]), np.array([width_of(w) for w in wells]))


def overlap_of(model: Model) -> float:
    """Largest overlap of neighbouring wells' half-maximum regions (length; <= 0: separated)."""
    regions = [w.region() for w in model.wells]
    return max([a[1] - b[0] for a, b in zip(regions[:-1], regions[1:])] or [-math.inf])


def check_separated(model: Model, key: str, file=None) -> None:
    """CaseError when neighbouring wells overlap (their half-maximum regions meet)."""
    over = overlap_of(model)
    if over >= 0:
        spacing = float(np.min(np.diff(model.positions)))
        raise CaseError(f"wells of width {float(np.max(model.widths)):.4g} overlap at a separation of {spacing:.4g} "
                        "(their half-maximum regions meet); give widths below "
                        f"{spacing / _fwhm_ratio(model):.4g}", file=file, key=key)


def _fwhm_ratio(model: Model) -> float:
    w = model.wells[0]
    r = w.region()
    return (r[1] - r[0]) / width_of(w)


