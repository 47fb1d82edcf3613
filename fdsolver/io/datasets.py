"""The Dataset of one solve: :class:`~fdsolver.solver.Solution` + :class:`~fdsolver.case.Case` -> xarray.

Coordinates ``x`` (grid nodes, walls or box ends included), ``state``
(0 = ground state), ``region`` (named components and layers) and ``level``
(grid refinement level); variables ``energy``, ``energy_error``, ``converged``,
``nodes``, ``parity``, ``mean_x``, ``spread``, ``psi``, ``potential``,
``mass``, ``probability_inside``, ``box_error``, ``level_energy``,
``level_nodes``.  Attributes and units as described in :mod:`fdsolver.archive`.
"""

from __future__ import annotations

import math

import numpy as np
import xarray as xr

from fdsolver.io.archive import base_attrs, energy_attrs, length_attrs
from fdsolver.boundstates.driver import Solution


def solution_dataset(case, sol: Solution, action: str = "solve") -> xr.Dataset:
    """Build the archive Dataset of ``sol`` for ``case``."""
    u = case.units
    n = sol.energy.size
    coords = {
        "x": ("x", sol.x, length_attrs(u, "position")),
        "state": ("state", np.arange(n, dtype=np.int32), {"long_name": "bound state index (0 = ground state)", "units": "1"}),
        "region": ("region", np.array(sol.region_names, dtype=object), {"long_name": "named component or layer"}),
        "level": ("level", np.arange(sol.level_sizes.size, dtype=np.int32), {"long_name": "grid refinement level", "units": "1"}),
    }
    ea = lambda name: energy_attrs(u, name)  # noqa: E731
    data = {
        "energy": ("state", sol.energy, ea("bound-state energy (Richardson-extrapolated)")),
        "energy_error": ("state", sol.energy_error, ea("estimated absolute error of energy")),
        "converged": (
            "state",
            sol.converged.astype(np.int8),
            {"long_name": "1 if energy_error is below the tolerance", "units": "1", "flag_values": np.array([0, 1], dtype=np.int8), "flag_meanings": "not_converged converged"},
        ),
        "nodes": ("state", sol.nodes.astype(np.int32), {"long_name": "number of nodes of the wavefunction", "units": "1"}),
        "parity": ("state", sol.parity.astype(np.int8), {"long_name": "mirror parity (+1 even, -1 odd, 0 no mirror symmetry)", "units": "1"}),
        "mean_x": ("state", sol.mean_x, length_attrs(u, "expectation value of position <x>")),
        "spread": ("state", sol.spread, length_attrs(u, "position spread sqrt(<x^2> - <x>^2)")),
        "box_error": ("state", sol.box_error, ea("estimated shift from truncating the open line to the box")),
        "psi": (
            ("state", "x"),
            sol.psi,
            {
                "long_name": "normalised wavefunction times sqrt(length unit)",
                "units": "1",
                "units_note": f"psi in {u.length}^-1/2; integral psi^2 dx = 1 over the grid (lumped node weights)",
            },
        ),
        "potential": ("x", sol.potential, ea("potential energy (dual-cell average at interior nodes)")),
        "mass": ("x", sol.mass, {"long_name": "effective mass in units of the free-electron mass", "units": "1"}),
        "probability_inside": (
            ("state", "region"),
            sol.inside,
            {"long_name": "probability inside each named component or layer", "units": "1"},
        ),
        "level_energy": (("level", "state"), sol.level_energies, ea("unextrapolated energy on each refinement level")),
        "level_nodes": ("level", sol.level_sizes.astype(np.int64), {"long_name": "number of grid nodes per level", "units": "1"}),
    }
    attrs = base_attrs(case, "solve", action)
    attrs.update(
        {
            "continuum_threshold": float(sol.threshold) if math.isfinite(sol.threshold) else np.inf,
            "box_left": sol.box[0],
            "box_right": sol.box[1],
            "boundary": sol.boundary,
            "mirror_center": np.nan if sol.mirror_center is None else float(sol.mirror_center),
            "tolerance": float(case.settings.tolerance),
            "bound_state_count": int(sol.bound_count),
            "messages": "\n".join(sol.messages),
        }
    )
    return xr.Dataset(data_vars=data, coords=coords, attrs=attrs)
