#!/usr/bin/env python
"""Where a warm solve spends its CPU time: the driver's phases of ``solve_case`` on bundled cases.

Each phase (the plan, the coarse solve and box, the levels, the box check, the results and observables), and
parts of them (the base grids, the zero-energy count, the operators, the compiled calls, the observables), is timed with
``time.process_time_ns`` around its function, inclusive of what it calls, over ``--solves`` warm solves of the
same case after 100 untimed ones, and printed per solve in ms beside the whole solve timed without the clocks.
The parts overlap the phases (they are inside them), so only the five phases add up to a solve.  The wrappers
cost some time of their own per timed call: compare the solve timed with them and without.  One BLAS thread.

``--loads``: instead, a cold ``fdsolver solve`` of each case in a fresh process, with the CPU time of every
compiled kernel loaded from numba's cache (``numba.core.caching.Cache._load_overload``, timed around each call)
and of the imports before the solve; since session 18 also each kernel's whole first call
(``Dispatcher._compile_for_args``: numba's hook before it, the runtime set-up, the typing of the arguments and the
load).  Since session 15 fdsolver loads its kernels without numba's compile set-up
(:func:`fdsolver.compiled._lean_cache_loads`); before, the first load included it.

``--fresh``: each timed solve is of a new potential equal to the case's (as a sweep point solves one), so what a
potential works out once and keeps (``Potential.remembered``, its cached properties) is worked out in every solve.

Usage:  python scripts/solve_phases.py [CASE ...] [--solves N] [--loads] [--fresh]   (a CASE is a bundled case's name or a
        path; default: double_square coupled_wells)
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse
import dataclasses
import functools
import importlib
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

#: (module, function, label): each replaced in its caller's module by a timed wrapper.  The five phases first,
#: then parts of them timed wherever they are called ("both": in the coarse solve and in the levels; "one call":
#: the compiled calls of a potential constant on every cell: the coarse solve, every regular level at once, and
#: a level at a time where the loop takes over)
PHASES = [
    ("fdsolver.continuum.confinement", "leaks", "leak test (before the solve)"),
    ("fdsolver.boundstates.driver", "plan", "plan"),
    ("fdsolver.boundstates.driver", "_provisional", "coarse solve and box"),
    ("fdsolver.boundstates.driver", "_levels", "levels"),
    ("fdsolver.boundstates.driver", "_box_check", "box check"),
    ("fdsolver.boundstates.driver", "finish", "results and observables"),
    ("fdsolver.boundstates.driver", "_grid", "part: base grids (both)"),
    ("fdsolver.boundstates.driver", "_missing", "part: zero-energy count"),
    ("fdsolver.boundstates.driver", "open_box", "part: open box (both)"),
    ("fdsolver.boundstates.levels", "sectors_on", "part: operators (general path)"),
    ("fdsolver.boundstates.levels", "solve_grid", "part: level passes, general"),
    ("fdsolver.boundstates.levels", "constant_coarse", "part: coarse solve, one call"),
    ("fdsolver.boundstates.levels", "constant_levels", "part: all levels, one call"),
    ("fdsolver.boundstates.levels", "constant_level", "part: one level per call"),
    ("fdsolver.boundstates.levels", "_judge", "part: judging the states"),
    ("fdsolver.boundstates.result", "_observables", "part: observables"),
]


#: the child of ``--loads``: a cold solve of argv[1] with every load from numba's cache timed
LOADS_CHILD = """
import sys, time
t0 = time.process_time()
import numba.core.caching as caching
loads, load = [], caching.Cache._load_overload
def timed(self, sig, target_context):
    t = time.process_time()
    try:
        return load(self, sig, target_context)
    finally:
        name = str(getattr(self, '_name', '?'))
        loads.append((name.split()[1] if name.startswith('<function ') else name, time.process_time() - t))
caching.Cache._load_overload = timed
import numba.core.dispatcher as dispatcher
firsts, first_call = [], dispatcher.Dispatcher._compile_for_args
def timed_first(self, *args, **kws):
    t = time.process_time()
    try:
        return first_call(self, *args, **kws)
    finally:
        firsts.append((self.py_func.__name__, time.process_time() - t))
