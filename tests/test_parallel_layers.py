"""The parallel layer knows nothing of physics: executors run the caller's initializer, pin BLAS with threadpoolctl,
and checkpoint.py is the file format alone.

Why one BLAS thread: multithreaded BLAS reductions change the last bits of a
result with the thread count (common practice, no source), and serial,
local and Dask runs must agree bit for bit.  The thread counts are read with
threadpoolctl, the library that sets them.
"""

from __future__ import annotations

import ast
import functools
import os
from pathlib import Path

import pytest
from threadpoolctl import threadpool_info

from fdsolver.parallel import checkpoint, executors
from fdsolver.parallel.executors import ProcessExecutor, SerialExecutor, make_executor

PARALLEL = Path(executors.__file__).parent


def blas_threads(_=None) -> list[int]:
    """Thread counts of every BLAS library loaded in this process."""
    import numpy  # noqa: F401
    import scipy.linalg  # noqa: F401

    return [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]


def fdsolver_imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text())
    names = {n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom) and n.module}
    names |= {a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names}
    return {n for n in names if n.startswith("fdsolver")}


@pytest.mark.parametrize("module", ["executors.py", "checkpoint.py", "__init__.py"])
def test_parallel_imports_nothing_of_the_physics(module):
    # the one BLAS-thread limiter is shared with single solves; it knows no physics either
    assert fdsolver_imports(PARALLEL / module) <= {"fdsolver.errors", "fdsolver.numerics.threads"}


def test_checkpoint_module_is_the_format_only():
    defined = {n for n, v in vars(checkpoint).items()
               if not n.startswith("_") and callable(v) and getattr(v, "__module__", "") == checkpoint.__name__}
    assert defined == {"Checkpoint", "decode", "difference", "encode", "path_for"}  # no driver of any scan


def test_serial_executor_pins_blas_and_restores_it():
    before = blas_threads()
    assert before, "no BLAS library found to check"
    with SerialExecutor() as ex:
        assert set(blas_threads()) == {1}
        assert list(ex.imap_unordered(blas_threads, [0])) == [[1] * len(before)]
    assert blas_threads() == before


def test_serial_executor_pins_blas_without_with():
    before = blas_threads()
    assert list(SerialExecutor().imap_unordered(blas_threads, [0, 1])) == [[1] * len(before)] * 2
    assert blas_threads() == before


def mark_worker(folder=None):
    """An initializer: leave a file named after the worker's process id in ``folder`` (the test reads it)."""
    if folder is not None:
        Path(folder, str(os.getpid())).write_text("warm")


def worker_state(_):
    return os.getpid(), blas_threads()


def test_process_workers_run_the_callers_initializer_with_one_blas_thread(tmp_path):
    # a partial of a module-level function: workers may start from a fork server that predates this test
    with ProcessExecutor(2, initializer=functools.partial(mark_worker, str(tmp_path))) as ex:
        seen = list(ex.imap_unordered(worker_state, range(8)))
    pids = {pid for pid, _ in seen}
    assert all(set(threads) == {1} for _, threads in seen)
    assert pids <= {int(p.name) for p in tmp_path.iterdir()} and len(list(tmp_path.iterdir())) == 2


def test_make_executor_hands_the_initializer_on():
    assert make_executor("processes", 2, initializer=mark_worker).initializer is mark_worker
    assert make_executor("serial", initializer=mark_worker).initializer is mark_worker
    assert make_executor(cluster="local:2", initializer=mark_worker).initializer is mark_worker


WORKER_PROBE = """
import sys
from fdsolver.parallel.executors import ProcessExecutor


def probe(_):
    before = "scipy.linalg" in sys.modules
    import scipy.linalg  # noqa: F401  (its own OpenBLAS loads now, after the worker's set-up)
    from threadpoolctl import threadpool_info

    return before, sorted({i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"})


if __name__ == "__main__":
    assert "scipy.linalg" not in sys.modules
    with ProcessExecutor(1) as ex:
        print(list(ex.imap_unordered(probe, [0])))
"""


def test_a_blas_loaded_after_a_workers_set_up_runs_one_thread_too(tmp_path):
    # a fresh parent that has not loaded scipy.linalg, with the user's environment asking for 2 BLAS threads:
    # the worker's set-up does not import scipy.linalg, yet its OpenBLAS, loaded later by a job, runs one thread
    import subprocess
    import sys

    script = tmp_path / "probe.py"
    script.write_text(WORKER_PROBE)
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "2", "OMP_NUM_THREADS": "2"}
    out = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, env=env, check=True,
                         cwd=tmp_path).stdout
    assert out.strip() == "[(False, [1])]"
