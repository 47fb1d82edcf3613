"""Speed and accuracy of the continuum solver, against a uniform-grid transfer-matrix loop measured in the same run.

Run with one BLAS thread:  OMP_NUM_THREADS=1 PYTHONPATH=. python scripts/bench_continuum.py
CPU times (time.process_time) of warm calls, min and median of several runs; the J(V) curve on 2 worker
processes is wall time.  Structures are invented (GaAs-like numbers).
"""

from __future__ import annotations

import math
import multiprocessing as mproc
import os
import statistics
import time

import mpmath as mp
import numpy as np

from fdsolver.continuum.current import current_voltage
from fdsolver.continuum.resonances import find_resonances
from fdsolver.continuum.transmission import transmission
from fdsolver.input.case import case_from_dict

M = 0.067


def cpu(fn, repeat=5):
    fn()  # warm (JIT, caches)
    times = []
    for _ in range(repeat):
        t = time.process_time()
        out = fn()
        times.append(time.process_time() - t)
    return min(times), statistics.median(times), out


def ten_layer_stack():
    """Emitter, 10 inner layers (barriers and wells of different widths), collector."""
    inner = [(280.0, 2.5), (0.0, 4.0), (300.0, 1.8), (30.0, 6.0), (260.0, 3.2),
             (0.0, 5.5), (310.0, 2.0), (15.0, 3.5), (290.0, 2.8), (0.0, 4.5)]
    layers = [{"band_edge": 0.0, "mass": M}] + [{"band_edge": v, "thickness": w, "mass": M} for v, w in inner] + [
        {"band_edge": 0.0, "mass": M}]
    return case_from_dict({"units": "nm-meV", "layer": layers}).potential


def user_loop(pot, energies, dx):
    """What a user writes: slabs of width dx with V at their midpoints, one 2x2 matrix product per slab, per energy."""
    c = pot.hbar2_2me
    lo, hi = pot.features()[0], pot.features()[-1]
    n = int(math.ceil((hi - lo) / dx))
    edges = np.linspace(lo, hi, n + 1)
    mids = 0.5 * (edges[:-1] + edges[1:])
    v = pot.value(mids)
    m = pot.mass_at(mids)
    h = np.diff(edges)
    out = np.empty(len(energies))
    for i, e in enumerate(energies):
        k0 = np.sqrt(M * e / c + 0j)
        mat = np.eye(2, dtype=complex)
        for vj, mj, hj in zip(v, m, h):
            kap = np.sqrt(mj * (vj - e) / c + 0j)
            ch, sh = np.cosh(kap * hj), np.sinh(kap * hj)
            step = np.array([[ch, sh / kap * mj], [kap * sh / mj, ch]])  # (psi, psi'/m) across the slab
            mat = step @ mat
        # outgoing on the right: solve mat (1 + r, i k0 (1 - r)/M) = t (1, i k0 / M)
        a = mat @ np.array([1.0, 1j * k0 / M])
        b = mat @ np.array([1.0, -1j * k0 / M])
        # t (1, ik/M) = a + r b  -> two equations
        r = -(a[1] - 1j * k0 / M * a[0]) / (b[1] - 1j * k0 / M * b[0])
        t = a[0] + r * b[0]
        out[i] = abs(t) ** 2
    return out


def narrow_double_barrier(wb):
    layers = [{"band_edge": 0.0, "mass": M}, {"band_edge": 300.0, "thickness": wb, "mass": M},
              {"band_edge": 0.0, "thickness": 5.0, "mass": M}, {"band_edge": 300.0, "thickness": wb, "mass": M},
              {"band_edge": 0.0, "mass": M}]
    return case_from_dict({"units": "nm-meV", "layer": layers}).potential


def exact_pole(pot, wb, guess):
    mp.mp.dps = 50
    c, m = mp.mpf(pot.hbar2_2me), mp.mpf(M)

    def f(e):
        k = mp.sqrt(m * e / c)
        psi, dpsi, grow = mp.mpc(1), 1j * k, 0
        for w, v in ((wb, 300), (5.0, 0), (wb, 300)):
            kap = mp.sqrt(m * (v - e) / c)
            psi, dpsi = mp.cosh(kap * w) * psi - mp.sinh(kap * w) / kap * dpsi, -kap * mp.sinh(kap * w) * psi + mp.cosh(kap * w) * dpsi
            grow += kap * w
        return (dpsi / k + 1j * psi) * mp.exp(-grow)

    z0 = mp.mpc(guess.real, guess.imag)
    return mp.findroot(f, (z0, z0 * (1 + mp.mpf(10) ** -12)), tol=mp.mpf(10) ** -50)


