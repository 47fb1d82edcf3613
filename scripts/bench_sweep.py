#!/usr/bin/env python
"""Benchmark of sweeps, the validity map and binding thresholds on bundled cases (invented scenarios).

    python scripts/bench_sweep.py            # every target (several minutes on 2 cores)
    python scripts/bench_sweep.py --quick    # 2,500 sweep points and a 20 x 20 map
    python scripts/bench_sweep.py --dask-only --repeat 12   # step 2 alone, a longer series of rounds

Everything runs through the public API (fdsolver.sweep, fdsolver.delta_map, fdsolver.threshold) exactly as the
command line does, with one BLAS thread per process.  Each figure: wall time, and CPU time of this process
plus its finished worker processes (getrusage), min and median over --repeat runs.  Steps 0-2 run in rounds
(ceiling, energies-only sweep, serial subset, local sweep; then a local pool, a Dask cluster and a local pool
again, each in a child process of its own; then the next round), and each ratio is the median of the rounds'
ratios: the machine's speed drifts by up to 2x between minutes, and runs of one round share their minutes.
The Dask sweeps are held to the mean of the local child's sweeps just before and just after them, so a drift
that is steady over the round cancels, and both sides run in processes equally fresh (see SWEEP_CHILD): each
child first runs a 4-point serial sweep (the archive's libraries loaded, as in this process by then), then two
sweeps on an executor of their own each: the first pays Dask's import, the second (a new cluster in the same
child) does not; then a third executor runs a 4-point sweep untimed and the full sweep timed (warm workers).
The local child's first sweep is also printed against step 1's local sweep in this process, which has run
sweeps before.

0. the machine's ceiling: a fixed pure-Python loop in 1 process and in 2 processes at once (no fdsolver code)
   gives the parallel speed-up the hardware can deliver at all; a shared machine reports less than 2.
1. 10,000 points of cases/double_square.toml (d x depth, no wavefunctions kept), local processes (target < 20 s):
   the full record (energies with <x>, spreads, shares and transitions at each point), and the same points
   with ``energies_only`` (``--energies-only``: energies, errors, flags, parities and splittings only; the
   issue's "energies only"), with the ratio of the two in each round; speed-up of the full record against the
   serial executor on the same points (target >= 1.8x of the ceiling; the serial run is a 1,000-point subset,
   scaled);
2. the same points on a Dask LocalCluster with as many workers (target within 10 % of the local pool), in a
   fresh process and again in that process, each with the wall time of the cluster's start (part of the
   sweep's), and a third time on that process's running cluster (warm workers, the sweep alone), against a
   local pool in a process just as fresh, run the same way; then the whole command as a user times it,
   ``fdsolver sweep --cluster local:N`` against ``fdsolver sweep -j N`` (local, Dask, local in each round, each
   held to the mean of the two local commands around it);
3. the 40 x 40 validity map of cases/impurity_pair.toml on local processes (target < 6 s);
4. a binding threshold of cases/double_square.toml to relative 1e-9 (target < 1 s).
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import multiprocessing as mp  # noqa: E402
import resource  # noqa: E402
import statistics  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
SQUARE = ROOT / "cases" / "double_square.toml"
PAIR = ROOT / "cases" / "impurity_pair.toml"


def cpu_now() -> float:
    """CPU seconds of this process and of its reaped children (user + system)."""
    s, c = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return s.ru_utime + s.ru_stime + c.ru_utime + c.ru_stime


def timed(f):
    c0, w0 = cpu_now(), time.perf_counter()
    out = f()
    return out, time.perf_counter() - w0, cpu_now() - c0


def _spin(n: int) -> int:
    s = 0
    for i in range(n):
        s += i * i % 7
    return s


def ceiling(workers: int) -> float:
    """Speed-up the machine delivers for `workers` independent CPU-bound processes right now."""
    n = 6_000_000
    ctx = mp.get_context("fork")
    with ctx.Pool(1) as p:
        p.apply(_spin, (1000,))
        t0 = time.perf_counter()
        p.apply(_spin, (n,))
        one = time.perf_counter() - t0
    with ctx.Pool(workers) as p:
        p.map(_spin, [1000] * workers)
        t0 = time.perf_counter()
        p.map(_spin, [n] * workers)
        many = time.perf_counter() - t0
    return workers * one / many


#: two sweeps on an executor of their own each (a Dask LocalCluster or a local process pool), timed in a child
#: process: a process that has run a cluster keeps a thread of Dask's, so its later local process pools start by
#: the fork server instead of fork, and the local sweeps and the map measured after it in the same process took
#: 1-2.5 s longer (measured); each figure would then depend on the order of the steps.  The local pool is timed
#: the same way, so the Dask sweeps are compared with local sweeps of a process just as fresh
SWEEP_CHILD = """
import json, sys, warnings
sys.path.insert(0, sys.argv[5])
from bench_sweep import timed  # this script's own timer (one BLAS thread set on import)
warnings.simplefilter("ignore")
import fdsolver

