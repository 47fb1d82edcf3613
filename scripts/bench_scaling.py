#!/usr/bin/env python
"""Benchmark: cost against the size of the input (CPU time, one BLAS thread, min and median of --repeat runs).

Invented structures (no real device):

* superlattices of N wells (8 nm, mass 0.067, band edge 0) between 3 nm barriers (243 meV, mass 0.092);
  target: 200 wells in under 5 s;
* N point interactions of random strength 50..150 meV nm, 5..15 nm apart (mass 0.067); target: 10^4 in under 10 s;
* a measured-looking profile of N rows (a Gaussian well of 150 meV, 10 nm, with a 0.5 meV ripple of period
  2.1 nm) read from a CSV table; target: 10^5 rows in under 10 s.

Each line gives the case-reading and the solve CPU time, the states found and converged, and the finest grid.
Usage:  python scripts/bench_scaling.py [--repeat N] [--quick]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import statistics  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402


def superlattice(n: int) -> dict:
    layers = [{"band_edge": 243.0, "mass": 0.092}]
    for i in range(n):
        layers.append({"thickness": 8.0, "band_edge": 0.0, "mass": 0.067})
        if i < n - 1:
            layers.append({"thickness": 3.0, "band_edge": 243.0, "mass": 0.092})
    layers.append({"band_edge": 243.0, "mass": 0.092})
    return {"units": "nm-meV", "mass": 0.067, "layer": layers}


def points(n: int) -> dict:
    rng = np.random.default_rng(1)
    xs = np.cumsum(rng.uniform(5.0, 15.0, n))
    xs -= xs.mean()
    return {"units": "nm-meV", "mass": 0.067,
            "potential": [{"shape": "point", "center": float(x), "strength": float(rng.uniform(50.0, 150.0))}
                          for x in xs]}


def profile(n: int, folder: Path) -> dict:
    x = np.linspace(-50.0, 50.0, n)
    v = -150.0 * np.exp(-((x / 10.0) ** 2)) + 0.5 * np.sin(3.0 * x)
    path = folder / f"profile_{n}.csv"
    np.savetxt(path, np.column_stack([x, v]), delimiter=",")
    return {"units": "nm-meV", "mass": 0.067, "potential": [{"shape": "table", "file": str(path)}]}


def run(name: str, make, sizes, target, repeat: int) -> None:
    from fdsolver.input.case import case_from_dict
    from fdsolver.runs import solve_case

    for n in sizes:
        data = make(n)
        parse, solve = [], []
        for _ in range(repeat):
            t0 = time.process_time()
            case = case_from_dict(data)
            t1 = time.process_time()
            sol = solve_case(case)
            t2 = time.process_time()
            parse.append(t1 - t0)
            solve.append(t2 - t1)
        total = [a + b for a, b in zip(parse, solve)]
        verdict = f"target < {target[1]:g} s: {'met' if min(total) < target[1] else 'NOT met'}" if n == target[0] else ""
        print(f"   {name:<14} {n:>7}  read {min(parse):7.3f}  solve min {min(solve):7.3f} median "
              f"{statistics.median(solve):7.3f} s  states {sol.energy.size:5d} converged {int(sol.converged.sum()):5d}  "
              f"finest grid {int(sol.level_sizes[-1]):8d}  {verdict}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="the target sizes only")
    args = ap.parse_args()
    import fdsolver

    print(f"fdsolver {fdsolver.__version__}, {os.cpu_count()} CPUs, one BLAS thread; CPU seconds, min of {args.repeat}")
    from fdsolver.runs import solve_case
    from fdsolver.input.case import case_from_dict

    solve_case(case_from_dict(superlattice(2)))  # kernels loaded
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        run("superlattice", superlattice, [200] if args.quick else [10, 50, 200], (200, 5.0), args.repeat)
        run("point terms", points, [10_000] if args.quick else [100, 1000, 10_000], (10_000, 10.0), args.repeat)
        run("profile rows", lambda n: profile(n, folder), [100_000] if args.quick else [1000, 10_000, 100_000],
            (100_000, 10.0), args.repeat)


if __name__ == "__main__":
    main()
