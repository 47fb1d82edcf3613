#!/usr/bin/env python
"""Where a warm solve spends its CPU time: the driver's phases of ``solve_case`` on bundled cases.

Each phase (the plan, the coarse solve and box, the levels, the box check, the results and observables), and
parts of them (the base grids, the zero-energy count, the operators, the compiled level passes), is timed with
``time.process_time_ns`` around its function, inclusive of what it calls, over ``--solves`` warm solves of the
same case after 100 untimed ones, and printed per solve in ms beside the whole solve timed without the clocks.
The clocks themselves cost about a microsecond per timed call, so the phases add up to slightly more than
the untimed solve.  One BLAS thread.

Usage:  python scripts/solve_phases.py [CASE ...] [--solves N]   (a CASE is a bundled case's name or a path;
        default: double_square coupled_wells)
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse
import functools
import importlib
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

#: (module, function, label): each replaced in its caller's module by a timed wrapper.  The five phases first,
#: then parts of them timed wherever they are called ("both": in the coarse solve and in the levels)
PHASES = [
    ("fdsolver.boundstates.driver", "plan", "plan"),
    ("fdsolver.boundstates.driver", "_provisional", "coarse solve and box"),
    ("fdsolver.boundstates.driver", "_levels", "levels"),
    ("fdsolver.boundstates.driver", "_box_check", "box check"),
    ("fdsolver.boundstates.driver", "finish", "results and observables"),
    ("fdsolver.boundstates.driver", "_grid", "part: base grids (both)"),
    ("fdsolver.boundstates.driver", "_missing", "part: zero-energy count"),
    ("fdsolver.boundstates.driver", "open_box", "part: open box (both)"),
    ("fdsolver.boundstates.levels", "sectors_on", "part: operators (all grids)"),
    ("fdsolver.boundstates.levels", "solve_grid", "part: level passes (all grids)"),
    ("fdsolver.boundstates.levels", "_judge", "part: judging the states"),
]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("cases", nargs="*", default=["double_square", "coupled_wells"])
    ap.add_argument("--solves", type=int, default=1000)
    args = ap.parse_args()

    from fdsolver.input.case import load_case
    from fdsolver.runs import solve_case

    cases = []
    for name in args.cases:
        path = Path(name) if Path(name).suffix else ROOT / "cases" / f"{name}.toml"
        cases.append((Path(path).stem, load_case(path)))

    plain = {}
    for name, case in cases:  # untimed by the phase clocks
        for _ in range(100):
            solve_case(case)
        t0 = time.process_time()
        for _ in range(args.solves):
            solve_case(case)
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

    print(f"CPU ms per warm solve ({args.solves} solves each, one BLAS thread)")
    for name, case in cases:
        for _ in range(100):
            solve_case(case)
        spent.clear()
        t0 = time.process_time()
        for _ in range(args.solves):
            solve_case(case)
        timed_total = (time.process_time() - t0) / args.solves
        print(f"  {name}: {plain[name] * 1e3:.3f} ms untimed, {timed_total * 1e3:.3f} ms with the phase clocks")
        for _module, _func, label in PHASES:
            print(f"    {label:<32} {spent.get(label, 0) / args.solves / 1e6:7.3f}")


if __name__ == "__main__":
    main()
