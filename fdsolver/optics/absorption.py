"""Intersubband absorption of a sheet of carriers with Lorentzian broadening.

Cross-section of one transition i -> j for light whose electric field lies along the growth
axis z (golden rule with a phenomenological Lorentzian line; classical-oscillator form):

    sigma_ij(E) = pi e^2 hbar f_ij / (2 eps0 n c m_r m_e) * L(E - E_ij),
    L(e) = (Gamma/2pi) / (e^2 + Gamma^2/4)     (Gamma = FWHM; integral of L over energy = 1),

with f_ij referred to m_r (so only f/m_r = 2 (E_j - E_i) z_ij^2/hbar^2 enters: no mass is assumed),
n the refractive index.  Integrated over photon energy this is hbar pi e^2 f/(2 eps0 n c m): the
Lorentz-oscillator cross-section (Hilborn, Am. J. Phys. 50, 982 (1982), eq. for the integrated
cross-section; 2 pi^2 r_e c f per unit angular frequency in vacuum).  The sheet absorbs the
fraction (per pass, field along z)

    A(E) = sum_{E_j > E_i} (N_i - N_j) sigma_ij(E)

with N_i the sheet density in subband i; this is the usual intersubband absorption of a quantum
well (Helm, in Intersubband Transitions in Quantum Wells: Physics and Device Applications I,
Semiconductors and Semimetals 62, ch. 1 (Academic Press, 2000)).  For light travelling at an
internal angle theta to the growth axis multiply by sin^2(theta)/cos(theta); for a stack of wells
with period L_p the absorption coefficient of a wave polarised along z is A/L_p.
Not included: depolarisation and exciton-like many-body shifts, non-parabolic in-plane dispersion,
and the variation of n with energy.

Subband populations (:func:`subband_populations`): Fermi-Dirac filling of 2D subbands, each with
the density of states m_i m_e/(pi hbar^2) (spin included) and in-plane mass m_i = 1/<i|1/m|i>
(first order in k_par^2), for a total sheet density; all carriers in the lowest subbands at 0 K.

Units: photon and transition energies and the FWHM in the case energy unit, dipoles in its length
unit, sheet densities in cm^-2, absorbance dimensionless, absorption coefficient in cm^-1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from fdsolver.model.units import BOLTZMANN, ELECTRON_MASS, ELEMENTARY_CHARGE, HBAR, SPEED_OF_LIGHT, VACUUM_PERMITTIVITY

from fdsolver.model.units import UnitSystem


def lorentzian(energy, centre, fwhm):
    """Area-normalised Lorentzian (Gamma/2pi)/((E - E0)^2 + Gamma^2/4) in 1/energy unit."""
    g = float(fwhm)
    if not g > 0:
        raise ValueError("the broadening (FWHM) must be positive")
    d = np.asarray(energy, dtype=float) - centre
    return (g / (2 * math.pi)) / (d * d + 0.25 * g * g)


def cross_section_prefactor(units: UnitSystem, refractive_index: float) -> float:
    """pi e^2 hbar^2 / (2 eps0 n c m_e), in cm^2 times energy unit: sigma = this * (f/m_r) * L (L in 1/energy unit)."""
    if not refractive_index > 0:
        raise ValueError("refractive_index must be positive")
    si = math.pi * ELEMENTARY_CHARGE**2 * HBAR / (2 * VACUUM_PERMITTIVITY * refractive_index * SPEED_OF_LIGHT * ELECTRON_MASS)  # m^2 J
    return si * 1e4 / units.energy_si


def subband_populations(energy, inplane_mass, sheet_density: float, temperature: float, units: UnitSystem) -> np.ndarray:
    """Sheet density per subband (cm^-2) for ``sheet_density`` (cm^-2) at ``temperature`` (K).

    N_i = g_i kT ln(1 + exp((mu - E_i)/kT)), g_i = m_i m_e/(pi hbar^2); mu from sum N_i = N_s (brentq
    to 1e-12 relative).  At 0 K, N_i = g_i max(mu - E_i, 0).
    """
    e = np.asarray(energy, dtype=float) * units.energy_si  # J
    g = np.asarray(inplane_mass, dtype=float) * ELECTRON_MASS / (math.pi * HBAR**2) * 1e-4  # cm^-2 J^-1
    ns = float(sheet_density)
    if not ns >= 0:
        raise ValueError("the sheet density must be >= 0 (cm^-2)")
    if ns == 0:
        return np.zeros_like(e)
    kt = BOLTZMANN * float(temperature)

    def fill(mu):
        if kt == 0:
            return g * np.clip(mu - e, 0.0, None)
        z = (mu - e) / kt
        return g * kt * np.where(z > 30, z + np.log1p(np.exp(-np.abs(z))), np.log1p(np.exp(np.minimum(z, 30))))

    lo = e.min() - 50 * kt - ns / g.sum() - 1e-30
    hi = e.max() + 50 * kt + ns / g.min() + 1e-30
    from scipy.optimize import brentq

    mu = brentq(lambda m: fill(m).sum() - ns, lo, hi, xtol=1e-300, rtol=1e-13, maxiter=500)
    return fill(mu)


@dataclass(frozen=True)
class Spectrum:
    """Absorption per pass (field along z) and per transition, over ``photon_energy``."""

    photon_energy: np.ndarray  # energy unit
    absorption: np.ndarray  # dimensionless fraction absorbed per pass (field along z)
    coefficient: np.ndarray | None  # cm^-1, for a stack of period ``period``; None without a period
    populations: np.ndarray  # cm^-2 per subband
    pairs: tuple[tuple[int, int], ...]  # (i, j) of each contribution
    contributions: np.ndarray  # (pair, photon_energy) absorption of each transition
    broadening: float
    refractive_index: float


def absorption_spectrum(photon_energy, energy, oscillator_strength, reference_mass: float, populations,
                        broadening: float, units: UnitSystem, refractive_index: float = 3.3,
                        period: float | None = None) -> Spectrum:
    """A(E) = sum_{E_j > E_i} (N_i - N_j) sigma_ij(E) (see the module doc).

    ``energy`` (state,) level energies, ``oscillator_strength`` (state, final_state) referred to
    ``reference_mass`` (m_e), ``populations`` (state,) in cm^-2, ``broadening`` the FWHM Gamma in the
    energy unit, ``refractive_index`` n (3.3: GaAs in the mid-infrared, common practice),
    ``period`` (length unit) gives the absorption coefficient A/period in cm^-1.
    """
    e = np.asarray(energy, dtype=float)
    f = np.asarray(oscillator_strength, dtype=float)
    pops = np.asarray(populations, dtype=float)
    ph = np.asarray(photon_energy, dtype=float)
    pre = cross_section_prefactor(units, refractive_index) / float(reference_mass)
    pairs, rows = [], []
    for i in range(e.size):
        for j in range(e.size):
            if e[j] > e[i] and f[i, j] != 0 and pops[i] != pops[j]:
                pairs.append((i, j))
                rows.append((pops[i] - pops[j]) * pre * f[i, j] * lorentzian(ph, e[j] - e[i], broadening))
    contrib = np.array(rows) if rows else np.zeros((0, ph.size))
    total = contrib.sum(axis=0) if rows else np.zeros_like(ph)
    coef = None
    if period is not None:
        if not period > 0:
            raise ValueError("period must be positive")
        coef = total / (float(period) * units.length_si * 100.0)
    return Spectrum(ph, total, coef, pops, tuple(pairs), contrib, float(broadening), float(refractive_index))


#: photon-energy samples of a spectrum when none are given
SPECTRUM_POINTS = 2001
#: a spectrum reaches this many FWHM beyond the outermost transitions
SPECTRUM_MARGIN = 8.0


@dataclass(frozen=True)
class AbsorptionStudy:
    """A spectrum of a solved structure with everything its archive holds (see :func:`absorption_study`)."""

    spectrum: Spectrum
    state_energy: np.ndarray  # energy unit
    population: np.ndarray  # per subband, 1/length^2 of the case units
    transition_initial: np.ndarray
    transition_final: np.ndarray
    transition_energy: np.ndarray
    transition_oscillator_strength: np.ndarray
    integrated_absorption: np.ndarray  # energy unit: the area under each line
    sheet_density: float  # cm^-2
    temperature: float  # K
    chemical_potential: float  # energy unit, same scale as the state energies
    notes: tuple[str, ...]

    @property
    def photon_energy(self) -> np.ndarray:
        return self.spectrum.photon_energy

    @property
    def absorption(self) -> np.ndarray:
        return self.spectrum.absorption

    @property
    def absorption_coefficient(self):
        c = self.spectrum.coefficient
        return None if c is None else c * self._per_cm_to_case

    @property
    def transition_absorption(self) -> np.ndarray:
        return self.spectrum.contributions

    _per_cm_to_case: float = 1.0  # one length unit in cm: coefficients in cm^-1 times this are in 1/length


def default_photon_energies(transition_energy, broadening: float, n: int = SPECTRUM_POINTS) -> np.ndarray:
    """From below the lowest to above the highest transition by SPECTRUM_MARGIN FWHM (never below 0)."""
    e = np.asarray(transition_energy, dtype=float)
    e = e[np.isfinite(e) & (e > 0)]
    if e.size == 0:
        return np.linspace(0.0, 20.0 * broadening, n)
    lo = max(0.0, float(e.min()) - SPECTRUM_MARGIN * broadening)
    hi = float(e.max()) + SPECTRUM_MARGIN * broadening
    return np.linspace(lo, hi, n)


def absorption_study(energy, oscillator_strength, inplane_mass, reference_mass: float, units: UnitSystem, *,
                     sheet_density: float, broadening: float, temperature: float, refractive_index: float = 3.3,
                     period: float | None = None, photon_energy=None, threshold: float = math.inf) -> AbsorptionStudy:
    """The intersubband absorption of ``sheet_density`` (cm^-2) carriers at ``temperature`` (K) in the solved subbands.

    ``energy`` (state,) subband energies, ``oscillator_strength`` (state, final_state) referred to
    ``reference_mass``, ``inplane_mass`` (state,) in m_e, ``broadening`` the Lorentzian FWHM in the energy
    unit, ``threshold`` the continuum threshold (notes when carriers reach it).  The carriers fill only
    the subbands given: a note says when the highest one holds more than 0.1 % of them.
    """
    e = np.asarray(energy, dtype=float)
    pops = subband_populations(e, inplane_mass, sheet_density, temperature, units)
    if photon_energy is None:
        ph = default_photon_energies((e[None, :] - e[:, None])[np.triu_indices(e.size, 1)], broadening)
    else:
        ph = np.asarray(photon_energy, dtype=float)
    spec = absorption_spectrum(ph, e, oscillator_strength, reference_mass, pops, broadening, units,
                               refractive_index, period)
    pre = cross_section_prefactor(units, refractive_index) / float(reference_mass)
    f = np.asarray(oscillator_strength, dtype=float)
    ii = np.array([p[0] for p in spec.pairs], dtype=int)
    jj = np.array([p[1] for p in spec.pairs], dtype=int)
    area = (pops[ii] - pops[jj]) * pre * f[ii, jj] if ii.size else np.zeros(0)
    notes = []
    total = float(np.sum(pops))
    if e.size and total > 0 and pops[-1] > 1e-3 * total:
        notes.append(f"the highest solved subband holds {100 * pops[-1] / total:.2g} % of the carriers: higher subbands "
                     "may be filled too; raise [solve] max_states and solve again")
    mu = _chemical_potential(e, inplane_mass, sheet_density, temperature, units)
    if math.isfinite(threshold) and math.isfinite(mu) and mu > threshold:
        notes.append("the chemical potential lies above the continuum threshold: carriers in the continuum are not "
                     "counted")
    cm_per_unit = units.length_si * 100.0  # one length unit in cm
    pop_case = pops * cm_per_unit**2  # cm^-2 -> 1/length^2
    out = AbsorptionStudy(spec, e, pop_case, ii, jj, (e[jj] - e[ii]) if ii.size else np.zeros(0),
                          f[ii, jj] if ii.size else np.zeros(0), area, float(sheet_density), float(temperature), mu,
                          tuple(notes), cm_per_unit)
    return out


def _chemical_potential(energy, inplane_mass, sheet_density, temperature, units: UnitSystem) -> float:
    """The chemical potential (energy unit) that puts ``sheet_density`` cm^-2 into the subbands (NaN if empty)."""
    e = np.asarray(energy, dtype=float)
    if e.size == 0 or not sheet_density > 0:
        return math.nan
    g = np.asarray(inplane_mass, dtype=float) * ELECTRON_MASS / (math.pi * HBAR**2) * 1e-4 * units.energy_si
    kt = BOLTZMANN * float(temperature) / units.energy_si

    def fill(mu):
        if kt == 0:
            return float(np.sum(g * np.clip(mu - e, 0.0, None)))
        z = (mu - e) / kt
        return float(np.sum(g * kt * np.where(z > 30, z + np.log1p(np.exp(-np.abs(z))), np.log1p(np.exp(np.minimum(z, 30))))))

    lo = e.min() - 50 * kt - sheet_density / g.sum() - 1.0
    hi = e.max() + 50 * kt + sheet_density / g.min() + 1.0
    from scipy.optimize import brentq

    return float(brentq(lambda m: fill(m) - sheet_density, lo, hi, xtol=1e-14 * max(1.0, abs(e).max()), maxiter=500))
