"""The second hostile-input corpus: tests/hostile_inputs/ and the crafted archives of tests/make_bad_archives.py.

The contract (README.md "Exit codes", "What fdsolver checks"; issue 11; common
practice, no source): bad input gets exit code 2 and exactly ONE line on stderr
that names the file, the key and what to do; no traceback; nothing on stdout;
nothing in the working folder created, changed or removed (an existing output
survives); an answer within a time limit and with bounded memory.  Exit code 1
("internal error (please report)") for bad input is a bug.  Legal but unusual
input (a table with a byte-order mark, a title with escape sequences) must
simply be handled: exit code 0, the same numbers as the plain input, and text
echoed to the terminal with its control characters escaped.

How the entries run
-------------------
* ``tests/hostile_inputs/manifest.toml`` lists every entry (its fields are
  documented in ``tests/hostile_inputs/README.md``).  The corpus is copied to a
  temporary folder, and entries whose ``setup`` names a function below get
  files made at run time (huge or special files: FIFOs, symbolic links, a
  read-only folder, forged checkpoints).
* Entries with ``run = "inprocess"`` (the default) and every crafted archive
  (``show``, ``plot`` and the API ``open_run`` + ``case_of_run``) run through
  ONE child process that calls ``fdsolver.cli.main(argv)`` for each, capturing
  stdout and stderr at the file-descriptor level (C libraries included) and
  snapshotting the folder (names, sizes, mtimes) before and after.  The child
  runs under an address-space limit (``MEMORY_LIMIT``), with at most
  ``FORK_CAP`` forks per entry.  A watchdog in the parent kills the child when
  an entry overruns its time limit by ``GRACE`` seconds, records the entry as
  timed out, and starts a new child for the rest; a thread in the child first
  gives blocked FIFO readers an end of file, so a hang on a FIFO costs no
  restart.  Peak resident memory is recorded before and after each entry.
* Entries with ``run = "subprocess"`` or ``"guarded"`` (all marked ``slow``) run
  as a separate ``python -m fdsolver`` process under the same address-space
  limit, killed with their whole process group at their time limit (plus
  ``STARTUP`` for the interpreter start).  ``guarded`` entries could start
  thousands of processes; they run through this module's ``--guarded`` entry
  point, which refuses forks beyond ``FORK_CAP`` (RLIMIT_NPROC does not bind
  root, so the cap is enforced inside the process).
* A sample of in-process entries is re-run as real processes, and the SIGINT
  and stale-temporary-file behaviours get tests of their own.

Failing entries are reported by their test id with every broken check and the
actual stderr line.  Run: ``PYTHONPATH=$PWD python -m pytest -q tests/test_hostile_inputs.py -m "not slow"``
(add ``-m slow`` for the long ones).
"""

from __future__ import annotations

import errno
import json
import os
import re
import shutil
import signal
import stat
import subprocess
import sys
import threading
import time
import tomllib
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
CORPUS = HERE / "hostile_inputs"
MANIFEST = CORPUS / "manifest.toml"
sys.path.insert(0, str(HERE))
import make_bad_archives  # noqa: E402  (the archive list; it imports netCDF4 only when it builds)

PRECIOUS = b"precious: an existing result that must survive hostile input\n"
MEMORY_LIMIT = 3 * 2**30  # address space of every process that runs entries (bytes)
ARCHIVE_RSS_GROWTH = 1 * 2**30  # growth of the peak resident memory one archive command may cause (bytes)
DEFAULT_TIME_LIMIT = 10.0  # seconds of wall time for one entry's own work
ARCHIVE_TIME_LIMIT = 6.0  # "within seconds" (issue 11); a valid archive takes well under 1 s, its first figure about 2 s
GRACE = 5.0  # the watchdog kills an overrunning entry this long after its limit
STARTUP = 8.0  # allowance for a fresh interpreter to import fdsolver (separate processes)
FORK_CAP = 4  # forks one entry may make
CLASSES = ("tables", "magnitudes", "types", "names", "text", "counts", "outputs", "paths", "checkpoints", "other")
FIELDS = {"name", "class", "checks", "argv", "code", "file", "key", "needle", "setup", "run", "slow", "time_limit",
          "same_stdout_as", "clean_stdout", "no_quote_of", "creates", "removes", "keeps"}
SAMPLE = ("path_table_etc_passwd", "ckpt_fifo_resume")  # a quoted file, and a FIFO that blocks a real process
ARCHIVE_SAMPLE = ("big_unwritten_extra",)  # memory: a small file declaring 4.8 GB


# ====================================================================== manifest
def load_manifest() -> dict[str, dict]:
    entries = {}
    for e in tomllib.loads(MANIFEST.read_text(encoding="utf-8"))["entry"]:
        e.setdefault("run", "inprocess")
        e.setdefault("slow", False)
        e.setdefault("time_limit", DEFAULT_TIME_LIMIT)
        e.setdefault("file", "")
        e.setdefault("key", "")
        codes = e["code"] if isinstance(e["code"], list) else [e["code"]]
        e["codes"] = codes
        e["keys"] = e["key"] if isinstance(e["key"], list) else ([e["key"]] if e["key"] else [])
        assert e["name"] not in entries, f"duplicate entry {e['name']}"
        entries[e["name"]] = e
    return entries


ENTRIES = load_manifest()
ARCHIVES = {a["name"]: a for a in make_bad_archives.ARCHIVES}


def expand(token: str, work: Path, name: str) -> str:
    subs = {"{dir}": str(work), "{out}": str(work / "out" / "precious.nc"), "{new}": str(work / "out" / "new.nc"),
            "{scratch}": str(work / "scratch" / name)}
    for k, v in subs.items():
        token = token.replace(k, v)
    return token


def prepare(work: Path) -> None:
    """The corpus copied to ``work``, with ``out/precious.nc`` (an existing result) and an empty ``scratch/``."""
    shutil.copytree(CORPUS, work, dirs_exist_ok=True, symlinks=True)
    (work / "out").mkdir(exist_ok=True)
    (work / "out" / "precious.nc").write_bytes(PRECIOUS)
    (work / "scratch").mkdir(exist_ok=True)


def job_of(entry: dict, work: Path) -> dict:
    name = entry["name"]
    return {"id": name, "kind": "cli", "work": str(work), "scratch": str(work / "scratch" / name),
            "argv": [expand(t, work, name) for t in entry["argv"]], "setup": entry.get("setup"),
            "limit": float(entry["time_limit"])}


# ====================================================================== setups (files made at run time)
FS_IOC_GETFLAGS, FS_IOC_SETFLAGS, FS_IMMUTABLE_FL = 0x80086601, 0x40086602, 0x10


