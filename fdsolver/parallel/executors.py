"""Where sweep chunks run: in this process, in local worker processes, or on a Dask cluster.

Every executor is a context manager with ``imap_unordered(fn, jobs)``: it
pulls jobs from the iterator lazily, keeps at most ``in_flight`` of them
submitted at once (so memory holds the result, not a queue of every point),
and yields each result as soon as it is done.  ``fn`` must be a module-level
function (it is sent to other processes by reference).  Dask is imported only
inside :class:`DaskExecutor` and is an optional extra (``pip install .[cluster]``).
"""

from __future__ import annotations

import os
import sys
from concurrent.futures import FIRST_COMPLETED, wait

from fdsolver.errors import CaseError, FdsolverError

THREAD_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMBA_NUM_THREADS")


_SETTERS = ("scipy_openblas_set_num_threads64_", "scipy_openblas_set_num_threads", "openblas_set_num_threads64_", "openblas_set_num_threads")
_GETTERS = ("scipy_openblas_get_num_threads64_", "scipy_openblas_get_num_threads", "openblas_get_num_threads64_", "openblas_get_num_threads")


def blas_threads(n: int | None = None) -> int | None:
    """Set every loaded OpenBLAS to ``n`` threads (None: only ask); returns the previous count, None if none found.

    Multithreaded BLAS reductions change the last bits of large-grid energies
    with the thread count, so every process that solves sweep points runs with
    one BLAS thread: serial, local and Dask runs then agree bit for bit.
    Found through /proc/self/maps (Linux); elsewhere nothing is changed.
    """
    import ctypes

    try:
        with open("/proc/self/maps") as fh:
            paths = sorted({ln.split()[-1] for ln in fh if "openblas" in ln.rsplit("/", 1)[-1].lower()})
    except OSError:
        return None
    previous = None
    for path in paths:
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        get = next((getattr(lib, g) for g in _GETTERS if hasattr(lib, g)), None)
        put = next((getattr(lib, g) for g in _SETTERS if hasattr(lib, g)), None)
        if get is not None and previous is None:
            previous = int(get())
        if put is not None and n is not None:
            put(int(n))
    return previous


def warm_up() -> None:
    """Pin BLAS to one thread and load the compiled kernels once in a worker (numba disk cache) with a tiny solve."""
    blas_threads(1)
    from fdsolver.api import solve_case
    from fdsolver.input.case import case_from_dict

    solve_case(case_from_dict({"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 4.0}],
                               "solve": {"tolerance": 1e-4}}))


def _worker_init() -> None:
    """Initializer of local worker processes: warm up, and end when the sweep process dies.

    A sweep killed with SIGKILL cannot stop its workers, and they would wait on
    their job queue forever; a daemon thread checks every 0.5 s that the parent
    is still the same process and ends the worker otherwise.
    """
    import threading
    import time

    parent = os.getppid()

    def watch():
        while os.getppid() == parent:
            time.sleep(0.5)
        os._exit(1)

    threading.Thread(target=watch, daemon=True, name="fdsolver-parent-watch").start()
    warm_up()


class SerialExecutor:
    """Run jobs one after the other in this process (the reference for every other executor)."""

    name = "serial"
    workers = 1
    dashboard = None

    def __enter__(self):
        self._blas = blas_threads(1)
        return self

    def __exit__(self, *exc):
        if getattr(self, "_blas", None):
            blas_threads(self._blas)
        return False

    def imap_unordered(self, fn, jobs):
        for job in jobs:
            yield fn(job)


class ProcessExecutor:
    """Run jobs in ``workers`` local processes (default: all cores), one BLAS thread each."""

    name = "processes"
    dashboard = None

    def __init__(self, workers: int | None = None, in_flight: int | None = None):
        self.workers = int(workers or os.cpu_count() or 1)
        if self.workers < 1:
            raise CaseError(f"needs at least one worker, got {workers}", key="--workers")
        self.in_flight = in_flight or 2 * self.workers
        self._pool = None
        self._saved_env: dict[str, str | None] = {}

    def __enter__(self):
        import multiprocessing as mp
        from concurrent.futures import ProcessPoolExecutor

        for k in THREAD_VARS:  # children inherit the environment at start
            self._saved_env[k] = os.environ.get(k)
            os.environ.setdefault(k, "1")
        import threading

        # fork is fastest and needs no `if __name__ == "__main__"` guard in scripts, but is unsafe once
        # other threads exist; then the fork server (a clean single-threaded parent) is used instead
        linux = sys.platform.startswith("linux")
        method = ("fork" if threading.active_count() == 1 else "forkserver") if linux else "spawn"
        ctx = mp.get_context(method)
        if method == "forkserver":
            ctx.set_forkserver_preload(["fdsolver.scans.sweep", "fdsolver.api"])
        self.method = method
        self._pool = ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx, initializer=_worker_init)
        try:
            self._pool.submit(int).result()  # start every worker now, before any progress-bar thread
        except Exception:
            self.__exit__(RuntimeError)
            raise FdsolverError(
                "the worker processes failed to start; in a script, run the sweep under "
                '`if __name__ == "__main__":`'
            ) from None
        return self

    def __exit__(self, exc_type, *exc):
        if self._pool is not None:
            self._pool.shutdown(wait=exc_type is None, cancel_futures=True)
        for k, v in self._saved_env.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
        return False

    def imap_unordered(self, fn, jobs):
        from concurrent.futures.process import BrokenProcessPool

        jobs = iter(jobs)
        pending = set()
        try:
            while True:
                while len(pending) < self.in_flight:
                    job = next(jobs, None)
                    if job is None:
                        break
                    pending.add(self._pool.submit(fn, job))
                if not pending:
                    return
                done, pending = wait(pending, return_when=FIRST_COMPLETED)
                for fut in done:
                    yield fut.result()
        except BrokenProcessPool:
            raise FdsolverError(
                "a worker process died (out of memory or killed); finished points are kept in the checkpoint - rerun with --resume"
            ) from None
        finally:
            for fut in pending:
                fut.cancel()


