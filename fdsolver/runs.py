"""One case, one run of the bound-state solver: the adapter from a :class:`~fdsolver.input.case.Case` to
:func:`fdsolver.boundstates.driver.solve_potential`.

It sits above ``input`` and ``boundstates`` (which do not know each other's types beyond the settings) and
below ``scans`` and ``api``, which both solve cases; :mod:`fdsolver.api` re-exports :func:`solve_case`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from fdsolver.boundstates.driver import Solution, solve_potential
from fdsolver.errors import CaseError
from fdsolver.numerics.threads import one_blas_thread

if TYPE_CHECKING:
    from fdsolver.input.case import Case


def solve_case(case: Case) -> Solution:
    """Solve ``case`` and return the raw :class:`~fdsolver.boundstates.result.Solution` (one BLAS thread while
    it runs: :mod:`fdsolver.numerics.threads`)."""
    try:
        with one_blas_thread():
            return solve_potential(case.potential, case.domain, case.settings)
    except CaseError as err:  # the core does not know the file; name it here
        raise err.located(file=case.path) from None