def _immutable(path: Path, on: bool) -> None:
    import array
    import fcntl

    fd = os.open(path, os.O_RDONLY | os.O_DIRECTORY)
    try:
        buf = array.array("i", [0])
        fcntl.ioctl(fd, FS_IOC_GETFLAGS, buf, True)
        buf[0] = (buf[0] | FS_IMMUTABLE_FL) if on else (buf[0] & ~FS_IMMUTABLE_FL)
        fcntl.ioctl(fd, FS_IOC_SETFLAGS, buf, True)
    finally:
        os.close(fd)


def make_readonly(folder: Path) -> None:
    """A folder nobody can write into: mode 0555, and for root (who ignores modes) the immutable flag."""
    folder.mkdir(parents=True, exist_ok=True)
    folder.chmod(0o555)
    if os.geteuid() == 0:
        try:
            _immutable(folder, True)
        except OSError as exc:
            raise RuntimeError(f"cannot make a read-only folder as root here ({exc})") from None
    probe = folder / ".probe"
    try:
        probe.write_bytes(b"")
    except OSError:
        return
    probe.unlink()
    raise RuntimeError("cannot make a read-only folder here")


def unfreeze(tree: Path) -> None:
    """Undo make_readonly below ``tree`` (so it can be cleaned up)."""
    if not tree.exists():
        return
    for root, dirs, _ in os.walk(tree):
        for d in dirs:
            p = Path(root) / d
            if p.is_symlink():
                continue
            if os.geteuid() == 0:
                try:
                    _immutable(p, False)
                except OSError:
                    pass
            try:
                p.chmod(0o755)
            except OSError:
                pass


def _case_text(params: str = "", body: str = "") -> str:
    return ('# Invented hostile input made at run time; it describes no real device.\n'
            'title = "Generated (invented)"\nunits = "atomic"\n\n[params]\n' + params + body)


SQUARE = '\n[[potential]]\nshape = "square"\ncenter = 0.0\nwidth = 1.0\ndepth = "p1"\n'


def setup_many_params(work, scratch, job):
    (scratch / "many_params.toml").write_text(_case_text("".join(f"p{i} = {i}.5\n" for i in range(100_000)), SQUARE))


def _chained(scratch, n):
    lines = "p0 = 1.0\n" + "".join(f'p{i} = "p{i - 1} * 1.0"\n' for i in range(1, n))
    (scratch / "chained_params.toml").write_text(_case_text(lines, SQUARE.replace('"p1"', f'"p{n - 1}"')))


def setup_chained_params_4000(work, scratch, job):
    _chained(scratch, 4000)


def setup_chained_params_100000(work, scratch, job):
    _chained(scratch, 100_000)


def setup_many_components(work, scratch, job):
    comps = "".join(f'\n[[potential]]\nshape = "square"\ncenter = {10.0 * i}\nwidth = 1.0\ndepth = 1.0\n' for i in range(100_000))
    (scratch / "many_components.toml").write_text(_case_text("", comps))


def setup_many_layers(work, scratch, job):
    layers = "".join(f"\n[[layer]]\nthickness = 1.0\nband_edge = {0.0 if i % 2 else 0.3}\n" for i in range(100_000))
    (scratch / "many_layers.toml").write_text(_case_text("", layers))


def setup_readonly_folder(work, scratch, job):
    make_readonly(scratch / "ro")


def setup_escape_file_name(work, scratch, job):
    (scratch / "bad\x1b[31m.toml").write_text("this is [not TOML\n")


def setup_symlink_passwd(work, scratch, job):
    link = work / "passwd_link.csv"
    if not link.is_symlink():
        link.symlink_to("/etc/passwd")


def setup_symlink_loop(work, scratch, job):
    (scratch / "loop.toml").symlink_to("loop.toml")


def setup_checkpoint_folder(work, scratch, job):
    (scratch / "run.nc.checkpoint").mkdir()


def setup_checkpoint_fifo(work, scratch, job):
    os.mkfifo(scratch / "run.nc.checkpoint")


def setup_fifo_archive(work, scratch, job):
    os.mkfifo(scratch / "run.nc")


def setup_checkpoint_garbage(work, scratch, job):
    (scratch / "run.nc.checkpoint").write_bytes(bytes((i * 37 + 11) % 256 for i in range(4096)))


def setup_checkpoint_deep_json(work, scratch, job):
    (scratch / "run.nc.checkpoint").write_bytes(b"[" * 100_000 + b"\n")


def setup_checkpoint_symlink_case(work, scratch, job):
    (scratch / "run.nc.checkpoint").symlink_to(work / "base_pair.toml")


def _forged_checkpoint(work, scratch, record_change=None, other=False):
    """A checkpoint whose header matches the sweep of the entry (or another sweep), with one forged record."""
    import numpy as np

    from fdsolver.input.case import load_case
    from fdsolver.parallel.checkpoint import MAGIC, VERSION, encode
    from fdsolver.scans.sweep import parse_axes, plan_sweep

    case = load_case(str(work / "base_pair.toml"))
    spec = plan_sweep(case, parse_axes(["d=1:2:4" if other else "d=1:2:3"], case), {}, False, None, None)
    header = {"magic": MAGIC, "version": VERSION, "key": spec.key, "identity": spec.identity(),
              "history": "2000-01-01T00:00:00Z: forged by the hostile-input tests"}
    lines = [json.dumps(header).encode() + b"\n"]
    if record_change is not None:
        rec = {"index": np.array([0], np.int64), "solved": np.array([1], np.int8), "bound": np.array([1], np.int32),
               "resolved": np.array([1], np.int32), "vt": np.array([0.0]), "count": np.array([1], np.int32),
               "label": np.array([0], np.int32), "energy": np.array([-50.0]), "error": np.array([1e-9]),
               "converged": np.array([1], np.int8), "parity": np.array([1], np.int8), "messages": []}
        record_change(rec, np)
        lines.append(encode(rec))
    (scratch / "run.nc.checkpoint").write_bytes(b"".join(lines))


def setup_checkpoint_other_sweep(work, scratch, job):
    _forged_checkpoint(work, scratch, other=True)


def setup_checkpoint_forged_label(work, scratch, job):
    _forged_checkpoint(work, scratch, lambda rec, np: rec.update(label=np.array([10**9], np.int32)))


def setup_checkpoint_forged_index(work, scratch, job):
    _forged_checkpoint(work, scratch, lambda rec, np: rec.update(index=np.array([10**12], np.int64)))


