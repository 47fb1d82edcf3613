"""What every subcommand shares: ``--set`` pairs, output paths checked before any work, the command echoed
into the archive's history, and the progress bar of the scans."""

from __future__ import annotations

import errno
import os
import stat
import sys
import tempfile
from pathlib import Path

from fdsolver.errors import CaseError, printable, shorten, write_failure

#: image types a figure can be written as
FIG_SUFFIXES = (".png", ".pdf", ".svg")
ARCHIVE_SUFFIXES = (".nc",)


def parse_set(items) -> dict:
    """--set NAME=VALUE pairs as a dict (VALUE a number or an expression string)."""
    out: dict[str, float | str] = {}
    for item in items or []:
        if "=" not in item:
            raise CaseError(f"'{item}' is not NAME=VALUE", key="--set")
        name, value = item.split("=", 1)
        name, value = name.strip(), value.strip()
        try:
            out[name] = float(value)
        except ValueError:
            out[name] = value
    return out


#: characters a write adds to a name: the archive's temporary file ".NAME.XXXXXXXX.tmp", a figure's
#: ".NAME.XXXXXXXX.tmp.SUFFIX", a checkpoint "NAME.checkpoint" and its temporary file ".NAME.checkpoint.tmp"
TEMPORARY_EXTRA, CHECKPOINT_EXTRA = len("..XXXXXXXX.tmp"), len("..checkpoint.tmp")


def case_inputs(case) -> list[str]:
    """The files a case was read from: the case file and the table files it names."""
    if case is None or not getattr(case, "path", None):
        return []
    folder = os.path.dirname(os.path.abspath(case.path))
    return [case.path] + [os.path.join(folder, name) for name in getattr(case, "tables", {})]


def _same(a, b) -> bool:
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        return False


def check_output(path: str | None, key: str, suffixes=None, *, inputs=(), checkpoint: bool = False) -> None:
    """Refuse an output path before any work is done: an empty name, a wrong suffix, a folder that is missing, not
    a folder or not writable, a name too long for the file system (with the temporary and checkpoint names made
    from it), something that is not a regular file in the way (a folder, a device), or one of the ``inputs``
    (the case file, its tables, the archive being drawn).  ``checkpoint``: a checkpoint goes beside it."""
    if path is None:
        return
    if not str(path).strip():
        raise CaseError("the output name is empty; give a file name", key=key)
    if "\0" in str(path):
        raise CaseError("the output name holds a NUL character", key=key)
    p = Path(path)
    shown = shorten(path)
    folder = p.parent if str(p.parent) else Path(".")
    try:
        name_max = os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError, AttributeError):
        name_max = 255
    extra = max(TEMPORARY_EXTRA + (len(p.suffix) if suffixes == FIG_SUFFIXES else 0),
                CHECKPOINT_EXTRA if checkpoint else 0)
    size = len(os.fsencode(p.name))
    if size + extra > name_max:
        what = "its checkpoint and temporary names" if checkpoint else "its temporary name"
        raise CaseError(f"the name '{shorten(p.name, 60)}' is {size} bytes long; with {what} it exceeds the "
                        f"{name_max} bytes the file system allows, so shorten it to {name_max - extra} at most", key=key)
    try:
        target = os.stat(p).st_mode
    except (FileNotFoundError, NotADirectoryError):
        target = None
    except OSError as exc:
        raise write_failure(exc, p, key) from None
    if target is not None and stat.S_ISDIR(target):
        raise CaseError(f"'{shown}' is a directory; give a file name", key=key)
    if target is not None and not stat.S_ISREG(target):
        raise CaseError(f"'{shown}' is not a regular file (a pipe or a device); give a file name", key=key)
    if suffixes and p.suffix.lower() not in suffixes:
        raise CaseError(f"'{shown}' should end in one of {', '.join(suffixes)}", key=key)
    try:
        kind = os.stat(folder).st_mode
    except FileNotFoundError:
        raise CaseError(f"folder '{shorten(folder)}' does not exist; create it first", key=key) from None
    except OSError as exc:
        if exc.errno == errno.ENOTDIR:
            raise CaseError(f"'{shorten(folder)}' is not a folder (a file stands in its path); choose another output "
                            "path", key=key) from None
        raise write_failure(exc, p, key) from None
    if not stat.S_ISDIR(kind):
        raise CaseError(f"'{shorten(folder)}' is not a folder (a file stands there); choose another output path", key=key)
    for other in inputs:
        if other and _same(p, other):
            raise CaseError(f"'{shown}' is an input of this run ('{shorten(other)}'); writing there would destroy it, "
                            "so choose another name", key=key)
    if checkpoint:
        from fdsolver.parallel.checkpoint import Checkpoint, path_for

        ck = path_for(p)
        Checkpoint.check_path(ck)
        for other in inputs:
            if other and _same(ck, other):
                raise CaseError(f"its checkpoint '{shorten(ck)}' would be the input '{shorten(other)}'; choose another "
                                "output name", key=key)
    if not os.access(folder, os.W_OK | os.X_OK):  # asks the kernel: modes, the immutable flag, a read-only mount
        read_only = bool(getattr(os, "ST_RDONLY", 0) and os.statvfs(folder).f_flag & os.ST_RDONLY)
        raise write_failure(OSError(errno.EROFS if read_only else errno.EACCES, "cannot write"), p, key)


