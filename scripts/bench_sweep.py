"""Benchmark of sweeps and binding thresholds on the bundled double square well (invented case).

    python scripts/bench_sweep.py                 # the targets, about 3 minutes on 2 cores
    python scripts/bench_sweep.py --across        # also 10,000 points across the binding threshold (slow)

Every ratio is against a baseline measured in the same run.  First the machine's own ceiling: a fixed
pure-Python loop in 1 process and in W processes at once (no fdsolver code) gives the speed-up the hardware
can deliver at all; virtual machines whose vCPUs share a core report less than W here.


1. speed-up: the same N_SPEEDUP points, serial executor vs local processes (target >= 1.7x on 2 cores);
2. 10,000 points, energies only, local processes with checkpointing (target < 60 s on 2 cores);
3. the same 10,000 points on a Dask LocalCluster with the same number of workers, start-up included for
   both (target within 25 % of step 2);
4. a binding threshold of the bundled case to relative 1e-6 (warm, median of 5; target < 1 s);
5. memory: growth of the parent's peak resident size during step 2 against the result size (tracemalloc is not
   used: forked workers would inherit its tracing and slow down).

Scenario "bound": d = 2.5..6 nm x depth = 100..160 meV, both states well bound.  Scenario "across"
(--across): d = 0.1..6 nm x depth = 60..160 meV, crossing the second state's binding threshold, where the
box solve of a barely bound state is expensive (its box grows with the decay length).
"""

from __future__ import annotations

import argparse
import os
import statistics
import tempfile
import time
import resource
from pathlib import Path

import fdsolver
from fdsolver.parallel import checkpoint as ck
from fdsolver.scans import sweep as sw
from fdsolver.scans import thresholds
from fdsolver.parallel.executors import DaskExecutor, ProcessExecutor, SerialExecutor

CASE = Path(__file__).resolve().parent.parent / "cases" / "double_square.toml"
SCENARIOS = {"bound": ("d=2.5:6:{n}", "depth=100:160:{n}"), "across": ("d=0.1:6:{n}", "depth=60:160:{n}")}


def plan(scenario: str, side: int, side2: int | None = None):
    case = fdsolver.load_case(CASE)
    a, b = SCENARIOS[scenario]
    return sw.plan_sweep(case, sw.parse_axes([a.format(n=side), b.format(n=side2 or side)], case))


def burn(n: int) -> float:
    """A fixed pure-Python loop; returns its own wall time."""
    t0 = time.perf_counter()
    s = 0
    for i in range(n):
        s += i * i
    return time.perf_counter() - t0


def hardware_ceiling(workers: int, n: int = 10_000_000) -> float:
    """Throughput of ``workers`` processes running ``burn`` at once, relative to one process."""
    import multiprocessing as mp

    one = burn(n)
    with mp.get_context("fork" if os.name == "posix" else "spawn").Pool(workers) as pool:
        pool.map(burn, [1000] * workers)  # start the workers
        t0 = time.perf_counter()
        pool.map(burn, [n] * workers)
        many = time.perf_counter() - t0
    return workers * one / many


def timed(spec, make, folder, tag):
    """Wall time of one checkpointed sweep, executor start-up included."""
    out = Path(folder) / f"{tag}.nc"
    t0 = time.perf_counter()
    with make() as ex:
        ds = ck.run_sweep(spec, ex, output=out)
    return time.perf_counter() - t0, ds


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workers", type=int, default=os.cpu_count())
    ap.add_argument("--side", type=int, default=100, help="points per axis of the big sweep (default 100: 10,000 points)")
    ap.add_argument("--speedup-points", type=int, default=1000)
    ap.add_argument("--across", action="store_true", help="also time 10,000 points across the binding threshold")
    ap.add_argument("--no-dask", action="store_true")
    args = ap.parse_args()
    w = args.workers
    print(f"fdsolver {fdsolver.__version__}; {os.cpu_count()} cores, {w} workers; case {CASE.name} (invented)")
    print(f"load average before: {' '.join(f'{v:.2f}' for v in os.getloadavg())} (other work on the machine slows every figure)")
    ceiling = hardware_ceiling(w)
    print(f"[0] hardware ceiling: {w} processes of a pure-Python loop run {ceiling:.2f}x the throughput of one")
    with SerialExecutor():  # warm the kernels in this process
        fdsolver.solve_case(fdsolver.load_case(CASE))
    with tempfile.TemporaryDirectory() as folder:
        # 1. speed-up on the same points
        n_s = args.speedup_points
        spec_s = plan("bound", 40, max(1, n_s // 40))
        t_serial, ds1 = timed(spec_s, SerialExecutor, folder, "serial")
        t_par, ds2 = timed(spec_s, lambda: ProcessExecutor(w), folder, "par")
        same = ds1.drop_attrs().identical(ds2.drop_attrs())
        print(f"[1] {spec_s.n_points} points: serial {t_serial:.2f} s ({1e3 * t_serial / spec_s.n_points:.2f} ms/point), "
              f"{w} processes {t_par:.2f} s -> speed-up {t_serial / t_par:.2f}x (target >= 1.7x; hardware ceiling {ceiling:.2f}x, "
              f"efficiency {t_serial / t_par / ceiling:.0%}); identical values: {same}")

        # 2. 10,000 points, local processes
        spec = plan("bound", args.side)
        rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
        t_local, ds_local = timed(spec, lambda: ProcessExecutor(w), folder, "local")
        grew = (resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - rss0) * 1024
        print(f"[2] {spec.n_points} points (energies only, checkpointed): {w} local processes {t_local:.1f} s, "
              f"{spec.n_points / t_local:.0f} points/s (target < 60 s)")
        print(f"[5] parent peak resident size grew by {grew / 2**20:.1f} MB for a result of {ds_local.nbytes / 2**20:.1f} MB "
              f"({spec.n_points} points in chunks of up to 200, at most {2 * w} chunks in flight)")

        # 3. Dask LocalCluster, same points and worker count
        if not args.no_dask:
            t_dask, ds_dask = timed(spec, lambda: DaskExecutor(workers=w, dashboard=False), folder, "dask")
            same = ds_local.drop_attrs().identical(ds_dask.drop_attrs())
            print(f"[3] same points on a Dask LocalCluster of {w} workers: {t_dask:.1f} s = {t_dask / t_local:.2f} x local "
                  f"(target <= 1.25); identical values: {same}")

        if args.across:
            spec_a = plan("across", args.side)
            t_a, ds_a = timed(spec_a, lambda: ProcessExecutor(w), folder, "across")
            print(f"[2b] {spec_a.n_points} points across the threshold: {w} local processes {t_a:.1f} s "
                  f"({spec_a.n_points / t_a:.0f} points/s); not converged values: {int((ds_a.converged.values == 0).sum())}")

    # 4. threshold
    case = fdsolver.load_case(CASE)
    thresholds.find_thresholds(case, "d", 0.1, 6.0, rtol=1e-6)  # warm
    times, res = [], None
    for _ in range(5):
        t0 = time.perf_counter()
        res = thresholds.find_thresholds(case, "d", 0.1, 6.0, rtol=1e-6)
        times.append(time.perf_counter() - t0)
    t = res.thresholds[0]
    print(f"load average after: {' '.join(f'{v:.2f}' for v in os.getloadavg())}")
    print(f"[4] threshold of state {t.state} in d on [0.1, 6] nm: {t.value:.12g} nm +- {t.uncertainty:.1e} nm in "
          f"{1e3 * statistics.median(times):.1f} ms (median of 5, warm; target < 1 s)")


if __name__ == "__main__":
    main()
