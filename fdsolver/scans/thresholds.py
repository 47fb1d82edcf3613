"""Binding thresholds of a case: where a bound state appears as one of its params changes, without any box.

The counting and the root finding are :mod:`fdsolver.boundstates.counting`
(the zero-energy Pruefer phase, carried by the one march); this module makes a
family of potentials out of a case and a param, and builds the archive of a
search.  Params in the case's own units.
"""

from __future__ import annotations

import numpy as np

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
                    scan: int = 129, rtol: float = 1e-9, units: str = "") -> Search:
    """Every threshold in [lo, hi] of the param ``name`` of ``case`` (only of ``state`` if given), to relative ``rtol``.

    ``fixed`` are the other param overrides in force.  See
    :func:`fdsolver.boundstates.counting.find_thresholds`.
    """
    fixed = dict(fixed or {})
    threshold_of(case)

    def family(p: float):
        c = case.with_params(**{**fixed, name: p})
        threshold_of(c)
        return c.potential

    try:
        return counting.find_thresholds(family, name, lo, hi, state=state, scan=scan, rtol=rtol, units=units)
    except CaseError as err:
        raise err.located(file=case.path) from None


def search_dataset(case, search: Search, action: str):
    """Archive (kind "threshold") of a search: the thresholds found and the scan of Phi behind them."""
    import xarray as xr

    from fdsolver.io.archive import base_attrs

    pu = search.units or "1"
    t = search.thresholds
    counts = np.array([counting.count_from_margin(f) for f in search.scan_margin], dtype=np.int32)
    data = {
        "phase_margin": ("scan", search.scan_margin, {"long_name": "zero-energy phase margin Phi (state N is bound where Phi > N)", "units": "1"}),
        "bound_states": ("scan", counts, {"long_name": "number of bound states on the whole open line", "units": "1"}),
        "threshold_value": ("threshold", np.array([x.value for x in t]), {"long_name": f"value of {search.param} where the state appears", "units": pu}),
        "threshold_uncertainty": ("threshold", np.array([x.uncertainty for x in t]), {"long_name": "uncertainty of threshold_value", "units": pu}),
        "threshold_state": ("threshold", np.array([x.state for x in t], np.int32), {"long_name": "node count of the state that appears", "units": "1"}),
        "threshold_direction": ("threshold", np.array([x.direction for x in t], np.int8), {"long_name": "+1 binds as the param increases, -1 as it decreases", "units": "1"}),
    }
    coords = {"scan": ("scan", search.scan_values, {"long_name": f"scanned values of {search.param}", "units": pu})}
    attrs = base_attrs(case, "threshold", action)
    attrs.update({"swept_params": f'["{search.param}"]', "interval": [search.lo, search.hi],
                  "bound_states_at_lo": search.count_lo, "bound_states_at_hi": search.count_hi, "notes": "\n".join(search.notes),
                  "method": "Pruefer phase of the zero-energy solution (node count, no box); Brent root of Phi - N"})
    return xr.Dataset(data_vars=data, coords=coords, attrs=attrs)
