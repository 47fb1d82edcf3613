#!/usr/bin/env python
"""Warm solves of a long superlattice whose every layer is a named region: the observables' per-region sums and
the level pass on a miniband's closely spaced states, in CPU time.

The structure (invented): 150 wells of 3 nm at 0 meV between barriers of 2 nm at 200 meV, claddings at 200 meV,
mass 0.067 everywhere, 302 named layers; ``--states`` lowest states (40 by default).  One solve untimed, then
``--repeat`` solves, each timed with ``time.process_time`` (one BLAS thread); prints min and median in ms.

``--inverse-steps N`` sets ``fdsolver.boundstates.eigen.INVERSE_STEPS`` for the run (an experiment: the
project's value is the one in that module).  For a comparison with another version run the script with
``PYTHONPATH=/path/to/worktree``, alternating the two a few times (this machine's speed changes from minute to
minute).

Usage:  python scripts/bench_regions.py [--states K] [--repeat N] [--inverse-steps N]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse
import statistics
import time


def stack(states: int) -> dict:
    """The invented superlattice's case table (nm, meV)."""
    layers = [{"name": "left cladding", "band_edge": 200.0, "mass": 0.067}]
    for k in range(150):
        layers.append({"name": f"well {k}", "thickness": 3.0, "band_edge": 0.0, "mass": 0.067})
        layers.append({"name": f"barrier {k}", "thickness": 2.0, "band_edge": 200.0, "mass": 0.067})
    layers.append({"name": "right cladding", "band_edge": 200.0, "mass": 0.067})
    return {"units": "nm-meV", "mass": 0.067, "layer": layers, "solve": {"max_states": states}}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--states", type=int, default=40)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--inverse-steps", type=int, default=None)
    args = ap.parse_args()

    import fdsolver
    from fdsolver.boundstates import eigen
    from fdsolver.runs import solve_case

    if args.inverse_steps is not None:
        eigen.INVERSE_STEPS = args.inverse_steps
    data = stack(args.states)
    case = fdsolver.case_from_dict(data)
    sol = solve_case(case)  # kernels loaded
    cpu = []
    for _ in range(args.repeat):
        t0 = time.process_time()
        solve_case(case)
        cpu.append(time.process_time() - t0)
    print(f"{len(data['layer'])} named layers, {sol.energy.size} states ({int(sol.converged.sum())} converged), "
          f"{sol.x.size} nodes, inverse-iteration steps {eigen.INVERSE_STEPS}: CPU min {min(cpu) * 1e3:.1f} ms, "
          f"median {statistics.median(cpu) * 1e3:.1f} ms")


if __name__ == "__main__":
    main()
