"""Speed of the open-line studies added with the continuum: quasi-bound states through `solve` (a well in a
field), the zero-range check on a background (a sheet in a well), and the scattering check of two thin barriers.

Run with one BLAS thread:  OMP_NUM_THREADS=1 PYTHONPATH=. python scripts/bench_openline.py
CPU times (time.process_time) of warm calls, min and median of several runs, beside a calibration measured in
the same run (one 2000 x 2000 symmetric tridiagonal eigenvalue solve with scipy, the bound-state kind of work).
The cases are the invented ones in cases/.
"""

from __future__ import annotations

import statistics
import time
from pathlib import Path

import numpy as np
from scipy.linalg import eigh_tridiagonal

import fdsolver

CASES = Path(__file__).resolve().parents[1] / "cases"


def cpu(fn, repeat=3):
    fn()  # warm (JIT, caches)
    times = []
    for _ in range(repeat):
        t = time.process_time()
        out = fn()
        times.append(time.process_time() - t)
    return min(times), statistics.median(times), out


def main():
    cal, _, _ = cpu(lambda: eigh_tridiagonal(np.full(2000, 2.0), np.full(1999, -1.0), eigvals_only=True), 5)
    print(f"calibration (2000-point tridiagonal eigenvalues): {cal * 1e3:.2f} ms CPU")
    stark = fdsolver.load_case(CASES / "stark_well.toml")
    for field in (10.0, 50.0, 100.0):
        mn, md, ds = cpu(lambda f=field: fdsolver.solve(stark.with_params(F=f)))
        print(f"solve stark_well F = {field:g} kV/cm: {mn:.3f} s min, {md:.3f} s median ({mn / cal:.0f} calibrations); "
              f"E = {', '.join(f'{e:.6f}' for e in ds.energy.values)} meV, "
              f"log10 width/meV = {', '.join(f'{w:.3f}' for w in ds.log10_width.values)}")
    mn, md, ds = cpu(lambda: fdsolver.delta_check(CASES / "sheet_in_well.toml"), 2)
    print(f"delta-check sheet_in_well (10 widths, {ds.sizes['state']} states): {mn:.3f} s min, {md:.3f} s median "
          f"({mn / cal:.0f} calibrations); validity widths {np.round(ds.validity_width.values, 4)} nm")
    mn, md, ds = cpu(lambda: fdsolver.delta_check(CASES / "thin_barriers.toml", transmission=True), 2)
    print(f"delta-check --transmission thin_barriers ({ds.sizes['width']} widths, {ds.sizes['energy']} energies): "
          f"{mn:.3f} s min, {md:.3f} s median ({mn / cal:.0f} calibrations); validity width "
          f"{float(ds.validity_width):.4g} bohr")


if __name__ == "__main__":
    main()