def parse_cluster(spec: str) -> int:
    """Worker count of ``local:N``."""
    kind, _, n = (spec or "").partition(":")
    if kind != "local" or not n.isdigit() or int(n) < 1:
        raise CaseError(f"'{spec}' is not local:N (N workers on this machine, e.g. local:4)", key="--cluster")
    return int(n)


class _sigint_ignored:
    """Ignore SIGINT while a cluster's processes start, so that they inherit the ignored signal and a later
    Ctrl-C reaches this process only (which closes them) instead of each printing a traceback.  (A blocked
    mask is not inherited through spawn; an ignored disposition is.)  A Ctrl-C within these few seconds of
    start-up is lost.  Main thread only; a no-op elsewhere."""

    def __enter__(self):
        import signal
        import threading

        self.old = None
        if threading.current_thread() is threading.main_thread():
            self.old = signal.signal(signal.SIGINT, signal.SIG_IGN)
        return self

    def __exit__(self, *exc):
        import signal

        if self.old is not None:
            signal.signal(signal.SIGINT, self.old)
        return False


class DaskExecutor:
    """Run jobs on Dask: a new LocalCluster of ``workers`` processes, or an existing scheduler at ``address``."""

    name = "dask"

    def __init__(self, workers: int | None = None, address: str | None = None, in_flight: int | None = None,
                 processes: bool = True, dashboard: bool = True):
        self.address, self.n_workers, self.processes, self.want_dashboard = address, workers, processes, dashboard
        self.in_flight_arg = in_flight
        self.client = self.cluster = None
        self.dashboard = None
        self.workers = workers or 1

    def __enter__(self):
        try:
            return self._start()
        except BaseException:
            self.__exit__()
            raise

    def _start(self):
        try:
            import logging

            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise CaseError("the Dask executor needs the optional extra: pip install 'fdsolver[cluster]'", key="--cluster") from None
        try:
            if self.address:
                if "://" not in self.address:
                    raise CaseError(f"'{self.address}' is not a scheduler address like tcp://HOST:PORT", key="--scheduler")
                self.client = Client(self.address, timeout="15s")
            else:
                import dask

                # fork the local workers (they inherit the imported modules and the numba cache) where the OS
                # has fork; measured on 2000 points: 1.09x the local executor, against 1.26x with spawn
                method = "fork" if sys.platform.startswith("linux") else "spawn"
                with _sigint_ignored(), dask.config.set({"distributed.worker.multiprocessing-method": method}):
                    self.cluster = LocalCluster(
                        n_workers=int(self.n_workers or os.cpu_count() or 1), threads_per_worker=1, processes=self.processes,
                        host="127.0.0.1", dashboard_address=":8787" if self.want_dashboard else None, silence_logs=logging.ERROR,
                    )
                self.client = Client(self.cluster)
        except CaseError:
            raise
        except (OSError, TimeoutError) as exc:
            raise CaseError(f"cannot reach the Dask scheduler at {self.address}: {exc}", key="--scheduler") from None
        info = self.client.scheduler_info()
        self.workers = max(1, len(info.get("workers", {})))
        self.in_flight = self.in_flight_arg or 2 * self.workers
        if self.want_dashboard:
            served = "dashboard" in (info.get("services") or {})
            self.dashboard = self.client.dashboard_link if served else "not served by this scheduler (it needs bokeh: pip install bokeh)"
        self.client.run(warm_up)
        return self

    def __exit__(self, *exc):
        if self.client is not None:
            self.client.close()
        if self.cluster is not None:
            self.cluster.close()
        return False

    def imap_unordered(self, fn, jobs):
        from dask.distributed import as_completed

        jobs = iter(jobs)
        ac = as_completed()
        count = 0
        for job in jobs:
            ac.add(self.client.submit(fn, job, pure=False))
            count += 1
            if count >= self.in_flight:
                break
        try:
            for fut in ac:
                result = fut.result()
                fut.release()
                job = next(jobs, None)
                if job is not None:
                    ac.add(self.client.submit(fn, job, pure=False))
                yield result
        finally:
            for fut in list(ac.futures):
                fut.cancel()


def make_executor(kind: str | None = None, workers: int | None = None, cluster: str | None = None, scheduler: str | None = None):
    """The executor the command line asked for (``processes`` unless a cluster or scheduler is named)."""
    if cluster and scheduler:
        raise CaseError("give --cluster or --scheduler, not both", key="--cluster")
    if cluster or scheduler or kind == "dask":
        return DaskExecutor(workers=parse_cluster(cluster) if cluster else workers, address=scheduler)
    if kind == "serial" or (workers == 1 and kind is None):
        return SerialExecutor()
    if kind in (None, "processes"):
        return ProcessExecutor(workers)
    raise CaseError(f"unknown executor '{kind}' (serial, processes, dask)", key="--executor")
