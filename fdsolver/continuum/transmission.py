"""T(E) and R(E) of any potential at given energies, with an error estimate on every value.

Method (see :mod:`fdsolver.continuum.amplitudes` for the amplitudes):

* potentials linear between their features (layer stacks, squares, points,
  fields, linear tables) are marched exactly, one cell per segment: the error
  is round-off.  It is estimated as 16 eps (cells + 2) T (the dominant
  march's relative error) plus the change of T when E moves by
  4 eps (|E| + max|V|), the size of the rounding of V - E: near a resonance of
  width Gamma this term, about T eps E / Gamma, is the honest limit of any
  double-precision evaluation.
* smooth potentials use nested midpoint cells (second order, even powers of
  the cell size): log T and R are Richardson-extrapolated over levels
  (:class:`~fdsolver.numerics.richardson.Romberg`, up to h^6) until the
  estimated error is below ``tol`` relative, or ``max_levels`` is reached
  (a note says so).  The error estimate is the Romberg change plus the
  round-off terms above.

|r|^2 + |t|^2 = 1 (flux-normalised, R + T = 1) is checked at every energy
and returned as ``unitarity_defect``; a defect above 1e-10 (exact) or the
error estimate (smooth) gives a note.  Energies in the case energy unit,
T and R dimensionless.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fdsolver.continuum.amplitudes import amplitudes
from fdsolver.continuum.profile import ladder
from fdsolver.errors import CaseError
from fdsolver.numerics.precision import EPS
from fdsolver.numerics.richardson import Romberg

#: most nested cell levels for smooth potentials
MAX_LEVELS = 9


@dataclass(frozen=True, eq=False)
class Transmission:
    """Transmission of a wave incident from ``incident`` at real energies.

    ``energy`` in ``energy_unit``; ``transmission`` T and ``reflection`` R
    (flux ratios, dimensionless) with ``transmission_error`` (absolute);
    ``log_transmission`` = ln T (finite where T underflows a double);
    ``unitarity_defect`` = |R + T - 1| where the incident channel is open
    (``open``), 0 elsewhere; ``t`` and ``r`` the complex amplitudes (of the
    finest level).  ``levels`` is the number of cell levels used (1 = exact
    per segment).  ``resonances`` holds the poles behind an adaptive grid
    (:func:`fdsolver.continuum.scan.transmission_scan`), else None.
    """

    energy: np.ndarray
    transmission: np.ndarray
    reflection: np.ndarray
    transmission_error: np.ndarray
    log_transmission: np.ndarray
    unitarity_defect: np.ndarray
    open: np.ndarray
    t: np.ndarray
    r: np.ndarray
    incident: str
    energy_unit: str
    levels: int
    method: str
    resonances: object = None
    notes: tuple[str, ...] = field(default=())


def _vmax(profile) -> float:
    vals = [np.max(np.abs(profile.cells.v0)) if profile.cells.v0.size else 0.0,
            np.max(np.abs(profile.cells.v0 + profile.cells.slope * np.diff(profile.cells.edges))) if profile.cells.v0.size else 0.0]
    for ch in (profile.left, profile.right):
        if np.isfinite(ch.v):
            vals.append(abs(ch.v))
    return float(max(vals))


def _noise(profile, e, base, incident) -> np.ndarray:
    """Change of T when E moves by the rounding of V - E (4 eps (|E| + max|V|)) up and down."""
    de = 4.0 * EPS * (np.abs(e) + _vmax(profile))
    up = amplitudes(profile, e + de, incident).transmission
    dn = amplitudes(profile, e - de, incident).transmission
    return np.maximum(np.abs(up - base), np.abs(dn - base))


def transmission(potential, energies, *, incident: str = "left", tol: float = 1e-10, max_levels: int = MAX_LEVELS,
                 domain=None, lad=None) -> Transmission:
    """T(E), R(E) of ``potential`` at the real ``energies`` (case energy unit) for a wave from ``incident``.

    ``tol`` is the relative accuracy aimed at for smooth potentials (exact ones
    are at round-off anyway).  ``lad`` may pass a prepared
    :class:`~fdsolver.continuum.profile.Ladder` (its energy range must cover
    the energies).
    """
    e = np.atleast_1d(np.asarray(energies, dtype=float)).ravel()
    if e.size == 0 or not np.all(np.isfinite(e)):
        raise CaseError("give at least one finite energy", key="energies")
    if incident not in ("left", "right"):
        raise CaseError(f"incident must be 'left' or 'right', got {incident!r}", key="incident")
    lad = lad or ladder(potential, float(e.min()), float(e.max()), domain)
    unit = potential.units.energy
    notes = list(lad.notes)
    prof = lad.at(0)
    src = prof.left if incident == "left" else prof.right
    if not np.any(src.is_open(e)):
        raise CaseError(f"every energy lies below the {incident} asymptote ({src.threshold:g} {unit}): no wave comes in "
                        f"from the {incident}; give energies above it", key="energies")
    if lad.exact:
        amp = amplitudes(prof, e, incident)
        n_cells = prof.cells.n_cells
        err = 16.0 * EPS * (n_cells + 2) * amp.transmission + _noise(prof, e, amp.transmission, incident)
        levels, method = 1, "exact per segment (constant and Airy cells), complex march from the transmitted side"
        logt, trans, refl = amp.log_transmission, amp.transmission, amp.reflection
    else:
        tab_l, tab_r = Romberg(), Romberg()
        amp = None
        ok = False
        for level in range(max_levels):
            amp = amplitudes(lad.at(level), e, incident)
            finite = np.isfinite(amp.log_transmission)
            tab_l.add(np.where(finite, amp.log_transmission, 0.0))
            tab_r.add(amp.reflection)
            if tab_l.levels >= 3:
                err_l = tab_l.error()
                if np.all(err_l[finite] <= tol) and np.all(tab_r.error() <= tol * np.maximum(amp.transmission, 1e-300) + tol):
                    ok = True
                    break
        levels = tab_l.levels
        logt = np.where(np.isfinite(amp.log_transmission), tab_l.value(), -np.inf)
        with np.errstate(under="ignore"):
            trans = np.exp(logt)
        refl = tab_r.value()
        n_cells = lad.at(levels - 1).cells.n_cells
        err = trans * (np.where(np.isfinite(logt), tab_l.error(), 0.0) + 16.0 * EPS * (n_cells + 2))
        err = err + _noise(lad.at(levels - 1), e, amp.transmission, incident)
        method = f"midpoint cells on {levels} nested levels, Richardson-extrapolated (h^2, h^4 removed)"
        if not ok:
            notes.append(f"the transmission reached only about {np.max(tab_l.error()):.1e} relative after {levels} "
                         f"cell levels (asked {tol:g})")
    defect = np.where(amp.open, np.abs(refl + trans - 1.0), 0.0)
    limit = 1e-10 if lad.exact else max(1e-10, float(np.max(err, initial=0.0)))
    if np.any(defect > limit):
        i = int(np.argmax(defect))
        notes.append(f"flux is not conserved to {limit:g}: |R + T - 1| = {defect[i]:.2e} at {e[i]:.10g} {unit}")
    return Transmission(e, trans, refl, err, logt, defect, amp.open, amp.t, amp.r, incident, unit, levels, method,
                        None, tuple(dict.fromkeys(notes)))
