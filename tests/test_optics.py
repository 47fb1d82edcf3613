"""Optics of solved states against closed forms, sum rules and textbook cross-sections.

Each check names its source.  The states come from the real solver (fdsolver.api.solve_case), so
these tests also check that the solver's psi, weights and masses carry what the optics needs.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as sc
from scipy.integrate import quad

import fdsolver
from fdsolver.api import solve_case
from fdsolver.boundstates.nonparabolic import kane_mass, solve_nonparabolic
from fdsolver.errors import CaseError
from fdsolver.model.materials import effective_gap, lookup, stack_bands
from fdsolver.model.units import UNIT_SYSTEMS
from fdsolver.optics.refine import grid_states
from fdsolver.optics import (
    absorption_spectrum,
    interband,
    intersubband,
    lorentzian,
    of_solution,
    overlap_squared,
    refined_intersubband,
    strongest,
    subband_populations,
    transition_table,
)

ATOMIC = UNIT_SYSTEMS["atomic"]
NM = UNIT_SYSTEMS["nm-meV"]
C_NM = NM.hbar2_2me


def _solve(data):
    return solve_case(fdsolver.case_from_dict(data))


def _refined(data):
    """The solve and its intersubband quantities extrapolated over nested grids."""
    case = fdsolver.case_from_dict(data)
    sol = solve_case(case)
    return sol, refined_intersubband(case.potential, sol, case.potential.units)


def _oscillator_case(mass, omega, units="atomic", center=0.0, states=8):
    return {"units": units, "mass": mass, "solve": {"max_states": states},
            "potential": [{"shape": "harmonic", "omega": omega, "center": center}]}


def _box_case(length, mass, states, units="atomic"):
    return {"units": units, "mass": mass, "potential": [{"shape": "linear", "field": 0.0}],
            "domain": {"boundary": "hard", "left": 0.0, "right": length}, "solve": {"max_states": states}}


def _oscillator(mass, omega, units="atomic", center=0.0, states=8):
    return _solve(_oscillator_case(mass, omega, units, center, states))


def _box(length, mass, states, units="atomic"):
    return _solve(_box_case(length, mass, states, units))


def _bounded(value, error, exact, rtol):
    """|value - exact| <= rtol |exact| and within the reported error (plus a few ulps)."""
    err = abs(value - exact)
    assert err <= rtol * abs(exact), (value, exact)
    assert err <= error + 1e-14 * abs(exact), (err, error)


# --- harmonic oscillator ------------------------------------------------------------------------

@pytest.mark.parametrize("units,mass,omega", [("atomic", 0.5, 2.0), ("nm-meV", 0.067, 20.0)])
def test_harmonic_oscillator_dipole_and_strength(units, mass, omega):
    """z_{n,n+1} = sqrt((n+1) hbar/(2 m omega)), so z_01 = sqrt(hbar/2 m omega) and f_{n,n+1} = n + 1,
    f_01 = 1 (ladder operators: Griffiths, Introduction to Quantum Mechanics, sec. 2.3).  Extrapolated
    over nested grids to 1e-9 with error bars that hold; the single finest grid to 3e-4 (second order)."""
    u = UNIT_SYSTEMS[units]
    sol, tr = _refined(_oscillator_case(mass, omega, units))
    single = of_solution(sol, u)
    assert tr.levels >= 3
    assert tr.reference_mass == pytest.approx(mass, rel=1e-12)
    length = math.sqrt(u.hbar2_2me / (mass * omega))  # sqrt(hbar^2/(2 m_e) / (m hbar omega)) = sqrt(hbar/2 m omega)
    for n in range(4):
        z = math.sqrt(n + 1) * length
        _bounded(abs(tr.dipole[n, n + 1]), tr.dipole_error[n, n + 1], z, 1e-9)
        _bounded(tr.oscillator_strength[n, n + 1], tr.oscillator_strength_error[n, n + 1], n + 1, 1e-9)
        assert tr.oscillator_strength[n + 1, n] == pytest.approx(-(n + 1), rel=1e-9)
        assert abs(single.dipole[n, n + 1]) == pytest.approx(z, rel=3e-4)
        assert abs(single.velocity_dipole[n, n + 1]) == pytest.approx(z, rel=3e-4)
        assert single.oscillator_strength[n, n + 1] == pytest.approx(n + 1, rel=3e-4)
    assert abs(tr.oscillator_strength[0, 2]) < 1e-9 and abs(tr.oscillator_strength[0, 3]) < 1e-9


def test_trk_sum_rule_harmonic_oscillator():
    """Thomas-Reiche-Kuhn: sum_j f_ij = 1 for a constant mass (Bethe and Salpeter, Quantum Mechanics of
    One- and Two-Electron Atoms, sec. 61).  The oscillator's spectrum is complete with the neighbours
    i +- 1 alone, so the sum over the 8 lowest states is complete for i <= 6."""
    _, tr = _refined(_oscillator_case(0.5, 2.0, states=8))
    sums = tr.oscillator_strength.sum(axis=1)
    assert np.allclose(sums[:7], 1.0, rtol=0, atol=1e-9), sums
    assert np.allclose(tr.sum_rule, 1.0, rtol=0, atol=1e-12)
    assert sums[7] < 0  # the top state misses its upward partner: the sum is visibly incomplete there


# --- infinite well -------------------------------------------------------------------------------

def test_infinite_well_z12_and_f12():
    """Infinite well of width L: z_12 = 16 L/(9 pi^2) and f_12 = 256/(27 pi^2) = 0.9607 (Harrison, Quantum
    Wells, Wires and Dots, chapter on optical properties).  Derived here as well: z_12 from
    (2/L) int_0^L x sin(pi x/L) sin(2 pi x/L) dx by scipy quad, and f_12 = 2 m (E_2 - E_1) z_12^2/hbar^2
    with E_2 - E_1 = 3 pi^2 hbar^2/(2 m L^2)."""
    L, m = 10.0, 0.067
    z_quad = quad(lambda x: 2 / L * x * math.sin(math.pi * x / L) * math.sin(2 * math.pi * x / L), 0, L,
                  epsabs=1e-13, epsrel=1e-13)[0]
    assert abs(z_quad) == pytest.approx(16 * L / (9 * math.pi**2), rel=1e-12)
    f_derived = m / C_NM * (3 * math.pi**2 * C_NM / (m * L**2)) * z_quad**2
    assert f_derived == pytest.approx(256 / (27 * math.pi**2), rel=1e-12)
    sol, tr = _refined(_box_case(L, m, 4, "nm-meV"))
    _bounded(abs(tr.dipole[0, 1]), tr.dipole_error[0, 1], 16 * L / (9 * math.pi**2), 1e-9)
    _bounded(tr.oscillator_strength[0, 1], tr.oscillator_strength_error[0, 1], 256 / (27 * math.pi**2), 1e-9)
    assert abs(tr.oscillator_strength[0, 2]) < 1e-12  # parity: 1 -> 3 is forbidden
    assert of_solution(sol, NM).oscillator_strength[0, 1] == pytest.approx(256 / (27 * math.pi**2), rel=3e-4)


def test_trk_sum_rule_hard_wall_box():
    """TRK in a hard-wall box (constant mass): sum_j f_1j = 1 over the complete set.  The closed form
    f_1j = 64 j^2/(pi^2 (j^2 - 1)^3) (j even; from z_1j = 8 L j/(pi^2 (j^2 - 1)^2), the same integral as
    above) says the 40 lowest states hold all but 1.57e-5 of the sum: that remaining fraction is added."""
    _, tr = _refined(_box_case(3.0, 1.0, 40))
    j = np.arange(42, 400000, 2.0)
    remaining = np.sum(64 * j**2 / (math.pi**2 * (j**2 - 1) ** 3))
    assert remaining == pytest.approx(1.568e-5, rel=1e-3)
    total = tr.oscillator_strength[0].sum()
    assert abs(total + remaining - 1.0) < 1e-9, (total, remaining)
    # the individual strengths against the closed form
    for jj in (2, 4, 6, 8, 20, 40):
        assert tr.oscillator_strength[0, jj - 1] == pytest.approx(64 * jj**2 / (math.pi**2 * (jj**2 - 1) ** 3), rel=1e-8)


# --- position-dependent mass ---------------------------------------------------------------------

#: hard walls at 0 and 10 nm; GaAs-like 0-6 nm (m 0.067, edge 0), AlGaAs-like 6-10 nm (m 0.0919, 100 meV):
#: an invented test profile
_TWO_MASS = {"units": "nm-meV", "domain": {"boundary": "hard", "left": 0.0, "right": 10.0},
             "layer": [{"band_edge": 0.0, "mass": 0.067}, {"band_edge": 0.0, "mass": 0.067, "thickness": 6.0},
                       {"band_edge": 100.0, "mass": 0.0919, "thickness": 4.0}, {"band_edge": 100.0, "mass": 0.0919}]}


def _two_mass_box(states):
    return _solve({**_TWO_MASS, "solve": {"max_states": states}})


def test_length_and_velocity_forms_agree_with_varying_mass():
    """v = (i/hbar)[H, x] = {p, 1/m}/2 m_e gives <i|v|j> = i omega_ij <i|x|j> for any m(x) (Heisenberg
    equation of motion): the flux-form dipole C W_ij/(E_j - E_i) must equal <i|x|j>.  On one grid with
    that grid's own eigenpairs the identity is exact (discrete commutator), so it holds to round-off;
    with the solver's extrapolated energies it holds to the grid's second-order error."""
    sol = _two_mass_box(8)
    case = fdsolver.case_from_dict(_TWO_MASS)
    energy, psi, w, mass = grid_states(case.potential, sol.x, 8)
    grid = intersubband(sol.x, w, psi, mass, energy, NM)
    off = ~np.eye(8, dtype=bool)
    big = off & (np.abs(grid.dipole) > 1e-3)
    rel = np.abs(grid.velocity_dipole[big] - grid.dipole[big]) / np.abs(grid.dipole[big])
    assert rel.max() < 1e-9, rel.max()
    tr = of_solution(sol, NM)
    rel = np.abs(tr.velocity_dipole[big] - tr.dipole[big]) / np.abs(tr.dipole[big])
    assert rel.max() < 5e-4, rel.max()
    # a plain p/m* velocity (the mass of the first layer everywhere) does not: it is off by percent
    p_only = intersubband(sol.x, sol.weights, sol.psi, np.full_like(sol.mass, 0.067), sol.energy, NM).velocity_dipole
    assert np.abs(p_only[0, 1] / tr.dipole[0, 1] - 1) > 0.01


def test_trk_sum_rule_varying_mass():
    """sum_j f_ij = m_r <i|1/m|i> from [x, [H, x]] = hbar^2/m(x) (double commutator; e.g. Bastard, Wave
    Mechanics Applied to Semiconductor Heterostructures, for the BenDaniel-Duke Hamiltonian).  The default
    m_r = 1/<0|1/m|0> makes the ground state's sum exactly 1; the plain 2 m_w dE z^2/hbar^2 with the well
    mass does not sum to 1 here.  80 states: the sum converges as j^-2 past the mass step (tail < 3e-4)."""
    _, tr = _refined({**_TWO_MASS, "solve": {"max_states": 80}})
    assert tr.levels >= 3
    sums = tr.oscillator_strength.sum(axis=1)
    assert tr.sum_rule[0] == pytest.approx(1.0, abs=1e-14)
    assert 0.067 < tr.reference_mass < 0.0919
    for i in range(3):
        assert 0 < tr.sum_rule[i] - sums[i] < 3e-4, (i, sums[i], tr.sum_rule[i])
    assert tr.sum_rule[1] < 0.95  # excited states see more of the heavy layer: their target is below 1
    plain = 0.067 / tr.reference_mass * sums[0]
    assert abs(plain - 1) > 0.03


def test_refinement_needs_the_features_on_the_subgrids():
    """If an interface of the potential is not a node of x[::2], the grids are not the solver's nested
    levels: the single-grid values come back, marked levels = 1, without error estimates."""
    sol = _two_mass_box(3)
    moved = dict(_TWO_MASS, layer=[dict(layer) for layer in _TWO_MASS["layer"]])
    moved["layer"][1]["thickness"] = float(sol.x[1])
    moved["layer"][2]["thickness"] = 10.0 - float(sol.x[1])
    other = fdsolver.case_from_dict(moved).potential
    tr = refined_intersubband(other, sol, NM)
    assert tr.levels == 1 and tr.oscillator_strength_error is None
    assert np.array_equal(tr.oscillator_strength, of_solution(sol, NM).oscillator_strength)


def test_energy_dependent_flux_reduces_to_the_plain_one():
    """With one mass profile repeated for every state, the two-band flux equals the single-profile flux."""
    sol = _two_mass_box(4)
    one = intersubband(sol.x, sol.weights, sol.psi, sol.mass, sol.energy, NM)
    per = intersubband(sol.x, sol.weights, sol.psi, np.tile(sol.mass, (4, 1)), sol.energy, NM, energy_dependent_mass=True)
    assert np.allclose(per.oscillator_strength, one.oscillator_strength, rtol=1e-12, atol=1e-15)


# --- nonparabolic infinite well ------------------------------------------------------------------

@pytest.mark.parametrize("n", [1, 2, 3, 4])
def test_nonparabolic_infinite_well(n):
    """Two-band Kane mass m(E) = m (1 + E/E_g) in an infinite well: E (1 + E/E_g) = hbar^2 (n pi/L)^2/2m, so
    E_n = (E_g/2)(sqrt(1 + 4 E_n0/E_g) - 1) (closed form of the quadratic).  GaAs-like m = 0.067 and
    E_g = 1519 meV, L = 10 nm; the fixed point is iterated with the real solver at each mass."""
    m, gap, L = 0.067, 1519.0, 10.0

    def solve(mass):
        sol = _box(L, float(mass), n, "nm-meV")
        return sol.energy[n - 1], sol.energy_error[n - 1], sol

    e0 = C_NM * (n * math.pi / L) ** 2 / m
    res = solve_nonparabolic(solve, lambda e: kane_mass(m, 0.0, gap, e), e0, tolerance=1e-9 * e0)
    exact = gap / 2 * (math.sqrt(1 + 4 * e0 / gap) - 1)
    assert res.converged and res.iterations <= 8
    assert abs(res.energy - exact) <= 1e-8 * exact
    assert abs(res.energy - exact) <= res.error
    assert -1 < res.slope < 0
    assert res.payload.energy[n - 1] == res.energy


def test_nonparabolic_gaas_well_per_layer():
    """10 nm GaAs/Al0.3Ga0.7As with the Kane mass of each layer (its own edge and gap from the library):
    every state converges in a few solves, and the e1-e2 transition moves to lower energy, as the
    energy-dependent mass is known to do to intersubband lines (fact of the trade, no source)."""
    mats = [lookup("AlGaAs", 0.3), lookup("GaAs"), lookup("AlGaAs", 0.3)]
    bands = stack_bands(mats, "electron")

    def case(masses, states):
        layers = [{"band_edge": e, "mass": float(m)} for e, m in zip(bands.band_edge, masses)]
        layers[1]["thickness"] = 10.0
        return {"units": "nm-meV", "layer": layers, "solve": {"max_states": states}}

    parabolic = _solve(case(bands.mass, 3))
    found = []
    for n in range(2):
        def solve(masses, n=n):
            sol = _solve(case(masses, n + 1))
            return sol.energy[n], sol.energy_error[n], sol

        res = solve_nonparabolic(solve, lambda e: kane_mass(bands.mass, bands.band_edge, bands.gap, e),
                                 parabolic.energy[n], tolerance=1e-9 * parabolic.energy[n])
        assert res.converged and res.iterations <= 6 and res.error < 1e-6
        found.append(res.energy)
    assert found[1] - found[0] < parabolic.energy[1] - parabolic.energy[0] - 2.0


def test_kane_mass_refuses_outside_the_model():
    assert kane_mass([0.067, 0.09], [0.0, 250.0], [1500.0, 1900.0], 100.0) == pytest.approx(
        [0.067 * (1 + 100 / 1500), 0.09 * (1 - 150 / 1900)])
    with pytest.raises(CaseError, match="two-band") as err:
        kane_mass(0.067, 0.0, 100.0, -99.0)
    assert err.value.key == "nonparabolicity"


# --- absorption ----------------------------------------------------------------------------------

def test_integrated_cross_section_lorentz_oscillator():
    """Integrated over photon energy, the absorption of N_s carriers per area on a transition of strength f
    (referred to m_e) is N_s hbar 2 pi^2 r_e c f / n (Lorentz oscillator: Hilborn, Am. J. Phys. 50, 982
    (1982); r_e from scipy.constants), and the Lorentzian peak is that times 2/(pi Gamma)."""
    f, ns, gamma, e12, n_r = 0.9, 1e12, 8.0, 100.0, 3.3
    energy = np.array([0.0, e12])
    fmat = np.array([[0.0, f], [-f, 0.0]])
    ph = np.linspace(e12 - 4000 * gamma, e12 + 4000 * gamma, 400001)
    spec = absorption_spectrum(ph, energy, fmat, 1.0, [ns, 0.0], gamma, NM, refractive_index=n_r)
    r_e = sc.physical_constants["classical electron radius"][0]
    hbar_mev_s = sc.hbar / NM.energy_si
    expected = ns * 1e4 * hbar_mev_s * 2 * math.pi**2 * r_e * sc.c * f / n_r  # meV (absorbance x energy)
    window = 1 - 2 / math.pi * math.atan(gamma / (2 * 4000 * gamma))  # share of the Lorentzian inside
    integral = np.trapezoid(spec.absorption, ph)
    assert integral == pytest.approx(expected * window, rel=1e-6)
    peak = spec.absorption[np.argmin(np.abs(ph - e12))]
    assert peak == pytest.approx(expected * 2 / (math.pi * gamma), rel=1e-9)
    # the mass of the reference cancels: f/m_r is what enters
    twice = absorption_spectrum(ph[:5], energy, 2 * fmat, 2.0, [ns, 0.0], gamma, NM, refractive_index=n_r)
    assert np.allclose(twice.absorption, spec.absorption[:5], rtol=1e-14)


def test_absorption_of_a_gaas_well_scales_and_has_its_peak_at_e21():
    """A 10 nm GaAs/Al0.3Ga0.7As well with 1e11 or 1e12 cm^-2 in e1: the line sits at e2 - e1, its area
    follows N_s f (linear in the density while only e1 is filled), and with 10 nm periods the
    absorption coefficient is A/period (definitions)."""
    mats = [lookup("AlGaAs", 0.3), lookup("GaAs"), lookup("AlGaAs", 0.3)]
    bands = stack_bands(mats, "electron")
    layers = [{"band_edge": e, "mass": m} for e, m in zip(bands.band_edge, bands.mass)]
    layers[1]["thickness"] = 10.0
    sol = _solve({"units": "nm-meV", "layer": layers})
    tr = of_solution(sol, NM)
    e21 = sol.energy[1] - sol.energy[0]
    ph = np.linspace(0.5 * e21, 1.5 * e21, 2001)
    spectra = []
    assert np.all((tr.inplane_mass > 0.067) & (tr.inplane_mass < 0.0919))
    for ns in (1e11, 1e12):
        pops = subband_populations(sol.energy, tr.inplane_mass, ns, 0.0, NM)
        assert pops[0] == pytest.approx(ns, rel=1e-9) and pops[1] == 0.0
        spectra.append(absorption_spectrum(ph, sol.energy, tr.oscillator_strength, tr.reference_mass, pops, 5.0, NM,
                                           period=30.0))
    assert abs(ph[np.argmax(spectra[1].absorption)] - e21) < ph[1] - ph[0]
    assert np.allclose(spectra[1].absorption, 10 * spectra[0].absorption, rtol=1e-9)
    assert np.allclose(spectra[1].coefficient, spectra[1].absorption / 30e-7, rtol=1e-12)
    assert spectra[1].pairs[0] == (0, 1)


def test_subband_populations():
    """2D subbands, density of states m/(pi hbar^2) each (spin included): at 0 K, mu - E_0 = N_s pi hbar^2/m
    below the second subband; at high temperature and low density the ratio tends to Boltzmann's
    exp(-(E_1 - E_0)/kT) (Davies, The Physics of Low-Dimensional Semiconductors, ch. 4)."""
    m = 0.067
    dos = m * sc.m_e / (math.pi * sc.hbar**2) * 1e-4 * NM.energy_si  # cm^-2 per meV
    e = np.array([0.0, 20.0, 60.0])
    ns = 0.5 * 20.0 * dos  # fills e0 up to 10 meV
    p = subband_populations(e, [m, m, m], ns, 0.0, NM)
    assert p == pytest.approx([ns, 0.0, 0.0], rel=1e-10)
    ns2 = dos * 30.0  # mu = 25 meV: e0 holds 25, e1 holds 5 meV of states
    p2 = subband_populations(e, [m, m, m], ns2, 0.0, NM)
    assert p2 == pytest.approx([25 * dos, 5 * dos, 0.0], rel=1e-9)
    t = 300.0
    p3 = subband_populations(e, [m, m, m], 1e8, t, NM)
    assert p3.sum() == pytest.approx(1e8, rel=1e-10)
    kt = sc.k * t / NM.energy_si
    assert p3[1] / p3[0] == pytest.approx(math.exp(-20.0 / kt), rel=1e-3)


def test_lorentzian_is_normalised():
    e = np.linspace(-2000, 2000, 400001)
    assert np.trapezoid(lorentzian(e, 3.0, 2.0), e) == pytest.approx(1 - 2 / math.pi * math.atan(2 / (2 * 1997.0)), rel=1e-4)


# --- interband -----------------------------------------------------------------------------------

def test_overlap_of_oscillators_with_different_frequencies():
    """|<0_a|0_b>|^2 = 2 sqrt(ab)/(a + b), a = m omega_a/hbar (Gaussian integral); the two states are
    solved on different grids."""
    wa, wb = 1.0, 3.0
    sa, sb = _oscillator(1.0, wa, states=3), _oscillator(1.0, wb, states=3)
    assert sa.x.size != sb.x.size or not np.allclose(sa.x, sb.x)
    s = overlap_squared(sa.x, sa.psi, sb.x, sb.psi)
    assert s[0, 0] == pytest.approx(2 * math.sqrt(wa * wb) / (wa + wb), rel=1e-5)
    assert s[0, 1] < 1e-12 and s[1, 0] < 1e-12  # parity


def test_overlap_of_displaced_oscillators_franck_condon():
    """Displaced oscillators: |<0|n'>|^2 = exp(-S) S^n/n!, Huang-Rhys factor S = m omega d^2/(2 hbar)
    (Poisson progression; e.g. Huang and Rhys, Proc. R. Soc. A 204, 406 (1950))."""
    d, w = 1.2, 1.0
    s0, s1 = _oscillator(1.0, w, states=1), _oscillator(1.0, w, center=d, states=5)
    S = w * d * d / 2
    ov = overlap_squared(s0.x, s0.psi, s1.x, s1.psi)[0]
    # second order in the grids' spacing (no extrapolation across two solves): 4e-4 measured for n = 4
    assert ov == pytest.approx([math.exp(-S) * S**n / math.factorial(n) for n in range(5)], rel=1e-3)


def test_interband_gaas_well():
    """10 nm GaAs/Al0.3Ga0.7As: e1-hh1 overlap near 1 and e1-hh2 zero by parity (symmetric well);
    e1-hh1 costs Eg(GaAs) + e1 + hh1 (type-I well)."""
    mats = [lookup("AlGaAs", 0.3), lookup("GaAs"), lookup("AlGaAs", 0.3)]
    solved = {}
    for carrier in ("electron", "heavy_hole"):
        bands = stack_bands(mats, carrier)
        layers = [{"band_edge": e, "mass": m} for e, m in zip(bands.band_edge, bands.mass)]
        layers[1]["thickness"] = 10.0
        solved[carrier] = (bands, _solve({"units": "nm-meV", "layer": layers}))
    (eb, es), (hb, hs) = solved["electron"], solved["heavy_hole"]
    gap = effective_gap(eb, hb)
    ib = interband(es, hs, gap)
    assert ib.overlap.shape == (es.energy.size, hs.energy.size)
    assert 0.9 < ib.overlap[0, 0] <= 1.0
    assert ib.overlap[0, 1] < 1e-12
    assert ib.transition_energy[0, 0] == pytest.approx(1000 * lookup("GaAs").band_gap + es.energy[0] + hs.energy[0], rel=1e-14)


def test_strongest_table():
    tr = of_solution(_oscillator(0.5, 2.0, states=6), ATOMIC)
    rows = strongest(tr, 3)
    assert [(r.initial, r.final) for r in rows] == [(4, 5), (3, 4), (2, 3)]
    text = transition_table(tr, 3, initial=[0])
    assert "[hartree]" in text and "[bohr]" in text and "m_r = 0.5 m_e" in text
