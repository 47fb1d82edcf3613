"""Zero-range check of a lattice: the delta comb against combs of finite wells or barriers of the same strength.

Each point (x_j, alpha_j) of a :class:`~fdsolver.zerorange.comb.Comb` becomes a finite component of shape
``shape`` (``shapes.FINITE_REPLACEMENTS``: integrated strength int V dx = -alpha_j, centred on x_j; a well
for alpha_j > 0, a barrier for alpha_j < 0), for a ladder of widths w.  The finite lattice is solved by
:func:`fdsolver.bloch.structure.band_edges` (exact cells for squares, Richardson over midpoint cell
levels for smooth shapes), the comb in closed form.  For band n and width w the deviations are

    bottom, top:  (E_finite - E_point) / S_n,   S_n = max(|E_bottom|, |E_top|) of the point band (>= W_n / 2)
    width:        (W_finite - W_point) / W_point
    gap:          (G_finite - G_point) / G_point     (gap above band n; nan where the point gap is closed)

(dimensionless).  A deviation is *resolved* when the finite quantity's error estimate is at most a tenth
of its difference from the point value.

First-order law.  Across a narrow component of coupling g = m alpha / hbar^2 and profile p (int p = 1,
centroid x_c), psi'' = -(2 g p + k^2) psi.  Integrating from x_a to x_b around it and iterating once
(Dyson series to second order in g),

    psi'(x_b) = psi'(x_a) - 2 g psi(x_a) - 2 g psi'(x_a) int (t - x_a) p dt - k^2 int psi dt
                + 4 g^2 psi(x_a) int int_{s<t} (t - s) p(t) p(s) ds dt + O(w^2),

and the double integral is l / 2 with l = int int p(t) p(s) |t - s| ds dt, the mean distance of two
points drawn from the profile (the same length as for bound states,
:func:`fdsolver.zerorange.narrow.mean_distance`; w/3 for a square).  All other terms are those of a
point of coupling g at x_c between free stretches, to O(w).  So the jump of psi' is
-2 (g - g^2 l) psi: to first order in the width the component acts as a point of coupling
g (1 - g l), at every energy; for a well this weakens the
attraction, for a barrier it strengthens the repulsion.  Every deviation is therefore linear in w, with
the coefficient dX/dw = sum_j dX/dalpha_j (-alpha_j g_j l_j / w) from the closed-form comb (a central
difference in the strengths, relative step 1e-4).  The fitted law (coefficient and log-log exponent)
uses the narrowest resolved widths in the linear regime (|predicted| < 0.05).  The validity width of band n
is the largest width with max(|bottom|, |top|, |width| deviation) below ``tolerance`` there and at every
narrower resolved width (the crossing refined by Brent's method in ln w).  Widths and lengths in the
comb's length unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.bloch.lattice import lattice
from fdsolver.bloch.result import BandEdges
from fdsolver.bloch.structure import BandSettings, band_edges
from fdsolver.errors import CaseError
from fdsolver.model import shapes as S
from fdsolver.model.potential import Potential
from fdsolver.model.units import kinetic_units
from fdsolver.zerorange.comb import Comb, comb, comb_edges, comb_of
from fdsolver.zerorange.models import FWHM
from fdsolver.zerorange.narrow import WELL_SHAPES, mean_distance, width_of

QUANTITIES = ("bottom", "top", "width", "gap")
VALIDITY_FLAGS = ("crossing", "holds_over_ladder", "fails_at_smallest_width", "not_resolved")
LADDER_SIZE = 12
#: bands compared when the case's [solve] table does not say
DEFAULT_BANDS = 4
#: relative accuracy asked of the finite lattices (of max(|E|, E_L))
FINITE_TOLERANCE = 1e-12


@dataclass(frozen=True)
class CombCheck:
    """The delta comb against finite combs over a ladder of widths (module docstring).

    ``deviation``, ``predicted``, ``resolved``: (width, quantity, band) with quantities
    :data:`QUANTITIES`; ``predicted_coefficient``, ``law_coefficient`` (1/length) and ``law_exponent``:
    (quantity, band); ``validity_width`` (length) and ``validity_flag`` (index into
    :data:`VALIDITY_FLAGS`): per band.
    """

    shape: str
    tolerance: float
    comb: Comb
    widths: np.ndarray
    point: BandEdges
    finite: tuple
    deviation: np.ndarray
    predicted: np.ndarray
    resolved: np.ndarray
    predicted_coefficient: np.ndarray
    law_coefficient: np.ndarray
    law_exponent: np.ndarray
    validity_width: np.ndarray
    validity_flag: np.ndarray

    def table(self, quantity: str) -> np.ndarray:
        """(width, band) deviations of one quantity."""
        return self.deviation[:, QUANTITIES.index(quantity), :]


def finite_comb(c: Comb, shape: str, width: float):
    """The lattice of finite components replacing the comb's points (same strengths and centres)."""
    if shape not in S.FINITE_REPLACEMENTS:
        raise CaseError(f"'{shape}' is not a replacement shape; use one of {', '.join(S.FINITE_REPLACEMENTS)}",
                        key="delta_check.shape")
    make = S.FINITE_REPLACEMENTS[shape]
    comps = tuple(make(None, float(x), float(a), float(width)) for x, a in zip(c.positions, c.strengths))
    pot = Potential(comps, kinetic_units(c.hbar2_2me), float(c.mass), None)
    return lattice(pot, c.period, c.start)


