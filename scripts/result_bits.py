#!/usr/bin/env python
"""Did a change that should compute the same numbers (a refactor, a compiled form of a step) change any bit of any
result?  Solve the bundled cases and the seeded random structures of ``result_drift.py`` with two versions of
fdsolver, and compare every field of every result exactly.

    python scripts/result_bits.py dump OUT.pkl [--optics] [--seed 7] [--count 150]
    python scripts/result_bits.py compare BEFORE.pkl AFTER.pkl

Run ``dump`` once with each version (``PYTHONPATH=/path/to/worktree python scripts/result_bits.py dump
before.pkl`` for the old one), then ``compare``, which prints every field that differs in any bit (NaN equal
to NaN) and exits with 1 if one does.  A dump holds every field of each ``Solution`` (``--optics``: of the
refined transitions ``fdsolver.solve_optics`` makes, the solve command's work), and refusals as their messages.
``dump`` also prints how the solves went through the compiled calls of a piecewise-constant potential: why
each all-levels call stopped (``kernels.LEVELS_*``) and after how many levels, and how many coarse solves the
one-call coarse solve decided (counted only where this version has them).  Periodic cases are skipped (no
bound states).  One BLAS thread.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse
import collections
import dataclasses
import math
import pickle
import sys
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(Path(__file__).resolve().parent))

from result_drift import structures


def _fields(obj) -> dict:
    inner = getattr(obj, "solution", obj)
    return {f.name: getattr(inner, f.name) for f in dataclasses.fields(inner)}


def _counted_paths() -> collections.Counter:
    """Count the compiled calls' outcomes, where this version of fdsolver has them."""
    seen: collections.Counter = collections.Counter()
    from fdsolver.boundstates import levels

    if hasattr(levels, "constant_levels"):
        names = {0: "done", 1: "level limit", 2: "budget", 3: "failed", 4: "states changed"}
        real_levels = levels.constant_levels

        def levels_call(*args, **kwargs):
            got = real_levels(*args, **kwargs)
            seen[f"all-levels call: {names.get(got[0], got[0])} after {len(got[1])} level(s)"] += 1
            return got

        levels.constant_levels = levels_call
    if hasattr(levels, "constant_coarse"):
        real_coarse = levels.constant_coarse

        def coarse_call(*args, **kwargs):
            got = real_coarse(*args, **kwargs)
            seen["coarse call: " + ("decided" if got is not None else "left to the general path")] += 1
            return got

        levels.constant_coarse = coarse_call
    return seen


def dump(path: str, optics: bool, seed: int, count: int) -> None:
    import fdsolver
    from fdsolver.api import solve_optics
    from fdsolver.runs import solve_case

    seen = _counted_paths()
    cases = [(p.stem, data) for p in sorted((ROOT / "cases").glob("*.toml")) for data in [p]]
    cases += [(f"random {i}", data) for i, data in enumerate(structures(seed, count))]
    out: dict = {}
    for name, data in cases:
        try:
            case = fdsolver.load_case(data) if isinstance(data, Path) else fdsolver.case_from_dict(data)
            if case.domain.periodic:
                continue
            if optics:
                tr = solve_optics(case).transitions
                out[name] = None if tr is None else _fields(tr)
            else:
                out[name] = _fields(solve_case(case))
        except fdsolver.FdsolverError as err:
            out[name] = f"refused: {err}"
    with open(path, "wb") as f:
        pickle.dump({"seed": seed, "count": count, "optics": optics, "results": out}, f)
    print(f"{path}: {len(out)} results, {sum(isinstance(v, str) for v in out.values())} refused")
    for what, n in sorted(seen.items()):
        print(f"   {what}: {n}")


def _same(a, b) -> bool:
    if isinstance(a, (tuple, list)) and isinstance(b, (tuple, list)):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        a, b = np.asarray(a), np.asarray(b)
        return a.shape == b.shape and a.dtype == b.dtype and np.array_equal(a, b, equal_nan=a.dtype.kind in "fc")
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return type(a) is type(b) and a == b


def compare(before: str, after: str) -> int:
    with open(before, "rb") as f:
        a = pickle.load(f)
    with open(after, "rb") as f:
        b = pickle.load(f)
    if (a["seed"], a["count"], a["optics"]) != (b["seed"], b["count"], b["optics"]):
        print("the two dumps are not of the same results (seed, count or --optics differ)")
        return 2
    differ = 0
    for name, x in a["results"].items():
        y = b["results"].get(name, "missing")
        if isinstance(x, dict) and isinstance(y, dict):
            for key in sorted(set(x) | set(y)):
                if key not in x or key not in y or not _same(x[key], y[key]):
                    print(f"{name}: {key} differs")
                    differ += 1
        elif not _same(x, y):
            print(f"{name}: {str(x)[:70]!r} -> {str(y)[:70]!r}")
            differ += 1
    print(f"{len(a['results'])} results, {differ} fields differ")
    return 1 if differ else 0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    sub = ap.add_subparsers(dest="what", required=True)
    d = sub.add_parser("dump", help="solve the cases and structures and write every field of every result")
    d.add_argument("out")
    d.add_argument("--optics", action="store_true", help="the refined transitions instead of the solutions")
    d.add_argument("--seed", type=int, default=7)
    d.add_argument("--count", type=int, default=150)
    c = sub.add_parser("compare", help="compare two dumps, every field bit for bit")
    c.add_argument("before")
    c.add_argument("after")
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    if args.what == "dump":
        dump(args.out, args.optics, args.seed, args.count)
        return 0
    return compare(args.before, args.after)


if __name__ == "__main__":
    sys.exit(main())
