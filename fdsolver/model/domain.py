"""Where a case lives: the whole line with open ends, or a box between hard walls; and its continuum threshold."""

from __future__ import annotations

import math
from dataclasses import dataclass

from fdsolver.errors import CaseError


@dataclass(frozen=True)
class Domain:
    """``boundary`` is "open" (whole line, box sized automatically), "hard" (walls at left/right) or "periodic".

    ``left`` and ``right`` are wall positions (hard) or the least extent of
    the box (open), in the case length unit.  A periodic case repeats one
    period of length ``period`` starting at ``start`` (``None``: the lattice
    chooses, :func:`fdsolver.bloch.lattice.lattice`); it has Bloch bands, not
    bound states.
    """

    boundary: str = "open"
    left: float | None = None
    right: float | None = None
    period: float | None = None
    start: float | None = None

    @property
    def hard(self) -> bool:
        return self.boundary == "hard"

    @property
    def periodic(self) -> bool:
        return self.boundary == "periodic"


def continuum_threshold(potential, domain: Domain) -> float:
    """Lowest energy of the continuum: the lower asymptote of V at open ends, ``inf`` for hard walls.

    ``inf`` also where V grows without bound at both ends (every state is
    bound).  A potential that falls without bound at an open end has no bound
    state on the open line: :class:`CaseError`.
    """
    if domain.hard:
        return math.inf
    vals = []
    for side in (-1, 1):
        v = potential.asymptote(side)
        if v == -math.inf or math.isnan(v):
            where = "-infinity" if side < 0 else "+infinity"
            raise CaseError(
                f"the potential falls without bound toward {where}, so no state is bound on the open line; "
                'use boundary = "hard" with left and right walls',
                key="domain.boundary",
            )
        vals.append(v)
    return min(vals)
