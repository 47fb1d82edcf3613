"""How hard to work on a solve: accuracy, number of states, energy window, memory and level limits."""

from __future__ import annotations

from dataclasses import dataclass, field

from fdsolver.numerics.grid import GridSettings

#: levels every solve takes at least (unless max_levels is smaller)
MIN_LEVELS = 4


@dataclass(frozen=True)
class SolveSettings:
    """Accuracy and size controls of a solve.

    ``tolerance`` is the target error of every energy relative to |E|;
    ``max_states`` the most states returned; ``energy_window`` (low, high) in
    the case energy unit restricts them; ``memory_mb`` bounds the grid;
    ``max_levels`` / ``min_levels`` bound the nested refinements (at least
    :data:`MIN_LEVELS` by default: the error estimate of three levels compares
    the h^4 and h^6 extrapolations of one level and cannot tell a coarsest
    level outside the asymptotic range; from four on it compares two levels'
    h^6 values).  A periodic
    case reads ``bands`` (None: the command's default) and ``wavevectors``
    (:mod:`fdsolver.bloch`).
    """

    tolerance: float = 1e-8
    max_states: int = 10
    energy_window: tuple[float, float] | None = None
    memory_mb: float = 1500.0
    max_levels: int = 9
    min_levels: int = MIN_LEVELS
    grid: GridSettings = field(default_factory=GridSettings)
    bands: int | None = None
    wavevectors: int = 101
    #: quasi-bound states above the continuum threshold (a well between higher barriers) are listed above the bound
    #: states only when True; False also refuses a field as the bound-state solver does (continuum.openline)
    quasi_bound: bool | None = None
