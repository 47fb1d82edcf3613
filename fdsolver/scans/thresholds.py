"""Binding thresholds: where a bound state appears as a param changes, without any box.

The count of bound states below the continuum threshold V_t equals the
number of nodes, over the whole line, of the solution of H psi = V_t psi
that is bounded at the left end (oscillation theorem).  Near a binding
threshold the new state's decay length diverges, so box eigenvalues are the
wrong tool; this zero-energy solution stays local.  We follow it as a
continuous Pruefer phase instead of an integer node count:

    psi = r sin(theta),  u / K = r cos(theta),   u = (C / m) psi'  (the flux),

where C = hbar^2 / 2m_e, m(x) the mass in m_e and K > 0 a fixed scale.  theta
increases through every multiple of pi (each node), u is continuous across
mass steps (BenDaniel-Duke) and a point term -alpha delta(x - p) makes u jump
by -alpha psi(p).  With theta_dec in (0, pi) the phase of the solution that
is bounded at the right end (pi/2 where V tends to V_t there, or that of
exp(-kappa x) where V tends to V_R > V_t), the *phase margin*

    Phi = (theta(right end) - theta_dec) / pi

is a continuous function of every param, and the state with N nodes is
bound exactly when Phi > N.  A threshold of state N is a root of Phi - N,
found with Brent's method instead of bisecting an integer.

The march is exact cell by cell for a potential that is constant on each
cell: cos/sin propagation where V < V_t, tanh-normalised cosh/sinh where
V > V_t, linear where V = V_t.  Potentials built only from square wells,
point terms and layer stacks are piecewise constant between their features,
so one cell per segment gives Phi to round-off.  Other potentials use V and m
at cell midpoints (the symmetric second-order Magnus propagator: error
O(h^2) with an even-power expansion) on nested cell levels, and the
thresholds found on each level are Richardson-extrapolated (fdsolver.refine).
The outer ends start and stop where V has reached its asymptote to 1e-15 of
its range (or, toward an infinite wall, where the WKB decay integral exceeds
20).  Params in the case's own units; lengths and energies in the case units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numba
import numpy as np
from scipy.optimize import brentq

from fdsolver.model import shapes as S
from fdsolver.errors import CaseError
from fdsolver.numerics.richardson import Romberg
from fdsolver.boundstates.driver import continuum_threshold

PI = math.pi
EPS = np.finfo(float).eps
MAX_LEVELS = 7


@numba.njit(cache=True, nogil=True)
def march_phase(edges, kappa2, mass, jump, c, kscale, psi, u):
    """March (psi, u) across cells of constant kappa^2 = m (V - V_t) / C; return (nodes crossed, psi, u).

    ``jump[i]`` is the point strength alpha at edge i (u -> u - alpha psi).  The
    pair is renormalised every cell; its sign and the node count are exact.
    """
    nodes = 0
    n = kappa2.shape[0]
    for i in range(n):
        if jump[i] != 0.0:
            u = u - jump[i] * psi
        length = edges[i + 1] - edges[i]
        m = mass[i]
        k2 = kappa2[i]
        s = 1.0 if nodes % 2 == 0 else -1.0
        dpsi = m * u / c
        cross = 0
        if k2 < 0.0:
            k = math.sqrt(-k2)
            phi0 = math.atan2(s * psi, s * dpsi / k)
            if phi0 < 0.0:  # round-off just past a node
                phi0 = 0.0 if s * dpsi > 0.0 else PI
            kl = k * length
            cs, sn = math.cos(kl), math.sin(kl)
            psi_n = psi * cs + dpsi * sn / k
            dpsi_n = -psi * k * sn + dpsi * cs
            total = (phi0 + kl) / PI
            cross = int(math.floor(total))
            s_new = s if cross % 2 == 0 else -s
            if s_new * psi_n < 0.0:  # keep the count consistent with the sign reached
                cross += 1 if total - cross > 0.5 else -1
        elif k2 > 0.0:
            k = math.sqrt(k2)
            t = math.tanh(k * length)
            psi_n = psi + dpsi * t / k
            dpsi_n = psi * k * t + dpsi
            if s * psi_n < 0.0:
                cross = 1
        else:
            psi_n = psi + dpsi * length
            dpsi_n = dpsi
            if s * psi_n < 0.0:
                cross = 1
        u = c * dpsi_n / m
        r = math.sqrt(psi_n * psi_n + (u / kscale) ** 2)
        psi = psi_n / r
        u = u / r
        nodes += cross
    if jump[n] != 0.0:
        u = u - jump[n] * psi
    return nodes, psi, u


@dataclass(frozen=True)
class Layout:
    """Cell layout shared by every case of one search: tails beyond the outer features and base cell counts."""

    compact: bool
    tails: tuple[float, float]
    counts: tuple[int, ...]
    kscale: float
    notes: tuple[str, ...] = ()


def _is_compact(pot) -> bool:
    return all(isinstance(s, (S.Square, S.Point)) for s in pot.shapes)


def _scale(pot) -> float:
    lo, hi = pot.support()
    scales = [s for _, s in pot.feature_scales() if math.isfinite(s)] + [s for _, s in pot.point_scales()]
    return max([hi - lo] + scales + [1e-300]) if (hi > lo or scales) else 1.0


def _finest(pot) -> float:
    scales = [s for _, s in pot.feature_scales() if math.isfinite(s) and s > 0]
    return min(scales) if scales else _scale(pot)


def _features(pot) -> np.ndarray:
    f = pot.features()
    if f.size == 0:
        lo, hi = pot.support()
        f = np.array([lo, hi]) if hi > lo else np.array([0.0])
    return f


def _tail(pot, edge: float, side: int, vt: float, notes: list) -> float:
    """Length beyond ``edge`` after which V equals its asymptote (or a wall has decayed the solution)."""
    scale = _scale(pot)
    t = scale * 1e-3 * 1.05 ** np.arange(0, 340)  # up to ~1.6e4 scales
    x = edge + side * t
    with np.errstate(all="ignore"):
        v = pot.value(x)
    va = pot.asymptote(side)
    if math.isfinite(va):
        span = float(np.max(np.abs(v - va))) if v.size else 0.0
        dev = np.abs(v - va)
        big = np.flatnonzero(~(dev <= 1e-15 * max(span, abs(va), 1e-300)))
        if big.size == 0:
            return 0.0
        if big[-1] == t.size - 1:
            notes.append(
                f"V still differs from its asymptote by {dev[-1]:.2e} at {t[-1]:.3g} {pot.units.length} beyond the "
                "outermost feature; it is treated as constant from there"
            )
            return float(t[-1])
        return float(t[big[-1] + 1])
    m = pot.mass_at(x)
    v = np.where(np.isfinite(v), v, 1e300)
    kappa = np.sqrt(np.clip(m * (v - vt) / pot.hbar2_2me, 0.0, 1e300))
    integral = np.concatenate([[0.0], np.cumsum(0.5 * (kappa[1:] + kappa[:-1]) * np.diff(t))])
    hit = np.flatnonzero(integral >= 20.0)
    return float(t[hit[0]]) if hit.size else float(t[-1])


def make_layout(cases) -> Layout:
    """One layout for all ``cases`` (e.g. the two ends of a search interval): the finest and widest of them."""
    pots = [c.potential for c in cases]
    compact = all(_is_compact(p) for p in pots)
    notes: list[str] = []
    tails = [0.0, 0.0]
    counts: list[int] | None = None
    kscale = 0.0
    for case, pot in zip(cases, pots):
        vt = threshold_of(case)
        f = _features(pot)
        if not compact:
            tails[0] = max(tails[0], 1.2 * _tail(pot, f[0], -1, vt, notes))
            tails[1] = max(tails[1], 1.2 * _tail(pot, f[-1], 1, vt, notes))
        edges = np.concatenate([[f[0] - tails[0]], f, [f[-1] + tails[1]]])
        xs = np.linspace(edges[0], edges[-1], 513)
        with np.errstate(all="ignore"):
            dv = np.abs(pot.value(xs) - vt)
        dv = dv[np.isfinite(dv)]
        m_max = float(np.max(pot.mass_at(xs)))
        vspan = float(np.max(dv)) if dv.size else 0.0
        kscale = max(kscale, pot.hbar2_2me * math.sqrt(m_max * vspan / pot.hbar2_2me + _scale(pot) ** -2) / m_max)
        if compact:
            continue
        h_feat = 0.1 * _finest(pot)
        segs = []
        for a, b in zip(edges[:-1], edges[1:]):
            sx = np.linspace(a, b, 33)
            with np.errstate(all="ignore"):
                k = np.sqrt(np.abs(pot.mass_at(sx) * (pot.value(sx) - vt)) / pot.hbar2_2me)
            kmax = float(np.max(np.where(np.isfinite(k), k, 0.0)))
            segs.append(int(min(200000, max(2, math.ceil((b - a) * max(kmax / 0.25, 1.0 / h_feat))))))
        if counts is None or len(counts) != len(segs):
            counts = segs
        else:
            counts = [max(p, q) for p, q in zip(counts, segs)]
    return Layout(compact, (tails[0], tails[1]), tuple(counts or ()), kscale, tuple(dict.fromkeys(notes)))


def threshold_of(case) -> float:
    """Continuum threshold of an open-ended case; CaseError when none exists (walls, confining V)."""
    if case.domain.boundary == "hard":
        raise CaseError(
            "hard walls bind every state, so there is no binding threshold; use boundary = \"open\"",
            file=case.path,
            key="domain.boundary",
        )
    vt = continuum_threshold(case.potential, case.domain)
    if not math.isfinite(vt):
        raise CaseError(
            "the potential confines at both ends (no continuum), so every state is bound and none appears at a threshold",
            file=case.path,
            key="potential",
        )
    return vt


def _cells(case, layout: Layout, level: int):
    pot = case.potential
    f = _features(pot)
    edges = np.concatenate([[f[0] - layout.tails[0]], f, [f[-1] + layout.tails[1]]])
    if not layout.compact:
        counts = layout.counts if len(layout.counts) == edges.size - 1 else make_layout([case]).counts
        k = 2**level
        parts = [np.linspace(a, b, n * k + 1)[:-1] for a, b, n in zip(edges[:-1], edges[1:], counts)]
        edges = np.concatenate(parts + [edges[-1:]])
    mid = 0.5 * (edges[:-1] + edges[1:])
    jump = np.zeros(edges.size)
    for pos, alpha in pot.point_terms():
        jump[int(np.argmin(np.abs(edges - pos)))] += alpha
    return edges, mid, jump


def _end_phase(pot, vt, side: int, x_end: float, kscale: float) -> tuple[float, float]:
    """(psi, u) of the solution bounded toward ``side`` (psi = 1)."""
    va = pot.asymptote(side)
    if math.isfinite(va):
        m = pot.asymptotic_mass(side)
        dv = va - vt
    else:
        m = float(pot.mass_at(np.array([x_end]))[0])
        dv = float(pot.value(np.array([x_end]))[0]) - vt
    kappa = math.sqrt(max(m * dv / pot.hbar2_2me, 0.0))
    return 1.0, -side * pot.hbar2_2me * kappa / m  # decays away from the interior


def phase_margin(case, layout: Layout | None = None, level: int = 0) -> float:
    """Phi of ``case`` (see module docstring): the state with N nodes is bound iff Phi > N."""
    layout = layout or make_layout([case])
    pot = case.potential
    vt = threshold_of(case)
    edges, mid, jump = _cells(case, layout, level)
    with np.errstate(all="ignore"):
        v = pot.value(mid)
    m = pot.mass_at(mid)
    k2 = m * (np.where(np.isfinite(v), v, 1e300) - vt) / pot.hbar2_2me
    c, ks = pot.hbar2_2me, layout.kscale
    psi0, u0 = _end_phase(pot, vt, -1, edges[0], ks)
    nodes, psi, u = march_phase(edges, k2, m, jump, c, ks, psi0, u0)
    s = 1.0 if nodes % 2 == 0 else -1.0
    alpha = math.atan2(s * psi, s * u / ks)
    if alpha < 0.0:
        alpha = 0.0 if s * u > 0.0 else PI
    pr, ur = _end_phase(pot, vt, 1, edges[-1], ks)
    theta_dec = math.atan2(pr, ur / ks)
    return nodes + (alpha - theta_dec) / PI


def bound_count(case, layout: Layout | None = None) -> int:
    """Number of bound states of ``case`` on the whole open line, from the zero-energy phase (no box)."""
    layout = layout or make_layout([case])
    phi = phase_margin(case, layout, level=0 if layout.compact else 1)
    return max(0, math.ceil(phi)) if phi > 0 else 0


@dataclass(frozen=True)
class Threshold:
    """State ``state`` (node count) becomes bound at ``param`` = ``value`` (+- ``uncertainty``).

    ``direction`` is +1 if it binds as the param increases, -1 if as it decreases.
    """

    param: str
    state: int
    value: float
    uncertainty: float
    direction: int
    units: str = ""


@dataclass(frozen=True)
class Search:
    """All thresholds found in [lo, hi], the bound-state counts at the two ends and the scan behind them."""

    param: str
    lo: float
    hi: float
    units: str
    thresholds: tuple[Threshold, ...]
    count_lo: int
    count_hi: int
    scan_values: np.ndarray
    scan_margin: np.ndarray
    notes: tuple[str, ...] = field(default=())


def find_thresholds(case, name: str, lo: float, hi: float, *, fixed=None, state: int | None = None,
                    scan: int = 129, rtol: float = 1e-9, units: str = "") -> Search:
    """Every threshold in [lo, hi] of the param ``name`` (only of ``state`` if given), to relative ``rtol``.

    ``case`` is the base case and ``fixed`` the other param overrides in force.
    The interval is scanned at ``scan`` points for sign changes of Phi - N;
    two thresholds of one state closer together than a scan step can be missed.
    """
    fixed = dict(fixed or {})
    cache: dict[float, object] = {}

    def at(p: float):
        p = float(p)
        if p not in cache:
            cache[p] = case.with_params(**{**fixed, name: p})
        return cache[p]

    ends = [at(lo), at(hi)]
    layout = make_layout(ends)
    ps = np.linspace(lo, hi, max(3, int(scan)))
    phi = np.array([phase_margin(at(p), layout) for p in ps])
    found: list[Threshold] = []
    notes = list(layout.notes)
    for a, b, fa, fb in zip(ps[:-1], ps[1:], phi[:-1], phi[1:]):
        top = math.floor(max(fa, fb))
        for n in range(max(0, math.ceil(min(fa, fb))), top + 1):
            if state is not None and n != state:
                continue
            if (fa > n) == (fb > n):
                continue
            found.append(_refine(at, layout, name, n, a, b, fb > n, rtol, units, notes))
    found.sort(key=lambda t: (t.value, t.state))
    count = lambda f: max(0, math.ceil(f)) if f > 0 else 0  # noqa: E731
    return Search(name, float(lo), float(hi), units, tuple(found), count(phi[0]), count(phi[-1]), ps, phi, tuple(dict.fromkeys(notes)))


def _refine(at, layout: Layout, name, n, a, b, grows: bool, rtol, units, notes) -> Threshold:
    span = abs(b - a)
    table = Romberg()
    value = err = math.nan
    prev = None
    for level in range(1 if layout.compact else MAX_LEVELS):
        f = lambda p: phase_margin(at(p), layout, level) - n  # noqa: E731
        lo_b, hi_b = _bracket(f, a, b, prev, span)
        root = brentq(f, lo_b, hi_b, xtol=1e-15 * max(abs(lo_b), abs(hi_b), 1e-300) + 1e-300, rtol=4 * EPS, maxiter=200)
        table.add(np.array([root]))
        value = float(table.value()[0])
        prev = root
        if layout.compact:
            break
        err = float(table.error()[0])
        if table.levels >= 3 and err <= 0.1 * rtol * max(abs(value), 1e-12 * span):
            break
    delta = 1e-7 * max(abs(value), span)
    slope = (phase_margin(at(value + delta), layout, 0 if layout.compact else level) -
             phase_margin(at(value - delta), layout, 0 if layout.compact else level)) / (2 * delta)
    n_cells = _cells(at(value), layout, 0 if layout.compact else level)[0].size
    rounding = 16 * EPS * (n_cells + abs(n) + 1) / max(abs(slope), 1e-300)
    unc = rounding + 4 * EPS * abs(value) + (0.0 if layout.compact else err)
    if not math.isfinite(unc) or unc > rtol * max(abs(value), 1e-12 * span):
        notes.append(f"the threshold of state {n} near {name} = {value:.8g} is known only to +-{unc:.2g} (asked: relative {rtol:g})")
    return Threshold(name, int(n), value, float(unc), 1 if grows else -1, units)


def _bracket(f, a, b, guess, span):
    """An interval with a sign change of f: [a, b] itself, or one grown around ``guess``."""
    fa, fb = f(a), f(b)
    if (fa > 0) != (fb > 0) or fa == 0 or fb == 0:
        return a, b
    w = 1e-3 * span
    g = guess if guess is not None else 0.5 * (a + b)
    for _ in range(80):
        lo, hi = g - w, g + w
        if (f(lo) > 0) != (f(hi) > 0):
            return lo, hi
        w *= 2.0
    raise CaseError(f"lost the threshold near {g:g} on a finer level; the potential may be too rough for the cell layout", key="--vary")


def search_dataset(case, search: Search, action: str):
    """Archive (kind "threshold") of a search: the thresholds found and the scan of Phi behind them."""
    import xarray as xr

    from fdsolver.io.archive import base_attrs

    pu = search.units or "1"
    t = search.thresholds
    counts = np.array([max(0, math.ceil(f)) if f > 0 else 0 for f in search.scan_margin], dtype=np.int32)
    data = {
        "phase_margin": ("scan", search.scan_margin, {"long_name": "zero-energy phase margin Phi (state N is bound where Phi > N)", "units": "1"}),
        "bound_states": ("scan", counts, {"long_name": "number of bound states on the whole open line", "units": "1"}),
        "threshold_value": ("threshold", np.array([x.value for x in t]), {"long_name": f"value of {search.param} where the state appears", "units": pu}),
        "threshold_uncertainty": ("threshold", np.array([x.uncertainty for x in t]), {"long_name": "uncertainty of threshold_value", "units": pu}),
        "threshold_state": ("threshold", np.array([x.state for x in t], np.int32), {"long_name": "node count of the state that appears", "units": "1"}),
        "threshold_direction": ("threshold", np.array([x.direction for x in t], np.int8), {"long_name": "+1 binds as the param increases, -1 as it decreases", "units": "1"}),
    }
    coords = {"scan": ("scan", search.scan_values, {"long_name": f"scanned values of {search.param}", "units": pu})}
    attrs = base_attrs(case, "threshold", action)
    attrs.update({"swept_params": f'["{search.param}"]', "interval": [search.lo, search.hi],
                  "bound_states_at_lo": search.count_lo, "bound_states_at_hi": search.count_hi, "notes": "\n".join(search.notes),
                  "method": "Pruefer phase of the zero-energy solution (node count, no box); Brent root of Phi - N"})
    return xr.Dataset(data_vars=data, coords=coords, attrs=attrs)