def check_outputs(pairs, *, inputs=(), checkpoint_of: str | None = None) -> None:
    """:func:`check_output` for each (path, key, suffixes) of ``pairs``, and no two of them the same file."""
    given = [(path, key, suffixes) for path, key, suffixes in pairs if path is not None]
    for path, key, suffixes in given:
        check_output(path, key, suffixes, inputs=inputs, checkpoint=path == checkpoint_of)
    for i, (a, ka, _) in enumerate(given):
        for b, kb, _ in given[i + 1:]:
            if os.path.abspath(a) == os.path.abspath(b) or _same(a, b):
                raise CaseError(f"{ka} and {kb} name the same file '{shorten(a)}'; give two names", key=kb)


def command(name: str, args, options=()) -> str:
    """The command as typed (for the archive's history): ``fdsolver NAME CASE`` and the given options.

    ``options`` are (flag, attribute) pairs; a list attribute repeats its flag,
    a true boolean writes the flag alone, None is left out.
    """
    parts = [f"fdsolver {name} {args.case}"]
    for flag, attr in options:
        value = getattr(args, attr, None)
        if value is None or value is False:
            continue
        if value is True:
            parts.append(flag)
        elif isinstance(value, list):
            parts.extend(f"{flag} {v}" for v in value)
        else:
            parts.append(f"{flag} {value}")
    return " ".join(parts)


def draw_figure(ds, path: str | None, key: str = "--plot") -> str | None:
    """Draw archive ``ds`` to a temporary file beside ``path`` (nothing if no path was asked for); its name.

    The figure is made before anything is written, so a figure that cannot be made leaves nothing behind;
    :func:`commit_figure` renames it into place once the rest of the run is written.
    """
    if not path:
        return None
    from fdsolver.io.archive import remove_stale
    from fdsolver.plot import plot_archive

    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    remove_stale(p, suffix=".tmp" + p.suffix)
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp" + p.suffix, dir=folder)
        os.close(fd)
        plot_archive(ds, tmp)
        return tmp
    except BaseException as exc:
        discard(tmp)
        if isinstance(exc, OSError):
            raise write_failure(exc, p, key) from None
        raise


def commit_figure(tmp: str | None, path: str | None, key: str = "--plot") -> None:
    """Rename the figure drawn by :func:`draw_figure` into place."""
    if tmp and path:
        try:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
            os.replace(tmp, path)
        except OSError as exc:
            discard(tmp)
            raise write_failure(exc, path, key) from None


def discard(tmp: str | None) -> None:
    """Remove a temporary file (if any)."""
    if tmp:
        try:
            os.unlink(tmp)
        except OSError:
            pass


def write_figure(ds, path, key: str = "--output") -> None:
    """Draw archive ``ds`` to ``path`` (through a temporary file) and say so."""
    if path:
        commit_figure(draw_figure(ds, path, key), path, key)
        say(f"wrote {path}")


def say(text: str) -> None:
    """Print a result to stdout with every control character escaped (newlines kept)."""
    print(printable(text, lines=True))


class ProgressBar:
    """The progress of a scan on stderr: one line saying what runs where, then a bar (hidden when stderr is not a
    terminal, or with ``quiet``).  Called with the number of points each finished chunk adds."""

    def __init__(self, desc: str, quiet: bool = False):
        self.desc, self.quiet, self.bar = desc, quiet, None

    def start(self, total: int | None, text: str) -> None:
        from tqdm import tqdm

        if text:
            print(printable(text, lines=True), file=sys.stderr)
        self.bar = tqdm(total=total, unit="point", desc=self.desc, file=sys.stderr, smoothing=0.05,
                        disable=self.quiet or not sys.stderr.isatty(), dynamic_ncols=True)

    def __call__(self, n: int) -> None:
        if self.bar is not None:
            self.bar.update(n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None
