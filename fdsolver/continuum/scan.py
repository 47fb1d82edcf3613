"""T(E) on an energy grid that resolves every resonance in a range.

Resolution is guaranteed by the pole structure, not by sampling luck: first
every pole with E_r in the range (widened by 5 % on each side) and a width up
to ``max_width`` is found and counted by the contour method of
:mod:`fdsolver.continuum.resonances`.  Each pole E_r - i Gamma/2 gets
``per_resonance`` energies E_r + (Gamma/2) tan(theta_j), theta_j evenly
spaced in (-pi/2, pi/2): uniform in the phase of the resonance, so a Lorentzian
of any width (1e-12 of E or less) is sampled at the same relative density.  A
uniform base grid of ``points`` energies is added, then every interval is
halved while the midpoint's T differs from the linear interpolation of its
ends by more than ``tol`` (absolute), up to ``max_points``.  Poles narrower
than the rounding of E itself (Gamma < 4 eps |E|) cannot be resolved by any
double-precision grid: their centre is sampled and a note says so.
Energies in the case energy unit.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from fdsolver.arrays import sorted_distinct
from fdsolver.continuum.profile import ladder
from fdsolver.continuum.resonances import find_resonances
from fdsolver.continuum.transmission import transmission
from fdsolver.errors import CaseError
from fdsolver.numerics.precision import EPS


def _lorentz_points(e_r: float, gamma: float, n: int) -> np.ndarray:
    theta = np.linspace(-0.5 * math.pi, 0.5 * math.pi, n + 2)[1:-1]
    return e_r + 0.5 * gamma * np.tan(theta)


def _range(potential, lo: float, hi: float, incident: str, domain):
    """The checks and set-up both grids share: (margin, the profile ladder, the incident side's channel)."""
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise CaseError(f"the energy range must be low < high, got {lo:g}:{hi:g}", key="energies")
    margin = 0.05 * (hi - lo)
    lad = ladder(potential, lo - margin, hi + margin, domain)
    prof = lad.at(0)
    src = prof.left if incident == "left" else prof.right
    unit = potential.units.energy
    if hi <= src.threshold:
        raise CaseError(f"the range {lo:g}:{hi:g} {unit} lies below the {incident} asymptote ({src.threshold:g} {unit}): "
                        "no wave comes in; give energies above it", key="energies")
    return margin, lad, src


def transmission_scan(potential, lo: float, hi: float, *, points: int = 201, per_resonance: int = 41,
                      tol: float = 1e-3, max_points: int = 100_000, max_width: float | None = None,
                      incident: str = "left", domain=None):
    """:class:`~fdsolver.continuum.transmission.Transmission` on an adaptive grid over [lo, hi] with its poles attached."""
    lo, hi = float(lo), float(hi)
    margin, lad, src = _range(potential, lo, hi, incident, domain)
    unit = potential.units.energy
    start = max(lo, src.threshold) if math.isfinite(src.threshold) else lo
    res = find_resonances(potential, (start - margin, hi + margin), max_width=max_width or (hi - lo), lad=lad)
    notes = list(res.notes)
    grid = [np.linspace(lo, hi, max(int(points), 2))]
    for e_r, g, l10 in zip(res.energy, res.width, res.log10_width):
        if g > 4.0 * EPS * abs(e_r):
            grid.append(_lorentz_points(e_r, g, per_resonance))
        else:
            grid.append(np.array([e_r]))
            notes.append(f"the resonance at {e_r:.15g} {unit} has a width 10^{l10:.1f} {unit}, below the rounding of E: "
                         "only its centre is sampled")
    e = sorted_distinct(np.clip(np.concatenate(grid), lo, hi))
    tr = transmission(potential, e, incident=incident, lad=lad)
    energies, trans = tr.energy, tr.transmission
    chunks = [tr]
    while energies.size < max_points:
        mid = 0.5 * (energies[1:] + energies[:-1])
        ok_gap = (energies[1:] - energies[:-1]) > 8.0 * EPS * np.maximum(np.abs(mid), 1e-300)
        if not np.any(ok_gap):
            break
        trial = transmission(potential, mid[ok_gap], incident=incident, lad=lad)
        lin = 0.5 * (trans[1:] + trans[:-1])[ok_gap]
        bad = np.abs(trial.transmission - lin) > tol
        if not np.any(bad):
            break
        take = np.flatnonzero(bad)[: max(0, max_points - energies.size)]
        sub = _subset(trial, take)
        chunks.append(sub)
        merged = _merge(chunks)
        energies, trans = merged.energy, merged.transmission
    else:
        notes.append(f"the grid stopped at {max_points} energies before every interval met tol = {tol:g}")
    out = _merge(chunks)
    return replace(out, resonances=res, notes=tuple(dict.fromkeys(list(out.notes) + notes)))


def _subset(tr, idx):
    pick = (lambda a: a[idx])
    return replace(tr, energy=pick(tr.energy), transmission=pick(tr.transmission), reflection=pick(tr.reflection),
                   transmission_error=pick(tr.transmission_error), log_transmission=pick(tr.log_transmission),
                   unitarity_defect=pick(tr.unitarity_defect), open=pick(tr.open), t=pick(tr.t), r=pick(tr.r))


def _merge(chunks):
    cat = (lambda name: np.concatenate([getattr(c, name) for c in chunks]))
    e = cat("energy")
    order = np.argsort(e, kind="stable")
    keep = np.concatenate([[True], np.diff(e[order]) > 0])
    idx = order[keep]
    first = chunks[0]
    fields = ("energy", "transmission", "reflection", "transmission_error", "log_transmission", "unitarity_defect",
              "open", "t", "r")
    vals = {name: cat(name)[idx] for name in fields}
    notes = tuple(dict.fromkeys(n for c in chunks for n in c.notes))
    return replace(first, notes=notes, levels=max(c.levels for c in chunks), **vals)


def fixed_grid(potential, lo: float, hi: float, n: int, *, incident: str = "left", domain=None):
    """T(E) at ``n`` evenly spaced energies on [lo, hi] exactly, with the poles in the range attached.

    The poles are found as for :func:`transmission_scan` (they mark the
    figure); a note names each resonance narrower than twice the spacing,
    which this grid cannot resolve (the adaptive grid does).
    """
    lo, hi = float(lo), float(hi)
    margin, lad, src = _range(potential, lo, hi, incident, domain)
    unit = potential.units.energy
    e = np.linspace(lo, hi, int(n))
    tr = transmission(potential, e, incident=incident, lad=lad)
    start = max(lo, src.threshold) if math.isfinite(src.threshold) else lo
    res = find_resonances(potential, (start, hi), max_width=hi - lo, lad=lad)
    step = (hi - lo) / max(int(n) - 1, 1)
    notes = [f"the resonance at {e_r:.10g} {unit} (width {g:.3g} {unit}) is narrower than twice the grid spacing "
             f"{step:.3g} {unit}: this grid does not resolve it (leave out N for the adaptive grid)"
             for e_r, g, b in zip(res.energy, res.width, res.bound) if not b and g < 2.0 * step]
    notes += [n_ for n_ in res.notes if not n_.startswith("no resonance")]
    return replace(tr, resonances=res, notes=tuple(dict.fromkeys(list(tr.notes) + notes)))
