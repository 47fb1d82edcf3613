#!/usr/bin/env python
"""Two source trees compared in same-minute pairs, in CPU time: cold `fdsolver solve` of every bundled case, or
warm solves (``--warm``).

The machine this project is measured on changes speed by up to 2x from one minute to the next, so two versions
are compared in pairs taken in the same minute.

* Cold (default): for each case, runs of the two trees alternate (A B, B A, ...), each a fresh
  `python -m fdsolver solve CASE` with the tree on PYTHONPATH and one BLAS thread; CPU time is user + system
  of the child (getrusage(RUSAGE_CHILDREN)).  One untimed run of each first warms the numba cache and writes
  the bytecode (as an installed package has it).  Prints min / median per tree and the ratio of the medians
  (new / base).
* Warm (``--warm``): one long-lived process per tree loads the case, solves it 30 times untimed, then solves
  it in blocks of 15 on demand, the two processes' blocks alternating (A B, B A, ...; ``--repeat`` blocks
  each); CPU time per solve is `time.process_time` in the process.  Prints each tree's fastest solve and the
  median of its block medians, and new / base as the ratio of the fastest solves and the median of the blocks'
  ratios.

``--optics`` (with ``--warm``): each warm solve is ``fdsolver.solve_optics`` (the solve and its refined
transitions, the work of the solve command).  ``--fresh`` (with ``--warm``): each timed solve is of a new
potential equal to the case's, made before the clock runs (``bench_overhead.fresh_potential``: nothing a
potential keeps is carried over, as for a sweep point).

Cases `solve` refuses (periodic ones) are skipped.

``--archive``: each cold solve also writes an archive (``solve -o``, a temporary file).  A CASE is a bundled
case's name or the path of a case file.

Usage:  python scripts/bench_pairs.py BASE_TREE NEW_TREE [--warm [--optics] [--fresh] | --archive] [--repeat N]
        [CASE ...]
        (a tree is a directory holding the fdsolver package, e.g. a `git worktree add /tmp/base REV`)
"""

from __future__ import annotations

import argparse
import math
import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

from bench_overhead import (
    child_cpu,  # one BLAS thread set on import; CPU of a child process
)

ROOT = Path(__file__).resolve().parent.parent


def cold_cpu(tree: str, case: Path, archive: str | None = None) -> float | None:
    """CPU seconds of one cold solve of ``case`` with ``tree`` on PYTHONPATH, writing ``archive`` if given (None if
    the solve was refused)."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPATH"] = tree
    extra = ["-o", archive] if archive else []
    # run from the tree: `python -m` puts the working folder ahead of PYTHONPATH
    cpu, _ = child_cpu([sys.executable, "-m", "fdsolver", "solve", str(case), *extra], env, check=False, cwd=tree)
    return None if math.isnan(cpu) else cpu


#: a long-lived warm solver: the case in argv[1]; each line on stdin asks for that many solves, answered with
#: the fastest and the median CPU seconds of one solve among them
WARM_WORKER = """
import dataclasses, sys, time
from fdsolver.input.case import load_case
from fdsolver.runs import solve_case
case = load_case(sys.argv[1])
if "optics" in sys.argv[2:]:  # --optics: the solve command's work, the solve and its refined transitions
    from fdsolver.api import solve_optics as solve_case
fresh = "fresh" in sys.argv[2:]  # --fresh: a new potential equal to the case's for every timed solve
for _ in range(30):
    solve_case(case)