if __name__ == "__main__":
    case = fdsolver.load_case(sys.argv[1])
    # untimed, as in the parent by then: the archive's libraries (xarray, pandas, netCDF4) imported
    fdsolver.sweep(case, ["d=2.5:6:2", "depth=100:160:2"], output=sys.argv[3] + "w", executor="serial",
                   thresholds=False)
    from fdsolver.scans.runner import executor_for  # what fdsolver.sweep(cluster=... / executor=...) makes

    def new_executor():  # a LocalCluster or a local pool of sys.argv[4] workers, not started yet
        if sys.argv[6] == "dask":
            return executor_for(cluster="local:" + sys.argv[4])
        return executor_for("processes", workers=int(sys.argv[4]))

    def run(k):  # the executor's start (for Dask: its import, the cluster), the sweep on it, its close
        ex = new_executor()
        _, start, _ = timed(ex.__enter__)
        try:
            fdsolver.sweep(case, json.loads(sys.argv[2]), output=sys.argv[3] + str(k), executor=ex, thresholds=False)
        finally:
            ex.__exit__(None, None, None)
        return start

    times = []
    for k in range(2):  # the first with Dask's import (if Dask), both with an executor of their own
        start, wall, cpu = timed(lambda k=k: run(k))
        times += [wall, cpu, start]
    # the third on a running executor whose workers have run a sweep (warm workers): the sweep alone is timed, and
    # its CPU is this process's only (the workers are not reaped until the executor closes)
    with new_executor() as ex:
        fdsolver.sweep(case, ["d=2.5:6:2", "depth=100:160:2"], executor=ex, thresholds=False)
        _, wall, cpu = timed(lambda: fdsolver.sweep(case, json.loads(sys.argv[2]), output=sys.argv[3] + "2",
                                                    executor=ex, thresholds=False))
    times += [wall, cpu, 0.0]
    print("TIMES", json.dumps(times))
