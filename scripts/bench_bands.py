#!/usr/bin/env python
"""Benchmark of the Bloch-band core (fdsolver.bands, fdsolver.zerorange.comb).

Targets (checked here, never in unit tests):
  * a band structure of 10 bands at 200 wavevectors, every energy with its error bar: under 1 s;
  * a sweep of band edges (edges, widths, gaps, band-edge masses) over 1000 parameter values: under 30 s
    on 2 cores.

Cases (invented for the benchmark): a GaAs/AlGaAs-like superlattice given as a layer stack (well 6 nm,
m 0.067; barrier 2.5 nm, 230 meV, m 0.092; exact cells), the cosine lattice V0 cos(2 pi x / L) with
V0 = 10 E_R (midpoint cells, Richardson over levels) and a delta comb of three points per period
(closed form).  Sweeps: the superlattice's barrier thickness over 1..6 nm, and the cosine lattice's
depth over 1..40 E_R, 1000 values each, 6 and 5 bands.

CPU time of this process (time.process_time) with BLAS on one thread (OMP_NUM_THREADS=1 is set before
numpy loads), warm (numba cache and imports loaded by a first call), min and median of 7 runs.  The
sweeps run on 2 worker processes (concurrent.futures; the real sweep runner comes with the scans
integration): their wall time, min and median of 3 runs, and the summed CPU time of the workers.  The
sweep target is judged on the workers' CPU time / 2, the wall time on two dedicated cores; the measured
wall time is printed beside it with the machine's parallel capacity (two copies of a CPU loop at once
over one alone: 1 = two free cores, 2 = no parallelism left), since other sessions share the cores.
A calibration measured in the same run (a fixed pure-Python loop and a fixed numpy product) lets the
figures be compared across machines and loads: each time is also printed as a multiple of it.

The same two targets are then measured through the public API as a user meets them: fdsolver.bands of
the case file cases/superlattice.toml with 10 bands at 200 wavevectors (the archive's Dataset built, CPU
time, min and median), and fdsolver.band_sweep of that case over 1000 barrier thicknesses through the one
checkpointed runner on 2 worker processes, written to a NetCDF file: wall time, and the CPU time of this
process plus its finished workers (resource.getrusage), whose half is the time on 2 dedicated cores.

Usage:  python scripts/bench_bands.py [--quick]    (--quick: 200-point sweeps, 3 runs)
"""

from __future__ import annotations

import os

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import math
import statistics
import sys
import time
from concurrent.futures import ProcessPoolExecutor

import numpy as np


def calibration() -> float:
    """CPU seconds of a fixed workload: 3e6 Python float additions plus a 300 x 300 matrix product 20 times."""
    t = time.process_time()
    s = 0.0
    for i in range(3_000_000):
        s += i * 0.5
    a = np.random.default_rng(1).random((300, 300))
    for _ in range(20):
        a = a @ a
        a /= np.max(np.abs(a))
    return time.process_time() - t


def superlattice(barrier: float = 2.5):
    from fdsolver.bloch.lattice import lattice
    from fdsolver.model.potential import Potential
    from fdsolver.model.stack import Layer, LayerStack
    from fdsolver.model.units import UNIT_SYSTEMS

    stack = LayerStack((Layer("clad", math.inf, 230.0, 0.092), Layer("well", 6.0, 0.0, 0.067),
                        Layer("barrier", barrier, 230.0, 0.092), Layer("clad", math.inf, 230.0, 0.092)))
    return lattice(Potential((), UNIT_SYSTEMS["nm-meV"], 0.067, stack))


def cosine(depth_er: float = 10.0, period: float = 1.0):
    from fdsolver.bloch.lattice import lattice
    from fdsolver.input.case import case_from_dict

    e_r = 0.5 * (math.pi / period) ** 2
    case = case_from_dict({"units": "atomic", "params": {"A": depth_er * e_r, "L": period},
                           "potential": [{"shape": "expression", "V": "A*cos(2*pi*x/L)"}]})
    return lattice(case.potential, period, 0.0)


def delta_comb():
    from fdsolver.zerorange.comb import comb

    return comb([0.0, 0.7, 1.3], [1.5, -0.8, 2.2], 2.0)


def _spin(n: int) -> float:
    t = time.perf_counter()
    s = 0.0
    for i in range(n):
        s += i * 0.5
    return time.perf_counter() - t


def parallel_capacity(pool) -> float:
    """Wall time of two parallel copies of a CPU loop over the time of one (1 = perfect, 2 = no parallelism)."""
    one = _spin(3_000_000)
    t = time.perf_counter()
    list(pool.map(_spin, [3_000_000, 3_000_000]))
    return (time.perf_counter() - t) / one


def timed(fn, runs: int):
    times = []
    out = None
    for _ in range(runs):
        t = time.process_time()
        out = fn()
        times.append(time.process_time() - t)
    return min(times), statistics.median(times), out


def _sweep_chunk(args):
    kind, values, n_bands = args
    from fdsolver.bloch.structure import BandSettings, band_edges

    t = time.process_time()
    rows = []
    for v in values:
        lat = superlattice(v) if kind == "superlattice" else cosine(v)
        e = band_edges(lat, BandSettings(n_bands=n_bands))
        rows.append((e.band_bottom, e.band_top, e.gap_above, e.effective_mass_bottom, e.converged.all()))
    return rows, time.process_time() - t


def sweep(kind: str, values: np.ndarray, n_bands: int, pool: ProcessPoolExecutor, chunks: int = 40):
    parts = np.array_split(values, chunks)
    t = time.perf_counter()
    results = list(pool.map(_sweep_chunk, [(kind, p, n_bands) for p in parts]))
    wall = time.perf_counter() - t
    rows = [r for part, _ in results for r in part]
    cpu = sum(c for _, c in results)
    return wall, cpu, rows