def _quantities(e: BandEdges) -> np.ndarray:
    """(quantity, band) values: bottom, top, width, gap."""
    return np.stack([e.band_bottom, e.band_top, e.band_width, e.gap_above])


def _errors(e: BandEdges) -> np.ndarray:
    return np.stack([e.band_bottom_error, e.band_top_error, e.band_width_error, e.gap_above_error])


def _scales(p: BandEdges) -> np.ndarray:
    s = np.maximum(np.abs(p.band_bottom), np.abs(p.band_top))
    gap = np.where(p.gap_closed | (p.gap_above <= 1e3 * p.gap_above_error), np.nan, p.gap_above)
    return np.stack([s, s, p.band_width, gap])


def _deviation(f: BandEdges, p: BandEdges):
    """(deviation, resolved) of a finite lattice against the comb, (quantity, band) each."""
    diff = _quantities(f) - _quantities(p)
    return diff / _scales(p), _errors(f) <= np.abs(diff) / 10.0


def _coefficients(c: Comb, settings: BandSettings, unit_length: float, point: BandEdges) -> np.ndarray:
    """First-order d(deviation)/dw per (quantity, band): the comb with alpha_j (1 - g_j l_j) (module docstring)."""
    g = c.couplings
    gl = g * unit_length
    eps = 1e-4 / float(np.max(np.abs(gl)))
    a = np.asarray(c.strengths)

    def at(dw):
        return _quantities(comb_edges(comb(c.positions, a * (1.0 - gl * dw), c.period, c.mass, c.hbar2_2me, c.start),
                                      settings))

    return (at(eps) - at(-eps)) / (2.0 * eps) / _scales(point)


def _auto_widths(c: Comb, shape: str, coef: np.ndarray, tol: float) -> np.ndarray:
    """Geometric widths around the predicted validity widths tol / |a|, capped so neighbours do not overlap."""
    x = np.asarray(c.positions)
    spacing = float(np.min(c.gaps)) if x.size > 1 else c.period
    cap = 0.75 * spacing / FWHM[shape]
    a = np.abs(coef[:3][np.isfinite(coef[:3])])
    star = tol / a[a > 0]
    hi = min(cap, 3.0 * float(np.max(star))) if star.size else cap
    lo = min(1e-3 * hi, 0.1 * float(np.min(star))) if star.size else 1e-3 * hi
    return np.geomspace(lo, hi, LADDER_SIZE)


def _fit(widths, dev, res, pred):
    """Law coefficient and exponent per (quantity, band) from the narrowest resolved widths."""
    nq, nb = dev.shape[1:]
    coef, expo = np.full((nq, nb), np.nan), np.full((nq, nb), np.nan)
    for i in range(nq):
        for n in range(nb):
            d = dev[:, i, n]
            ok = np.flatnonzero(np.isfinite(d) & res[:, i, n] & (d != 0))
            if ok.size < 3:
                continue
            lin = ok[np.abs(pred[ok, i, n]) < 0.05]
            use = lin if lin.size >= 3 else ok[:4]
            w, y = widths[use], d[use]
            if np.all(np.sign(y) == np.sign(y[0])):
                expo[i, n] = np.polyfit(np.log(w), np.log(np.abs(y)), 1)[0]
            weight = w / np.abs(y)
            ab = np.linalg.lstsq(np.column_stack([np.ones_like(w), w]) * weight[:, None], (y / w) * weight, rcond=None)[0]
            coef[i, n] = ab[0]
    return coef, expo


