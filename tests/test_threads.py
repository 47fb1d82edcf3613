"""A single solve runs with one BLAS thread and gives the same energies whatever the caller's thread count.

Why: multithreaded BLAS reductions change the last bits of a result with the thread count, and a second
BLAS thread on a loaded core slows small products (common practice, no source).  Thread counts are read
with threadpoolctl, the library that sets them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import scipy.linalg  # noqa: F401  (its BLAS is loaded, so it is counted and limited too)
from threadpoolctl import threadpool_info, threadpool_limits

from fdsolver import runs
from fdsolver.input.case import load_case

CASES = Path(__file__).resolve().parent.parent / "cases"


def blas_threads() -> list[int]:
    return [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]


def test_solve_pins_blas_while_it_runs_and_restores_it(monkeypatch):
    seen = []
    real = runs.solve_potential

    def spy(*args):
        seen.append(blas_threads())
        return real(*args)

    monkeypatch.setattr(runs, "solve_potential", spy)
    case = load_case(CASES / "coupled_wells.toml")
    with threadpool_limits(limits=2):
        before = blas_threads()
        runs.solve_case(case)
        assert blas_threads() == before  # the caller's limits are back
    assert seen and set(seen[0]) == {1}


def test_energies_do_not_depend_on_the_callers_thread_count():
    case = load_case(CASES / "coupled_wells.toml")
    with threadpool_limits(limits=1):
        one = runs.solve_case(case).energy
    with threadpool_limits(limits=2):
        two = runs.solve_case(case).energy
    assert np.array_equal(one, two)


def test_a_caller_already_on_one_thread_keeps_it():
    """The limiter leaves a caller that already runs one BLAS thread as it is (it sets nothing there), and still
    limits and restores a caller on two.  Counts read with threadpoolctl."""
    from fdsolver.numerics.threads import one_blas_thread

    with threadpool_limits(limits=1):
        with one_blas_thread():
            assert set(blas_threads()) == {1}
        assert set(blas_threads()) == {1}
    with threadpool_limits(limits=2):
        before = blas_threads()
        with one_blas_thread():
            assert set(blas_threads()) == {1}
        assert blas_threads() == before
