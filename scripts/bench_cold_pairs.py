#!/usr/bin/env python
"""Cold `fdsolver solve` of every bundled case by two source trees, alternated, in CPU time.

The machine this project is measured on changes speed by up to 2x from one minute to the next, so two versions
are compared in pairs taken in the same minute: for each case, runs of the two trees alternate (A B, B A, ...),
each a fresh `python -m fdsolver solve CASE` with the tree on PYTHONPATH and one BLAS thread; CPU time is
user + system of the child (getrusage(RUSAGE_CHILDREN)).  One untimed run of each first warms the numba cache
and writes the bytecode (as an installed package has it).  Prints min / median per tree and the ratio of the
medians (new / base).  Cases `solve` refuses (periodic ones) are skipped.

Usage:  python scripts/bench_cold_pairs.py BASE_TREE NEW_TREE [--repeat N] [CASE ...]
        (a tree is a directory holding the fdsolver package, e.g. a `git worktree add /tmp/base REV`)
"""

from __future__ import annotations

import argparse
import math
import os
import statistics
import sys
from pathlib import Path

from bench_overhead import (
    child_cpu,  # one BLAS thread set on import; CPU of a child process
)

ROOT = Path(__file__).resolve().parent.parent


def cold_cpu(tree: str, case: Path) -> float | None:
    """CPU seconds of one cold solve of ``case`` with ``tree`` on PYTHONPATH (None if the solve was refused)."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPATH"] = tree
    # run from the tree: `python -m` puts the working folder ahead of PYTHONPATH
    cpu, _ = child_cpu([sys.executable, "-m", "fdsolver", "solve", str(case)], env, check=False, cwd=tree)
    return None if math.isnan(cpu) else cpu


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("base")
    ap.add_argument("new")
    ap.add_argument("cases", nargs="*", help="case names in cases/ (default: all)")
    ap.add_argument("--repeat", type=int, default=5, help="runs per tree and case")
    args = ap.parse_intermixed_args()
    names = args.cases or [p.stem for p in sorted((ROOT / "cases").glob("*.toml"))]
    print(f"cold solves, CPU s (min / median of {args.repeat}, alternated); base {args.base}, new {args.new}")
    for name in names:
        case = ROOT / "cases" / f"{name}.toml"
        if cold_cpu(args.new, case) is None or cold_cpu(args.base, case) is None:
            print(f"  {name:22s} not a `solve` case here (skipped)")
            continue
        times: dict[str, list[float]] = {args.base: [], args.new: []}
        for i in range(args.repeat):
            for tree in (args.base, args.new) if i % 2 == 0 else (args.new, args.base):
                times[tree].append(cold_cpu(tree, case) or float("nan"))
        b, n = times[args.base], times[args.new]
        print(f"  {name:22s} base {min(b):.3f} / {statistics.median(b):.3f}   new {min(n):.3f} / "
              f"{statistics.median(n):.3f}   new/base {statistics.median(n) / statistics.median(b):.2f}", flush=True)


if __name__ == "__main__":
    main()
