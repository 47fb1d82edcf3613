"""The ``fdsolver`` command line: parse, call the API (:mod:`fdsolver.api`), print.  Nothing else lives here.

Subcommands are registered from small modules (:mod:`.solve`, :mod:`.sweep`,
:mod:`.delta`, :mod:`.bands`), each with ``register(subparsers)`` that adds its parser and
sets ``func``; what they share is :mod:`._common`.  Exit codes:
0 success, 2 bad input (one line naming file, key and problem, on stderr),
1 unexpected failure (one line; the traceback only with FDSOLVER_DEBUG=1).
"""

from __future__ import annotations

import argparse
import os
import sys
import warnings

from fdsolver._version import __version__
from fdsolver.errors import CaseError, FdsolverError

SUBCOMMAND_MODULES = ("solve", "delta", "sweep", "continuum", "bands", "optics")


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors as one line and exit code 2."""

    def error(self, message):  # noqa: D102
        words = self.prog.split()[1:]  # the subcommand, if this is its parser ("fdsolver solve")
        self.exit(2, f"fdsolver: error: {message} (see '{' '.join(['fdsolver', *words[-1:]])} --help')\n")


def build_parser() -> argparse.ArgumentParser:
    import importlib

    parser = _Parser(prog="fdsolver", description="Bound states, transmission, resonances and tunnelling current of 1D "
                     "potentials (adaptive finite-difference grids and exact transfer), Bloch bands of periodic ones, and "
                     "optical transitions.")
    parser.add_argument("--version", action="version", version=f"fdsolver {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in SUBCOMMAND_MODULES:
        try:
            mod = importlib.import_module(f"fdsolver.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name and exc.name.endswith(name):
                continue
            raise
        mod.register(sub)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help(sys.stderr)
        return 2
    try:
        with warnings.catch_warnings():
            # numpy's floating-point and matplotlib's font warnings are noise at the terminal: what matters is in
            # the notes of a result, or in the one line of a refusal
            warnings.simplefilter("ignore")
            return int(args.func(args) or 0)
    except CaseError as err:
        print(f"fdsolver: error: {err}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into e.g. `head`: stop quietly
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return 0
    except KeyboardInterrupt:
        print("fdsolver: interrupted", file=sys.stderr)
        return 130
    except FdsolverError as err:
        print(f"fdsolver: error: {err}", file=sys.stderr)
        return 1
    except Exception as exc:  # a bug: one line, traceback on request
        if os.environ.get("FDSOLVER_DEBUG"):
            raise
        print(
            f"fdsolver: internal error: {type(exc).__name__}: {exc} (please report; FDSOLVER_DEBUG=1 shows the traceback)",
            file=sys.stderr,
        )
        return 1


def command_line() -> int:
    """The installed ``fdsolver`` command and ``python -m fdsolver``: :func:`main`, in a process that ends right after.

    Python's shutdown first runs a full garbage collection over every object the process made, and a solve's
    imports make over 100,000 (numba's type system most of them): 0.19-0.37 s of CPU on the 2-core development
    machine, about a third of a cold ``fdsolver solve`` (DEVELOPERS.md, start-up).  ``gc.freeze()`` moves them out of
    the collector's reach, so the shutdown frees what reference counting frees and leaves the rest to the
    operating system.  Nothing waits on that collection: every file fdsolver writes is closed (or, for a
    checkpoint, flushed and synced record by record) before the command returns, the interpreter still flushes
    standard output and error, and atexit handlers still run.  Code that calls :func:`main` in a longer-lived
    process (tests, notebooks) calls it directly and keeps its garbage collection.
    """
    code = main()
    import gc

    gc.freeze()
    return code


if __name__ == "__main__":  # pragma: no cover
    sys.exit(command_line())
