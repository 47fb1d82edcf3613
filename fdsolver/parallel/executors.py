"""Where jobs run: in this process, in local worker processes, or on a Dask cluster.

Every executor is a context manager with ``imap_unordered(fn, jobs)``: it
pulls jobs from the iterator lazily, keeps at most ``in_flight`` of them
submitted at once (so memory holds the result, not a queue of every job),
and yields each result as soon as it is done.  ``fn`` must be a module-level
function (it is sent to other processes by reference).  Every process that
runs jobs limits its BLAS to one thread (:func:`one_blas_thread` in the
caller's process, :func:`_pin_worker` in a worker), so the results do not
depend on the executor.  The caller may give an
``initializer``, a module-level function run once in each worker process
(the studies warm up their compiled kernels with it).  Nothing here knows
what the jobs compute.  Dask is imported only inside :class:`DaskExecutor`
and is an optional extra (``pip install .[cluster]``).
"""

from __future__ import annotations

import os
import sys
from concurrent.futures import FIRST_COMPLETED, wait

from fdsolver.errors import CaseError, FdsolverError

BLAS_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
THREAD_VARS = (*BLAS_VARS, "NUMBA_NUM_THREADS")


def one_blas_thread():
    """Limit every BLAS/OpenMP library of this process to one thread (:mod:`fdsolver.numerics.threads`), for
    the serial executor's run in the caller's process (undone at its end).

    Multithreaded BLAS reductions change the last bits of large-grid energies
    with the thread count, so every process that runs jobs does so with one
    BLAS thread: serial, local and Dask runs then agree bit for bit.  numpy
    and scipy.linalg are imported first, so their BLAS libraries are loaded
    (threadpoolctl limits the libraries loaded when it is called).
    ``.restore_original_limits()`` on the result undoes it.
    """
    import numpy  # noqa: F401
    import scipy.linalg  # noqa: F401

    from fdsolver.numerics.threads import one_blas_thread as limit

    return limit()


_PINNED = [False]


def _pin_worker() -> None:
    """One BLAS thread for the rest of a worker process's life (done once per process).

    The libraries loaded now (numpy's BLAS) are limited with threadpoolctl; one that a job loads later
    (scipy.linalg's own OpenBLAS, say) starts with one thread, because from here on this process's
    environment says 1 (OpenBLAS, OpenMP and MKL read it when they load).  scipy.linalg is not imported
    for the limiter, as :func:`one_blas_thread` does in the caller's process: in a worker whose parent had
    not loaded it, that import cost 0.1-0.2 s of CPU before the first job.  ``NUMBA_NUM_THREADS`` is left
    alone (numba refuses a change once its threads run; the local pool sets it before it forks).
    """
    if _PINNED[0]:
        return
    for k in BLAS_VARS:
        os.environ[k] = "1"
    import numpy  # noqa: F401

    from fdsolver.numerics.threads import one_blas_thread as limit

    limit()
    _PINNED[0] = True


def _in_worker(fn, job):
    """Run ``fn(job)`` in a worker process whose BLAS is limited to one thread (:func:`_pin_worker`)."""
    _pin_worker()
    return fn(job)


def _worker_setup(initializer=None, collector: bool = False) -> None:
    """Start of a worker process: one BLAS thread, then the caller's ``initializer`` (if any).

    ``collector``: turn Python's cyclic garbage collector back on.  A worker forked while its parent had
    paused it (:class:`_collector_paused`) starts with it off, and would keep every reference cycle its
    jobs leave for as long as it lives.
    """
    if collector:
        import gc

        gc.enable()
    _pin_worker()
    if initializer is not None:
        initializer()