def _jv(args):
    pot, biases = args
    t0 = time.process_time()
    j = current_voltage(pot, biases, temperature=77.0, fermi_level=20.0).current_density
    return j, time.process_time() - t0


def main():
    print(f"OMP_NUM_THREADS={os.environ.get('OMP_NUM_THREADS')}, {os.cpu_count()} cores")
    # 1. T(E) at 1e4 energies, 10-layer stack
    pot = ten_layer_stack()
    e = np.linspace(1.0, 500.0, 10_000)
    tmin, tmed, tr = cpu(lambda: transmission(pot, e))
    print(f"[T(E)] 10-layer stack, 1e4 energies: {tmin:.3f} s min, {tmed:.3f} s median (target < 1 s); "
          f"max |R+T-1| = {np.max(tr.unitarity_defect):.1e}, max error estimate {np.max(tr.transmission_error):.1e}")
    sub = e[::100]
    for dx in (0.05, 0.01):
        t0 = time.process_time()
        tu = user_loop(pot, sub, dx)
        per = (time.process_time() - t0) / sub.size
        err = np.max(np.abs(tu - tr.transmission[::100]))
        print(f"[T(E)] user loop, uniform slabs dx = {dx} nm: {per * 1e4:.1f} s per 1e4 energies "
              f"(measured on {sub.size}), max |T - exact| = {err:.1e}")
    # 2. a resonance of width ~1e-9 of its energy
    wb = 17.6
    pot2 = narrow_double_barrier(wb)
    tmin, tmed, res = cpu(lambda: find_resonances(pot2, (1.0, 200.0)))
    i = int(np.argmin(res.energy))
    p = exact_pole(pot2, wb, complex(res.energy[i], -res.width[i] / 2))
    g_ex = float(-2 * mp.im(p))
    print(f"[pole] Gamma/E = {res.width[i] / res.energy[i]:.2e}: found in {tmin:.3f} s min, {tmed:.3f} s median "
          f"(target < 0.5 s); width error {abs(res.width[i] / g_ex - 1):.1e} relative (target 1e-6), "
          f"energy error {abs(res.energy[i] - float(mp.re(p))):.1e} meV; estimate {res.width_error[i] / res.width[i]:.1e}")
    # 3. J(V), 100 biases, 2 worker processes
    dbl = case_from_dict({"units": "nm-meV", "layer": [
        {"band_edge": 0.0, "mass": M}, {"band_edge": 300.0, "thickness": 3.0, "mass": M},
        {"band_edge": 0.0, "thickness": 5.0, "mass": M}, {"band_edge": 300.0, "thickness": 3.0, "mass": M},
        {"band_edge": 0.0, "mass": M}]}).potential
    biases = np.linspace(0.0, 0.5, 100)
    current_voltage(dbl, [0.1], temperature=77.0, fermi_level=20.0)  # warm
    t0 = time.process_time()
    serial = current_voltage(dbl, biases[:10], temperature=77.0, fermi_level=20.0)
    per_bias = (time.process_time() - t0) / 10
    ctx = mproc.get_context("fork")
    walls, busiest = [], []
    for _ in range(3):
        w0 = time.perf_counter()
        with ctx.Pool(2) as pool:
            parts = pool.map(_jv, [(dbl, biases[0::2]), (dbl, biases[1::2])])
        walls.append(time.perf_counter() - w0)
        busiest.append(max(p[1] for p in parts))
    j = np.empty(100)
    j[0::2], j[1::2] = parts[0][0], parts[1][0]
    assert np.allclose(j[:10], serial.current_density, rtol=1e-12, atol=0)
    peak = int(np.argmax(j))
    load = os.getloadavg()[0]
    print(f"[J(V)] 100 biases on 2 processes: CPU of the busier worker {min(busiest):.2f} s min, "
          f"{statistics.median(busiest):.2f} s median (= wall on 2 free cores; target < 30 s); wall {min(walls):.2f} s "
          f"min, {statistics.median(walls):.2f} s median at load average {load:.1f}; serial CPU {per_bias:.3f} s per bias; peak {j[peak]:.3e} A/m^2 at {biases[peak]:.3f} V, "
          f"valley {np.min(j[peak:]):.3e} A/m^2")
    t0 = time.process_time()
    user_pts = np.linspace(1.0, 60.0, 50)
    user_loop(dbl, user_pts, 0.01)
    per = (time.process_time() - t0) / user_pts.size
    print(f"[J(V)] a user loop (dx = 0.01 nm) would spend {per * 1000:.1f} ms per energy; "
          f"fdsolver used {np.mean(serial.evaluations):.0f} energies per bias")


if __name__ == "__main__":
    main()
