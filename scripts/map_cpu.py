#!/usr/bin/env python
"""CPU seconds of one serial 20 x 20 validity map of a case (width x d), after an untimed 3 x 3 map.

    PYTHONPATH=TREE python scripts/map_cpu.py cases/impurity_pair.toml

Run it with two source trees in turn, several times (same-minute pairs), to compare what a map costs: one BLAS
thread, the CPU time of this process.
"""

from __future__ import annotations

import os

os.environ["OMP_NUM_THREADS"] = "1"

import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402


def main() -> None:
    warnings.simplefilter("ignore")
    import fdsolver

    case = fdsolver.load_case(sys.argv[1])
    fdsolver.delta_map(case, ["width=1e-3:8:3", "d=6:16:3"], executor="serial")  # untimed: kernels loaded
    start = time.process_time()
    fdsolver.delta_map(case, ["width=1e-3:8:20", "d=6:16:20"], executor="serial")
    print(f"{time.process_time() - start:.3f}")


if __name__ == "__main__":
    main()