def setup_archive_named_svg(work, scratch, job):
    import fdsolver
    from fdsolver.io.archive import write_dataset

    case = fdsolver.load_case(str(work / "base_well.toml"))
    write_dataset(fdsolver.solve(case), scratch / "run.svg")


def setup_stale_tmp(work, scratch, job):
    old = time.time() - 86400
    for name in (".run.nc.k1ll3d01.tmp", ".run.nc.k1ll3d02.tmp", ".other.nc.k1ll3d03.tmp", "run.nc.tmp"):
        (scratch / name).write_bytes(b"left by a killed write\n")
        os.utime(scratch / name, (old, old))


SETUPS = {k.removeprefix("setup_"): v for k, v in globals().items() if k.startswith("setup_")}


# ====================================================================== the child that runs entries
def snapshot(folder: Path) -> dict:
    """Every path below ``folder``: files with (size, mtime), folders and special files by type only."""
    out = {}
    for root, dirs, files in os.walk(folder):
        for name in dirs + files:
            p = Path(root) / name
            try:
                st = p.lstat()
            except OSError:
                continue
            if stat.S_ISREG(st.st_mode):
                out[str(p.relative_to(folder))] = ("file", st.st_size, st.st_mtime_ns)
            else:
                out[str(p.relative_to(folder))] = (stat.S_IFMT(st.st_mode),)
    return out


def diff(before: dict, after: dict) -> list[str]:
    return sorted(k for k in set(before) | set(after) if before.get(k) != after.get(k))


def restore(work: Path, before: dict, after: dict, precious_mtime: int | None) -> None:
    """Put ``work`` back as it was before an entry: remove what it created, copy back what it changed."""
    for rel in sorted(diff(before, after), key=len, reverse=True):
        p = work / rel
        src = CORPUS / rel
        if rel not in before:
            if p.is_dir() and not p.is_symlink():
                unfreeze(p)
                shutil.rmtree(p, ignore_errors=True)
            elif p.exists() or p.is_symlink():
                p.unlink()
        elif src.is_file() and not src.is_symlink():
            if p.is_dir() and not p.is_symlink():
                shutil.rmtree(p, ignore_errors=True)
            shutil.copy2(src, p)
    out = work / "out"
    if out.is_dir() and precious_mtime is not None:
        (out / "precious.nc").write_bytes(PRECIOUS)
        os.utime(out / "precious.nc", ns=(precious_mtime, precious_mtime))


def _fifos(folder: Path):
    for root, _, files in os.walk(folder):
        for name in files:
            p = Path(root) / name
            try:
                if stat.S_ISFIFO(p.lstat().st_mode):
                    yield p
            except OSError:
                pass


class _FifoPoker:
    """After ``limit`` seconds, keep giving every FIFO below ``folders`` a writer that closes at once (EOF to a blocked reader)."""

    def __init__(self, folders, limit):
        self.folders, self.limit, self.done = folders, limit, threading.Event()
        self.poked = False  # a FIFO had a blocked reader, which got an end of file
        self.thread = threading.Thread(target=self._run, daemon=True)
        self.thread.start()

    def _run(self):
        if self.done.wait(self.limit):
            return
        while not self.done.is_set():
            for folder in self.folders:
                for fifo in _fifos(folder):
                    try:
                        os.close(os.open(fifo, os.O_WRONLY | os.O_NONBLOCK))
                        self.poked = True
                    except OSError:
                        pass
            self.done.wait(0.3)

    def stop(self):
        self.done.set()
        self.thread.join(2.0)


def install_fork_cap(cap: int) -> dict:
    """Make os.fork refuse (EAGAIN, as a process limit would) after ``cap`` forks; reset ``state['n']`` per entry."""
    real = os.fork
    state = {"n": 0}

    def fork():
        state["n"] += 1
        if state["n"] > cap:
            raise BlockingIOError(errno.EAGAIN, f"fork refused: the test harness allows {cap} forks per entry")
        return real()

    os.fork = fork
    return state


def _capture_paths(capdir: Path, job_id: str) -> dict:
    safe = re.sub(r"[^A-Za-z0-9_.-]", "_", job_id)
    return {k: capdir / f"{safe}.{k}" for k in ("pyout", "pyerr", "cout", "cerr")}


def read_capture(capdir: Path, job_id: str) -> tuple[str, str]:
    paths = _capture_paths(capdir, job_id)
    text = {k: (p.read_bytes().decode("utf-8", errors="replace") if p.exists() else "") for k, p in paths.items()}
    return text["pyout"] + text["cout"], text["pyerr"] + text["cerr"]


def _run_one(job: dict, main, capdir: Path, forks: dict) -> dict:
    import io
    import resource
    import traceback
    import warnings

    work, scratch = Path(job["work"]), Path(job["scratch"])
    if scratch.exists():
        unfreeze(scratch)
        shutil.rmtree(scratch)
    scratch.mkdir(parents=True)
    result = {"id": job["id"], "code": None, "crash": None, "setup_error": None, "timed_out": False, "api": None}
    if job.get("setup"):
        try:
            SETUPS[job["setup"]](work, scratch, job)
        except Exception as exc:  # noqa: BLE001
            result["setup_error"] = f"{type(exc).__name__}: {exc}"
            return result
    precious = work / "out" / "precious.nc"
    precious_mtime = precious.stat().st_mtime_ns if precious.exists() else None
    before = snapshot(work)
    paths = _capture_paths(capdir, job["id"])
    forks["n"] = 0
    ru0 = resource.getrusage(resource.RUSAGE_SELF)
    rss0 = ru0.ru_maxrss * 1024
    poker = _FifoPoker([work], job["limit"])
    with open(paths["cout"], "wb") as c_out, open(paths["cerr"], "wb") as c_err, \
            open(paths["pyout"], "w", encoding="utf-8") as py_out, open(paths["pyerr"], "w", encoding="utf-8") as py_err:
        sys.stdout.flush()
        sys.stderr.flush()
        saved = os.dup(1), os.dup(2)
        os.dup2(c_out.fileno(), 1)
        os.dup2(c_err.fileno(), 2)
        old = sys.stdout, sys.stderr
        sys.stdout = io.TextIOWrapper(io.FileIO(os.dup(py_out.fileno()), "w"), encoding="utf-8", write_through=True)
        sys.stderr = io.TextIOWrapper(io.FileIO(os.dup(py_err.fileno()), "w"), encoding="utf-8", write_through=True)
        start = time.perf_counter()
        try:
            with warnings.catch_warnings():
                _fresh_warning_filters()
                if job["kind"] == "api":
                    result["api"] = _api(job["path"])
                    code = 0
                else:
                    code = main(job["argv"])
        except SystemExit as exc:  # argparse usage errors
            code = exc.code
        except BaseException:  # noqa: BLE001 - an exception escaping main() is what we look for
            code = None
            result["crash"] = traceback.format_exc()[-3000:]
        elapsed = time.perf_counter() - start
        for stream in (sys.stdout, sys.stderr):
            try:
                stream.close()
            except Exception:  # noqa: BLE001
                pass
        sys.stdout, sys.stderr = old
        os.dup2(saved[0], 1)
        os.dup2(saved[1], 2)
        os.close(saved[0])
        os.close(saved[1])
    poker.stop()
    ru1 = resource.getrusage(resource.RUSAGE_SELF)
    rss1 = ru1.ru_maxrss * 1024
    after = snapshot(work)
    out, err = (_cap(t) for t in read_capture(capdir, job["id"]))
    result.update({
        "code": code, "stdout": out, "stderr": err, "elapsed": elapsed, "changed": diff(before, after),
        "precious_intact": (not precious.exists() and precious_mtime is None) or (precious.is_file() and precious.read_bytes() == PRECIOUS),
        "fifo_poked": poker.poked, "rss_growth": max(0, rss1 - rss0), "cpu": (ru1.ru_utime + ru1.ru_stime) - (ru0.ru_utime + ru0.ru_stime), "after": {k: v for k, v in after.items() if k.startswith(f"scratch/{job['id']}/")},
    })
    unfreeze(scratch)
    restore(work, before, after, precious_mtime)
    shutil.rmtree(scratch, ignore_errors=True)
    return result


