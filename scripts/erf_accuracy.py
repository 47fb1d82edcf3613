#!/usr/bin/env python
"""Accuracy and cost of the expressions' erf and erfc (fdsolver.input._expressions.special) beside scipy.special.

Reference: mpmath at 40 digits, rounded to double.  Points: 2001 uniform on [-6, 6], 3000 normal (sigma 3, seed 1),
500 uniform on [0, 27] (erfc down to the subnormal range), and 200 each of -10^-300 .. -1 and 10^-300 .. 1.
Prints the largest error in units of the last place of the exact value (erfc where it is not zero), and the
CPU time of one call on 10^5 points (min and median of 50, one BLAS thread).

Usage:  python scripts/erf_accuracy.py
"""

from __future__ import annotations

import os

os.environ["OMP_NUM_THREADS"] = "1"

import statistics

import mpmath
import numpy as np
import scipy.special
from bench_overhead import (
    timed_runs,  # CPU and wall seconds of repeated calls (sets one BLAS thread)
)

from fdsolver.input._expressions import special


def ulps(got: np.ndarray, exact: np.ndarray) -> float:
    spacing = np.spacing(np.abs(exact))
    return float(np.max(np.abs(got - exact) / np.where(spacing > 0, spacing, 5e-324)))


def cpu_ms(f, x: np.ndarray) -> tuple[float, float]:
    """Min and median CPU milliseconds of 50 calls f(x), after one untimed call."""
    f(x)
    cpu, _ = timed_runs(lambda: f(x), 50)
    return min(cpu) * 1e3, statistics.median(cpu) * 1e3


def main() -> None:
    rng = np.random.default_rng(1)
    x = np.concatenate([np.linspace(-6, 6, 2001), rng.normal(0, 3, 3000), np.linspace(0, 27, 500),
                        -np.logspace(-300, 0, 200), np.logspace(-300, 0, 200)])
    with mpmath.workdps(40):
        exact_erf = np.array([float(mpmath.erf(mpmath.mpf(float(v)))) for v in x])
        exact_erfc = np.array([float(mpmath.erfc(mpmath.mpf(float(v)))) for v in x])
    nonzero = exact_erfc > 0
    print(f"{x.size} points; largest error in ulps of the exact value (mpmath, 40 digits)")
    print(f"  erf   fdsolver {ulps(special.erf(x), exact_erf):6.3g}   scipy.special {ulps(scipy.special.erf(x), exact_erf):6.3g}")
    print(f"  erfc  fdsolver {ulps(special.erfc(x)[nonzero], exact_erfc[nonzero]):6.3g}   scipy.special "
          f"{ulps(scipy.special.erfc(x)[nonzero], exact_erfc[nonzero]):6.3g}")
    normal = nonzero & (exact_erfc >= np.finfo(float).tiny)
    rel = np.max(np.abs(scipy.special.erfc(x)[normal] / exact_erfc[normal] - 1.0))
    print(f"  scipy.special.erfc where erfc is a normal double: largest relative error {rel:.2g}")
    big = np.linspace(-5, 5, 100_000)
    for name in ("erf", "erfc"):
        ours, theirs = cpu_ms(getattr(special, name), big), cpu_ms(getattr(scipy.special, name), big)
        print(f"  {name:5s} on 10^5 points, CPU ms (min / median of 50): fdsolver {ours[0]:.2f} / {ours[1]:.2f}   "
              f"scipy.special {theirs[0]:.2f} / {theirs[1]:.2f}")


if __name__ == "__main__":
    main()
