"""Intersubband transitions of one solve: energies, dipoles and oscillator strengths on (state, final_state).

Oscillator strength (dimensionless), referred to a stated mass m_r (in m_e):

    f_ij = (2 m_r m_e / hbar^2) (E_j - E_i) |z_ij|^2  =  m_r C W_ij^2 / (E_j - E_i),

evaluated in the second, velocity (flux) form, W_ij = integral (psi_i psi_j' - psi_i' psi_j)/m dx
(see :mod:`fdsolver.optics.matrix`).  Why this form: with a position-dependent mass the velocity is
v = {p, 1/m}/2m_e, not p/m*, and the Thomas-Reiche-Kuhn sum rule follows from the double
commutator [x, [H, x]] = hbar^2/m(x):

    sum_j f_ij = m_r <i| 1/m(x) |i>        (all j, bound and continuum; m in m_e).

The familiar f_ij = 2 m* (E_j - E_i) z_ij^2/hbar^2 with the well's m* "sums to one" only when the
mass is the same everywhere; when m varies its sum is m*<i|1/m|i>, short of 1 by the barrier
fraction times (1 - m_w/m_b).  Here m_r is stated with the result and the exact target of the sum
rule, ``sum_rule[i] = m_r <i|1/m|i>``, is reported beside it.  The default m_r = 1/<0|1/m|0> (the
band mass seen by the ground state) makes sum_j f_0j = 1 exactly for any m(x); for a constant mass
it is that mass, and f is the usual one.  f_ij < 0 for emission (E_j < E_i); f is antisymmetric.

Dipoles are given in both forms: ``dipole`` = <i|x|j> (length form, diagonal <x>_i) and
``velocity_dipole`` = C W_ij/(E_j - E_i); their difference is O(h^2) (the finest grid's psi with the
extrapolated energies).  With energy-dependent masses only the velocity form is meaningful.

Units: energies in the case energy unit, lengths in its length unit, masses in m_e.  Accuracy: the
energies carry the solver's error bars; dipoles and f from one grid (this module) are second order
in the finest grid's spacing (3e-5 to 3e-4 relative at the solver's default tolerance, measured on
the oscillator, the infinite well and a GaAs well).  :func:`fdsolver.optics.refine.refined_intersubband`
extrapolates them over the solver's nested grids to ~1e-12 with error estimates.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fdsolver.model.units import UnitSystem
from fdsolver.optics.matrix import dipole_matrix, flux_matrix, inverse_mass_mean, velocity_dipole


@dataclass(frozen=True)
class Transitions:
    """Intersubband quantities on dims (state, final_state) plus per-state ``energy`` and ``sum_rule``."""

    energy: np.ndarray  # (state,)
    transition_energy: np.ndarray  # E_j - E_i
    dipole: np.ndarray  # <i|x|j>, length form
    velocity_dipole: np.ndarray  # C W_ij/(E_j - E_i), NaN on the diagonal
    oscillator_strength: np.ndarray  # m_r C W_ij^2/(E_j - E_i), 0 on the diagonal
    reference_mass: float  # m_r in m_e
    sum_rule: np.ndarray  # (state,) m_r <i|1/m|i>: the exact value of sum_j f_ij over a complete set
    units: UnitSystem
    dipole_error: np.ndarray | None = None  # estimated error of ``dipole`` (refined results only)
    oscillator_strength_error: np.ndarray | None = None
    levels: int = 1  # grids the values were extrapolated over (1: the finest grid alone, O(h^2))

    @property
    def size(self) -> int:
        return self.energy.size

    @property
    def inplane_mass(self) -> np.ndarray:
        """In-plane band mass of each subband, 1/<i|1/m|i> in m_e (first order in k_par^2)."""
        return self.reference_mass / self.sum_rule


def intersubband(x, weights, psi, mass, energy, units: UnitSystem, reference_mass: float | None = None,
                 energy_dependent_mass: bool = False) -> Transitions:
    """Transition energies, dipoles and oscillator strengths between all pairs of the given states.

    ``x`` nodes (all, ends included), ``weights`` lumped node weights, ``psi`` (state, node) normalised
    with those weights, ``mass`` m(x) in m_e on nodes or cells (or one profile per state, first
    axis, with ``energy_dependent_mass=True``), ``energy`` (state,) in ``units.energy``.
    ``reference_mass`` m_r in m_e (default 1/<0|1/m|0>, see the module doc).
    """
    psi = np.atleast_2d(np.asarray(psi, dtype=float))
    e = np.asarray(energy, dtype=float)
    if psi.shape[0] != e.size:
        raise ValueError(f"{psi.shape[0]} states in psi but {e.size} energies")
    m = np.asarray(mass, dtype=float)
    if not energy_dependent_mass and m.ndim > 1:
        raise ValueError("one mass profile per state needs energy_dependent_mass=True")
    if energy_dependent_mass and (m.ndim != 2 or m.shape[0] != e.size):
        raise ValueError("energy_dependent_mass=True needs a mass profile per state, shape (state, x)")
    c = units.hbar2_2me
    w_flux = flux_matrix(x, psi, m)
    if m.ndim == 2:  # each state with its own profile
        inv = np.array([inverse_mass_mean(x, psi[k], m[k])[0] for k in range(e.size)])
    else:
        inv = inverse_mass_mean(x, psi, m)
    m_r = float(1.0 / inv[0]) if reference_mass is None else float(reference_mass)
    if not m_r > 0:
        raise ValueError("reference_mass must be positive")
    de = e[None, :] - e[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        f = m_r * c * w_flux**2 / de
    f[de == 0] = 0.0
    return Transitions(
        energy=e,
        transition_energy=de,
        dipole=dipole_matrix(x, weights, psi),
        velocity_dipole=velocity_dipole(w_flux, e, c),
        oscillator_strength=f,
        reference_mass=m_r,
        sum_rule=m_r * inv,
        units=units,
    )


def of_solution(solution, units: UnitSystem, reference_mass: float | None = None) -> Transitions:
    """:func:`intersubband` for a solve result (anything with x, weights, psi, mass, energy)."""
    return intersubband(solution.x, solution.weights, solution.psi, solution.mass, solution.energy, units, reference_mass)


@dataclass(frozen=True)
class TransitionRow:
    """One upward transition i -> j (E_j > E_i)."""

    initial: int
    final: int
    energy: float
    dipole: float
    oscillator_strength: float


def strongest(tr: Transitions, count: int = 10, initial=None, minimum: float = 0.0) -> list[TransitionRow]:
    """The ``count`` strongest upward transitions (largest f), optionally only from the states ``initial``."""
    rows = []
    starts = range(tr.size) if initial is None else [int(i) for i in np.atleast_1d(initial)]
    for i in starts:
        for j in range(tr.size):
            if tr.transition_energy[i, j] > 0 and tr.oscillator_strength[i, j] > minimum:
                rows.append(TransitionRow(i, j, float(tr.transition_energy[i, j]), float(tr.dipole[i, j]),
                                          float(tr.oscillator_strength[i, j])))
    rows.sort(key=lambda r: -r.oscillator_strength)
    return rows[:count]


def transition_table(tr: Transitions, count: int = 10, initial=None) -> str:
    """Plain-text table of :func:`strongest` with units in the header."""
    u = tr.units
    lines = [f"{'from':>4} {'to':>4}  {'energy [' + u.energy + ']':>16}  {'|z| [' + u.length + ']':>14}  {'f':>10}"]
    for r in strongest(tr, count, initial):
        lines.append(f"{r.initial:>4} {r.final:>4}  {r.energy:>16.6g}  {abs(r.dipole):>14.6g}  {r.oscillator_strength:>10.5f}")
    lines.append(f"f referred to m_r = {tr.reference_mass:.5g} m_e (velocity form); "
                 f"sum over all final states of f from state 0 = {tr.sum_rule[0]:.5g}")
    return "\n".join(lines)