def _cap(text: str, keep: int = 100_000) -> str:
    """Output kept for the checks: all of it up to ``keep`` characters, else its head and tail."""
    if len(text) <= keep:
        return text
    return text[: keep // 2] + f"\n[... {len(text) - keep} characters left out by the test harness ...]\n" + text[-keep // 2:]


def _fresh_warning_filters() -> None:
    """The warning filters of a fresh interpreter, with the once-per-place memory reset (so each entry shows what a new process would)."""
    import warnings

    warnings.resetwarnings()
    warnings.simplefilter("default")
    for category in (DeprecationWarning, PendingDeprecationWarning, ImportWarning, ResourceWarning):
        warnings.filterwarnings("ignore", category=category)


def _healthy(path: str) -> bool:
    """True if the NetCDF library of this process still opens a valid archive (a crafted one can leave it broken)."""
    try:
        import netCDF4

        netCDF4.Dataset(path).close()
        return True
    except Exception:  # noqa: BLE001
        return False


def _api(path: str) -> dict:
    """open_run and case_of_run on an archive: which exception escaped, and whether it is one of fdsolver's."""
    import fdsolver
    from fdsolver.errors import FdsolverError

    stage = "open_run"
    try:
        ds = fdsolver.open_run(path)
        stage = "case_of_run"
        fdsolver.case_of_run(ds)
        return {"raised": None, "stage": None, "fdsolver": True, "message": ""}
    except BaseException as exc:  # noqa: BLE001
        return {"raised": type(exc).__name__, "stage": stage, "fdsolver": isinstance(exc, FdsolverError),
                "message": str(exc)[:400]}


def drive(jobs_path: Path, events_path: Path, capdir: Path) -> None:
    """The child: run the jobs of ``jobs_path`` one by one, appending JSON events to ``events_path``."""
    import resource

    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT, MEMORY_LIMIT))
    forks = install_fork_cap(FORK_CAP)
    os.environ.pop("FDSOLVER_DEBUG", None)
    from fdsolver.cli import main

    jobs = json.loads(jobs_path.read_text())
    with open(events_path, "a", encoding="utf-8") as ev:
        def emit(obj):
            ev.write(json.dumps(obj) + "\n")
            ev.flush()

        for job in jobs:
            emit({"event": "start", "id": job["id"]})
            if job["kind"] == "generate":
                try:
                    make_bad_archives.make_all(Path(job["out"]))
                    emit({"event": "done", "id": job["id"], "result": {"id": job["id"], "ok": True}})
                except Exception as exc:  # noqa: BLE001
                    emit({"event": "done", "id": job["id"], "result": {"id": job["id"], "ok": False, "error": repr(exc)}})
                continue
            os.chdir(job["work"])
            result = _run_one(job, main, capdir, forks)
            if job.get("health") and not _healthy(job["health"]):
                result["poisoned"] = True  # the next entries get a fresh process
                emit({"event": "done", "id": job["id"], "result": result})
                os._exit(3)
            emit({"event": "done", "id": job["id"], "result": result})


# ====================================================================== the parent: run jobs with a watchdog
def run_jobs(jobs: list[dict], tmp: Path) -> dict[str, dict]:
    """Run ``jobs`` in child processes (restarted after a kill or a crash); results by job id."""
    capdir = tmp / "capture"
    capdir.mkdir(exist_ok=True)
    results: dict[str, dict] = {}
    remaining = list(jobs)
    rounds = 0
    pristine = {str(w): snapshot(Path(w)) for w in {j["work"] for j in jobs if "work" in j}}
    while remaining:
        rounds += 1
        jobs_path, events_path = tmp / f"jobs{rounds}.json", tmp / f"events{rounds}.jsonl"
        jobs_path.write_text(json.dumps(remaining))
        events_path.write_text("")
        log = open(tmp / f"child{rounds}.log", "wb")
        env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]).rstrip(os.pathsep)}
        env.pop("FDSOLVER_DEBUG", None)
        proc = subprocess.Popen([sys.executable, __file__, "--drive", str(jobs_path), str(events_path), str(capdir)],
                                stdin=subprocess.DEVNULL, stdout=log, stderr=log, start_new_session=True, env=env)
        by_id = {j["id"]: j for j in remaining}
        current, started, pending = None, None, b""
        events = open(events_path, "rb")
        while True:
            time.sleep(0.1)
            pending += events.read()
            *complete, pending = pending.split(b"\n")
            for line in complete:
                ev = json.loads(line)
                if ev["event"] == "start":
                    current, started = ev["id"], time.monotonic()
                else:
                    results[ev["id"]] = ev["result"]
                    current = None
                    if by_id[ev["id"]]["kind"] == "generate":  # the archives exist now: this is their folder as made
                        pristine[by_id[ev["id"]]["out"]] = snapshot(Path(by_id[ev["id"]]["out"]))
            status = proc.poll()
            if current is not None and status is None:
                limit = by_id[current].get("limit", DEFAULT_TIME_LIMIT)
                if time.monotonic() - started > limit + by_id[current].get("grace", GRACE):
                    _kill_group(proc)
                    results[current] = _lost(by_id[current], capdir, time.monotonic() - started, pristine, timed_out=True)
                    _same_group(by_id, current, results)
                    break
            if status is not None:
                if current is not None:
                    results[current] = _lost(by_id[current], capdir, time.monotonic() - started, pristine,
                                             timed_out=False, status=status)
                    _same_group(by_id, current, results)
                _kill_group(proc)
                break
        log.close()
        events.close()
        remaining = [j for j in remaining if j["id"] not in results]
        if rounds > len(jobs) + 2:
            break
    for w in pristine:
        unfreeze(Path(w) / "scratch")
    return results


