#!/usr/bin/env python
"""The memory budget's count against what solves really hold: tracemalloc's peak during a solve beside
``Problem.megabytes_for`` of its finest grid (with mirror halves or without), for 3 to 1000 states of an
invented wide well (1000 nm x 6000 meV, mass 0.067) and of the same well with an off-centre step inside it
(no mirror symmetry).  The budget must count at least the peak (ratio <= 1), or a solve could exceed the
memory a user gave it.

Usage:  python scripts/memory_count.py [--quick]   (--quick: up to 200 states)
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse
import tracemalloc

WELL = [{"shape": "square", "center": 0.0, "width": 1000.0, "depth": 6000.0}]
STEP = WELL + [{"shape": "square", "center": 300.0, "width": 100.0, "depth": 50.0}]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="up to 200 states")
    args = ap.parse_args()

    from fdsolver.boundstates import driver
    from fdsolver.input.case import case_from_dict
    from fdsolver.runs import solve_case

    problems = []
    plan = driver.plan

    def keep(*a, **k):
        problems.append(plan(*a, **k))
        return problems[-1]

    driver.plan = keep
    solve_case(case_from_dict({"units": "nm-meV", "mass": 0.067,
                               "potential": [{"shape": "square", "center": 0.0, "width": 10.0, "depth": 60.0}]}))
    counts = (3, 30, 64, 200) if args.quick else (3, 30, 64, 200, 1000)
    print(f"{'structure':<18} {'states':>6} {'finest grid':>11} {'peak [MB]':>10} {'counted [MB]':>12} {'peak / count':>12}")
    for name, potential in (("wide well", WELL), ("with a step", STEP)):
        for n in counts:
            case = case_from_dict({"units": "nm-meV", "mass": 0.067, "potential": potential,
                                   "solve": {"max_states": n, "memory_mb": 4000, "tolerance": 1e-9}})
            tracemalloc.start()
            sol = solve_case(case)
            peak = tracemalloc.get_traced_memory()[1] / 2**20
            tracemalloc.stop()
            nodes = int(sol.level_sizes[-1])
            counted = problems[-1].megabytes_for(nodes, sol.mirror_center is not None)
            print(f"{name:<18} {n:6d} {nodes:11d} {peak:10.1f} {counted:12.1f} {peak / counted:12.2f}")


if __name__ == "__main__":
    main()
