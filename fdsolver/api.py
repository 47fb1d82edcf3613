"""The pipeline as one call: case -> potential -> grid -> operator -> states -> refinement -> dataset."""

from __future__ import annotations

import xarray as xr

from fdsolver.input.case import Case, case_from_text
from fdsolver.io.datasets import solution_dataset
from fdsolver.errors import ArchiveError, CaseError
from fdsolver.boundstates.driver import Solution, solve_potential


def solve_case(case: Case) -> Solution:
    """Solve ``case`` and return the raw :class:`~fdsolver.solver.Solution`."""
    try:
        return solve_potential(case.potential, case.domain, case.settings)
    except CaseError as err:  # the core does not know the file; name it here
        raise err.located(file=case.path) from None


def solve(case: Case, action: str | None = None) -> xr.Dataset:
    """Bound states of ``case`` as an archive-ready :class:`xarray.Dataset` (see :mod:`fdsolver.dataset`)."""
    sol = solve_case(case)
    return solution_dataset(case, sol, action or f"solve {case.path or case.title}")


def case_of_run(ds: xr.Dataset) -> Case:
    """Rebuild the case stored in an archive (its text and the table files it read)."""
    import json

    try:
        tables = json.loads(ds.attrs.get("case_tables", "{}"))
        text = ds.attrs["case_text"]
    except (KeyError, ValueError) as exc:
        raise ArchiveError(f"archive does not hold a readable case ({exc})") from None
    path = ds.attrs.get("case_file") or None
    try:
        case = case_from_text(text, path=path, tables=tables)
    except CaseError as err:
        raise ArchiveError(f"the case stored in the archive is not valid: {err}", file=ds.encoding.get("source")) from None
    params = json.loads(ds.attrs.get("params", "{}"))
    changed = {k: v for k, v in params.items() if case.params.get(k) != v}
    return case.with_params(**changed) if changed else case