"""


def child_sweeps(kind: str, vary, output, workers: int) -> list[float]:
    """[wall, CPU, start] * 3 seconds of three sweeps of SQUARE over ``vary`` on an executor of ``kind`` ("dask": a
    LocalCluster, "local": a process pool), in a fresh child process: the first pays the executor's imports and
    start (as a command-line user does), the second only its start (as in a session that has used it before),
    each on an executor of its own; the third runs on an executor already running, whose workers have done a
    small sweep (warm workers), and is timed alone (its CPU is the child's only, its start 0).  ``start``: the
    wall time of that start alone, a part of ``wall``."""
    import json
    import subprocess
    import sys

    proc = subprocess.run([sys.executable, "-c", SWEEP_CHILD, str(SQUARE), json.dumps(vary), str(output),
                           str(workers), str(Path(__file__).resolve().parent), kind],
                          capture_output=True, text=True, check=True)
    return json.loads(proc.stdout.rsplit("TIMES", 1)[1])


def command_sweep(executor_args: list[str], vary, output) -> tuple[float, float]:
    """Wall and CPU seconds of the whole command ``fdsolver sweep`` of SQUARE over ``vary`` (python -m fdsolver, a
    fresh process: its own start-up, the case, the executor's start, the sweep, the archive), as a user's
    ``time fdsolver sweep ...`` sees it.  CPU: the command and its worker processes (all reaped by the end)."""
    import subprocess
    import sys

    cmd = [sys.executable, "-m", "fdsolver", "sweep", str(SQUARE), "--no-thresholds", "-q", "-o", str(output)]
    for v in vary:
        cmd += ["--vary", v]
    _, wall, cpu = timed(lambda: subprocess.run(cmd + executor_args, capture_output=True, check=True))
    return wall, cpu


def summary(name, walls, cpus, target=None, unit="s"):
    line = (f"   {name:<46} wall min {min(walls):7.2f} median {statistics.median(walls):7.2f} {unit}   "
            f"CPU min {min(cpus):7.2f} median {statistics.median(cpus):7.2f} {unit}")
    if target is not None:
        line += f"   target < {target:g}: {'met' if statistics.median(walls) < target else 'NOT met'}"
    print(line)


def step_one(ceils, walls, cpus, e_walls, e_cpus, e_ratios, serial_ms, speedups, n, n_sub, w):
    """Print steps 0 and 1 (see the module docstring) from the figures of their rounds."""
    ceil = statistics.median(ceils)
    print(f"0. machine ceiling: {w} CPU-bound processes run {ceil:.2f}x faster than one (pure-Python loop; median "
          f"of {len(ceils)} rounds, {min(ceils):.2f}-{max(ceils):.2f})")
    summary(f"1. sweep, {n} points, local x{w}", walls, cpus, 20.0 if n >= 10_000 else None)
    summary("   the same, energies only (--energies-only)", e_walls, e_cpus, 20.0 if n >= 10_000 else None)
    print(f"   energies only / full record = {statistics.median(e_ratios):.2f} (median of the rounds' wall ratios, "
          f"{min(e_ratios):.2f}-{max(e_ratios):.2f})")
    print(f"   serial: a {n_sub}-point subset, {min(serial_ms):.2f} / {statistics.median(serial_ms):.2f} ms per "
          f"point (min / median of the rounds), scaled to {n} points for the speed-up")
    speedup = statistics.median(speedups)
    print(f"   speed-up {speedup:.2f}x (median of the rounds' serial / local; "
          f"{min(speedups):.2f}-{max(speedups):.2f}) = {speedup / ceil:.2f} of the machine's ceiling "
          f"(target >= 1.8x, i.e. about the ceiling; {'met' if speedup >= min(1.8, 0.95 * ceil) else 'NOT met'})")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="2,500 sweep points and a 20 x 20 map")
    ap.add_argument("--repeat", type=int, default=3, help="runs per figure")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--no-dask", action="store_true")
    ap.add_argument("--dask-only", action="store_true",
                    help="only step 2 (Dask against the local pool), for a longer series of rounds")
    args = ap.parse_args()
    if args.no_dask and args.dask_only:
        ap.error("--no-dask and --dask-only leave nothing to run; give one of them")
    warnings.simplefilter("ignore")

    import fdsolver

    side = 50 if args.quick else 100
    n_map = 20 if args.quick else 40
    vary = [f"d=2.5:6:{side}", f"depth=100:160:{side}"]
    case = fdsolver.load_case(SQUARE)
    w = args.workers
    print(f"fdsolver {fdsolver.__version__}, {os.cpu_count()} CPUs, {w} workers, one BLAS thread per process")

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        # 0.-2. in rounds: the ceiling, the energies-only sweep, the serial subset, the local sweep, the Dask sweeps
        # and the local sweep again, so each ratio compares runs of the same minutes (the machine's speed drifts by
        # up to 2x between minutes): the Dask sweeps against the mean of the local sweeps just before and just
        # after them, which cancels a drift that is steady over the minute
        sub = [f"d=2.5:6:{side // 10 or 1}", f"depth=100:160:{side}"]
        n_sub = (side // 10 or 1) * side
        ceils, walls, cpus, serial_ms, speedups = [], [], [], [], []
        e_walls, e_cpus, e_ratios = [], [], []
        # step 2, per round: the fresh child's first and second sweeps, Dask and local ([wall, CPU, start] each),
        # and the whole command on each ((wall, CPU) each)
        dask_runs, local_runs, parent_local, cmd_dask, cmd_local = [], [], [], [], []

        def local(name):
            ds, wall, cpu = timed(lambda: fdsolver.sweep(case, vary, output=out / name, executor="processes",
                                                         workers=w, thresholds=False))
            walls.append(wall)
            cpus.append(cpu)
            return ds, wall

        n = side * side
        for r in range(args.repeat):
            if not args.dask_only:
                ceils.append(ceiling(w))
                _, wall_e, cpu_e = timed(lambda r=r: fdsolver.sweep(case, vary, output=out / f"energies{r}.nc",
                                                                    executor="processes", workers=w,
                                                                    thresholds=False, energies_only=True))
                e_walls.append(wall_e)
                e_cpus.append(cpu_e)
                _, wall_s, _ = timed(lambda: fdsolver.sweep(case, sub, executor="serial", thresholds=False))
                ds, wall = local(f"local{r}.nc")
                e_ratios.append(wall_e / wall)
                serial_ms.append(wall_s / n_sub * 1e3)
                speedups.append(wall_s * n / n_sub / wall)
                parent_local.append(wall)
            if not args.no_dask:  # local, Dask, local: each Dask sweep against the mean of the local ones around it
                before = child_sweeps("local", vary, out / f"lc{r}a.nc", w)
                dask = child_sweeps("dask", vary, out / f"dask{r}.nc", w)
                after = child_sweeps("local", vary, out / f"lc{r}b.nc", w)
                dask_runs.append(dask)
                local_runs.append([(a + b) / 2 for a, b in zip(before, after)])
                before = command_sweep(["-j", str(w)], vary, out / f"cmd{r}a.nc")
                cmd_dask.append(command_sweep(["--cluster", f"local:{w}"], vary, out / f"cmd{r}d.nc"))
                after = command_sweep(["-j", str(w)], vary, out / f"cmd{r}b.nc")
                cmd_local.append(tuple((a + b) / 2 for a, b in zip(before, after)))
        if not args.dask_only:
            step_one(ceils, walls, cpus, e_walls, e_cpus, e_ratios, serial_ms, speedups, n, n_sub, w)
        if not args.no_dask:
            print(f"2. the same on a Dask LocalCluster x{w} and on a local pool x{w}, each in a fresh child process "
                  "(local, Dask, local in each round)")
            for k, label in ((0, "first sweep of the process (Dask's import included)"),
                             (1, "second sweep, a new cluster or pool (Dask imported)"),
                             (2, "third sweep, on a running cluster or pool (warm workers; CPU: the caller's only)")):
                dw, dc, ds = ([run[3 * k + j] for run in dask_runs] for j in range(3))
                lw, lc = ([run[3 * k + j] for run in local_runs] for j in range(2))
                ratios = [a / b for a, b in zip(dw, lw)]
                ratio = statistics.median(ratios)
                print(f"   {label}:")
                summary("   Dask", dw, dc)
                summary("   local pool (mean of the two around it)", lw, lc)
                start = ", the executor's start included" if k < 2 else ""
                print(f"      Dask / local = {ratio:.3f} (median of the rounds' ratios, {min(ratios):.2f}-"
                      f"{max(ratios):.2f}; target <= 1.10{start}: {'met' if ratio <= 1.10 else 'NOT met'})")
                if k < 2:
                    print(f"      Dask's start (import, cluster, workers set up): wall min {min(ds):.2f} median "
                          f"{statistics.median(ds):.2f} s")
            ratios = [d[0] / lo[0] for d, lo in zip(cmd_dask, cmd_local)]
            print("   the whole command, fdsolver sweep --cluster local:N against -j N (start-up, case, executor, "
                  "sweep, archive):")
            summary("   Dask", [d[0] for d in cmd_dask], [d[1] for d in cmd_dask])
            summary("   local pool (mean of the two around it)", [lo[0] for lo in cmd_local],
                    [lo[1] for lo in cmd_local])
            print(f"      Dask / local = {statistics.median(ratios):.3f} (median of the rounds' ratios, "
                  f"{min(ratios):.2f}-{max(ratios):.2f}; target <= 1.10: "
                  f"{'met' if statistics.median(ratios) <= 1.10 else 'NOT met'})")
            if parent_local:
                fresh = [run[0] / p for run, p in zip(local_runs, parent_local)]
                print(f"   the local pool's first sweep in a fresh child / step 1's local sweep in this process = "
                      f"{statistics.median(fresh):.2f} (median of the rounds, {min(fresh):.2f}-{max(fresh):.2f})")
        if args.dask_only:
            return
        # 3. the validity map
        pair = fdsolver.load_case(PAIR)
        maps = [f"width=1e-3:8:{n_map}", f"d=6:16:{n_map}"]
        walls, cpus = [], []
        for r in range(args.repeat):
            _, wall, cpu = timed(lambda r=r: fdsolver.delta_map(pair, maps, output=out / f"map{r}.nc",
                                                                executor="processes", workers=w))
            walls.append(wall)
            cpus.append(cpu)
        summary(f"3. validity map {n_map} x {n_map}, local x{w}", walls, cpus, 6.0 if n_map == 40 else None)
    # 4. a threshold
    walls, cpus = [], []
    fdsolver.threshold(case, "d=0.1:6")
    for _ in range(max(args.repeat, 5)):
        ds, wall, cpu = timed(lambda: fdsolver.threshold(case, "d=0.1:6", rtol=1e-9))
        walls.append(wall)
        cpus.append(cpu)
    summary("4. binding threshold of d in 0.1..6 nm (rtol 1e-9)", walls, cpus, 1.0)


if __name__ == "__main__":
    main()
