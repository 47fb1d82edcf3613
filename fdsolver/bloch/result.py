"""What a band calculation returns: frozen dataclasses of numpy arrays, each value with its error estimate.

Energies in the case energy unit, wavevectors in 1/length (case length unit), effective masses in m_e,
densities of states in 1/(energy * length) (states per unit energy and unit length, one spin
orientation: multiply by 2 for spin-degenerate electrons), Bloch functions in length^-1/2.
:data:`VARIABLES` lists every array with its dimensions and physical kind, for archive writers.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: (field, dimensions, kind, long name): every array a band result carries
VARIABLES = (
    ("band_bottom", ("band",), "energy", "lowest energy of the band (at q = 0 or q = pi/L)"),
    ("band_top", ("band",), "energy", "highest energy of the band (at q = 0 or q = pi/L)"),
    ("band_width", ("band",), "energy", "band_top - band_bottom"),
    ("gap_above", ("band",), "energy", "energy gap between the band and the next one (0 if they touch)"),
    ("effective_mass_bottom", ("band",), "mass", "effective mass at the band bottom from the curvature of E(q)"),
    ("effective_mass_top", ("band",), "mass", "effective mass at the band top from the curvature of E(q)"),
    ("energy", ("wavevector", "band"), "energy", "band energy E_n(q)"),
    ("density_of_states", ("dos_energy",), "dos", "density of states per unit length and energy, one spin"),
)


@dataclass(frozen=True)
class BandEdges:
    """Edges, widths, gaps and band-edge effective masses of bands 0..n-1 (arrays over ``band``).

    Every quantity X has ``X_error``, an estimate of its absolute error (round-off of the discriminant,
    plus the change of the Richardson-extrapolated value from the previous cell level for smooth
    potentials).  ``gap_closed[n]``: bands n and n+1 touch, or the gap between them is not larger than
    its error estimate (near a closed gap round-off of the discriminant opens a spurious gap of width
    about sqrt(dD / |D''|), which the edge errors cover).  ``converged[n]``: every
    error of band n is within the tolerance.  ``method`` says how the numbers were obtained.
    """

    period: float
    band_bottom: np.ndarray
    band_bottom_error: np.ndarray
    band_top: np.ndarray
    band_top_error: np.ndarray
    band_width: np.ndarray
    band_width_error: np.ndarray
    gap_above: np.ndarray
    gap_above_error: np.ndarray
    gap_closed: np.ndarray
    effective_mass_bottom: np.ndarray
    effective_mass_bottom_error: np.ndarray
    effective_mass_top: np.ndarray
    effective_mass_top_error: np.ndarray
    converged: np.ndarray
    tolerance: float
    energy_scale: float
    method: str
    levels: int
    cells: int
    evaluations: int
    notes: tuple = ()

    @property
    def n_bands(self) -> int:
        return int(self.band_bottom.size)

    def band_of(self, energy: float, slack: float = 0.0) -> int:
        """Index of the band holding ``energy`` (within ``slack``), or -1 if it lies in a gap."""
        inside = np.flatnonzero((self.band_bottom - slack <= energy) & (energy <= self.band_top + slack))
        return int(inside[0]) if inside.size else -1


@dataclass(frozen=True)
class BlochFunction:
    """psi_{n,q}(x) on one period: psi(x + L) = exp(i q L) psi(x), normalised to int_period |psi|^2 dx = 1.

    ``x`` (length) covers [start, start + L]; ``psi`` complex (length^-1/2), its phase fixed so that psi is
    real and positive where |psi| is largest; ``energy`` with ``energy_error``.
    """

    band: int
    wavevector: float
    energy: float
    energy_error: float
    x: np.ndarray
    psi: np.ndarray


@dataclass(frozen=True, eq=False)
class Bands:
    """The band structure: :class:`BandEdges` plus E_n(q) on a wavevector grid and the density of states.

    ``wavevector`` (n_q,) in 1/length over the irreducible zone [0, pi/L] (E_n(-q) = E_n(q) for a real
    potential); ``energy`` and ``energy_error`` (n_q, n_bands).  ``dos_energy``, ``density_of_states``
    and ``density_of_states_error`` tabulate the density of states.  :meth:`dos` evaluates it anywhere,
    :meth:`bloch` gives Bloch functions.
    """

    edges: BandEdges
    wavevector: np.ndarray
    energy: np.ndarray
    energy_error: np.ndarray
    dos_energy: np.ndarray
    density_of_states: np.ndarray
    density_of_states_error: np.ndarray
    model: object = field(repr=False, default=None)

    @property
    def n_bands(self) -> int:
        return self.edges.n_bands

    @property
    def period(self) -> float:
        return self.edges.period

    def dos(self, energies):
        """(density of states, its error) at ``energies`` (:mod:`fdsolver.bloch.dos`)."""
        return self.model.dos(np.asarray(energies, dtype=float))

    def states_below(self, energies):
        """Number of states per unit length below each energy (one spin), exact from the band index."""
        return self.model.states_below(np.asarray(energies, dtype=float))

    def bloch(self, band: int, wavevector: float, x=None, points: int = 401) -> BlochFunction:
        """The Bloch function of ``band`` at ``wavevector`` on ``x`` (default: ``points`` points over one period)."""
        return self.model.bloch(self, int(band), float(wavevector), x, int(points))
