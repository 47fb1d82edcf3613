#!/usr/bin/env python
"""Do the numba kernels beat numpy / LAPACK?  Times each kernel against its best non-numba equivalent
on the same arrays in the same run (N = 1e4, 1e5, 1e6; best of 7, one thread).

Usage:  OMP_NUM_THREADS=1 python scripts/bench_kernels.py
"""

from __future__ import annotations

import time

import numpy as np
from scipy.linalg import eigvalsh_tridiagonal
from scipy.linalg.lapack import dgtsv

from fdsolver.numerics import kernels


def best(f, reps=7):
    f()
    t = []
    for _ in range(reps):
        t0 = time.perf_counter()
        f()
        t.append(time.perf_counter() - t0)
    return min(t)


def main():
    rng = np.random.default_rng(1)
    print(f"{'kernel':<34} {'N':>8} {'numba [ms]':>11} {'alternative [ms]':>17} {'ratio':>7}  alternative")
    for n in (10_000, 100_000, 1_000_000):
        d = 2.0 + rng.random(n)
        e = -np.ones(n - 1)
        # a shift with 10 eigenvalues below it, as when counting the bound states of a case
        sigma = float(eigvalsh_tridiagonal(d, e, select="i", select_range=(9, 10), lapack_driver="stebz").mean())
        t_nb = best(lambda: kernels.sturm_count(d, e, sigma))
        t_lp = best(lambda: eigvalsh_tridiagonal(d, e, select="v", select_range=(-10.0, sigma), lapack_driver="stebz"), 3)
        print(f"{'Sturm count below a shift':<34} {n:8d} {t_nb*1e3:11.3f} {t_lp*1e3:17.3f} {t_lp/t_nb:7.1f}  LAPACK stebz, the 10 values below it")
        shifts = sigma + np.array([-0.1, -0.05, 0.05, 0.1])
        t_nb = best(lambda: kernels.sturm_counts_at(d, e, shifts))
        t_one = best(lambda: [kernels.sturm_count(d, e, x) for x in shifts])
        print(f"{'Sturm counts at 4 shifts, one pass':<34} {n:8d} {t_nb*1e3:11.3f} {t_one*1e3:17.3f} {t_one/t_nb:7.1f}  four single counts (numba)")
        b = rng.random(n)
        t_nb = best(lambda: kernels.tridiag_solve(d, e, sigma, b))
        t_lp = best(lambda: dgtsv(e, d - sigma, e, b))
        print(f"{'tridiagonal solve (pivoting)':<34} {n:8d} {t_nb*1e3:11.3f} {t_lp*1e3:17.3f} {t_lp/t_nb:7.1f}  LAPACK dgtsv")
        psi = rng.random(n)
        a = rng.random(n + 1) + 1
        vw = rng.random(n)
        w = rng.random(n) + 0.5

        def np_quot():
            num = a[0] * psi[0] ** 2 + a[-1] * psi[-1] ** 2 + np.sum(a[1:-1] * np.diff(psi) ** 2) + np.sum(vw * psi**2)
            return num / np.sum(w * psi**2)

        t_nb = best(lambda: kernels.flux_quotient(psi, a, vw, w))
        t_np = best(np_quot)
        print(f"{'flux-form Rayleigh quotient':<34} {n:8d} {t_nb*1e3:11.3f} {t_np*1e3:17.3f} {t_np/t_nb:7.1f}  numpy expression")
        x = np.cumsum(rng.random(n))
        h = rng.random(n)

        def py_lip():
            out = h.copy()
            for i in range(1, n):
                lim = out[i - 1] + 0.25 * (x[i] - x[i - 1])
                if lim < out[i]:
                    out[i] = lim
            return out

        t_nb = best(lambda: kernels.lipschitz_limit(x, h, 0.25))
        t_py = best(py_lip, 1) * 2  # forward sweep only, doubled for both sweeps
        print(f"{'Lipschitz limit of spacing':<34} {n:8d} {t_nb*1e3:11.3f} {t_py*1e3:17.3f} {t_py/t_nb:7.1f}  pure Python loop")


if __name__ == "__main__":
    main()