def _same_group(by_id: dict, lost: str, results: dict) -> None:
    """The other commands on the same crafted archive share the open that hung or crashed: record them so, unrun."""
    group = by_id[lost].get("group")
    if not group:
        return
    for jid, job in by_id.items():
        if job.get("group") == group and jid not in results:
            results[jid] = {**results[lost], "id": jid, "note": f"not run: {lost} on the same archive hung or crashed",
                            "stdout": "", "stderr": "", "changed": []}


def _kill_group(proc: subprocess.Popen) -> None:
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        pass
    try:
        proc.wait(10)
    except subprocess.TimeoutExpired:
        pass


def _lost(job: dict, capdir: Path, elapsed: float, pristine: dict, timed_out: bool, status=None) -> dict:
    """The result of a job whose child was killed (time limit) or died (a crash); the folder is put back."""
    out, err = (_cap(t) for t in read_capture(capdir, job["id"]))
    r = {"id": job["id"], "code": None, "stdout": out, "stderr": err, "crash": None, "setup_error": None,
         "timed_out": timed_out, "died": None if timed_out else status, "elapsed": elapsed, "changed": [],
         "precious_intact": True, "rss_growth": 0, "api": None, "after": {}}
    work = Path(job.get("work", ""))
    if job.get("work") and str(work) in pristine:
        unfreeze(work / "scratch")
        keep = lambda snap: {k: v for k, v in snap.items() if not k.startswith("scratch")}  # noqa: E731
        now, before = keep(snapshot(work)), keep(pristine[str(work)])
        r["changed"] = diff(before, now)
        precious = work / "out" / "precious.nc"
        r["precious_intact"] = not precious.exists() or precious.read_bytes() == PRECIOUS
        pm = before.get("out/precious.nc", (None, None, None))[-1] if "out/precious.nc" in before else None
        restore(work, before, now, pm)
        shutil.rmtree(work / "scratch" / job["id"], ignore_errors=True)
    return r


# ====================================================================== separate processes
def _limits(memory: int = MEMORY_LIMIT):
    def preexec():
        import resource

        resource.setrlimit(resource.RLIMIT_AS, (memory, memory))
        if os.geteuid() != 0:  # root ignores RLIMIT_NPROC; guarded runs cap forks themselves
            resource.setrlimit(resource.RLIMIT_NPROC, (256, 256))

    return preexec


def run_process(argv: list[str], cwd: Path, limit: float, guarded: bool = False) -> dict:
    """Run fdsolver as its own process (``python -m fdsolver`` or the guarded entry point) with limits."""
    cmd = [sys.executable, __file__, "--guarded", "--", *argv] if guarded else [sys.executable, "-m", "fdsolver", *argv]
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]).rstrip(os.pathsep)}
    env.pop("FDSOLVER_DEBUG", None)
    start = time.monotonic()
    proc = subprocess.Popen(cmd, cwd=cwd, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            start_new_session=True, env=env, preexec_fn=_limits())
    timed_out = False
    try:
        out, err = proc.communicate(timeout=limit + STARTUP)
    except subprocess.TimeoutExpired:
        timed_out = True
        os.killpg(proc.pid, signal.SIGKILL)
        out, err = proc.communicate()
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)  # stray workers of the group
        except (ProcessLookupError, PermissionError):
            pass
    return {"code": None if timed_out else proc.returncode, "stdout": out.decode("utf-8", "replace"),
            "stderr": err.decode("utf-8", "replace"), "timed_out": timed_out, "elapsed": time.monotonic() - start,
            "allowance": STARTUP, "crash": None, "setup_error": None, "died": None, "rss_growth": 0, "api": None}


def run_entry_as_process(entry: dict, tmp: Path) -> dict:
    work = tmp / "work"
    prepare(work)
    name = entry["name"]
    scratch = work / "scratch" / name
    scratch.mkdir(parents=True)
    try:
        if entry.get("setup"):
            try:
                SETUPS[entry["setup"]](work, scratch, entry)
            except Exception as exc:  # noqa: BLE001
                return {"setup_error": f"{type(exc).__name__}: {exc}"}
        before = snapshot(work)
        r = run_process([expand(t, work, name) for t in entry["argv"]], work, entry["time_limit"],
                        guarded=entry["run"] == "guarded")
        after = snapshot(work)
        r["changed"] = diff(before, after)
        r["after"] = {k: v for k, v in after.items() if k.startswith(f"scratch/{name}/")}
        r["precious_intact"] = (work / "out" / "precious.nc").read_bytes() == PRECIOUS
        r["work"] = str(work)
        return r
    finally:
        unfreeze(work)


# ====================================================================== checks
def distinctive_tokens(path: str) -> list[str]:
    """Pieces of a file that a message quoting it would contain (at least 8 characters, with punctuation)."""
    try:
        text = Path(path).read_text(errors="replace")
    except OSError:
        return []
    toks = {t[:40] for t in text.split() if len(t) >= 8 and re.search(r"[:=/_()\"]", t) and re.search(r"[A-Za-z]", t)}
    return sorted(toks)


def _printable(s: str) -> bool:
    return all(ch.isprintable() for ch in s)


