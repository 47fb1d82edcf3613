#!/usr/bin/env python
"""Benchmark of the core solver against the uniform-grid baseline a user would write by hand.

Case: cases/coupled_wells.toml (invented GaAs/AlGaAs-like double well, position-dependent mass).
Reference energies: exact transfer-matrix solution of the piecewise-constant stack with
BenDaniel-Duke matching (psi and psi'/m continuous), roots by scipy brentq.

Prints, in one run:
  * fdsolver: warm wall time (best of 5) and finest grid size, its true max relative error;
  * baseline: uniform grid (nodes on the interfaces), the same flux-form three-point scheme,
    scipy.sparse.linalg.eigsh in shift-invert mode, grid doubled until every state's true
    relative error is <= 1e-8 (generous to the baseline: a user without a reference would need
    one more doubling to see it); time summed over all doublings, as the user pays it;
  * their ratio;
  * wall time of `fdsolver solve` from a cold shell (numba cache warm).

Usage:  python scripts/bench_solve.py
"""

from __future__ import annotations

import math
import os
import subprocess
import time

import numpy as np
import scipy.sparse as sp
from scipy.optimize import brentq
from scipy.sparse.linalg import eigsh

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
CASE = os.path.join(ROOT, "cases", "coupled_wells.toml")


def exact_levels(layers, c):
    """Bound states of a piecewise-constant stack (band_edge, mass, thickness) by transfer matrices."""
    vout = min(layers[0][0], layers[-1][0])
    vmin = min(l[0] for l in layers)

    def mismatch(E):
        # start decaying on the left: psi = exp(kappa x), state vector (psi, psi'/m) at the first interface
        v0, m0, _ = layers[0]
        k0 = math.sqrt(m0 * (v0 - E) / c)
        psi, flux = 1.0, k0 / m0
        for v, m, t in layers[1:-1]:
            q2 = m * (E - v) / c
            if q2 > 0:
                q = math.sqrt(q2)
                cs, sn = math.cos(q * t), math.sin(q * t)
                psi, flux = psi * cs + flux * m * sn / q, -psi * q * sn / m + flux * cs
            else:
                q = math.sqrt(-q2)
                ch, sh = math.cosh(q * t), math.sinh(q * t)
                psi, flux = psi * ch + flux * m * sh / q, psi * q * sh / m + flux * ch
            s = math.hypot(psi, flux)
            psi, flux = psi / s, flux / s
        vr, mr, _ = layers[-1]
        kr = math.sqrt(mr * (vr - E) / c)
        return flux + psi * kr / mr  # decaying on the right: psi'/m = -kappa/m psi

    grid = np.linspace(vmin + 1e-9, vout - 1e-9, 40001)
    vals = np.array([mismatch(E) for E in grid])
    roots = []
    for i in np.flatnonzero(np.sign(vals[1:]) != np.sign(vals[:-1])):
        r = brentq(mismatch, grid[i], grid[i + 1], xtol=1e-15, rtol=1e-15)
        if abs(mismatch(r)) < 1e-6:
            roots.append(r)
    return np.array(roots)


def baseline(case, exact, box, tol=1e-8):
    """Uniform grid doubled until the true relative error of every state is <= tol."""
    pot = case.potential
    c = pot.hbar2_2me
    h = 1.0  # nm; divides every layer thickness so interfaces sit on nodes
    total = 0.0
    while True:
        t0 = time.perf_counter()
        n = int(round((box[1] - box[0]) / h))
        x = box[0] + h * np.arange(n + 1)
        mid = 0.5 * (x[1:] + x[:-1])
        a = c / (pot.mass_at(mid) * h)
        # V at nodes: mean of the two neighbouring cells (exact dual-cell average on a uniform grid)
        vcell = pot.value(mid)
        v = 0.5 * (vcell[:-1] + vcell[1:])
        d = (a[:-1] + a[1:]) / h + v
        off = -a[1:-1] / h
        H = sp.diags([off, d, off], [-1, 0, 1], format="csc")
        vals = eigsh(H, k=exact.size, sigma=float(np.min(v)) - 1.0, which="LM", return_eigenvectors=False)
        vals = np.sort(vals)
        total += time.perf_counter() - t0
        err = np.max(np.abs(vals - exact) / np.abs(exact))
        if err <= tol or n > 4_000_000:
            return total, n + 1, err
        h /= 2


def cold_cli():
    t0 = time.perf_counter()
    subprocess.run(["fdsolver", "solve", CASE], capture_output=True, check=True)
    return time.perf_counter() - t0


def main():
    import fdsolver
    from fdsolver.runs import solve_case

    case = fdsolver.load_case(CASE)
    stack = case.potential.stack
    layers = [(l.band_edge, l.mass, l.thickness) for l in stack.layers]
    exact = exact_levels(layers, case.units.hbar2_2me)

    solve_case(case)  # warm up (numba compile / cache load)
    times = []
    for _ in range(5):
        t0 = time.perf_counter()
        sol = solve_case(case)
        times.append(time.perf_counter() - t0)
    t_fd = min(times)
    err_fd = np.max(np.abs(sol.energy - exact) / np.abs(exact))
    n_fd = int(sol.level_sizes[-1])

    kappa = math.sqrt(min(l.mass for l in stack.layers) * (220.0 - exact[-1]) / case.units.hbar2_2me)
    pad = math.ceil(0.5 * math.log(1e10) / kappa + 2)  # whole nm, so interfaces stay on nodes
    box = (-pad, 14 + pad)
    t_base, n_base, err_base = baseline(case, exact, box)

    t_cli = min(cold_cli() for _ in range(3))

    print(f"case: {os.path.relpath(CASE, ROOT)}  ({exact.size} bound states, exact by transfer matrices)")
    print(f"{'method':<44} {'time [s]':>10} {'nodes':>10} {'max rel. error':>15}")
    print(f"{'fdsolver (adaptive, Richardson; warm, best of 5)':<44} {t_fd:10.4f} {n_fd:10d} {err_fd:15.2e}")
    print(f"{'baseline (uniform, eigsh shift-invert, doubling)':<44} {t_base:10.4f} {n_base:10d} {err_base:15.2e}")
    print(f"speed-up fdsolver / baseline: {t_base / t_fd:.1f}x   (target >= 30x)")
    print(f"warm solve: {t_fd * 1000:.1f} ms   (target < 200 ms)")
    print(f"cold 'fdsolver solve' wall time: {t_cli:.2f} s   (target < 3 s)")


if __name__ == "__main__":
    main()