def _local_worker_init(initializer=None) -> None:
    """Initializer of local worker processes: set up, and end when the parent process dies.

    A run killed with SIGKILL cannot stop its workers, and they would wait on
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

    watcher = threading.Thread(target=watch, daemon=True, name="fdsolver-parent-watch")
    # it imports nothing and never touches numpy, SciPy or PyYAML, so the core may still swap those for an
    # instant (fdsolver.compiled.TOUCHES_NO_MODULES): a worker's first kernel calls then need not import numpy's
    # masked arrays (24-28 ms of wall time per worker, measured with python -X importtime)
    watcher.fdsolver_touches_no_modules = True
    watcher.start()
    _worker_setup(initializer)


class SerialExecutor:
    """Run jobs one after the other in this process (the reference for every other executor)."""

    name = "serial"
    workers = 1
    dashboard = None

    def __init__(self, initializer=None):
        self.initializer = initializer  # not run: this process needs no warming up for itself
        self._limits = None

    def __enter__(self):
        self._limits = one_blas_thread()
        return self

    def __exit__(self, *exc):
        if self._limits is not None:
            self._limits.restore_original_limits()
            self._limits = None
        return False

    def imap_unordered(self, fn, jobs):
        limits = one_blas_thread()  # also when used without `with`
        try:
            for job in jobs:
                yield fn(job)
        finally:
            if self._limits is None:
                limits.restore_original_limits()


class ProcessExecutor:
    """Run jobs in ``workers`` local processes (default: all cores), one BLAS thread each."""

    name = "processes"
    dashboard = None

    def __init__(self, workers: int | None = None, in_flight: int | None = None, initializer=None):
        self.initializer = initializer
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
        module = getattr(self.initializer, "__module__", None)
        if method == "forkserver" and module:
            ctx.set_forkserver_preload([module])
        self.method = method
        self._pool = ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx, initializer=_local_worker_init,
                                         initargs=(self.initializer,))
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


#: the word after ``local:N:`` that asks a LocalCluster for its dashboard
DASHBOARD = "dashboard"


def parse_cluster(spec: str) -> tuple[int, bool]:
    """Worker count of ``local:N`` (at most :func:`fdsolver.limits.max_local_workers`), and whether the
    dashboard is served (``local:N:dashboard``).

    The dashboard is asked for, not served by default: with bokeh installed, serving it costs about 0.5 s of
    CPU at every cluster's start (0.96-0.98 against 0.46 s for a first start in a process, measured), a tenth
    of a 10,000-point sweep on 2 cores, for pages that only a watcher of the cluster opens.
    """
    if not isinstance(spec, str):
        raise CaseError(f"give the cluster as local:N, got {spec!r}", key="--cluster")
    kind, _, rest = spec.partition(":")
    n, colon, extra = rest.partition(":")
    if kind != "local" or not n.isdigit() or int(n) < 1 or (colon and extra != DASHBOARD):
        raise CaseError(f"'{spec}' is not local:N or local:N:{DASHBOARD} (N workers on this machine, e.g. local:4)",
                        key="--cluster")
    _local_limit(int(n), "--cluster")
    return int(n), extra == DASHBOARD


#: local worker processes per core at most (a little oversubscription is harmless; thousands of processes are not)
WORKERS_PER_CORE = 2


def cores() -> int:
    """The processors this process may run on (its affinity mask where the OS has one)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def max_local_workers() -> int:
    """Most worker processes of a local pool or a local Dask cluster: :data:`WORKERS_PER_CORE` per core."""
    return WORKERS_PER_CORE * cores()


def _local_limit(n: int, key: str) -> None:
    """Refuse more local worker processes than this machine can run (:func:`max_local_workers`)."""
    if n > max_local_workers():
        raise CaseError(f"{n} local workers asked for; at most {max_local_workers()} ({WORKERS_PER_CORE} per core, "
                        f"{cores()} cores here) are started", key=key)


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


class _collector_paused:
    """Pause Python's cyclic garbage collector for a block (restored as it was at the end).

    Loading Dask's modules and starting a cluster allocates some 100,000 long-lived objects, which sets off
    full collections; each walks every object the process holds (about 110,000 more after a sweep has
    loaded the archive's libraries).  Measured in a process that had run a serial sweep (scratch script,
    not kept): the import of dask.distributed took 0.24-0.30 s with the collector paused and 0.31-0.40 s
    without it (three runs each).  Nothing in the block is left as garbage worth collecting early.  A process
    forked inside the block starts with the collector off; the caller turns it back on there.
    """

    def __enter__(self):
        import gc

        self.was = gc.isenabled()
        gc.disable()
        return self

    def __exit__(self, *exc):
        import gc

        if self.was:
            gc.enable()
        return False


#: Dask settings of the LocalCluster fdsolver starts (its own cluster, so its own settings): the points are
#: equal chunks (no work stealing needed), their memory is bounded by fdsolver's own budget (memory_mb), so the
#: workers' memory monitor, the system monitors, the statistical profiler (a stack sample every 10 ms) and the
#: event loop's health tick (every 20 ms) only take CPU from the solves on a small machine.  Measured
#: on 2,000 sweep points on 2 cores (5 pairs of runs each, a noisy machine): the Dask run took 13.4-16.7 s with
#: Dask's defaults and 11.8-13.8 s with these, the local pool 10.6-14.6 s throughout.
LOCAL_CLUSTER_CONFIG = {
    "distributed.worker.memory.target": False,
    "distributed.worker.memory.spill": False,
    "distributed.worker.memory.pause": False,
    "distributed.worker.memory.terminate": False,
    "distributed.worker.memory.monitor-interval": "5s",
    "distributed.admin.system-monitor.interval": "5s",
    "distributed.scheduler.work-stealing": False,
    # diagnostics that wake every worker's event loop (and take the GIL from the solve) tens of times a second
    "distributed.worker.profile.enabled": False,
    "distributed.admin.system-monitor.gil.enabled": False,
    "distributed.admin.tick.interval": "500ms",
}


