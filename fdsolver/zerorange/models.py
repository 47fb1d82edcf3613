"""Zero-range check, part 1: the options of a study and the two models (point interactions, finite wells).

The options are read from a case and the command line by :func:`fdsolver.scans.options.read_options`.  See
:mod:`fdsolver.zerorange.ladder` for the study as a whole.  Lengths and energies in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.model import shapes as S
from fdsolver.errors import CaseError
from fdsolver.zerorange.narrow import WELL_SHAPES, mean_distance, width_of

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
    """What to compare: replacement ``shape``, ``widths`` (lo, hi, n) or None (automatic), ``tolerance``,
    ``from_finite``, the validity-map axes ``maps`` (texts), and where the widths came from."""

    shape: str = "square"
    widths: tuple | None = None
    tolerance: float = 1e-2
    from_finite: bool = False
    maps: tuple[str, ...] = ()
    widths_key: tuple = (None, "--widths")  # (file, key) the widths came from, for messages


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
    found: list[S.Localised] = []
    for i, s in enumerate(case.potential.shapes, start=1):
        if not isinstance(s, WELL_SHAPES):
            raise CaseError(f"a '{s.kind}' component has no zero-range model; use square, smooth_square, gaussian or "
                            "sech2 wells", file=case.path, key=f"potential[{i}].shape")
        if not s.amplitude < 0:
            raise CaseError(f"a zero-range model needs attractive wells (depth > 0), got V = {s.amplitude:+g} "
                            f"{case.units.energy}", file=case.path, key=f"potential[{i}].depth")
        found.append(s)
    order = sorted(range(len(found)), key=lambda j: found[j].centroid())
    wells = tuple(found[j] for j in order)
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


