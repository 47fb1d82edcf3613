"""The computational box for open ends.

A bound state of energy E decays beyond its outer turning point as
exp(-int kappa dx), kappa = sqrt(m (V - E)/C).  Truncating the line at a box end
with psi = 0 shifts E by about exp(-2 int kappa dx) relative, so each open end
is placed where that WKB integral of the shallowest wanted state reaches a
``budget`` (the solver uses ln(100/tol)/2 + 1).  Unbounded sides (harmonic,
Morse wall) end where states below a guessed energy have decayed.  Lengths in
the case length unit, energies in its energy unit.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.model.potential import Potential, remembered
from fdsolver.numerics.kernels import decay_reach, walk_pair
from fdsolver.numerics.tables import table_values

#: ratio of successive sample distances when the WKB decay integral is walked out from the potential
GROWTH = 1.05


def length_scale(potential: Potential) -> float:
    """The potential's largest length: its extent or its largest feature scale (one length unit if it has
    neither); worked out once per potential (:func:`~fdsolver.model.potential.remembered`)."""
    return remembered(potential, "largest length", lambda: _length_scale(potential))


def _length_scale(potential: Potential) -> float:
    lo, hi = potential.support()
    scales = [s for _, s in potential.feature_scales() if math.isfinite(s)]
    scales += [s for _, s in potential.point_scales()]
    scale = max([hi - lo] + scales + [0.0])
    return scale if scale > 0 else 1.0  # nothing to measure (e.g. a bare expression): one length unit


#: sample distances of the decay walk in units of the length scale: 1e-3 growing by GROWTH up to 1e9
_LADDER = GROWTH ** np.arange(0, int(np.log(1e12) / np.log(GROWTH)) + 2)


def _walk(scale: float) -> np.ndarray:
    """The offsets of one decay walk (length unit): 0, then ``scale`` 1e-3 times the ladder below 1e9 ``scale``
    (both walks of a box at once: :func:`fdsolver.numerics.kernels.walk_pair`)."""
    t = scale * 1e-3 * _LADDER
    return np.concatenate([[0.0], t[t < scale * 1e9]])


def _extent(x: np.ndarray, v: np.ndarray, m: np.ndarray, c: float, e_top: float, budget: float) -> float:
    """First sample of the walk ``x`` (V = ``v``, mass ``m``) where the WKB decay integral of e_top reaches budget
    (:func:`fdsolver.numerics.kernels.decay_reach`); the walk's last sample if it never does."""
    i = decay_reach(np.ascontiguousarray(x, dtype=float), np.ascontiguousarray(v, dtype=float),
                    np.ascontiguousarray(m, dtype=float), float(c), float(e_top), float(budget))
    return float(x[-1] if i < 0 else x[i])


def decay_extent(potential: Potential, start: float, side: int, e_top: float, budget: float, scale: float) -> float:
    """Position beyond ``start`` (direction ``side``) where the WKB decay integral of energy e_top reaches ``budget``."""
    x = start + side * _walk(scale)
    with np.errstate(over="ignore", invalid="ignore"):
        v = potential.value(x)
    return _extent(x, v, potential.mass_at(x), potential.hbar2_2me, e_top, budget)


def open_box(pot: Potential, dom, e_top: float, budget: float, minimum, mirror: float | None) -> tuple[float, float]:
    """Box for open ends: WKB decay budget of energy e_top on both sides, at least ``minimum``, and symmetric about
    ``mirror`` (the potential's mirror centre, None if it has none) so that mirror nodes exist."""
    lo_s, hi_s = pot.support()
    scale = length_scale(pot)
    x, v, m = remembered(pot, "decay walks", lambda: _decay_walks(pot))
    k = x.size // 2
    lo = _extent(x[:k], v[:k], m[:k], pot.hbar2_2me, e_top, budget)
    hi = _extent(x[k:], v[k:], m[k:], pot.hbar2_2me, e_top, budget)
    lo = min(lo, minimum[0], lo_s - 0.5 * scale)
    hi = max(hi, minimum[1], hi_s + 0.5 * scale)
    if dom.left is not None:
        lo = min(lo, dom.left)
    if dom.right is not None:
        hi = max(hi, dom.right)
    if mirror is not None:
        half = max(mirror - lo, hi - mirror)
        lo, hi = mirror - half, mirror + half
    return (lo, hi)


def _decay_walks(pot: Potential) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(x, V, m) along both walks of :func:`open_box` out of the support (left walk first, each :func:`_walk` of
    the length scale): one evaluation of V and m for every box a solve sizes, read from the piece tables where
    that gives the same numbers (:func:`fdsolver.numerics.tables.table_values`)."""
    lo_s, hi_s = pot.support()
    scale = length_scale(pot)
    x = walk_pair(float(lo_s), float(hi_s), scale * 1e-3, scale * 1e9, _LADDER)  # both walks: one evaluation of V
    read = table_values(pot, x)
    if read is not None:
        return x, read[0], read[1]
    with np.errstate(over="ignore", invalid="ignore"):
        v = pot.value(x)
    return x, v, pot.mass_at(x)


def _attracts(shape) -> bool:
    """True for wells (negative amplitude) and attractive point interactions."""
    if getattr(shape, "alpha", None) is not None:
        return shape.alpha > 0
    return getattr(shape, "amplitude", 0.0) < 0


def provisional_box(potential: Potential, domain, threshold: float, budget: float) -> tuple[float, float]:
    """A first box before any state is known: walls for hard ends, 10 length scales (or a WKB end) otherwise."""
    if domain.boundary == "hard":
        return (float(domain.left), float(domain.right))
    scale = length_scale(potential)
    lo_s, hi_s = potential.support()
    pad = 10.0 * scale
    # a narrow well of integrated strength A binds with kappa ~ m A / hbar^2: its tail needs budget / kappa
    attract = sum(
        s.strength() for s in potential.shapes if math.isfinite(s.strength()) and _attracts(s)
    )
    if attract > 0 and math.isfinite(threshold):
        kappa = potential.mass * attract / (2.0 * potential.hbar2_2me)
        pad = max(pad, budget / kappa)
    box = [lo_s - pad, hi_s + pad]
    for i, side in enumerate((-1, 1)):
        if not math.isfinite(potential.asymptote(side)):
            # an unbounded side ends where states below the guess have decayed
            edge = (lo_s, hi_s)[i]
            far = potential.value(np.array([edge + side * pad]))[0]
            guess = threshold if math.isfinite(threshold) else 0.5 * (far + potential.value(np.array([edge]))[0])
            box[i] = decay_extent(potential, edge, side, guess, budget, scale)
    lo, hi = min(box[0], lo_s - 0.5 * scale), max(box[1], hi_s + 0.5 * scale)
    if domain.left is not None:
        lo = min(lo, domain.left)
    if domain.right is not None:
        hi = max(hi, domain.right)
    return (lo, hi)
