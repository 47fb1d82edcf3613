#!/usr/bin/env python
"""What one task costs a Dask LocalCluster beyond its work: CPU seconds of this process and of the workers'
event loops per task, from the same 2,000 sweep points cut into many small tasks and into a few large ones.

    python scripts/dask_task_cost.py               # 2 workers, 3 rounds
    python scripts/dask_task_cost.py --repeat 5

Needs the cluster extra (``pip install .[cluster]``; psutil comes with Dask).  A sweep of
cases/double_square.toml (an invented scenario) on one cluster, with ``chunk`` fixed at SMALL and at LARGE points
per task in turn.  For each, the CPU time (user + system) each thread used during the sweep: this process's
threads (the caller, and the event loop that runs Dask's scheduler and client), and each worker's main thread
(its event loop; the tasks run in a thread of their own).  The difference between the two chunk sizes, divided
by the difference in task counts, is the cost per task; the work inside the tasks is the same points either
way.  BLAS runs one thread per process.  Prints the min and median over the rounds.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import statistics  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

SQUARE = Path(__file__).resolve().parent.parent / "cases" / "double_square.toml"
VARY = ["d=2.5:6:40", "depth=100:160:50"]  # 2,000 points
SMALL, LARGE = 25, 500


def thread_cpu() -> tuple[dict[int, float], dict[int, float]]:
    """CPU seconds of this process's threads, and of each child process's main thread (by pid)."""
    import psutil

    me = psutil.Process()
    mine = {t.id: t.user_time + t.system_time for t in me.threads()}
    workers = {}
    for child in me.children(recursive=True):
        for t in child.threads():
            if t.id == child.pid:
                workers[child.pid] = t.user_time + t.system_time
    return mine, workers


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3,
                    help="rounds (each: one sweep with small and one with large tasks)")
    ap.add_argument("--workers", type=int, default=2)
    args = ap.parse_args()
    warnings.simplefilter("ignore")

    import fdsolver
    from fdsolver.scans.runner import executor_for

    case = fdsolver.load_case(SQUARE)
    fdsolver.sweep(case, ["d=2.5:6:2", "depth=100:160:2"], executor="serial", thresholds=False)  # kernels loaded
    n_points = 40 * 50
    parent, workers = [], []
    with executor_for(cluster=f"local:{args.workers}") as ex:
        for _ in range(args.repeat):
            used = {}
            for chunk in (SMALL, LARGE):
                a_mine, a_workers = thread_cpu()
                fdsolver.sweep(case, VARY, executor=ex, thresholds=False, chunk=chunk)
                b_mine, b_workers = thread_cpu()
                used[chunk] = (sum(v - a_mine.get(k, 0.0) for k, v in b_mine.items()),
                               sum(v - a_workers.get(k, 0.0) for k, v in b_workers.items()))
            tasks = n_points // SMALL - n_points // LARGE
            parent.append((used[SMALL][0] - used[LARGE][0]) / tasks * 1e3)
            workers.append((used[SMALL][1] - used[LARGE][1]) / tasks * 1e3)
    print(f"fdsolver {fdsolver.__version__}, Dask LocalCluster x{args.workers}, {n_points} points in tasks of {SMALL} "
          f"and of {LARGE} points, {args.repeat} rounds")
    for label, ms in (("this process (caller, scheduler, client)", parent),
                      ("the workers' event loops, summed", workers)):
        print(f"   CPU per task, {label:<42} min {min(ms):6.2f} median {statistics.median(ms):6.2f} ms")
    total = [a + b for a, b in zip(parent, workers)]
    print(f"   CPU per task, in all                                         min {min(total):6.2f} median "
          f"{statistics.median(total):6.2f} ms")


if __name__ == "__main__":
    main()
