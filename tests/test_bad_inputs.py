"""Bad input never crashes the command line: the corpus in tests/bad_inputs/.

Every ``*.toml`` in ``tests/bad_inputs/`` (a file, or a folder whose README.md
holds the header) carries a header::

    # Checks: what is wrong with it
    # Expect: KEY | TEXT           (KEY "-" when no key applies)
    # Run: solve {case} -o {out}   (optional; this is the default)

The contract (README.md, "Exit codes"; common practice, no source): exit code
2, exactly one line on stderr that names the file, the key and the problem,
nothing on stdout, no traceback, and no file created, changed or removed
(an existing output file is not overwritten).

The corpus is copied to a temporary folder and run through ONE child process
that calls ``fdsolver.cli.main`` in-process for every entry, capturing stdout
and stderr at the file-descriptor level (so output from C libraries counts)
and snapshotting the folder before and after.  The child runs under an
address-space limit, so a case that tries to allocate without bound fails
fast instead of swapping the machine.  A few entries are then re-run as real
``python -m fdsolver.cli`` processes to show the entry point behaves the same.
"""

from __future__ import annotations

import json
import os
import re
import shlex
import shutil
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

CORPUS = Path(__file__).resolve().parent / "bad_inputs"
PRECIOUS = b"precious: an existing result that must survive bad input\n"
HEADER = re.compile(r"^# (Checks|Expect|Run): (.*)$")
DEFAULT_RUN = "solve {case} -o {out}"
MEMORY_LIMIT = 4 * 2**30  # bytes of address space for the child that runs the corpus

# Entries that are not files of the corpus: a missing file and command-line paths.
EXTRA = {
    "missing_case_file": {
        "checks": "a case file that does not exist",
        "run": "solve {dir}/no_such_case.toml -o {out}",
        "file": "no_such_case.toml",
        "key": "-",
        "needle": "no such case file",
    },
    "missing_archive": {
        "checks": "fdsolver show of an archive that does not exist",
        "run": "show {dir}/no_such_run.nc",
        "file": "no_such_run.nc",
        "key": "-",
        "needle": "no such archive file",
    },
    "archive_is_a_case_file": {
        "checks": "fdsolver show of a TOML file instead of an archive",
        "run": "show {dir}/empty_file.toml",
        "file": "empty_file.toml",
        "key": "-",
        "needle": "not a readable NetCDF archive",
    },
    "archive_is_a_folder": {
        "checks": "fdsolver show of a folder",
        "run": "show {dir}/folder.csv",
        "file": "folder.csv",
        "key": "-",
        "needle": "is a directory",
    },
    "output_is_a_folder": {
        "checks": "-o pointing at an existing folder",
        "run": "solve {dir}/empty_file.toml -o {dir}/folder.csv",
        "file": "folder.csv",
        "key": "--output",
        "needle": "is a directory",
    },
    "plot_wrong_suffix": {
        "checks": "--plot with a file type that cannot be drawn",
        "run": "solve {dir}/empty_file.toml -o {out} --plot {dir}/levels.jpg",
        "file": "levels.jpg",
        "key": "--plot",
        "needle": "should end in one of",
    },
    "set_not_name_value": {
        "checks": "--set without '='",
        "run": "solve {dir}/param_set_unknown.toml -o {out} --set w",
        "file": "",
        "key": "--set",
        "needle": "is not NAME=VALUE",
    },
}

# Corpus entries that currently fail because of a bug in the core (reported to the lead).
CORE_BUGS: dict[str, str] = {}


def read_header(path: Path) -> dict:
    """The Checks/Expect/Run header of a corpus entry."""
    src = path / "README.md" if path.is_dir() else path
    fields = {}
    for line in src.read_bytes().decode("utf-8", errors="replace").splitlines():
        m = HEADER.match(line)
        if m:
            fields[m.group(1)] = m.group(2).strip()
    key, _, needle = fields["Expect"].partition("|")
    return {
        "checks": fields["Checks"],
        "run": fields.get("Run", DEFAULT_RUN),
        "file": path.name,
        "key": key.strip(),
        "needle": needle.strip(),
    }


def corpus_entries() -> dict:
    entries = {p.stem: read_header(p) for p in sorted(CORPUS.glob("*.toml"))}
    assert not set(entries) & set(EXTRA)
    entries.update(EXTRA)
    return entries


ENTRIES = corpus_entries()


def argv_of(entry: dict, work: Path) -> list[str]:
    case = work / entry["file"]
    subs = {"{case}": str(case), "{out}": str(work / "out" / "precious.nc"), "{dir}": str(work)}
    out = []
    for token in shlex.split(entry["run"]):
        for k, v in subs.items():
            token = token.replace(k, v)
        out.append(token)
    return out