for line in sys.stdin:
    ts = []
    cases = [dataclasses.replace(case, potential=dataclasses.replace(case.potential)) if fresh else case
             for _ in range(int(line))]
    for c in cases:
        t0 = time.process_time()
        solve_case(c)
        ts.append(time.process_time() - t0)
    ts.sort()
    print(ts[0], ts[len(ts) // 2], flush=True)
"""
WARM_BLOCK = 15


def warm_pairs(base: str, new: str, case: Path, blocks: int, optics: bool = False,
               fresh: bool = False) -> tuple[list, list] | None:
    """(fastest, median) CPU seconds per solve of each block of warm solves by each tree, blocks alternated;
    None if either tree refuses the case.  ``optics``: each solve also makes its refined transitions
    (``fdsolver.solve_optics``, what the solve command computes); ``fresh``: each solve is of a new potential."""
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")
    procs = []
    for tree in (base, new):
        procs.append(subprocess.Popen([sys.executable, "-c", WARM_WORKER, str(case), *(["optics"] if optics else []),
                                       *(["fresh"] if fresh else [])],
                                      cwd=tree,
                                      env=dict(env, PYTHONPATH=tree), stdin=subprocess.PIPE,
                                      stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True))
    out: tuple[list, list] = ([], [])
    try:
        for i in range(blocks):
            order = ((procs[0], out[0]), (procs[1], out[1]))
            for proc, got in order if i % 2 == 0 else order[::-1]:  # A B, B A, ...
                proc.stdin.write(f"{WARM_BLOCK}\n")
                proc.stdin.flush()
                line = proc.stdout.readline().split()
                if len(line) != 2:
                    return None
                got.append((float(line[0]), float(line[1])))
    finally:
        for proc in procs:
            proc.stdin.close()
            proc.wait()
    return out


def main_warm(args, names) -> None:
    what = "warm solves with refined transitions (solve_optics)" if args.optics else "warm solves"
    if args.fresh:
        what += " of a new potential each (as a sweep point)"
    print(f"{what}, CPU ms per solve ({args.repeat} alternated blocks of {WARM_BLOCK}); base {args.base}, "
          f"new {args.new}")
    for name in names:
        got = warm_pairs(args.base, args.new, _case_path(name), args.repeat, args.optics, args.fresh)
        if got is None:
            print(f"  {name:22s} not a `solve` case here (skipped)")
            continue
        (b, n) = got
        fast_b, fast_n = min(x for x, _ in b), min(x for x, _ in n)
        med_b, med_n = statistics.median(m for _, m in b), statistics.median(m for _, m in n)
        ratios = statistics.median(nm / bm for (_, bm), (_, nm) in zip(b, n))
        print(f"  {name:22s} base {fast_b * 1e3:.3f} / {med_b * 1e3:.3f}   new {fast_n * 1e3:.3f} / {med_n * 1e3:.3f}"
              f"   new/base: fastest {fast_n / fast_b:.3f}, median of block ratios {ratios:.3f}", flush=True)


def _case_path(name: str) -> Path:
    """A bundled case by name, or a case file by path."""
    given = Path(name)
    return given.resolve() if given.suffix == ".toml" and given.is_file() else ROOT / "cases" / f"{name}.toml"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("base")
    ap.add_argument("new")
    ap.add_argument("cases", nargs="*", help="case names in cases/, or paths of case files (default: all bundled)")
    ap.add_argument("--repeat", type=int, default=5, help="runs (cold) or blocks (warm) per tree and case")
    ap.add_argument("--warm", action="store_true", help="warm solves in two long-lived processes, not cold starts")
    ap.add_argument("--archive", action="store_true", help="cold solves write an archive (solve -o, a temp file)")
    ap.add_argument("--fresh", action="store_true", help="with --warm: each timed solve is of a new potential "
                    "equal to the case's (as a sweep point solves one)")
    ap.add_argument("--optics", action="store_true", help="with --warm: each solve also makes its refined "
                    "transitions (fdsolver.solve_optics, what the solve command computes)")
    args = ap.parse_intermixed_args()
    names = args.cases or [p.stem for p in sorted((ROOT / "cases").glob("*.toml"))]
    if args.warm:
        main_warm(args, names)
        return
    archive = str(Path(tempfile.mkdtemp()) / "run.nc") if args.archive else None
    print(f"cold solves{' -o run.nc' if archive else ''}, CPU s (min / median of {args.repeat}, alternated); "
          f"base {args.base}, new {args.new}")
    for name in names:
        case = _case_path(name)
        name = case.stem
        if cold_cpu(args.new, case, archive) is None or cold_cpu(args.base, case, archive) is None:
            print(f"  {name:22s} not a `solve` case here (skipped)")
            continue
        times: dict[str, list[float]] = {args.base: [], args.new: []}
        for i in range(args.repeat):
            for tree in (args.base, args.new) if i % 2 == 0 else (args.new, args.base):
                times[tree].append(cold_cpu(tree, case, archive) or float("nan"))
        b, n = times[args.base], times[args.new]
        print(f"  {name:22s} base {min(b):.3f} / {statistics.median(b):.3f}   new {min(n):.3f} / "
              f"{statistics.median(n):.3f}   new/base {statistics.median(n) / statistics.median(b):.2f}", flush=True)


if __name__ == "__main__":
    main()
