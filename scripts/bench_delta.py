#!/usr/bin/env python
"""Benchmark of the zero-range check (fdsolver delta-check) on the bundled pair cases/impurity_pair.toml.

Targets (checked here, never in unit tests):
  * a full width ladder (12 widths, every state resolved) for the pair: under 2 s warm;
  * a 40 x 40 validity map (width x d) on 2 worker processes: under 60 s.

Printed in one run: the ladder's warm wall time (best of 3) for each replacement shape
and its resolution status; the time of one finite-vs-point comparison; the map on 2
workers and, for the ratio, the same map in this process alone; and how much two
processes can run at once on this machine (a pure-Python loop timed alone and twice
in parallel), which bounds any parallel speed-up.

Usage:  python scripts/bench_delta.py [--quick]     (--quick: a 20 x 20 map)
"""

from __future__ import annotations

import os
import sys
import time
from concurrent.futures import ProcessPoolExecutor

HERE = os.path.dirname(os.path.abspath(__file__))
CASE = os.path.join(os.path.dirname(HERE), "cases", "impurity_pair.toml")


def _spin(n: int) -> float:
    t = time.perf_counter()
    s = 0.0
    for i in range(n):
        s += i * 0.5
    return time.perf_counter() - t


def parallel_capacity() -> float:
    """Wall time of two parallel copies of a CPU loop over the time of one (1 = perfect, 2 = no parallelism)."""
    one = _spin(5_000_000)
    with ProcessPoolExecutor(2) as ex:
        t = time.perf_counter()
        list(ex.map(_spin, [5_000_000, 5_000_000]))
        two = time.perf_counter() - t
    return two / one


def main() -> int:
    import numpy as np

    import fdsolver
    from fdsolver.zerorange.ladder import SHAPE_NAMES, compare, read_options, replacement, run_ladder
    from fdsolver.scans.maps import plan_map, run_map
    from fdsolver.parallel.executors import ProcessExecutor, SerialExecutor

    quick = "--quick" in sys.argv
    case = fdsolver.load_case(CASE)
    run_ladder(case, read_options(case))  # warm: numba cache, imports
    print(f"case: {CASE}  (cpu count {os.cpu_count()})")
    ok = True
    for shape in SHAPE_NAMES:
        best = float("inf")
        for _ in range(3):
            t = time.perf_counter()
            lad = run_ladder(case, read_options(case, shape=shape))
            best = min(best, time.perf_counter() - t)
        resolved = all(bool(np.all(r.resolved)) for r in lad.results)
        verdict = "PASS" if (best < 2.0 and resolved) else "FAIL"
        if shape == "square":
            ok &= verdict == "PASS"
        print(f"ladder {shape:13s}: {lad.widths.size} widths {lad.widths[0]:.3g}..{lad.widths[-1]:.3g} nm, "
              f"{best:.3f} s warm (best of 3), all states resolved: {resolved}  [target < 2 s: {verdict}]")
    m = replacement(case, "square", 0.01)
    t = time.perf_counter()
    for _ in range(20):
        compare(case, m)
    print(f"one comparison (square pair, width 0.01 nm): {(time.perf_counter() - t) / 20 * 1e3:.1f} ms")

    n = 20 if quick else 40
    opts = read_options(case, maps=[f"width=1e-3:8:{n}", f"d=6:16:{n}"])
    spec = plan_map(case, opts, {})
    t = time.perf_counter()
    with ProcessExecutor(2) as ex:
        res2 = run_map(spec, ex)
    t2 = time.perf_counter() - t
    verdict = "PASS" if t2 < 60.0 * (n * n) / 1600 else "FAIL"
    ok &= verdict == "PASS"
    print(f"map {n} x {n} on 2 worker processes: {t2:.1f} s  [target < {60.0 * n * n / 1600:.0f} s: {verdict}]")
    t = time.perf_counter()
    with SerialExecutor() as ex:
        res1 = run_map(spec, ex)
    t1 = time.perf_counter() - t
    same = all(np.array_equal(res1[k], res2[k], equal_nan=True) for k in ("energy", "limit", "exists", "resolved"))
    print(f"map {n} x {n} in this process: {t1:.1f} s; speed-up of 2 workers {t1 / t2:.2f}x; identical results: {same}")
    print(f"two parallel CPU loops take {parallel_capacity():.2f}x the time of one on this machine "
          "(1.0 = two free cores, 2.0 = one)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
