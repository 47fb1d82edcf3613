"""One period of a periodic potential: what may repeat, how long the period is and where its window starts.

:func:`period_window` checks a :class:`~fdsolver.model.potential.Potential` read as one period and
resolves the defaults; the case reader (``[domain] boundary = "periodic"``) and the lattice constructor
:func:`fdsolver.bloch.lattice.lattice` both call it, so a case that loads is a lattice that builds.

* *localised* components (a finite integrated strength: wells, barriers, point terms) repeat as
  images; one reaching outside the window wraps around.  One whose half-maximum region is longer than
  the period is refused (its images would overlap), and so are components that together span more
  than one period (half-maximum regions; a period shorter than the components it must hold) and two
  point terms at the same place modulo the period;
* profiles (expression, table) give V on the window and repeat as they are;
* harmonic, morse and linear components grow or tilt without bound and do not repeat: refused;
* a layer stack's inner layers are one period: their thicknesses must add up to it (the period
  defaults to their sum).

Every problem is a :class:`~fdsolver.errors.CaseError` naming the key (``domain.period``, ``layer``,
``potential[i].shape``, ``potential[i].width``) without the file, which the caller adds.  Lengths in
the case length unit.
"""

from __future__ import annotations

import math
import numbers

from fdsolver.errors import CaseError
from fdsolver.model import shapes as S

#: a layer stack must add up to the period within this relative tolerance
PERIOD_RTOL = 1e-9
#: components that do not repeat with a period
NON_PERIODIC = (S.Harmonic, S.Morse, S.Linear)
#: relative slack of the span checks (round-off of positions given as expressions)
SPAN_RTOL = 1e-12


def is_localised(shape) -> bool:
    """True for components with a finite integrated strength (they repeat as images)."""
    return math.isfinite(shape.strength())


def _extent(shape) -> tuple[float, float]:
    """The half-maximum region of a localised component (its position for a point term)."""
    r = shape.region()
    if r is not None:
        return float(r[0]), float(r[1])
    c = float(shape.centroid())
    return c, c


def period_window(potential, period: float | None = None, start: float | None = None) -> tuple[float, float]:
    """(period, start) of ``potential`` read as one period (module docstring); CaseError on bad input.

    ``period`` defaults to the thickness of the stack's inner layers; ``start`` to the stack's origin,
    else to the point that centres the components' features in the window, else 0.
    """
    stack = potential.stack
    unit = potential.units.length
    if stack is not None:
        inner = stack.layers[1:-1]
        if not inner:
            raise CaseError("a periodic layer stack needs inner layers (one period) between its two outer layers",
                            key="layer")
        total = float(sum(layer.thickness for layer in inner))
        if period is None:
            period = total
        elif isinstance(period, numbers.Real) and not abs(total - period) <= PERIOD_RTOL * abs(period):
            raise CaseError(f"the layers add up to {total:.10g} {unit}, not the period {period:.10g} {unit}; make "
                            "their thicknesses sum to the period (or leave period out: it defaults to their sum)",
                            key="layer")
    if period is None:
        raise CaseError("a periodic potential needs its period L; give period = L", key="domain.period")
    if isinstance(period, bool) or not (isinstance(period, numbers.Real) and math.isfinite(period) and period > 0):
        raise CaseError(f"the period must be a finite length > 0, got {period!r}", key="domain.period")
    period = float(period)
    spans = []
    for i, s in enumerate(potential.shapes, start=1):
        if isinstance(s, NON_PERIODIC):
            raise CaseError(f"a '{s.kind}' component does not repeat with a period (it grows or tilts without "
                            "bound); remove it from the periodic case", key=f"potential[{i}].shape")
        if not is_localised(s):
            continue
        lo, hi = _extent(s)
        if hi - lo > period * (1.0 + SPAN_RTOL):
            raise CaseError(f"the component is {hi - lo:.6g} {unit} wide (half maximum), longer than the period "
                            f"{period:.6g} {unit}; its images would overlap: make it narrower or the period longer",
                            key=f"potential[{i}].width")
        spans.append((lo, hi, i))
    if len(spans) > 1:
        lo = min(a for a, _, _ in spans)
        hi = max(b for _, b, _ in spans)
        if hi - lo > period * (1.0 + SPAN_RTOL):
            raise CaseError(f"the components span {hi - lo:.6g} {unit} (from {lo:.6g} to {hi:.6g}, half-maximum "
                            f"regions), more than the period {period:.6g} {unit} that must hold them: place them "
                            "within one period (those reaching outside it wrap around) or make the period longer",
                            key="domain.period")
    points = sorted((math.remainder(p, period) % period, p) for p, _ in potential.point_terms())
    for (a, pa), (b, pb) in zip(points, points[1:] + points[:1]):
        if len(points) > 1 and (b - a) % period <= SPAN_RTOL * period:
            raise CaseError(f"point terms at {pa:.6g} and {pb:.6g} {unit} fall on the same place of the period "
                            f"{period:.6g} {unit}; merge them into one strength or move one", key="domain.period")
    if start is None:
        if stack is not None:
            start = float(stack.origin)
        else:
            loc = [s for s in potential.shapes if is_localised(s)]
            if loc:
                lo = min(min(s.features()) for s in loc)
                hi = max(max(s.features()) for s in loc)
                start = 0.5 * (lo + hi) - 0.5 * period
            else:
                start = 0.0
    if isinstance(start, bool) or not (isinstance(start, numbers.Real) and math.isfinite(start)):
        raise CaseError(f"the start of the period must be finite, got {start!r}", key="domain.start")
    return period, float(start)


__all__ = ["NON_PERIODIC", "PERIOD_RTOL", "is_localised", "period_window"]