# ------------------------------------------------------------------ the child
def snapshot(folder: Path) -> dict:
    """Every path below ``folder`` with its size and modification time."""
    out = {}
    for root, dirs, files in os.walk(folder):
        for name in dirs + files:
            p = Path(root) / name
            st = p.lstat()
            out[str(p.relative_to(folder))] = (st.st_size, st.st_mtime_ns, p.is_dir())
    return out


def drive(work: Path, entries: dict, report: Path) -> None:
    """Run every entry through fdsolver.cli.main in this process; write the results to ``report``."""
    import io
    import resource
    import tempfile
    import traceback
    import warnings

    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT, MEMORY_LIMIT))
    from fdsolver.cli import main

    os.environ.pop("FDSOLVER_DEBUG", None)
    os.chdir(work)
    results = {}
    for name, entry in entries.items():
        argv = argv_of(entry, work)
        before = snapshot(work)
        py_out, py_err = io.StringIO(), io.StringIO()
        crash = None
        with tempfile.TemporaryFile() as fd_out, tempfile.TemporaryFile() as fd_err:
            sys.stdout.flush()
            sys.stderr.flush()
            saved = os.dup(1), os.dup(2)
            os.dup2(fd_out.fileno(), 1)
            os.dup2(fd_err.fileno(), 2)
            old = sys.stdout, sys.stderr
            sys.stdout, sys.stderr = py_out, py_err
            start = time.perf_counter()
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("always")
                    code = main(argv)
            except SystemExit as exc:  # argparse usage errors
                code = exc.code
            except BaseException:  # noqa: BLE001 - a crash is what we look for
                code = None
                crash = traceback.format_exc()
            elapsed = time.perf_counter() - start
            sys.stdout, sys.stderr = old
            os.dup2(saved[0], 1)
            os.dup2(saved[1], 2)
            os.close(saved[0])
            os.close(saved[1])
            fd_out.seek(0)
            fd_err.seek(0)
            c_out = fd_out.read().decode(errors="replace")
            c_err = fd_err.read().decode(errors="replace")
        after = snapshot(work)
        changed = sorted(k for k in set(before) | set(after) if before.get(k) != after.get(k))
        precious = (work / "out" / "precious.nc").read_bytes() if (work / "out" / "precious.nc").is_file() else None
        results[name] = {
            "argv": argv,
            "code": code,
            "stdout": py_out.getvalue() + c_out,
            "stderr": py_err.getvalue() + c_err,
            "crash": crash,
            "elapsed": elapsed,
            "changed": changed,
            "precious_intact": precious == PRECIOUS,
        }
        # put the folder back for the next entry, whatever this one did
        for k in changed:
            p = work / k
            if k not in before:
                if p.is_dir() and not p.is_symlink():
                    shutil.rmtree(p, ignore_errors=True)
                elif p.exists() or p.is_symlink():
                    p.unlink()
        (work / "out" / "precious.nc").write_bytes(PRECIOUS)
        os.utime(work / "out" / "precious.nc", ns=before["out/precious.nc"][1:2] * 2)
    report.write_text(json.dumps(results))


def prepare(work: Path) -> None:
    shutil.copytree(CORPUS, work, dirs_exist_ok=True)
    (work / "out").mkdir()
    (work / "out" / "precious.nc").write_bytes(PRECIOUS)


