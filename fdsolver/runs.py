"""One case, one run of the bound-state solver: the adapter from a :class:`~fdsolver.input.case.Case` to
:func:`fdsolver.boundstates.driver.solve_potential`.

It sits above ``input`` and ``boundstates`` (which do not know each other's types beyond the settings) and
below ``scans`` and ``api``, which both solve cases; :mod:`fdsolver.api` re-exports :func:`solve_case`.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

from fdsolver.boundstates.driver import Solution, solve_potential
from fdsolver.errors import CaseError
from fdsolver.numerics.threads import one_blas_thread

if TYPE_CHECKING:
    from fdsolver.input.case import Case


def not_periodic(case: Case, instead: str | None = None) -> None:
    """CaseError for a periodic case given to a bound-state command: it has bands; say what to run instead."""
    if case.domain.periodic:
        where = str(case.path or case.title)
        instead = instead or f"fdsolver bands {where} (or fdsolver.bands(case))"
        raise CaseError(f"the case is periodic: it has Bloch bands, not bound states; run {instead}",
                        file=case.path, key="domain.boundary")


def solve_case(case: Case, notes: bool = True, wavefunctions: bool = True) -> Solution:
    """Solve ``case`` and return the raw :class:`~fdsolver.boundstates.result.Solution`, with one BLAS thread
    while it runs (:mod:`fdsolver.numerics.threads`); a periodic case is refused (:func:`not_periodic`).

    With ``nonparabolicity = true`` in the case, each state is solved with the energy-dependent (Kane) mass
    (:func:`fdsolver.boundstates.nonparabolic.solve_energy_dependent`); the result then also carries each
    state's mass profile (``state_mass``).  ``notes``: put the case's own notes (unit system, lattice
    mismatch) first among the messages.  ``wavefunctions=False``: a plain solve makes only the energies, errors,
    indices, parities and splittings (:func:`fdsolver.boundstates.result.finish`; ``converged`` is the same);
    the energy-dependent mass and quasi-bound states are solved in full either way.

    On the open line a potential that leaks (falls without bound at an end, or encloses a well by barriers above
    the continuum threshold) also gets its quasi-bound states, with widths and lifetimes
    (:mod:`fdsolver.continuum.openline`; those above a continuum threshold only with ``[solve] quasi_bound =
    true``).
    """
    from fdsolver.continuum.confinement import leaks  # numpy only: no start-up cost for plain solves

    not_periodic(case)
    try:
        with one_blas_thread():
            if getattr(case, "nonparabolicity", False):
                from fdsolver.boundstates.nonparabolic import solve_energy_dependent

                sol = solve_energy_dependent(case.potential, case.domain, case.settings, case.gaps, solve_potential)
            elif leaks(case.potential, case.domain) and case.settings.quasi_bound is not False:
                from fdsolver.continuum.openline import solve_open_line

                sol = solve_open_line(case.potential, case.domain, case.settings)
            else:
                sol = solve_potential(case.potential, case.domain, case.settings, wavefunctions)
    except CaseError as err:  # the core does not know the file; name it here
        raise err.located(file=case.path) from None
    if notes and getattr(case, "notes", ()):
        wrapped = hasattr(sol, "state_mass")  # a KaneSolution around the Solution
        inner = sol.solution if wrapped else sol
        inner = replace(inner, messages=tuple(dict.fromkeys(tuple(case.notes) + tuple(inner.messages))))
        sol = replace(sol, solution=inner) if wrapped else inner
    return sol