def _validity(c, shape, settings, point, widths, dev, res, tol):
    """Validity width and flag per band (module docstring)."""
    from scipy.optimize import brentq

    nb = point.n_bands
    metric = np.max(np.abs(dev[:, :3, :]), axis=1)
    judged_all = res[:, :3, :].all(axis=1)
    out, flag = np.full(nb, np.nan), np.zeros(nb, dtype=np.int8)
    for n in range(nb):
        judged = np.flatnonzero(judged_all[:, n] | (metric[:, n] >= tol))
        if judged.size == 0:
            flag[n] = 3
            continue
        good = metric[judged, n] < tol
        if not good[0]:
            flag[n] = 2
            continue
        if good.all():
            out[n], flag[n] = widths[judged[-1]], 1
            continue
        k = int(np.argmin(good))
        i, b = judged[k - 1], judged[k]

        def h(logw, n=n):
            d, _ = _deviation(band_edges(finite_comb(c, shape, math.exp(logw)), settings), point)
            return math.log(max(np.max(np.abs(d[:3, n])), 1e-300) / tol)

        out[n] = math.exp(brentq(h, math.log(widths[i]), math.log(widths[b]), xtol=1e-4, rtol=1e-8))
    return out, flag


def comb_check(c: Comb, shape: str = "square", widths=None, tolerance: float = 1e-2, n_bands: int = 4) -> CombCheck:
    """Compare the comb with finite combs of ``shape`` over ``widths`` (default: an automatic ladder)."""
    if not (isinstance(tolerance, (int, float)) and 1e-9 <= tolerance <= 0.5):
        raise CaseError(f"must be a relative deviation from 1e-9 to 0.5, got {tolerance!r}", key="delta_check.tolerance")
    settings = BandSettings(n_bands=int(n_bands), tolerance=FINITE_TOLERANCE)
    point = comb_edges(c, settings)
    unit = mean_distance(S.FINITE_REPLACEMENTS[shape](None, 0.0, 1.0, 1.0))
    coef = _coefficients(c, settings, unit, point)
    ws = _auto_widths(c, shape, coef, tolerance) if widths is None else np.sort(np.asarray(widths, dtype=float))
    if ws.size == 0 or not np.all(ws > 0):
        raise CaseError("widths must be > 0", key="delta_check.widths")
    finite, devs, ress = [], [], []
    for w in ws:
        f = band_edges(finite_comb(c, shape, float(w)), settings)
        d, r = _deviation(f, point)
        finite.append(f)
        devs.append(d)
        ress.append(r)
    dev, res = np.array(devs), np.array(ress)
    pred = coef[None, :, :] * ws[:, None, None]
    law, expo = _fit(ws, dev, res, pred)
    valid, flag = _validity(c, shape, settings, point, ws, dev, res, tolerance)
    return CombCheck(shape, float(tolerance), c, ws, point, tuple(finite), dev, pred, res, coef, law, expo, valid, flag)


# ------------------------------------------------------------------ from a case
def _max_width(c: Comb, shape: str) -> float:
    """Widest replacement whose half-maximum regions stay apart: the nearest spacing (or the period) over the FWHM."""
    spacing = float(np.min(c.gaps)) if len(c.positions) > 1 else c.period
    return spacing / FWHM[shape]


def _n_bands(case) -> int:
    return int(case.settings.bands) if case.settings.bands is not None else DEFAULT_BANDS


