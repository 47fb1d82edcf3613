"""Accuracy of the optics quantities against closed forms: one grid vs extrapolated over nested grids.

    PYTHONPATH=. python scripts/optics_accuracy.py

Prints, per check, the relative error of the single finest grid (O(h^2)), of the Richardson-
extrapolated value with its error estimate, and the time of the extrapolation; then the
nonparabolic infinite well (closed form (E_g/2)(sqrt(1 + 4 E0/E_g) - 1)) and the absorption of a
10 nm GaAs/Al0.3Ga0.7As well.  All at the solver's default tolerance (1e-8).  Not a unit test.
"""

from __future__ import annotations

import math
import time

import numpy as np

import fdsolver
from fdsolver.api import solve_case
from fdsolver.boundstates.nonparabolic import kane_mass, solve_nonparabolic
from fdsolver.model.materials import lookup, stack_bands
from fdsolver.model.units import UNIT_SYSTEMS
from fdsolver.optics import absorption_spectrum, of_solution, refined_intersubband, subband_populations


def row(name, single, refined, err, exact, seconds):
    print(f"{name:<34} {abs(single / exact - 1):>10.2e} {abs(refined / exact - 1):>12.2e} {err / abs(exact):>10.2e} "
          f"{1e3 * seconds:>8.1f}")


def main() -> None:
    print(f"{'check':<34} {'one grid':>10} {'extrapolated':>12} {'estimate':>10} {'ms':>8}")
    checks = [
        ("infinite well f_12 = 256/27pi^2", {"units": "nm-meV", "mass": 0.067, "potential": [{"shape": "linear", "field": 0.0}],
                                             "domain": {"boundary": "hard", "left": 0.0, "right": 10.0}, "solve": {"max_states": 4}},
         "f", (0, 1), 256 / (27 * math.pi**2)),
        ("infinite well z_12 = 16L/9pi^2", None, "z", (0, 1), 16 * 10.0 / (9 * math.pi**2)),
        ("oscillator f_01 = 1", {"units": "atomic", "mass": 0.5, "potential": [{"shape": "harmonic", "omega": 2.0}],
                                 "solve": {"max_states": 8}}, "f", (0, 1), 1.0),
        ("oscillator z_01 = sqrt(hbar/2m w)", None, "z", (0, 1), math.sqrt(0.5 / (0.5 * 2.0))),
        ("oscillator f_34 = 4", None, "f", (3, 4), 4.0),
    ]
    last = None
    for name, data, what, (i, j), exact in checks:
        if data is not None:
            case = fdsolver.case_from_dict(data)
            sol = solve_case(case)
            t0 = time.perf_counter()
            tr = refined_intersubband(case.potential, sol, case.potential.units)
            dt = time.perf_counter() - t0
            single = of_solution(sol, case.potential.units)
            last = (single, tr, dt)
        single, tr, dt = last
        if what == "f":
            row(name, single.oscillator_strength[i, j], tr.oscillator_strength[i, j], tr.oscillator_strength_error[i, j], exact, dt)
        else:
            row(name, abs(single.dipole[i, j]), abs(tr.dipole[i, j]), tr.dipole_error[i, j], exact, dt)

    print("\nnonparabolic infinite well, m = 0.067, E_g = 1519 meV, L = 10 nm")
    print(f"{'n':>2} {'E [meV]':>14} {'closed form':>14} {'rel. error':>11} {'error bar':>10} {'solves':>7}")
    c = UNIT_SYSTEMS["nm-meV"].hbar2_2me
    for n in range(1, 5):
        def solve(mass, n=n):
            s = solve_case(fdsolver.case_from_dict({"units": "nm-meV", "mass": float(mass), "solve": {"max_states": n},
                                                    "potential": [{"shape": "linear", "field": 0.0}],
                                                    "domain": {"boundary": "hard", "left": 0.0, "right": 10.0}}))
            return s.energy[n - 1], s.energy_error[n - 1], None

        e0 = c * (n * math.pi / 10.0) ** 2 / 0.067
        r = solve_nonparabolic(solve, lambda e: kane_mass(0.067, 0.0, 1519.0, e), e0, tolerance=1e-9 * e0)
        exact = 1519.0 / 2 * (math.sqrt(1 + 4 * e0 / 1519.0) - 1)
        print(f"{n:>2} {r.energy:>14.8f} {exact:>14.8f} {abs(r.energy / exact - 1):>11.1e} {r.error / exact:>10.1e} {r.iterations:>7}")

    print("\n10 nm GaAs/Al0.3Ga0.7As at 300 K (library values), 1e12 cm^-2 at 0 K, FWHM 5 meV, n = 3.3")
    mats = [lookup("AlGaAs", 0.3), lookup("GaAs"), lookup("AlGaAs", 0.3)]
    b = stack_bands(mats, "electron")
    layers = [{"band_edge": e, "mass": m} for e, m in zip(b.band_edge, b.mass)]
    layers[1]["thickness"] = 10.0
    case = fdsolver.case_from_dict({"units": "nm-meV", "layer": layers})
    sol = solve_case(case)
    tr = refined_intersubband(case.potential, sol, case.potential.units)
    pops = subband_populations(sol.energy, tr.inplane_mass, 1e12, 0.0, case.potential.units)
    ph = np.linspace(40.0, 140.0, 2001)
    sp = absorption_spectrum(ph, sol.energy, tr.oscillator_strength, tr.reference_mass, pops, 5.0, case.potential.units,
                             period=30.0)
    print(f"e1 = {sol.energy[0]:.4f} meV, e2 - e1 = {sol.energy[1] - sol.energy[0]:.4f} meV, "
          f"z_12 = {abs(tr.dipole[0, 1]):.5f} nm, f_12 = {tr.oscillator_strength[0, 1]:.6f} "
          f"(m_r = {tr.reference_mass:.5f} m_e, +- {tr.oscillator_strength_error[0, 1]:.1e})")
    print(f"peak absorption per pass (field along z) {100 * sp.absorption.max():.3f} % at {ph[np.argmax(sp.absorption)]:.2f} meV; "
          f"with 30 nm periods {sp.coefficient.max():.4g} cm^-1")


if __name__ == "__main__":
    main()
