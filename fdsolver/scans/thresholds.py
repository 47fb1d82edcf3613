"""Binding thresholds of a case: where a bound state appears as one of its params changes, without any box.

The counting and the root finding are :mod:`fdsolver.boundstates.counting`
(the zero-energy Pruefer phase, carried by the one march); this module makes a
family of potentials out of a case and a param; the archive of a search is
:func:`fdsolver.io.datasets.threshold_dataset`.  Params in the case's own units.
"""

from __future__ import annotations

from fdsolver.boundstates import counting
from fdsolver.boundstates.counting import Search, Threshold  # noqa: F401  (the result types of a search)
from fdsolver.errors import CaseError


def threshold_of(case) -> float:
    """Continuum threshold of an open-ended case; CaseError naming the case file when none exists."""
    try:
        return counting.open_threshold(case.potential, case.domain)
    except CaseError as err:
        raise err.located(file=case.path) from None


def bound_count(case) -> int:
    """Number of bound states of ``case`` on the whole open line, from the zero-energy phase (no box)."""
    threshold_of(case)
    return counting.bound_count(case.potential)


def find_thresholds(case, name: str, lo: float, hi: float, *, fixed=None, state: int | None = None,
                    scan: int = 129, rtol: float = 1e-9, units: str = "", progress=None) -> Search:
    """Every threshold in [lo, hi] of the param ``name`` of ``case`` (only of ``state`` if given), to relative ``rtol``.

    ``fixed`` are the other param overrides in force.  ``progress(n)`` is called as the scan points are done
    (with ``start(total, text)`` first if it has one, like a sweep's).  See
    :func:`fdsolver.boundstates.counting.find_thresholds`.
    """
    fixed = dict(fixed or {})
    threshold_of(case)
    total = max(3, int(scan)) + 2
    start = getattr(progress, "start", None)
    if start is not None:
        start(total, "")
    done = [0]

    def family(p: float):
        c = case.with_params(**{**fixed, name: p})
        threshold_of(c)
        if progress is not None and done[0] < total:
            done[0] += 1
            progress(1)
        return c.potential

    try:
        return counting.find_thresholds(family, name, lo, hi, state=state, scan=scan, rtol=rtol, units=units)
    except CaseError as err:
        raise err.located(file=case.path) from None
