#!/usr/bin/env python
"""How accurate and how fast fdsolver's Airy functions are (fdsolver.numerics.airy), beside SciPy's.

Errors against mpmath at 40 digits, each relative to the value, or, in the oscillating sector 2 pi / 3 < |ph z|,
to the local envelope |Ai(w z)| + |Ai(w^2 z)| (w = exp(2 pi i / 3), DLMF 9.2.12), on seeded random points: inside
the circle |z| < 12 (the lattice and its Taylor steps), outside it (the expansion), and on the real axis; then
SciPy's ``airy`` on points outside the circle measured the same way; then CPU microseconds per value of both
(one BLAS thread; min of 5 repeats), and the CPU time of filling the whole lattice once.

Usage:  python scripts/airy_accuracy.py
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import time

import mpmath
import numpy as np
import scipy.special

from fdsolver.numerics import airy as airy_module
from fdsolver.numerics.airy import R_FAR, ai_scaled

mpmath.mp.dps = 40
W = mpmath.exp(2j * mpmath.pi / 3)


def reference(z: complex):
    """(Ai, Ai', scale, scale of Ai') from mpmath (module docstring for the scales)."""
    zz = mpmath.mpc(z.real, z.imag)
    ai, aip = mpmath.airyai(zz), mpmath.airyai(zz, derivative=1)
    if abs(np.angle(z)) <= 2 * np.pi / 3 - 0.3:
        return ai, aip, abs(ai), abs(aip)
    scale = abs(mpmath.airyai(W * zz)) + abs(mpmath.airyai(W * W * zz))
    scale_d = abs(mpmath.airyai(W * zz, derivative=1)) + abs(mpmath.airyai(W * W * zz, derivative=1))
    return ai, aip, max(abs(ai), scale), max(abs(aip), scale_d)


def errors(points, values):
    err, err_d = [], []
    for z, ai, aip in zip(points, *values):
        ref, ref_d, scale, scale_d = reference(complex(z))
        err.append(float(abs(mpmath.mpc(ai) - ref) / scale))
        err_d.append(float(abs(mpmath.mpc(aip) - ref_d) / scale_d))
    return np.array(err), np.array(err_d)


def ours(points):
    m, d, g = ai_scaled(points)
    return [mpmath.mpc(v) * mpmath.exp(x) for v, x in zip(m, g)], [mpmath.mpc(v) * mpmath.exp(x) for v, x in zip(d, g)]


def cpu_per_value(call, points) -> float:
    best = np.inf
    for _ in range(5):
        t = time.process_time()
        for _ in range(10):
            call(points)
        best = min(best, (time.process_time() - t) / (10 * points.size))
    return best * 1e6


def main() -> None:
    rng = np.random.default_rng(7)
    sets = {"inside |z| < 12": rng.uniform(-R_FAR, R_FAR, 800) + 1j * rng.uniform(-R_FAR, R_FAR, 800),
            "outside, 12 <= |z| <= 60": rng.uniform(R_FAR, 60, 400) * np.exp(1j * rng.uniform(-np.pi, np.pi, 400)),
            "real axis, -60 .. 30": rng.uniform(-60, 30, 300) + 0j}
    sets["inside |z| < 12"] = sets["inside |z| < 12"][np.abs(sets["inside |z| < 12"]) < R_FAR]
    print("errors against mpmath (40 digits), max / 99th percentile")
    for name, points in sets.items():
        err, err_d = errors(points, ours(points))
        print(f"  fdsolver, {name:26s} {points.size:4d} points: Ai {err.max():.2e} / {np.quantile(err, 0.99):.2e}, "
              f"Ai' {err_d.max():.2e} / {np.quantile(err_d, 0.99):.2e}")
    points = sets["outside, 12 <= |z| <= 60"]
    ai, aip, _, _ = scipy.special.airy(points)
    err, err_d = errors(points, (ai, aip))
    print(f"  SciPy,    {'outside, 12 <= |z| <= 60':26s} {points.size:4d} points: Ai {err.max():.2e} / "
          f"{np.quantile(err, 0.99):.2e}, Ai' {err_d.max():.2e} / {np.quantile(err_d, 0.99):.2e}")
    print("CPU per value, microseconds (min of 5)")
    for name, points in sets.items():
        points = points.astype(complex)
        ai_scaled(points)
        print(f"  {name:26s} fdsolver {cpu_per_value(ai_scaled, points):.2f}, "
              f"SciPy airye {cpu_per_value(scipy.special.airye, points):.2f}")
    size = 2 * airy_module.TABLE_HALF + 1
    table = (np.zeros((size, size), complex), np.zeros((size, size), complex), np.zeros((size, size)),
             np.zeros(size, bool))
    t = time.process_time()
    airy_module.airy_rows(np.arange(size), *table)
    print(f"the whole lattice ({size} rows), filled once: {1e3 * (time.process_time() - t):.2f} ms of CPU")


if __name__ == "__main__":
    main()
