"""Executors: local processes and a Dask LocalCluster give the serial result; jobs stay bounded; errors surface."""

import math
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import fdsolver
from fdsolver.parallel import checkpoint as ck
from fdsolver.scans import sweep as sw
from fdsolver.errors import CaseError
from fdsolver.parallel.executors import DaskExecutor, ProcessExecutor, SerialExecutor, make_executor, parse_cluster

CASE = str(Path(__file__).resolve().parent.parent / "cases" / "double_square.toml")
VARY = ["d=0.5:5:12", "depth=80,120"]


def spec():
    case = fdsolver.load_case(CASE)
    return sw.plan_sweep(case, sw.sweep_axes(VARY, case), chunk=3)


def values(ds):
    ds = ds.copy()
    ds.attrs.pop("history")
    return ds


@pytest.fixture(scope="module")
def serial_result():
    return sw.run_sweep(spec(), SerialExecutor())


def test_processes_equal_serial(serial_result):
    with ProcessExecutor(2) as ex:
        assert ex.workers == 2
        ds = sw.run_sweep(spec(), ex)
    xr.testing.assert_identical(values(ds), values(serial_result))


@pytest.mark.slow
@pytest.mark.parametrize("processes", [False, True])
def test_dask_local_cluster_equals_local_run(serial_result, processes):
    from dask.distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=processes, host="127.0.0.1", protocol="tcp://",
                      dashboard_address=None) as cluster:
        with DaskExecutor(address=cluster.scheduler_address, dashboard=False) as ex:
            assert ex.workers == 2
            ds = sw.run_sweep(spec(), ex)
    xr.testing.assert_identical(values(ds), values(serial_result))


def counted(n, log):
    """Jobs 0..n-1, recording how many were taken from the iterator."""
    for i in range(n):
        log.append(i)
        yield float(i)


@pytest.mark.parametrize("make", [lambda: ProcessExecutor(2, in_flight=3), lambda: SerialExecutor()])
def test_jobs_in_flight_are_bounded(make):
    taken, results = [], []
    with make() as ex:
        for r in ex.imap_unordered(math.sqrt, counted(40, taken)):
            results.append(r)
            assert len(taken) - len(results) <= getattr(ex, "in_flight", 1)
    assert sorted(results) == [math.sqrt(i) for i in range(40)]


def test_worker_errors_reach_the_caller():
    with ProcessExecutor(2) as ex:
        with pytest.raises(ValueError, match="math domain error"):
            list(ex.imap_unordered(math.sqrt, iter([4.0, -1.0, 9.0])))


@pytest.mark.parametrize("args, words", [
    (dict(cluster="remote:3"), "local:N"), (dict(cluster="local:0"), "local:N"),
    ({"cluster": "local:2:"}, "local:N:dashboard"), ({"cluster": "local:2:dash"}, "local:N:dashboard"),
    ({"cluster": "local::dashboard"}, "local:N"),
    (dict(cluster="local:2", scheduler="tcp://127.0.0.1:1"), "not both"), (dict(kind="gpu"), "unknown executor"),
])
def test_bad_executor_requests(args, words):
    with pytest.raises(CaseError, match=words):
        make_executor(**args)


def test_defaults():
    assert parse_cluster("local:3") == (3, False) and parse_cluster("local:3:dashboard") == (3, True)
    assert isinstance(make_executor(), ProcessExecutor) and isinstance(make_executor("serial"), SerialExecutor)
    assert make_executor().workers >= 1 and np.issubdtype(type(make_executor(workers=2).workers), np.integer)


def test_dashboard_only_when_asked_for():
    # a new cluster serves Dask's dashboard only when the spec asks for it (it costs CPU at every start); asked
    # for, its link is kept, or the reason it is not served (bokeh missing)
    import importlib.util
    import urllib.error
    import urllib.request

    def status_page(ex) -> int:  # HTTP status of the dashboard's main page on the scheduler's web server
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{ex.cluster.scheduler.http_server.port}/status") as r:
                return r.status
        except urllib.error.HTTPError as exc:
            return exc.code

    with make_executor(cluster="local:1") as plain:
        assert plain.dashboard is None and status_page(plain) == 404
        # its worker was forked while the cluster started with this process's cyclic GC paused; the GC is on
        # there again, as here (a worker without it keeps every reference cycle its jobs leave)
        import gc

        assert gc.isenabled() and list(plain.client.run(gc.isenabled).values()) == [True]
    bokeh = importlib.util.find_spec("bokeh") is not None
    with make_executor(cluster="local:1:dashboard") as asked:
        if bokeh:
            assert asked.dashboard.startswith("http://127.0.0.1:") and status_page(asked) == 200
        else:
            assert "pip install bokeh" in asked.dashboard  # (the web server then says so on its page)


def test_collector_paused_and_restored():
    # the cyclic GC is off inside the block and back as it was (on or off) after it, also after an error
    import gc

    from fdsolver.parallel.executors import _collector_paused

    was = gc.isenabled()
    try:
        for before in (True, False):
            (gc.enable if before else gc.disable)()
            with pytest.raises(KeyError), _collector_paused():
                assert not gc.isenabled()
                raise KeyError("inside")
            assert gc.isenabled() is before
    finally:
        (gc.enable if was else gc.disable)()


@pytest.mark.slow
def test_workers_end_when_the_sweep_is_killed(tmp_path):
    # a SIGKILL of the sweep cannot tell its workers; they must notice and end, not wait forever
    import os
    import signal
    import subprocess
    import sys
    import time

    def alive(pid):
        try:
            return Path(f"/proc/{pid}/status").read_text().split("State:")[1].split()[0] not in ("Z", "X")
        except FileNotFoundError:
            return False

    out = tmp_path / "k.nc"
    cmd = [sys.executable, "-m", "fdsolver", "sweep", CASE, "--vary", "d=2:6:600", "-o", str(out), "-j", "2", "--chunk", "3", "-q"]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        path = ck.path_for(out)
        deadline = time.time() + 60
        while time.time() < deadline and (not path.exists() or path.read_bytes().count(b"\n") < 3):
            time.sleep(0.02)
        workers = Path(f"/proc/{proc.pid}/task/{proc.pid}/children").read_text().split()
    finally:
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
    assert len(workers) == 2
    deadline = time.time() + 10
    while time.time() < deadline and any(alive(p) for p in workers):
        time.sleep(0.1)
    assert not any(alive(p) for p in workers)