@pytest.fixture(scope="module")
def corpus_run(tmp_path_factory):
    work = tmp_path_factory.mktemp("corpus")
    prepare(work)
    report = tmp_path_factory.mktemp("report") / "results.json"
    todo = tmp_path_factory.mktemp("todo") / "entries.json"
    todo.write_text(json.dumps(ENTRIES))
    proc = subprocess.run(
        [sys.executable, __file__, "--drive", str(work), str(todo), str(report)],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert proc.returncode == 0 and report.exists(), proc.stderr[-3000:]
    return work, json.loads(report.read_text())


def _params():
    out = []
    for name in sorted(ENTRIES):
        marks = [pytest.mark.xfail(strict=True, reason=CORE_BUGS[name])] if name in CORE_BUGS else []
        out.append(pytest.param(name, marks=marks, id=name))
    return out


# ------------------------------------------------------------------ the tests
def test_corpus_is_large_and_documented():
    files = [p for p in CORPUS.glob("*.toml")]
    assert len(files) >= 40
    readme = (CORPUS / "README.md").read_text(encoding="utf-8")
    for p in files:
        assert p.stem in readme, f"{p.name} is not listed in tests/bad_inputs/README.md"
    assert not set(CORE_BUGS) - set(ENTRIES)


@pytest.mark.parametrize("name", _params())
def test_bad_input_exit_2_one_line_nothing_written(corpus_run, name):
    _, results = corpus_run
    entry, r = ENTRIES[name], results[name]
    assert r["crash"] is None, r["crash"]
    lines = [line for line in r["stderr"].splitlines() if line.strip()]
    assert "Traceback" not in r["stderr"], r["stderr"]
    assert r["code"] == 2, (r["code"], r["stderr"])
    assert len(lines) == 1, r["stderr"]
    line = lines[0]
    assert line.startswith("fdsolver: error: "), line
    if entry["file"]:
        assert entry["file"] in line, f"the line does not name the file {entry['file']}: {line}"
    if entry["key"] != "-":
        assert entry["key"] in line, f"the line does not name the key {entry['key']}: {line}"
    assert entry["needle"] in line, line
    assert len(line) < 600, "one clear line, not a dump"
    assert all(ch.isprintable() for ch in line), f"control characters reach the terminal: {line!r}"
    assert r["stdout"] == "", r["stdout"]
    assert r["changed"] == [], f"files created, changed or removed: {r['changed']}"
    assert r["precious_intact"]
    assert r["elapsed"] < 30.0


# the same answer from a real process: argv, exit code and stderr identical to the in-process run
SUBPROCESS_SAMPLE = ("syntax_unclosed_array_table", "expr_import", "table_text_in_number_column", "missing_case_file")


@pytest.mark.parametrize("name", [SUBPROCESS_SAMPLE[0]] + [pytest.param(n, marks=pytest.mark.slow) for n in SUBPROCESS_SAMPLE[1:]])
def test_entry_point_process_matches_in_process(corpus_run, name):
    work, results = corpus_run
    r = results[name]
    proc = subprocess.run(
        [sys.executable, "-m", "fdsolver", *r["argv"]], capture_output=True, text=True, cwd=work, timeout=120
    )
    assert proc.returncode == r["code"] == 2
    assert proc.stderr == r["stderr"]
    assert proc.stdout == ""
    assert not (work / "pwned").exists()
    assert (work / "out" / "precious.nc").read_bytes() == PRECIOUS


def test_console_script_is_the_cli_command_line():
    from importlib.metadata import entry_points

    (ep,) = [e for e in entry_points(group="console_scripts") if e.name == "fdsolver"]
    from fdsolver.cli import command_line

    assert ep.load() is command_line


def test_command_line_returns_mains_code_and_skips_the_shutdown_collection(tmp_path):
    # in a process of its own: gc.freeze() is for a process about to end, never for this test process
    code = ("import gc, sys; from fdsolver.cli import command_line; "
            f"sys.argv = ['fdsolver', 'solve', {str(tmp_path / 'absent.toml')!r}]; "
            "code = command_line(); print(code, gc.get_freeze_count() > 0)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=False)
    assert proc.stdout.split() == ["2", "True"]
    assert proc.stderr.startswith("fdsolver: error:") and "absent.toml" in proc.stderr


# ------------------------------------------------------ special files (FIFOs)
def _blocks(target, fifo: Path) -> bool:
    """True if ``target()`` is still blocked reading ``fifo`` after 1 s (it is then unblocked)."""
    box = {}

    def run():
        try:
            target()
        except BaseException as exc:  # noqa: BLE001
            box["exc"] = exc

    t = threading.Thread(target=run, daemon=True)
    t.start()
    t.join(1.0)
    blocked = t.is_alive()
    if blocked:  # give the reader an end of file so the thread finishes
        fd = os.open(fifo, os.O_WRONLY | os.O_NONBLOCK)
        os.close(fd)
        t.join(5.0)
    return blocked, box.get("exc")


def test_special_files_are_refused_not_read(tmp_path):
    import fdsolver

    fifo_case = tmp_path / "pipe.toml"
    os.mkfifo(fifo_case)
    blocked, exc = _blocks(lambda: fdsolver.load_case(fifo_case), fifo_case)
    assert not blocked, "load_case blocks reading a FIFO"
    assert isinstance(exc, fdsolver.CaseError) and "pipe.toml" in str(exc)
    fifo_table = tmp_path / "pipe.csv"
    os.mkfifo(fifo_table)
    case = tmp_path / "c.toml"
    case.write_text('[[potential]]\nshape = "table"\nfile = "pipe.csv"\n')
    blocked, exc = _blocks(lambda: fdsolver.load_case(case), fifo_table)
    assert not blocked, "read_table blocks reading a FIFO"
    assert isinstance(exc, fdsolver.CaseError) and "potential[1].file" in str(exc)


if __name__ == "__main__" and len(sys.argv) == 5 and sys.argv[1] == "--drive":
    drive(Path(sys.argv[2]), json.loads(Path(sys.argv[3]).read_text()), Path(sys.argv[4]))
