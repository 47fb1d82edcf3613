"""One runner for every scan over points (sweeps, validity maps): chunked, parallel, checkpointed, resumable.

A scan (a :class:`Scan`) is plain data that can be sent to other processes:
its case (text, path, table files), its points numbered 0 .. n_points - 1,
and ``solve_points(base, indices)``, which does the work of some points and
returns one record (a dict of numpy arrays and JSON values).  Its
``collector()`` gathers records in any order (``add(record)`` returns the
number of points it held; ``done`` marks the points done).

:func:`run` cuts the points still to do into chunks of consecutive points
(``scan.chunk`` each, or by default chunks that shrink as the run nears its
end: :func:`_chunks`), sends them through an executor (:mod:`fdsolver.parallel.executors`),
appends each finished record to the checkpoint beside ``output``
(:mod:`fdsolver.parallel.checkpoint`), and at the end builds the Dataset
with ``finish(collector, history)``, writes it atomically and removes the
checkpoint.  Records are stored by point index, so the result does not
depend on the executor or on the order records arrive, and a resumed run
writes the same file as an uninterrupted one (the history line is that of
the run that started the checkpoint).

The case of a scan is rebuilt from its text once per process
(:func:`base_case`); :func:`warm_up` is the initializer the scans give their
executors (it loads the compiled kernels once per worker).
"""

from __future__ import annotations

import json
from typing import Any, Callable, Protocol

import numpy as np

from fdsolver.errors import CaseError

#: a default chunk holds about 1/SHARES_PER_CHUNK of each worker's share of the points not yet handed out
SHARES_PER_CHUNK = 2
#: a default chunk holds at least 1/SMALLEST_OF_LARGEST of the scan's ``max_chunk`` (fewer where the scan has too
#: few points to keep every worker busy; at least 1 point)
SMALLEST_OF_LARGEST = 10


class Collector(Protocol):
    done: np.ndarray

    def add(self, record: dict) -> int: ...


class Scan(Protocol):
    """What :func:`run` needs of a scan (see the module docstring)."""

    @property
    def case_text(self) -> str: ...

    @property
    def case_path(self) -> str | None: ...

    @property
    def tables(self) -> dict: ...

    @property
    def chunk(self) -> int | None: ...

    @property
    def what(self) -> str:
        """"sweep", "band sweep" or "validity map": the scan in messages."""

    @property
    def max_chunk(self) -> int:
        """Most points per chunk by default."""

    @property
    def n_points(self) -> int: ...

    @property
    def key(self) -> str: ...

    def identity(self) -> dict: ...

    def solve_points(self, base, indices: np.ndarray) -> dict: ...

    def collector(self) -> Collector: ...


# ------------------------------------------------------------ in every process
_BASE: dict = {}


def base_case(scan: Scan):
    """The case of ``scan``, built from its text once per process (the last one is kept)."""
    key = (scan.case_text, scan.case_path, json.dumps(scan.tables, sort_keys=True))
    case = _BASE.get(key)
    if case is None:
        from fdsolver.input.case import case_from_text

        case = case_from_text(scan.case_text, path=scan.case_path, tables=scan.tables)
        _BASE.clear()
        _BASE[key] = case
    return case


def solve_chunk(job) -> dict:
    """The work of one chunk: ``job`` = (scan, indices)."""
    scan, indices = job
    return scan.solve_points(base_case(scan), indices)


def warm_up() -> None:
    """Initializer of worker processes: load the compiled kernels (numba cache) with one tiny solve; numpy's
    floating-point warnings are not printed by workers (a point's problems are in its notes)."""
    import warnings

    from fdsolver.runs import solve_case

    warnings.simplefilter("ignore", RuntimeWarning)
    from fdsolver.input.case import case_from_dict

    solve_case(case_from_dict({"potential": [{"shape": "square", "center": 0.0, "width": 1.0, "depth": 4.0}],
                               "solve": {"tolerance": 1e-4}}))