def problems(entry: dict, r: dict, reference: dict | None = None) -> list[str]:
    """Every way result ``r`` breaks the contract of ``entry`` (empty: it passes)."""
    bad = []
    if r.get("setup_error"):
        return [f"setup failed: {r['setup_error']}"]
    limit = float(entry.get("time_limit", DEFAULT_TIME_LIMIT)) + r.get("allowance", 0.0)
    if r.get("fifo_poked"):
        bad.append(f"blocked on a FIFO until the harness closed it after {limit:g} s")
    if r.get("timed_out"):
        bad.append(f"no answer within {limit:g} s (killed after {r['elapsed']:.0f} s)" + (f"; {r['note']}" if r.get("note") else ""))
    elif r.get("died") is not None:
        bad.append(f"the process running it died (status {r['died']})")
    elif r.get("elapsed", 0) > limit and not r.get("fifo_poked"):
        bad.append(f"took {r['elapsed']:.1f} s (limit {limit:g} s)")
    if "MemoryError" in r.get("stderr", "") or "MemoryError" in r.get("stdout", ""):
        bad.append("it tried to allocate beyond the test's address-space limit (memory is not bounded by fdsolver itself)")
    if r.get("crash"):
        bad.append("exception escaped main(): " + r["crash"].strip().splitlines()[-1][:200])
    code, codes = r.get("code"), entry["codes"]
    out, err = r.get("stdout", ""), r.get("stderr", "")
    lines = [ln for ln in err.splitlines() if ln.strip()]
    if code is not None and code not in codes:
        bad.append(f"exit {code} (expected {' or '.join(map(str, codes))})")
    if "Traceback" in err or "Traceback" in out:
        bad.append("a traceback is printed")
    if code == 2 or (code not in (0, None) and 2 in codes and 0 not in codes):
        if len(lines) != 1:
            bad.append(f"{len(lines)} lines on stderr (one expected)")
        err_line = next((ln for ln in lines if "error" in ln), lines[-1] if lines else "")
        if lines and code == 2:
            if not err_line.startswith("fdsolver: error: "):
                bad.append("the line does not start with 'fdsolver: error: '")
            if entry.get("file") and entry["file"] not in err_line:
                bad.append(f"the line does not name the file {entry['file']}")
            if entry["keys"] and not any(k in err_line for k in entry["keys"]):
                bad.append(f"the line does not name the key {' or '.join(entry['keys'])}")
            if entry.get("needle") and not re.search(entry["needle"], err_line, re.I):
                bad.append(f"the line does not match /{entry['needle']}/")
            if len(err_line) > 1000:
                bad.append(f"the line is {len(err_line)} characters long")
        if not all(_printable(ln) for ln in lines):
            bad.append("control characters reach the terminal on stderr")
        if out.strip():
            bad.append("output on stdout (work was done before the refusal): " + out.strip().splitlines()[0][:100])
    if code == 0 and 0 in codes:
        if entry.get("clean_stdout") and not _printable(out.replace("\n", "")):
            bad.append("control characters reach the terminal on stdout: "
                       + repr(next(ln for ln in out.split("\n") if not _printable(ln))[:120]))
        if any(("Warning" in ln or "error" in ln.lower()) for ln in lines):
            bad.append("warnings or errors on stderr: " + next(ln for ln in lines if "Warning" in ln or "error" in ln.lower())[:160])
        if reference is not None:
            if reference.get("code") != 0:
                bad.append(f"its reference {entry['same_stdout_as']} did not run (exit {reference.get('code')})")
            elif out != reference.get("stdout"):
                diffs = [f"{a!r} vs {b!r}" for a, b in zip(out.splitlines(), reference["stdout"].splitlines()) if a != b]
                bad.append(f"stdout differs from {entry['same_stdout_as']}: " + (diffs[0][:240] if diffs else "in length"))
    creates, removes = set(entry.get("creates", [])), set(entry.get("removes", []))
    prefix = f"scratch/{entry['name']}/"
    allowed = {prefix + c for c in creates} | {prefix + c for c in removes} if code == 0 else set()
    changed = [c for c in r.get("changed", []) if c not in allowed]
    if changed:
        bad.append(f"files created, changed or removed: {changed[:6]}")
    if code == 0:
        after = r.get("after", {})
        missing = [c for c in creates if prefix + c not in after]
        kept = [c for c in removes if prefix + c in after]
        lost = [c for c in entry.get("keeps", []) if prefix + c not in after]
        if missing:
            bad.append(f"not written: {missing}")
        if kept:
            bad.append(f"stale temporary files left: {kept}")
        if lost:
            bad.append(f"files of other targets removed: {lost}")
    if r.get("precious_intact") is False:
        bad.append("the existing output out/precious.nc was changed")
    if entry.get("no_quote_of"):
        quoted = [t for t in distinctive_tokens(entry["no_quote_of"]) if t in out or t in err]
        if quoted:
            bad.append(f"the output quotes {entry['no_quote_of']}: {quoted[0]!r}")
    return bad


def verdict(entry: dict, r: dict, reference: dict | None = None) -> None:
    bad = problems(entry, r, reference)  # a read-only folder that cannot be made here fails too: never skipped
    if bad:
        lines = [ln for ln in r.get("stderr", "").splitlines() if ln.strip()]
        shown = " / ".join(lines[-2:])[:400] if lines else "(nothing on stderr)"
        pytest.fail(f"{'; '.join(bad)} | stderr: {shown!r}", pytrace=False)


# ====================================================================== fixtures
def _archive_jobs(adir: Path) -> list[dict]:
    jobs = []
    for name, a in ARCHIVES.items():
        if a.get("slow"):
            continue
        path = str(adir / a["file"])
        base = {"work": str(adir), "limit": ARCHIVE_TIME_LIMIT, "grace": 3.0, "setup": None, "group": name,
                "health": str(adir / "_base" / "solve.nc")}
        jobs.append({**base, "id": f"{name}:show", "kind": "cli", "argv": ["show", path], "scratch": str(adir / "scratch" / f"{name}:show")})
        jobs.append({**base, "id": f"{name}:plot", "kind": "cli", "scratch": str(adir / "scratch" / f"{name}:plot"),
                     "argv": ["plot", path, "-o", str(adir / "scratch" / f"{name}:plot" / "fig.png")]})
        jobs.append({**base, "id": f"{name}:api", "kind": "api", "path": path, "scratch": str(adir / "scratch" / f"{name}:api")})
    return jobs


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    """Every in-process entry and every crafted archive, run once in child processes."""
    tmp = tmp_path_factory.mktemp("hostile_run")
    work = tmp_path_factory.mktemp("hostile_work")
    prepare(work)
    adir = tmp_path_factory.mktemp("bad_archives")
    jobs = [{"id": "_generate", "kind": "generate", "out": str(adir), "limit": 120.0}]
    jobs += _archive_jobs(adir)  # archives first: their peak-memory growth is measured from a low baseline
    jobs += [job_of(e, work) for e in ENTRIES.values() if e["run"] == "inprocess" and not e["slow"]]
    out = run_jobs(jobs, tmp)
    gen = out.get("_generate", {})
    assert gen.get("ok"), f"the crafted archives could not be made: {gen}"
    return {"work": work, "archives": adir, "by_id": out}