def check_case(case, options) -> CombCheck:
    """The comb check of a periodic case (``options``: :class:`fdsolver.zerorange.models.Options`).

    A case of point components: its comb against combs of ``options.shape`` over ``options.widths``
    (lo, hi, n geometric; None: the automatic ladder).  With ``options.from_finite``, a case of finite
    wells or barriers against its own comb (:func:`finite_check`).  Bands: the case's ``[solve] bands``,
    else :data:`DEFAULT_BANDS`.
    """
    from fdsolver.bloch.study import lattice_of

    lat = lattice_of(case)
    try:
        if options.from_finite:
            return finite_check(lat, options.tolerance, _n_bands(case))
        c = comb_of(lat)
    except CaseError as err:
        raise err.located(file=case.path) from None
    widths = None
    if options.widths is not None:
        lo, hi, n = options.widths
        widths = np.geomspace(lo, hi, n) if n > 1 else np.array([lo])
        cap = _max_width(c, options.shape)
        if widths[-1] >= cap:
            file, key = options.widths_key
            raise CaseError(f"{options.shape} replacements of width {widths[-1]:.4g} would overlap their neighbours "
                            f"(half-maximum regions meet from width {cap:.4g} {case.units.length}); give widths "
                            "below that", file=file, key=key)
    try:
        return comb_check(c, options.shape, widths, options.tolerance, _n_bands(case))
    except CaseError as err:
        raise err.located(file=case.path) from None


def comb_of_wells(lat) -> tuple[Comb, np.ndarray, tuple]:
    """The delta comb of a lattice of finite wells and barriers: alpha_j = -int V_j dx at each centroid.

    Returns the comb, the mean distance l_j of each profile (length, comb order) and the shape names.
    """
    pot = lat.source
    if pot.stack is not None:
        raise CaseError("the delta comb needs a constant mass and no layer stack; remove the [[layer]] tables",
                        key="layer")
    xs, alphas, ls, kinds = [], [], [], []
    for i, s in enumerate(pot.shapes, start=1):
        if not isinstance(s, WELL_SHAPES):
            raise CaseError(f"a '{s.kind}' component has no zero-range model; use square, smooth_square, gaussian or "
                            "sech2 wells or barriers (point components: drop --from-finite)",
                            key=f"potential[{i}].shape")
        xs.append(float(s.centroid()))
        alphas.append(float(s.strength()) * (1.0 if s.amplitude < 0 else -1.0))
        ls.append(mean_distance(s))
        kinds.append(s.kind)
    if not xs:
        raise CaseError("the lattice has no wells or barriers to compare with their comb", key="potential")
    c = comb(xs, alphas, lat.period, pot.mass, pot.hbar2_2me, lat.start)
    x = np.asarray(c.positions)
    order = [int(np.argmin(np.abs(np.mod(np.asarray(xs) - xi + 0.5 * lat.period, lat.period) - 0.5 * lat.period)))
             for xi in x]
    return c, np.asarray(ls)[order], tuple(dict.fromkeys(kinds))


def finite_check(lat, tolerance: float = 1e-2, n_bands: int = DEFAULT_BANDS) -> CombCheck:
    """A lattice of finite wells and barriers against its own delta comb, at its own widths (one row).

    The first-order prediction is the comb with strengths alpha_j (1 - g_j l_j) (module docstring), each
    well with its own mean distance l_j; the width coordinate is the widest well's width parameter.  No
    law is fitted (one width); the validity width is that width where every edge and width deviation
    is below ``tolerance`` (flag ``holds_over_ladder``), else NaN (``fails_at_smallest_width``, or
    ``not_resolved``).
    """
    if not (isinstance(tolerance, (int, float)) and 1e-9 <= tolerance <= 0.5):
        raise CaseError(f"must be a relative deviation from 1e-9 to 0.5, got {tolerance!r}", key="delta_check.tolerance")
    settings = BandSettings(n_bands=int(n_bands), tolerance=FINITE_TOLERANCE)
    c, ls, kinds = comb_of_wells(lat)
    point = comb_edges(c, settings)
    f = band_edges(lat, settings)
    dev, res = _deviation(f, point)
    corrected = comb(c.positions, np.asarray(c.strengths) * (1.0 - c.couplings * ls), c.period, c.mass, c.hbar2_2me,
                     c.start)
    pred = (_quantities(comb_edges(corrected, settings)) - _quantities(point)) / _scales(point)
    width = float(max(width_of(s) for s in lat.source.shapes))
    nq, nb = dev.shape
    good = np.max(np.abs(dev[:3]), axis=0) < tolerance
    judged = res[:3].all(axis=0) | ~good
    flag = np.where(~judged, 3, np.where(good, 1, 2)).astype(np.int8)
    valid = np.where(judged & good, width, np.nan)
    nan = np.full((nq, nb), np.nan)
    return CombCheck("from_finite: " + ", ".join(kinds), float(tolerance), c, np.array([width]), point, (f,),
                     dev[None], pred[None], res[None], nan, nan.copy(), nan.copy(), valid, flag)