def executor_for(executor=None, workers: int | None = None, cluster: str | None = None, scheduler: str | None = None):
    """An executor (an instance is returned as it is; a name "serial"/"processes"/"dask" or None is made),
    with :func:`warm_up` as its initializer."""
    if executor is not None and not isinstance(executor, str):
        if not callable(getattr(executor, "imap_unordered", None)):
            raise CaseError(f"an executor is \"serial\", \"processes\", \"dask\" or an object with imap_unordered, "
                            f"got {type(executor).__name__}", key="--executor")
        return executor
    from fdsolver.parallel.executors import make_executor

    return make_executor(executor, workers, cluster, scheduler, initializer=warm_up)


def where(executor) -> str:
    """Where an executor runs its jobs, in words."""
    if executor.name == "serial":
        return "in this process"
    if executor.name == "processes":
        return f"on {executor.workers} local worker processes"
    text = f"on {executor.workers} Dask workers"
    return text + (f" (dashboard: {executor.dashboard})" if getattr(executor, "dashboard", None) else "")


# ------------------------------------------------------------ the run
def _chunks(todo: np.ndarray, size: int | None, workers: int = 1, largest: int = 1):
    """The indices still to do (``todo``, ascending) cut into chunks of consecutive indices.

    ``size``: every chunk has that many (fewer at the end of a run of consecutive indices).  ``None``: guided
    sizes, each about ``1 / SHARES_PER_CHUNK`` of one worker's share of the indices not yet handed out, at most
    ``largest`` and at least ``largest // SMALLEST_OF_LARGEST``, or a quarter of a worker's share of ``todo`` if
    that is less (and 1): a few points are not all put in one chunk.  Chunks then start large and shrink
    towards the end, so a run has few tasks (a task costs a Dask cluster about 10 ms of CPU beyond its work,
    ``scripts/dask_task_cost.py``) and the workers still finish close together (the last chunks are small).
    The sizes depend only on ``todo``, ``workers`` and ``largest``, never on timing, so the same run is cut
    the same way.
    """
    if todo.size == 0:
        return
    smallest = max(1, min(largest // SMALLEST_OF_LARGEST, todo.size // (4 * workers)))
    left = int(todo.size)
    breaks = np.flatnonzero(np.diff(todo) != 1) + 1
    for part in np.split(todo, breaks):
        i = 0
        while i < part.size:
            n = size or min(largest, max(smallest, -(-left // (SHARES_PER_CHUNK * workers))))
            yield part[i: i + n]
            left -= min(n, part.size - i)
            i += n


class PointNotes:
    """What every collector does with the notes of its points: keep them by point (records come in any order)
    and give them back in point order."""

    messages: dict[int, list[str]]

    def keep_notes(self, rec: dict) -> None:
        """Store the ``messages`` of one chunk record (pairs of flat point index and text)."""
        for flat, msg in rec.get("messages", []):
            self.messages.setdefault(int(flat), []).append(str(msg))

    def notes(self) -> list[str]:
        """Every message, in point order."""
        return [m for k in sorted(self.messages) for m in self.messages[k]]


def check_record(rec: dict, n_points: int) -> None:
    """ValueError unless ``rec`` holds some points of a scan of ``n_points`` (its ``index`` in range, no repeats):
    a checkpoint is a file on disk, and a damaged or forged one must not index outside the result.  Each
    collector checks the rest of a record (:func:`counts_match`)."""
    idx = rec.get("index")
    if not isinstance(idx, np.ndarray) or idx.ndim != 1 or idx.dtype.kind not in "iu" or idx.size == 0:
        raise ValueError("it has no point indices")
    if idx.min() < 0 or idx.max() >= n_points or np.unique(idx).size != idx.size:
        raise ValueError(f"its point indices are outside 0 .. {n_points - 1} or repeated")
    if not isinstance(rec.get("messages", []), list):
        raise ValueError("its messages are not a list")


def counts_match(rec: dict, count: str, rows: tuple[str, ...]) -> np.ndarray:
    """The per-point state counts ``rec[count]`` (one per point, >= 0), checked to add up to the length of every
    per-state array in ``rows``; ValueError otherwise."""
    n = np.asarray(rec[count])
    if n.shape != np.shape(rec["index"]) or n.dtype.kind not in "iu" or (n.size and n.min() < 0):
        raise ValueError(f"its {count} is not one count per point")
    total = int(n.sum())
    for k in rows:
        if k in rec and np.shape(rec[k])[:1] != (total,):
            raise ValueError(f"its {k} has {np.shape(rec[k])[:1]} rows for {total} states")
    return n


def _open_checkpoint(scan: Scan, collector: Collector, output, resume: bool, restart: bool, history: str):
    from fdsolver.parallel.checkpoint import Checkpoint, path_for

    path = path_for(output)
    if restart and (path.exists() or path.is_symlink()):
        Checkpoint.read_header(path)  # only ever delete our own files
        path.unlink()
    if path.exists() and not resume:
        done = Checkpoint.count_points(path)
        raise CaseError(f"a checkpoint of an unfinished {scan.what} is here ({done} of its points done); add --resume "
                        "to continue it or --restart to discard it", file=str(path))
    if path.exists():
        def add(rec: dict, line: int) -> None:
            try:
                check_record(rec, scan.n_points)
                collector.add(rec)
            except (ValueError, IndexError, KeyError, TypeError) as exc:
                raise CaseError(f"line {line} of this checkpoint is not a record of this {scan.what} ({exc}); it was "
                                "damaged or altered: --restart discards it", file=str(path)) from None

        return Checkpoint.resume(path, scan.identity(), scan.key, add, scan.what)
    return Checkpoint.create(path, scan.identity(), scan.key, history)


def run(scan: Scan, executor, finish: Callable[[Any, str], Any], *, action: str, output=None, resume: bool = False,
        restart: bool = False, progress=None, before_write: Callable[[Any], None] | None = None):
    """Run ``scan`` on ``executor``; ``finish(collector, history)`` builds the Dataset, written to ``output``.

    With ``output`` the finished chunks go to ``OUTPUT.checkpoint``: a
    checkpoint left by an unfinished run is refused unless ``resume`` (go on)
    or ``restart`` (discard it) is given; a checkpoint of a different scan is
    refused naming the first difference.  ``progress`` is called with the
    number of points each finished chunk (or the resumed checkpoint) adds; if
    it has a ``start(total, text)`` method, that is called first with the
    number of points and one line saying what runs where.  ``before_write(ds)`` is called with the finished
    Dataset before it is written (if it raises, nothing is written and the checkpoint is kept: the command
    line makes its figure there).  Returns the Dataset.
    """
    from fdsolver.io.archive import stamp, write_dataset
    from fdsolver.parallel.checkpoint import path_for

    collector = scan.collector()
    history = stamp(action)
    ck, lines = None, []
    if output is not None:
        if resume and not path_for(output).exists():
            lines.append(f"note: no checkpoint at {path_for(output)}; starting from the beginning")
        ck = _open_checkpoint(scan, collector, output, resume, restart, history)
        history = ck.header["history"]
    try:
        start = getattr(progress, "start", None)
        if start is not None:
            verb = getattr(scan, "verb", None) or ("mapping" if "map" in scan.what else "sweeping")
            text = f"{verb} {scan.n_points} points {where(executor)}"
            lines.append(text + (f"; checkpoint {path_for(output)}" if output is not None else ""))
            start(scan.n_points, "\n".join(lines))
        done = int(np.count_nonzero(collector.done))
        if progress is not None and done:
            progress(done)
        todo = np.flatnonzero(~collector.done)
        workers = max(1, getattr(executor, "workers", 1))
        jobs = ((scan, idx) for idx in _chunks(todo, scan.chunk, workers, scan.max_chunk))
        for record in executor.imap_unordered(solve_chunk, jobs):
            if ck is not None:
                ck.append(record)
            n = collector.add(record)
            if progress is not None:
                progress(n)
        ds = finish(collector, history)
        if before_write is not None:
            before_write(ds)
        if output is not None:
            write_dataset(ds, output)
        if ck is not None:
            ck.discard()
            ck = None
        return ds
    finally:
        if ck is not None:
            ck.close()