# ====================================================================== tests: the corpus itself
def test_manifest_is_well_formed():
    assert len(ENTRIES) >= 80
    for e in ENTRIES.values():
        assert set(e) - {"codes", "keys"} <= FIELDS, (e["name"], set(e) - FIELDS)
        assert e["class"] in CLASSES, e["name"]
        assert e["checks"] and e["argv"], e["name"]
        assert set(e["codes"]) <= {0, 2}, e["name"]
        assert e["run"] in ("inprocess", "subprocess", "guarded"), e["name"]
        assert e["run"] == "inprocess" or e["slow"], f"{e['name']}: separate-process entries are slow"
        assert not e.get("setup") or e["setup"] in SETUPS, e["name"]
        assert not e.get("same_stdout_as") or e["same_stdout_as"] in ENTRIES, e["name"]
        for token in e["argv"]:
            for m in re.finditer(r"\{dir\}/([^ ]+)", token):
                assert (CORPUS / m.group(1).split("/")[0]).exists() or ".." in m.group(1) or "nope" in m.group(1) \
                    or m.group(1).startswith("out/"), f"{e['name']}: {m.group(1)} is not in the corpus"
    assert set(CLASSES) == {e["class"] for e in ENTRIES.values()}
    assert "hostile_inputs" in (CORPUS / "README.md").read_text(encoding="utf-8")


def test_bad_archives_are_many():
    refused = [a for a in ARCHIVES.values() if a["code"] == 2]
    assert len(refused) >= 40 and len(set(ARCHIVES)) == len(make_bad_archives.ARCHIVES)


# ====================================================================== tests: entries in one child
def _inprocess_params():
    return [pytest.param(n, id=n) for n, e in ENTRIES.items() if e["run"] == "inprocess" and not e["slow"]]


@pytest.mark.parametrize("name", _inprocess_params())
def test_hostile_input(results, name):
    entry = ENTRIES[name]
    r = results["by_id"][name]
    ref = results["by_id"].get(entry["same_stdout_as"]) if entry.get("same_stdout_as") else None
    verdict(entry, r, ref)


# ====================================================================== tests: slow entries, own processes
def _slow_params():
    return [pytest.param(n, id=n, marks=pytest.mark.slow) for n, e in ENTRIES.items() if e["slow"]]


@pytest.mark.parametrize("name", _slow_params())
def test_hostile_input_own_process(tmp_path, name):
    entry = ENTRIES[name]
    verdict(entry, run_entry_as_process(entry, tmp_path))


# ====================================================================== tests: a sample as real processes
@pytest.mark.parametrize("name", SAMPLE)
def test_sample_as_real_process(results, tmp_path, name):
    """The entry point behaves as main() in-process: the same exit code and stderr (paths aside), the same checks."""
    entry = ENTRIES[name]
    r = run_entry_as_process(entry, tmp_path)
    verdict(entry, r)
    mine = results["by_id"][name]
    norm = lambda s, w: s.replace(str(w), "{dir}")  # noqa: E731
    assert r["code"] == mine["code"], (r["code"], mine["code"])
    assert norm(r["stderr"], r["work"]) == norm(mine["stderr"], results["work"])


@pytest.mark.parametrize("name", ARCHIVE_SAMPLE)
def test_archive_sample_as_real_process(results, name):
    """show of a crafted archive as a real process, under the address-space limit, killed at the time limit."""
    a = ARCHIVES[name]
    r = run_process(["show", str(results["archives"] / a["file"])], results["archives"], ARCHIVE_TIME_LIMIT)
    r["changed"], r["precious_intact"] = [], True
    verdict(_archive_entry(name, "show"), r)


# ====================================================================== tests: crafted archives
def _archive_entry(name: str, command: str) -> dict:
    a = ARCHIVES[name]
    e = {"name": f"{name}:{command}", "codes": [a["code"]], "file": a["file"], "keys": [], "time_limit": ARCHIVE_TIME_LIMIT,
         "clean_stdout": a.get("clean_stdout", False) and command == "show"}
    if a.get("no_quote_of"):
        e["no_quote_of"] = a["no_quote_of"]
    if command == "plot" and a["code"] == 0:
        e["creates"] = ["fig.png"]
    return e


def _archive_params(slow: bool):
    return [pytest.param(n, c, id=f"{n}-{c}", marks=[pytest.mark.slow] if slow else [])
            for n, a in ARCHIVES.items() if bool(a.get("slow")) == slow for c in ("show", "plot")]


def _archive_verdict(name: str, command: str, r: dict) -> None:
    entry = _archive_entry(name, command)
    bad = problems(entry, r)
    if r.get("rss_growth", 0) > ARCHIVE_RSS_GROWTH:
        bad.append(f"peak memory grew by {r['rss_growth'] / 2**20:.0f} MB (limit {ARCHIVE_RSS_GROWTH / 2**20:.0f} MB)")
    if bad:
        lines = [ln for ln in r.get("stderr", "").splitlines() if ln.strip()]
        pytest.fail(f"{'; '.join(bad)} | stderr: {(' / '.join(lines[-2:])[:400]) if lines else '(nothing)'!r}", pytrace=False)


@pytest.mark.parametrize("name,command", _archive_params(slow=False))
def test_crafted_archive(results, name, command):
    _archive_verdict(name, command, results["by_id"][f"{name}:{command}"])


@pytest.mark.parametrize("name,command", _archive_params(slow=True))
def test_crafted_archive_own_process(tmp_path_factory, slow_archives, name, command):
    path = slow_archives / ARCHIVES[name]["file"]
    argv = ["show", str(path)] if command == "show" else ["plot", str(path), "-o", str(tmp_path_factory.mktemp("fig") / "fig.png")]
    r = run_process(argv, slow_archives, ARCHIVE_TIME_LIMIT)
    r["changed"], r["precious_intact"] = [], True
    _archive_verdict(name, command, r)


@pytest.fixture(scope="module")
def slow_archives(tmp_path_factory):
    """The crafted archives made in a separate process (for the slow tests, which do not run the fast child)."""
    adir = tmp_path_factory.mktemp("bad_archives_slow")
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]).rstrip(os.pathsep)}
    subprocess.run([sys.executable, str(HERE / "make_bad_archives.py"), str(adir)], check=True, env=env, timeout=300,
                   capture_output=True)
    return adir


