"""Optical transitions of solved states, on plain arrays (x, weights, psi, mass, energies, unit system).

* :mod:`.matrix` - position (length form) and flux (velocity form) matrix elements;
* :mod:`.intersubband` - transition energies, dipoles and oscillator strengths on (state, final_state),
  the table of the strongest transitions;
* :mod:`.absorption` - subband populations and the intersubband absorption spectrum;
* :mod:`.interband` - e_i - h_j overlaps |<e_i|h_j>|^2 and transition energies of two solves.

The energy-dependent mass iteration lives in :mod:`fdsolver.boundstates.nonparabolic`.
"""

from fdsolver.optics.absorption import Spectrum, absorption_spectrum, lorentzian, subband_populations
from fdsolver.optics.interband import InterbandTransitions, interband, overlap_squared
from fdsolver.optics.intersubband import (
    TransitionRow,
    Transitions,
    intersubband,
    of_solution,
    strongest,
    transition_table,
)
from fdsolver.optics.matrix import dipole_matrix, flux_matrix, inverse_mass_mean, velocity_dipole

__all__ = [
    "InterbandTransitions", "Spectrum", "TransitionRow", "Transitions", "absorption_spectrum", "dipole_matrix",
    "flux_matrix", "interband", "intersubband", "inverse_mass_mean", "lorentzian", "of_solution",
    "overlap_squared", "strongest", "subband_populations", "transition_table", "velocity_dipole",
]

from fdsolver.optics.refine import refined_intersubband  # (imports the solver's eigen module)

__all__ += ["refined_intersubband"]