def _cpu_with_children() -> float:
    import resource

    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


def through_the_api(runs: int, n_sweep: int, cal: float) -> bool:
    """The two targets through fdsolver.bands and fdsolver.band_sweep (the runner, 2 processes, a file written)."""
    import tempfile
    from pathlib import Path

    import fdsolver.api

    case = Path(__file__).resolve().parents[1] / "cases" / "superlattice.toml"
    fn = lambda: fdsolver.api.bands(case, n_bands=10, wavevectors=200)
    fn()
    best, med, ds = timed(fn, runs)
    ok = best < 1.0
    print(f"fdsolver.bands({case.name}, 10 bands, 200 q) with its Dataset: CPU {best:.3f} s min / {med:.3f} s median "
          f"of {runs} ({best / cal:.2f} x calibration); largest error {float(ds.energy_error.max()):.1e} meV  "
          f"[target < 1 s: {'PASS' if ok else 'FAIL'}]")
    walls, cpus = [], []
    for i in range(3):
        with tempfile.TemporaryDirectory() as tmp:
            out = Path(tmp) / "sweep.nc"
            cpu, t = _cpu_with_children(), time.perf_counter()
            sw = fdsolver.api.band_sweep(case, [f"barrier=1:6:{n_sweep}"], n_bands=6, output=out,
                                         executor="processes", workers=2)
            walls.append(time.perf_counter() - t)
            cpus.append(_cpu_with_children() - cpu)
    conv = int((sw.converged.values == 1).all(axis=-1).sum()) if "converged" in sw else -1
    target = 30.0 * n_sweep / 1000
    two_core = min(cpus) / 2.0
    verdict = "PASS" if two_core < target else "FAIL"
    print(f"fdsolver.band_sweep({case.name}, barrier=1:6:{n_sweep}, 6 bands, processes x 2, file written): wall "
          f"{min(walls):.2f} s min / {statistics.median(walls):.2f} s median of 3; CPU of this process and its "
          f"workers {min(cpus):.2f} s min ({min(cpus) / cal:.1f} x calibration) -> {two_core:.2f} s on 2 dedicated "
          f"cores; converged points {conv}/{n_sweep}  [target < {target:g} s: {verdict}]")
    return ok and verdict == "PASS"


def main() -> int:
    from fdsolver.bloch.structure import BandSettings, band_structure
    from fdsolver.zerorange.comb import comb_bands

    quick = "--quick" in sys.argv
    runs = 3 if quick else 7
    n_sweep = 200 if quick else 1000
    cal = calibration()
    print(f"OMP_NUM_THREADS={os.environ['OMP_NUM_THREADS']}, cpu count {os.cpu_count()}, "
          f"calibration {cal:.3f} s CPU (3e6 Python additions + 20 products of 300 x 300)")
    ok = True
    settings = BandSettings(n_bands=10, n_wavevectors=200)
    cases = {"superlattice (stack, exact cells)": lambda: band_structure(superlattice(), settings),
             "cosine lattice V0 = 10 E_R (Richardson)": lambda: band_structure(cosine(), settings),
             "delta comb, 3 points per period (closed form)": lambda: comb_bands(delta_comb(), settings)}
    for name, fn in cases.items():
        fn()  # warm: imports and the numba cache
        best, med, b = timed(fn, runs)
        verdict = "PASS" if best < 1.0 else "FAIL"
        ok &= verdict == "PASS"
        rel = float(np.max(b.energy_error / np.maximum(np.abs(b.energy), b.edges.energy_scale)))
        print(f"10 bands x 200 q, {name}: CPU {best:.3f} s min / {med:.3f} s median of {runs} "
              f"({best / cal:.2f} x calibration); {b.edges.levels} level(s), {b.edges.cells} cells; "
              f"largest error {rel:.1e} of max(|E|, E_L)  [target < 1 s: {verdict}]")
    with ProcessPoolExecutor(2) as pool:
        list(pool.map(_sweep_chunk, [("superlattice", [2.0], 6), ("cosine", [5.0], 5)]))  # warm both workers
        for kind, values, n_bands in (("superlattice", np.linspace(1.0, 6.0, n_sweep), 6),
                                      ("cosine", np.linspace(1.0, 40.0, n_sweep), 5)):
            walls, cpus = [], []
            rows = []
            for _ in range(3):
                wall, cpu, rows = sweep(kind, values, n_bands, pool)
                walls.append(wall)
                cpus.append(cpu)
            conv = sum(r[4] for r in rows)
            two_core = min(cpus) / 2.0
            verdict = "PASS" if two_core < 30.0 * n_sweep / 1000 else "FAIL"
            ok &= verdict == "PASS"
            what = "barrier 1..6 nm" if kind == "superlattice" else "depth 1..40 E_R"
            print(f"sweep {kind} ({what}), {n_sweep} values x {n_bands} bands: workers' CPU {min(cpus):.2f} s min / "
                  f"{statistics.median(cpus):.2f} s median of 3 ({min(cpus) / n_sweep * 1e3:.1f} ms per value, "
                  f"{min(cpus) / cal:.1f} x calibration) -> {two_core:.2f} s on 2 dedicated cores; measured wall on 2 "
                  f"processes {min(walls):.2f} s min / {statistics.median(walls):.2f} s median (parallel capacity "
                  f"{parallel_capacity(pool):.2f}); converged {conv}/{len(rows)}  "
                  f"[target < {30.0 * n_sweep / 1000:g} s: {verdict}]")
    ok &= through_the_api(runs, n_sweep, cal)
    print("ALL TARGETS MET" if ok else "SOME TARGETS MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
