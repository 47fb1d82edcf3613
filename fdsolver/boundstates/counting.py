"""Box-independent count of bound states from the threshold-energy solution.

For a potential whose lower asymptote is the continuum threshold V_t, the
number of bound states equals the number of nodes of the solution at
E = V_t that is bounded at the left end, counted over the whole line
(oscillation theorem).  On the grid this is the discrete solution of
(K - V_t W) psi = 0 marched left to right (:func:`fdsolver.kernels.zero_energy_nodes`),
plus the node that its continuation beyond the box would have:

* where V is flat (= V_t) beyond the right end, psi continues linearly and
  crosses zero once more iff psi and psi' have opposite signs there;
* where V tends to V_R > V_t, psi continues as A e^{kx} + B e^{-kx},
  k = sqrt(m (V_R - V_t)/C), and crosses zero iff psi + psi'/k has the
  opposite sign of psi.

A state bound so weakly that its decay length exceeds the box is counted
here but missing from the box eigenvalues; the solver uses the difference to
enlarge the box.  The same count, as a function of a parameter, locates
binding thresholds without any box (:mod:`fdsolver.thresholds`).
"""

from __future__ import annotations

import math


from fdsolver.numerics import kernels
from fdsolver.numerics.operator import Operator
from fdsolver.model.potential import Potential


def bound_state_count(op: Operator, potential: Potential, threshold: float) -> int:
    """Number of bound states below ``threshold`` on the discretised whole line (see module docstring)."""
    c = potential.hbar2_2me
    vl, vr = potential.asymptote(-1), potential.asymptote(1)
    flat_left = math.isfinite(vl) and abs(vl - threshold) <= 1e-12 * max(1.0, abs(threshold))
    changes, last, step = kernels.zero_energy_nodes(op.a, op.vw, op.w, threshold, 1.0 if flat_left else 0.0)
    h_last = op.nodes[-2] - op.nodes[-3] if op.nodes.size > 3 else 1.0
    slope = step / h_last
    if math.isfinite(vr) and abs(vr - threshold) <= 1e-12 * max(1.0, abs(threshold)):
        grow = slope
    else:
        k = math.sqrt(max(potential.asymptotic_mass(1) * max(vr - threshold, 0.0) / c, 1e-300))
        grow = last + slope / k
    if last != 0.0 and grow != 0.0 and (grow > 0) != (last > 0):
        changes += 1
    return int(changes)
