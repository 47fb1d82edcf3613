#!/usr/bin/env python
"""Do the error bars of refined transitions cover their round-off?  Two valid eigen-solves of the same grids
compared in units of their bars.

For every bundled case and every structure of ``scripts/result_drift.py``'s generator (invented, nm and meV)
with two or more states, the refined dipoles and oscillator strengths
(:func:`fdsolver.optics.refine.refined_intersubband`) are computed twice: every level from bisection, and
every level started from the solver's own energies on that grid (the default).  Both are valid solves of the
same grids, so their difference is round-off; it is printed in units of the larger of the two error bars
(a value above 1 means a bar does not cover it).  ``--romberg-only``: the bars without the levels' round-off
terms (mixing angles and energy round-off set to zero), as the bars were before session 13.

Usage:  python scripts/transition_paths.py [--seed 7] [--count 150] [--romberg-only]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse
import sys
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--count", type=int, default=150)
    ap.add_argument("--romberg-only", action="store_true", help="bars without the round-off terms")
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    sys.path.insert(0, str(ROOT / "scripts"))
    from result_drift import structures

    import fdsolver
    from fdsolver.optics import refine
    from fdsolver.runs import solve_case

    if args.romberg_only:
        solve = refine._grid_solve

        def no_roundoff(*a, **k):
            e, psi, w, m, mix, ro = solve(*a, **k)
            return e, psi, w, m, np.zeros_like(mix), np.zeros_like(ro)

        refine._grid_solve = no_roundoff
    cases = [(p.stem, fdsolver.load_case(p)) for p in sorted((ROOT / "cases").glob("*.toml"))]
    for i, data in enumerate(structures(args.seed, args.count)):
        try:
            cases.append((f"structure {i}", fdsolver.case_from_dict(data)))
        except fdsolver.FdsolverError:
            continue
    level_start = refine._level_guesses
    rows, compared = [], 0
    for name, case in cases:
        if case.domain.periodic:
            continue
        try:
            sol = solve_case(case)
        except fdsolver.FdsolverError:
            continue
        if sol.energy.size < 2 or hasattr(sol, "state_mass"):
            continue
        refine._level_guesses = lambda *a: {}  # every level from bisection
        a = refine.refined_intersubband(case.potential, sol, case.units)
        refine._level_guesses = level_start
        b = refine.refined_intersubband(case.potential, sol, case.units)
        if a.levels < 2:
            continue
        compared += 1
        for quantity in ("dipole", "oscillator_strength"):
            u, v = getattr(a, quantity), getattr(b, quantity)
            bar = np.maximum(getattr(a, quantity + "_error"), getattr(b, quantity + "_error"))
            move = np.abs(u - v)
            ratio = np.where(move > 0, move / np.maximum(bar, 1e-300), 0.0)
            k = np.unravel_index(int(np.argmax(ratio)), ratio.shape)
            rows.append((float(ratio[k]), name, quantity, tuple(int(i) for i in k), float(u[k]), float(move[k]),
                         float(bar[k])))
    rows.sort(reverse=True)
    which = "Romberg estimates alone" if args.romberg_only else "error bars"
    print(f"{compared} structures with refined transitions; largest moves between the two solves, in units of "
          f"the larger of their {which}:")
    print(f"   {'in bars':>9}  {'structure':<26} {'quantity':<20} {'i, j':>6} {'value':>16} {'move':>9} {'bar':>9}")
    for r, name, quantity, k, value, move, bar in rows[:10]:
        print(f"   {r:9.3g}  {name:<26} {quantity:<20} {str(k[0]) + ', ' + str(k[1]):>6} {value:16.10g} {move:9.2e} "
              f"{bar:9.2e}")
    beyond = sum(r > 1.0 for r, *_ in rows)
    print(f"   beyond their bar: {beyond} of {len(rows)} (structure, quantity) pairs")


if __name__ == "__main__":
    main()