@pytest.mark.parametrize("name", [pytest.param(n, marks=[pytest.mark.slow] if a.get("slow") else []) for n, a in ARCHIVES.items()])
def test_crafted_archive_api(request, name):
    """open_run and case_of_run raise only fdsolver's own exceptions, in time and without quoting other files."""
    a = ARCHIVES[name]
    if a.get("slow"):
        adir = request.getfixturevalue("slow_archives")
        r = run_process(["--api", str(adir / a["file"])], adir, ARCHIVE_TIME_LIMIT, guarded=True)
        r["api"] = json.loads(r["stdout"].strip().splitlines()[-1]) if r["code"] == 0 and r["stdout"].strip() else None
    else:
        r = request.getfixturevalue("results")["by_id"][f"{name}:api"]
    bad = []
    limit = ARCHIVE_TIME_LIMIT + r.get("allowance", 0.0)
    if r.get("timed_out"):
        bad.append(f"open_run gave no answer within {ARCHIVE_TIME_LIMIT:g} s" + (f"; {r['note']}" if r.get("note") else ""))
    elif r.get("died") is not None:
        bad.append(f"the process died (status {r['died']})")
    elif r.get("fifo_poked"):
        bad.append(f"blocked on a FIFO until the harness closed it after {ARCHIVE_TIME_LIMIT:g} s")
    elif r.get("elapsed", 0) > limit:
        bad.append(f"took {r['elapsed']:.1f} s")
    api = r.get("api") or {}
    if "MemoryError" in api.get("message", ""):
        bad.append("it tried to allocate beyond the test's address-space limit (memory is not bounded by fdsolver itself)")
    if api.get("raised") and not api.get("fdsolver"):
        bad.append(f"{api['stage']} raised {api['raised']} (not an FdsolverError): {api['message'][:200]}")
    if a["code"] == 0 and api.get("raised"):
        bad.append(f"a valid archive was refused by {api['stage']}: {api['message'][:200]}")
    if a.get("api_refuses") and api and not api.get("raised"):
        bad.append("open_run and case_of_run accepted it (they must refuse it with an FdsolverError)")
    if r.get("rss_growth", 0) > ARCHIVE_RSS_GROWTH:
        bad.append(f"peak memory grew by {r['rss_growth'] / 2**20:.0f} MB")
    if a.get("no_quote_of"):
        quoted = [t for t in distinctive_tokens(a["no_quote_of"]) if t in api.get("message", "")]
        if quoted:
            bad.append(f"the exception quotes {a['no_quote_of']}: {quoted[0]!r}")
    if r.get("stderr", "").strip():
        bad.append("the API printed to stderr: " + r["stderr"].strip().splitlines()[0][:160])
    if bad:
        pytest.fail("; ".join(bad), pytrace=False)


# ====================================================================== tests: signals and clean-up
def test_stale_temporary_files_are_cleaned(results):
    """A write removes stale .NAME.XXXX.tmp files of its own target and keeps everything else (issue 11, item 6)."""
    verdict(ENTRIES["out_stale_tmp_cleaned"], results["by_id"]["out_stale_tmp_cleaned"])


@pytest.mark.slow
@pytest.mark.parametrize("where,background", [(["-j", "2"], False), (["--cluster", "local:2"], False), (["-j", "2"], True)],
                         ids=["processes", "dask", "processes-background-job"])
def test_sigint_to_the_sweep_main_process_stops_it_like_ctrl_c(tmp_path, where, background):
    """kill -INT to the main process alone (not its group): exit 130, one line, checkpoint kept, no result written.

    ``background``: started as a non-interactive shell starts `fdsolver sweep ... &`, with SIGINT inherited as
    ignored (POSIX shells do this for background jobs); issue 11 asks that `kill -INT` stop the sweep there too.
    """
    if where[0] == "--cluster":
        import distributed  # noqa: F401  (in the test extra: a missing Dask is an error, never a skip)
    work = tmp_path / "work"
    prepare(work)
    out = work / "out" / "sweep.nc"
    ck = Path(str(out) + ".checkpoint")
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]).rstrip(os.pathsep)}
    err_path = tmp_path / "stderr.txt"
    limits = _limits()

    def preexec():
        limits()
        if background:
            signal.signal(signal.SIGINT, signal.SIG_IGN)

    with open(err_path, "wb") as err_file:
        proc = subprocess.Popen([sys.executable, "-m", "fdsolver", "sweep", str(work / "base_pair.toml"), "--vary", "d=0.5:6:2000",
                                 *where, "--chunk", "5", "-q", "-o", str(out)], cwd=work, stdout=subprocess.DEVNULL,
                                stderr=err_file, start_new_session=True, env=env, preexec_fn=preexec)
    bad = []
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            if ck.exists() and ck.read_bytes().count(b"\n") >= 2:  # the header and one finished chunk
                break
            time.sleep(0.2)
        assert proc.poll() is None, "the sweep ended before it could be interrupted"
        assert ck.exists(), "no checkpoint after 120 s"
        before_signal = err_path.stat().st_size
        proc.send_signal(signal.SIGINT)  # the main process alone, as `kill -INT PID` does
        try:
            proc.wait(20)
        except subprocess.TimeoutExpired:
            bad.append("SIGINT to the sweep's main process was ignored: still running 20 s later")
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)  # the process and its workers
        except ProcessLookupError:
            pass
        proc.wait(10)
    err = err_path.read_bytes()[before_signal:].decode("utf-8", "replace")
    lines = [ln for ln in err.splitlines() if ln.strip()]
    if not bad:
        if proc.returncode != 130:
            bad.append(f"exit {proc.returncode} (expected 130)")
        if "Traceback" in err:
            bad.append("a traceback is printed")
        if len(lines) != 1:
            bad.append(f"{len(lines)} lines on stderr after the signal (one expected)")
        if out.exists():
            bad.append("the result was written although the sweep was interrupted")
    if not ck.exists() or ck.read_bytes().count(b"\n") < 2:
        bad.append("the checkpoint was not kept")
    if bad:
        pytest.fail("; ".join(bad) + f" | stderr after the signal: {err.strip()[-400:]!r}", pytrace=False)


# ====================================================================== entry points of the child processes
if __name__ == "__main__" and len(sys.argv) == 5 and sys.argv[1] == "--drive":
    drive(Path(sys.argv[2]), Path(sys.argv[3]), Path(sys.argv[4]))
elif __name__ == "__main__" and len(sys.argv) >= 3 and sys.argv[1] == "--guarded" and sys.argv[2] == "--":
    install_fork_cap(FORK_CAP)
    os.environ.pop("FDSOLVER_DEBUG", None)
    if sys.argv[3:4] == ["--api"]:  # open_run + case_of_run on one archive; the outcome as one JSON line
        print(json.dumps(_api(sys.argv[4])))
        sys.exit(0)
    from fdsolver.cli import main as _main

    sys.exit(_main(sys.argv[3:]))
