"""fdsolver: bound states of 1D wells on adaptive finite-difference grids.

Public API::

    case = fdsolver.load_case("cases/pair.toml", d=4.0)   # params may be overridden
    ds = fdsolver.solve(case)                             # xarray.Dataset
    fdsolver.write_dataset(ds, "run.nc")
    ds2 = fdsolver.open_run("run.nc")

Cases can also be built in code with :func:`case_from_dict` (the TOML schema
as Python data) or :func:`case_from_text`.
"""

__version__ = "0.1.0"

from .errors import ArchiveError, BudgetError, CaseError, FdsolverError  # noqa: E402
from .case import Case, case_from_dict, case_from_text, load_case  # noqa: E402
from .archive import open_run, write_dataset  # noqa: E402
from .api import case_of_run, solve, solve_case  # noqa: E402

__all__ = [
    "ArchiveError",
    "BudgetError",
    "Case",
    "CaseError",
    "FdsolverError",
    "case_from_dict",
    "case_from_text",
    "case_of_run",
    "load_case",
    "open_run",
    "solve",
    "solve_case",
    "write_dataset",
]