class DaskExecutor:
    """Run jobs on Dask: a new LocalCluster of ``workers`` processes, or an existing scheduler at ``address``.

    ``dashboard``: the new cluster serves Dask's dashboard (see :func:`parse_cluster` for its cost); the link is
    kept in ``.dashboard``.  An existing scheduler's dashboard is its own: its link is kept whenever it serves one.
    """

    name = "dask"

    def __init__(self, workers: int | None = None, address: str | None = None, in_flight: int | None = None,
                 processes: bool = True, dashboard: bool = False, initializer=None):
        self.initializer = initializer
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
        with _collector_paused() as paused:  # a start creates some 100,000 objects: no full collections meanwhile
            return self._start_cluster(paused.was)

    def _start_cluster(self, collector: bool):
        """Start (or reach) the cluster; ``collector``: this process ran its cyclic GC before the start, so the
        workers a new cluster forks meanwhile turn theirs back on."""
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
                with _sigint_ignored(), dask.config.set({"distributed.worker.multiprocessing-method": method,
                                                         **LOCAL_CLUSTER_CONFIG}):
                    self.cluster = LocalCluster(
                        n_workers=int(self.n_workers or os.cpu_count() or 1), threads_per_worker=1, processes=self.processes,
                        host="127.0.0.1", dashboard_address=":8787" if self.want_dashboard else None,
                        silence_logs=logging.CRITICAL,  # workers losing the scheduler's heartbeat at close, not errors
                    )
                self.client = Client(self.cluster)
        except CaseError:
            raise
        except (OSError, TimeoutError) as exc:
            raise CaseError(f"cannot reach the Dask scheduler at {self.address}: {exc}", key="--scheduler") from None
        info = self.client.scheduler_info()
        self.workers = max(1, len(info.get("workers", {})))
        self.in_flight = self.in_flight_arg or 2 * self.workers
        if self.address:  # its web server's name says it serves the pages (the pages need bokeh over there)
            served = "dashboard" in (info.get("services") or {})
        else:  # this process's scheduler always runs a web server; the pages are added only where bokeh imports
            import importlib.util

            served = self.want_dashboard and importlib.util.find_spec("bokeh") is not None
        if served:
            self.dashboard = self.client.dashboard_link
        elif self.want_dashboard:
            self.dashboard = "not served by this scheduler (it needs bokeh: pip install bokeh)"
        self.client.run(_worker_setup, self.initializer, collector and self.cluster is not None)
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
            ac.add(self.client.submit(_in_worker, fn, job, pure=False))
            count += 1
            if count >= self.in_flight:
                break
        try:
            for fut in ac:
                result = fut.result()
                fut.release()
                job = next(jobs, None)
                if job is not None:
                    ac.add(self.client.submit(_in_worker, fn, job, pure=False))
                yield result
        finally:
            for fut in list(ac.futures):
                fut.cancel()


def make_executor(kind: str | None = None, workers: int | None = None, cluster: str | None = None,
                  scheduler: str | None = None, initializer=None):
    """The executor asked for (``processes`` unless a cluster or scheduler is named); ``initializer`` runs once in
    each worker process."""
    if cluster and scheduler:
        raise CaseError("give --cluster or --scheduler, not both", key="--cluster")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int) or workers < 1):
        raise CaseError(f"needs at least 1 worker, got {workers!r}", key="--workers")
    if workers is not None and not scheduler:
        _local_limit(workers, "--workers")
    if cluster or scheduler or kind == "dask":
        n, dashboard = parse_cluster(cluster) if cluster else (workers, False)
        return DaskExecutor(workers=n, address=scheduler, dashboard=dashboard, initializer=initializer)
    if kind == "serial" or (workers == 1 and kind is None):
        return SerialExecutor(initializer)
    if kind in (None, "processes"):
        return ProcessExecutor(workers, initializer=initializer)
    raise CaseError(f"unknown executor '{kind}' (serial, processes, dask)", key="--executor")
