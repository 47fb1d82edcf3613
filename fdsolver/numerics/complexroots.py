"""Every zero of an analytic function in a rectangle of the complex plane: none missed, none doubled.

The function is given in log form, ``f(z) -> (m, l)`` with f = m exp(l) (m
complex, l real), vectorised over arrays of z, so that values far outside the
double range (Jost functions of thick barriers) are handled.

Counting (argument principle).  The number of zeros inside a rectangle R
(f analytic on and inside R, no zero on its boundary) is

    N = (1 / 2 pi) sum_k Delta_k arg f

over the boundary, traversed counter-clockwise.  The boundary is sampled
adaptively: a segment is halved until the change of arg f along it is below
pi/3 and that of ln|f| below 2, so consecutive samples cannot hide a full turn
of the phase unless two zeros sit closer to the boundary than the sampling
can see (a straight segment passing a single simple zero turns the phase by
less than pi).  The winding must come out within 0.05 of an integer; a
segment shorter than ``1e-13`` of the rectangle that still changes too much
(a zero on the boundary) is reported in ``Count.clean``.

Locating (Delves-Lyness).  For a count of one, the zero is
z = (1 / 2 pi i) oint z f'/f dz, approximated from the same samples by
sum_k z_mid,k Delta_k ln f, then polished by Newton's method with a central
difference quotient of f (scale-free: only ratios f(z +- h)/f(z) are used).
Rectangles with more zeros are halved along their longer side (real extent
measured against ``aspect`` times the imaginary one) and counted again; the
halves' counts must add up to the parent's.  Below a width of ``1e-9`` of the
original rectangle a cluster of n zeros is taken from the first n moments
(Newton's identities, polynomial roots) and polished.  A polished zero must
lie in its rectangle; zeros closer than their error estimates are one zero.

Cost: O(boundary samples) evaluations per rectangle, O(log(width / spacing))
rectangles per zero.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

#: a boundary segment is halved while its change of arg f exceeds this
MAX_ARG_STEP = math.pi / 3
#: ... or its change of ln|f| exceeds this
MAX_LOG_STEP = 2.0
#: shortest boundary segment relative to the rectangle's perimeter
MIN_SEGMENT = 1e-13
#: most boundary evaluations for one rectangle
MAX_BOUNDARY_POINTS = 200_000


@dataclass(frozen=True)
class Count:
    """Winding of f around a rectangle: ``n`` zeros inside, ``winding`` the raw value, ``clean`` if trustworthy."""

    n: int
    winding: float
    clean: bool
    moments: tuple[complex, ...]
    evaluations: int


@dataclass
class Zero:
    """One polished zero with an error estimate (absolute, same unit as z) and whether Newton converged."""

    z: complex
    error: float
    converged: bool


@dataclass
class Search:
    """All zeros found in a rectangle and how the count was made."""

    zeros: list[Zero]
    count: int
    evaluations: int
    notes: list[str] = field(default_factory=list)


def _logf(f, z):
    m, lg = f(np.asarray(z, dtype=complex))
    m = np.asarray(m, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(m) + np.asarray(lg, dtype=float)


def _boundary(a: complex, b: complex, c: complex, d: complex, n: int):
    """Counter-clockwise corners a (lower left), b (lower right), c (upper right), d (upper left); n points per side."""
    t = np.linspace(0.0, 1.0, n + 1)[:-1]
    return np.concatenate([a + (b - a) * t, b + (c - b) * t, c + (d - c) * t, d + (a - d) * t])


def count_zeros(f, re_lo: float, re_hi: float, im_lo: float, im_hi: float, *, per_side: int = 16,
                max_moment: int = 1) -> Count:
    """Count the zeros of f in the rectangle [re_lo, re_hi] x [im_lo, im_hi] (module docstring)."""
    a, b = complex(re_lo, im_lo), complex(re_hi, im_lo)
    c, d = complex(re_hi, im_hi), complex(re_lo, im_hi)
    perim = 2.0 * ((re_hi - re_lo) + (im_hi - im_lo))
    z = _boundary(a, b, c, d, per_side)
    rate_fn = getattr(f, "rate", None)
    if rate_fn is not None:
        # place the first samples so that the a-priori rate turns the phase by at most pi/4 per segment
        zz = np.append(z, z[0])
        rt = np.asarray(rate_fn(zz), dtype=float)
        seg = np.abs(np.diff(zz)) * np.maximum(rt[:-1], rt[1:])
        pieces = np.maximum(1, np.ceil(seg / (math.pi / 4))).astype(int)
        pieces = np.minimum(pieces, MAX_BOUNDARY_POINTS // max(z.size, 1))
        z = np.concatenate([zz[i] + (zz[i + 1] - zz[i]) * np.arange(pieces[i]) / pieces[i] for i in range(z.size)])
    rate = np.asarray(rate_fn(z), dtype=float) if rate_fn is not None else np.zeros(z.size)
    lf = _logf(f, z)
    evals = z.size
    clean = True
    while True:
        zz = np.append(z, z[0])
        ll = np.append(lf, lf[0])
        rr = np.append(rate, rate[0])
        dl = np.diff(ll)
        darg = np.angle(np.exp(1j * dl.imag))
        dmag = dl.real
        seglen = np.abs(np.diff(zz))
        bad = (np.abs(darg) > MAX_ARG_STEP) | ~(np.abs(dmag) <= MAX_LOG_STEP) | ~np.isfinite(dl.imag)
        bad |= seglen * np.maximum(rr[:-1], rr[1:]) > MAX_ARG_STEP
        tiny = seglen < MIN_SEGMENT * perim
        if np.any(bad & tiny):
            clean = False
        bad &= ~tiny
        if not np.any(bad) or evals > MAX_BOUNDARY_POINTS:
            if np.any(bad):
                clean = False
            break
        idx = np.flatnonzero(bad)
        mids = 0.5 * (zz[idx] + zz[idx + 1])
        lm = _logf(f, mids)
        evals += mids.size
        z = np.insert(z, idx + 1, mids)
        lf = np.insert(lf, idx + 1, lm)
        rate = np.insert(rate, idx + 1, np.asarray(rate_fn(mids), dtype=float) if rate_fn is not None else 0.0)
    zz = np.append(z, z[0])
    ll = np.append(lf, lf[0])
    dl = np.diff(ll)
    dl = dl.real + 1j * np.angle(np.exp(1j * dl.imag))
    winding = float(np.sum(dl.imag) / (2.0 * math.pi))
    n = int(round(winding))
    if abs(winding - n) > 0.05 or not np.all(np.isfinite(dl)):
        clean = False
    zm = 0.5 * (zz[:-1] + zz[1:])
    moments = tuple(complex(np.sum(zm**p * dl) / (2j * math.pi)) for p in range(1, max_moment + 1))
    return Count(max(n, 0), winding, clean, moments, evals)


def polish(f, z0: complex, *, scale: float, tol: float = 1e-14, max_iter: int = 60) -> Zero:
    """Newton's method from ``z0`` with central differences h = 1e-7 ``scale`` (then shrinking with the step).

    Converged when a step is below tol * scale + 8 eps |z|; the error estimate
    is the last step (a quadratically converging step bounds the error of the
    previous iterate), at least the spread of the iterates once round-off
    stops the progress.
    """
    z = complex(z0)
    h = 1e-7 * scale
    last = math.inf
    stall = 0
    history = []
    for _ in range(max_iter):
        pts = np.array([z, z + h, z - h])
        lf = _logf(f, pts)
        if not np.all(np.isfinite(lf)):
            return Zero(z, math.inf, False)
        qp, qm = np.exp(lf[1] - lf[0]), np.exp(lf[2] - lf[0])
        den = qp - qm
        if den == 0:
            return Zero(z, abs(h), False)
        step = -2.0 * h / den
        if not np.isfinite(step):
            return Zero(z, math.inf, False)
        z = z + step
        a = abs(step)
        history.append(a)
        floor = tol * scale + 8.0 * 2.2e-16 * abs(z)
        if a <= floor:
            return Zero(z, max(a, 8.0 * 2.2e-16 * abs(z)), True)
        if a >= 0.5 * last:
            stall += 1
            if stall >= 4:
                return Zero(z, max(history[-4:]), a <= 1e-8 * scale)
        else:
            stall = 0
        last = a
        h = min(h, max(1e-3 * a, 1e-12 * scale, 64 * 2.2e-16 * abs(z)))
    return Zero(z, last, False)


def _inside(z: complex, rect, slack: float) -> bool:
    re_lo, re_hi, im_lo, im_hi = rect
    return re_lo - slack <= z.real <= re_hi + slack and im_lo - slack <= z.imag <= im_hi + slack


def find_zeros(f, re_lo: float, re_hi: float, im_lo: float, im_hi: float, *, aspect: float = 1.0,
               tol: float = 1e-14, max_depth: int = 80, seeds=()) -> Search:
    """All zeros of f in the rectangle (module docstring); ``seeds`` are optional first guesses."""
    width0 = re_hi - re_lo
    scale = max(width0, aspect * (im_hi - im_lo))
    notes: list[str] = []
    evals = 0
    found: list[Zero] = []

    def add(zr: Zero) -> None:
        for other in found:
            if abs(other.z - zr.z) <= max(other.error, zr.error, 1e-12 * scale):
                if zr.error < other.error:
                    other.z, other.error, other.converged = zr.z, zr.error, zr.converged
                return
        found.append(zr)

    def region(rect, depth: int, known: Count | None = None) -> int:
        nonlocal evals
        cnt = known
        if cnt is None:
            cnt = count_zeros(f, *rect, max_moment=4)
            evals += cnt.evaluations
        if not cnt.clean:
            notes.append(f"the zero count on the rectangle re [{rect[0]:.10g}, {rect[1]:.10g}] im [{rect[2]:.3g}, "
                         f"{rect[3]:.3g}] was not clean (winding {cnt.winding:.3f}); a zero may sit on its boundary")
        n = cnt.n
        if n == 0:
            return 0
        w, hgt = rect[1] - rect[0], rect[3] - rect[2]
        if n == 1:
            zr = polish(f, cnt.moments[0], scale=max(w, aspect * hgt), tol=tol)
            if zr.converged and _inside(zr.z, rect, 1e-9 * scale):
                add(zr)
                return 1
        if depth >= max_depth or (w < 1e-9 * width0 and aspect * hgt < 1e-9 * scale):
            _cluster(cnt, rect)
            return n
        if w >= aspect * hgt:
            mid = 0.5 * (rect[0] + rect[1])
            halves = [(rect[0], mid, rect[2], rect[3]), (mid, rect[1], rect[2], rect[3])]
        else:
            mid = 0.5 * (rect[2] + rect[3])
            halves = [(rect[0], rect[1], rect[2], mid), (rect[0], rect[1], mid, rect[3])]
        counts = [count_zeros(f, *hr, max_moment=4) for hr in halves]
        evals += sum(c.evaluations for c in counts)
        if sum(c.n for c in counts) != n:
            notes.append(f"the halves of a rectangle counted {sum(c.n for c in counts)} zeros, the whole {n}")
        return sum(region(hr, depth + 1, c) for hr, c in zip(halves, counts))

    def _cluster(cnt: Count, rect) -> None:
        n = cnt.n
        s = list(cnt.moments[:n])
        # Newton's identities: power sums -> elementary symmetric polynomials
        e = [1.0 + 0j]
        for k in range(1, n + 1):
            acc = sum(((-1) ** (i - 1)) * e[k - i] * s[i - 1] for i in range(1, k + 1) if i - 1 < len(s))
            e.append(acc / k)
        coeffs = [((-1) ** k) * e[k] for k in range(n + 1)]
        for g in np.roots(coeffs) if n > 0 else []:
            zr = polish(f, complex(g), scale=max(rect[1] - rect[0], 1e-300), tol=tol)
            add(zr)
        notes.append(f"{n} zeros closer than 1e-9 of the range near {0.5 * (rect[0] + rect[1]):.12g} were taken from "
                     "the contour moments")

    for s0 in seeds:
        zr = polish(f, complex(s0), scale=scale, tol=tol)
        if zr.converged and _inside(zr.z, (re_lo, re_hi, im_lo, im_hi), 0.0):
            add(zr)
    total = count_zeros(f, re_lo, re_hi, im_lo, im_hi, max_moment=4)
    evals += total.evaluations
    if total.n == len(found) and total.clean:
        return Search(found, total.n, evals, notes)
    found.clear()
    n = region((re_lo, re_hi, im_lo, im_hi), 0, total)
    if len(found) != n:
        notes.append(f"the contour counts {n} zeros but {len(found)} were located")
    return Search(found, n, evals, notes)
