"""What every subcommand shares: ``--set`` pairs, output paths checked before any work, the command echoed
into the archive's history, and the progress bar of the scans."""

from __future__ import annotations

import sys
from pathlib import Path

from fdsolver.errors import CaseError

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


def check_output(path: str | None, key: str, suffixes=None) -> None:
    """Refuse an output path before any work is done (missing folder, a directory, wrong suffix)."""
    if not path:
        return
    p = Path(path)
    if p.is_dir():
        raise CaseError(f"'{path}' is a directory; give a file name", key=key)
    if not (p.parent if str(p.parent) else Path(".")).is_dir():
        raise CaseError(f"folder '{p.parent}' does not exist; create it first", key=key)
    if suffixes and p.suffix.lower() not in suffixes:
        raise CaseError(f"'{path}' should end in one of {', '.join(suffixes)}", key=key)


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


def write_figure(ds, path) -> None:
    """Draw archive ``ds`` to ``path`` and say so (nothing if no path was asked for)."""
    if path:
        from fdsolver.plot import plot_archive

        plot_archive(ds, path)
        print(f"wrote {path}")


class ProgressBar:
    """The progress of a scan on stderr: one line saying what runs where, then a bar (hidden when stderr is not a
    terminal, or with ``quiet``).  Called with the number of points each finished chunk adds."""

    def __init__(self, desc: str, quiet: bool = False):
        self.desc, self.quiet, self.bar = desc, quiet, None

    def start(self, total: int, text: str) -> None:
        from tqdm import tqdm

        print(text, file=sys.stderr)
        self.bar = tqdm(total=total, unit="point", desc=self.desc, file=sys.stderr, smoothing=0.05,
                        disable=self.quiet or not sys.stderr.isatty(), dynamic_ncols=True)

    def __call__(self, n: int) -> None:
        if self.bar is not None:
            self.bar.update(n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None