dispatcher.Dispatcher._compile_for_args = timed_first
t1 = time.process_time()
from fdsolver.cli import main
t2 = time.process_time()
try:
    main(['solve', sys.argv[1]])
except SystemExit:
    pass
t3 = time.process_time()
out = sys.stderr
print(f"    import numba {t1 - t0:.3f} s, fdsolver's command line {t2 - t1:.3f} s, the solve command {t3 - t2:.3f} s "
      f"(of which {len(loads)} kernels loaded from the cache {sum(t for _, t in loads):.3f} s, their first calls "
      f"{sum(t for _, t in firsts):.3f} s)", file=out)
print("      first call   load  kernel", file=out)
for (name, t), (_, t_first) in zip(loads, firsts):
    print(f"      {t_first * 1e3:7.1f} ms {t * 1e3:7.1f} ms  {name}", file=out)
"""


def cold_loads(path: Path) -> None:
    """A cold solve of ``path`` in a fresh process, its kernel loads timed (LOADS_CHILD); one untimed run first."""
    for _ in range(2):
        run = subprocess.run([sys.executable, "-c", LOADS_CHILD, str(path)], capture_output=True, text=True,
                             cwd=ROOT, check=False)
    print(run.stderr.rstrip())


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("cases", nargs="*", default=["double_square", "coupled_wells"])
    ap.add_argument("--solves", type=int, default=1000)
    ap.add_argument("--loads", action="store_true", help="a cold solve per case, its kernel loads timed")
    ap.add_argument("--fresh", action="store_true", help="each timed solve is of a new potential equal to the "
                    "case's (as a sweep point solves one): nothing a potential keeps is carried over")
    args = ap.parse_args()
    paths = [Path(n) if Path(n).suffix else ROOT / "cases" / f"{n}.toml" for n in args.cases]
    if args.loads:
        print("cold `fdsolver solve` in a fresh process, CPU (the second of two runs; the first writes the caches)")
        for path in paths:
            print(f"  {path.stem}:")
            cold_loads(path)
        return

    from fdsolver.input.case import load_case
    from fdsolver.runs import solve_case

    cases = [(path.stem, load_case(path)) for path in paths]

    def solves_of(case) -> list:
        """The cases to time: the case itself each time, or (``--fresh``) a new potential equal to its own each
        time, made before the clock runs."""
        if not args.fresh:
            return [case] * args.solves
        return [dataclasses.replace(case, potential=dataclasses.replace(case.potential)) for _ in range(args.solves)]

    plain = {}
    for name, case in cases:  # untimed by the phase clocks
        for _ in range(100):
            solve_case(case)
        todo = solves_of(case)
        t0 = time.process_time()
        for c in todo:
            solve_case(c)
        plain[name] = (time.process_time() - t0) / args.solves

    spent: dict[str, int] = {}
    for module, func, label in PHASES:
        mod = importlib.import_module(module)
        inner = getattr(mod, func)

        @functools.wraps(inner)
        def timed(*a, _inner=inner, _label=label, **k):
            t = time.process_time_ns()
            try:
                return _inner(*a, **k)
            finally:
                spent[_label] = spent.get(_label, 0) + time.process_time_ns() - t

        setattr(mod, func, timed)

    what = "of a new potential each " if args.fresh else ""
    print(f"CPU ms per warm solve {what}({args.solves} solves each, one BLAS thread)")
    for name, case in cases:
        for _ in range(100):
            solve_case(case)
        todo = solves_of(case)
        spent.clear()
        t0 = time.process_time()
        for c in todo:
            solve_case(c)
        timed_total = (time.process_time() - t0) / args.solves
        print(f"  {name}: {plain[name] * 1e3:.3f} ms untimed, {timed_total * 1e3:.3f} ms with the phase clocks")
        for _module, _func, label in PHASES:
            print(f"    {label:<32} {spent.get(label, 0) / args.solves / 1e6:7.3f}")


if __name__ == "__main__":
    main()
