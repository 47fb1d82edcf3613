"""``fdsolver sweep`` and ``fdsolver threshold``: parse, call the API, print."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

from fdsolver.errors import printable


def register(sub) -> None:
    p = sub.add_parser("sweep", help="solve a case over a grid of param values (checkpointed, parallel)")
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("--vary", action="append", metavar="NAME=START:STOP:COUNT",
                   help="swept param (repeatable: cartesian product); also NAME=START:STOP:COUNT:log and NAME=v1,v2,...; "
                   "default: [sweep] vary of the case")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="fix a [params] entry for the whole sweep (repeatable)")
    p.add_argument("-o", "--output", metavar="SWEEP.nc", help="result file (default: CASE_sweep.nc here); the checkpoint is SWEEP.nc.checkpoint")
    p.add_argument("--save-psi", action="store_true", help="also keep the wavefunctions, on one common x grid")
    p.add_argument("--energies-only", action="store_true",
                   help="keep only what needs no wavefunction (energies, errors, convergence, parities, widths, "
                   "splittings): no <x>, spreads, region shares or transitions; each point costs less")
    p.add_argument("--executor", choices=("serial", "processes", "dask"), help="where points run (default: processes)")
    p.add_argument("-j", "--workers", type=int, metavar="N", help="worker processes (default: all cores)")
    p.add_argument("--cluster", metavar="local:N", help="start a Dask LocalCluster of N workers (local:N:dashboard "
                   "also serves its dashboard)")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="run on an existing Dask scheduler")
    p.add_argument("--chunk", type=int, metavar="POINTS",
                   help="points per task (default: up to 1000, shrinking towards the end of the sweep)")
    p.add_argument("--resume", action="store_true", help="continue from the checkpoint (computes only missing points)")
    p.add_argument("--restart", action="store_true", help="discard an old checkpoint of this output and start over")
    p.add_argument("--memory-mb", type=float, metavar="MB", help="memory budget of the result (default: [sweep] memory_mb or 1000)")
    p.add_argument("--no-thresholds", action="store_true", help="do not locate binding thresholds along a single swept param")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the sweep to this image")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=run_sweep_cli)

    p = sub.add_parser("threshold", help="param value at which a bound state appears (box-independent)")
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("--vary", required=True, metavar="NAME=LO:HI", help="the param and the interval to search")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--state", type=int, metavar="N", help="the state with N nodes (default: the first threshold from LO)")
    g.add_argument("--all", action="store_true", help="every threshold in the interval")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="fix a [params] entry (repeatable)")
    p.add_argument("--scan", type=int, default=129, metavar="POINTS", help="scan points that bracket thresholds (default 129)")
    p.add_argument("--rtol", type=float, default=1e-9, help="relative accuracy of each threshold (default 1e-9)")
    p.add_argument("--json", action="store_true", help="print one JSON object (param, state, value, uncertainty, ...)")
    p.add_argument("-o", "--output", metavar="THRESH.nc", help="also write the thresholds and the scan to a NetCDF archive")
    p.set_defaults(func=run_threshold_cli)


SWEEP_OPTIONS = (("--vary", "vary"), ("--set", "set"), ("--save-psi", "save_psi"), ("--energies-only", "energies_only"))
THRESHOLD_OPTIONS = (("--vary", "vary"), ("--set", "set"), ("--state", "state"), ("--all", "all"))


def run_sweep_cli(args) -> int:
    from fdsolver.api import sweep
    from fdsolver.input.case import load_case
    from fdsolver.cli._common import (
        ARCHIVE_SUFFIXES,
        FIG_SUFFIXES,
        ProgressBar,
        case_inputs,
        check_outputs,
        command,
        commit_figure,
        discard,
        draw_figure,
        parse_set,
        say,
    )
    from fdsolver.parallel.checkpoint import path_for
    from fdsolver.report.sweep import format_sweep

    output = args.output if args.output is not None else f"{Path(args.case).stem}_sweep.nc"
    outputs = [(output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]
    check_outputs(outputs, inputs=[args.case], checkpoint_of=output)  # before reading anything
    case = load_case(args.case, **parse_set(args.set))
    check_outputs(outputs, inputs=case_inputs(case), checkpoint_of=output)  # and not onto a table the case read
    bar = ProgressBar("sweep", args.quiet)
    figure: list = []

    def before_write(ds):  # the figure first: one that cannot be made leaves no archive behind
        figure.append(draw_figure(ds, args.plot))

    try:
        with sigint_stops_the_run():
            ds = sweep(case, args.vary, save_psi=args.save_psi, output=output, resume=args.resume,
                                restart=args.restart, executor=args.executor, workers=args.workers, cluster=args.cluster,
                                scheduler=args.scheduler, memory_mb=args.memory_mb, chunk=args.chunk,
                                thresholds=not args.no_thresholds, energies_only=args.energies_only,
                                progress=bar, before_write=before_write,
                                action=command("sweep", args, SWEEP_OPTIONS))
        commit_figure(figure[0] if figure else None, args.plot)
    except KeyboardInterrupt:
        bar.close()
        discard(figure[0] if figure else None)
        print(f"interrupted: finished points are kept in {printable(path_for(output))}; run the same command with "
              "--resume to finish", file=sys.stderr)
        return 130
    except BaseException:
        discard(figure[0] if figure else None)
        raise
    finally:
        bar.close()
    say(format_sweep(ds))
    say(f"wrote {output}")
    if args.plot:
        say(f"wrote {args.plot}")
    return 0


class sigint_stops_the_run:
    """SIGINT stops a scan as Ctrl-C does, also when it was started with SIGINT ignored.

    A non-interactive shell starts a background job (``fdsolver sweep ... &``) with SIGINT ignored, and Python
    then never raises KeyboardInterrupt: ``kill -INT PID`` would be lost.  A scan is a long run with a
    checkpoint, and stopping it keeps every finished point, so here SIGINT is taken back while the scan runs
    (README.md, "Checkpoint and resume").  A scan that must survive the interruption of the script that
    started it is started in a session of its own (``setsid fdsolver sweep ...``).
    """

    def __enter__(self):
        import signal
        import threading

        self.old = None
        if threading.current_thread() is threading.main_thread() and signal.getsignal(signal.SIGINT) == signal.SIG_IGN:
            self.old = signal.signal(signal.SIGINT, signal.default_int_handler)
        return self

    def __exit__(self, *exc):
        import signal

        if self.old is not None:
            signal.signal(signal.SIGINT, self.old)
        return False


def _finite(v):
    """JSON-safe copy: non-finite floats become null."""
    if isinstance(v, dict):
        return {k: _finite(x) for k, x in v.items()}
    if isinstance(v, list):
        return [_finite(x) for x in v]
    if isinstance(v, float) and not math.isfinite(v):
        return None
    return v


def run_threshold_cli(args) -> int:
    from fdsolver.api import threshold
    from fdsolver.input.case import load_case
    from fdsolver.io.archive import write_dataset
    from fdsolver.cli._common import ARCHIVE_SUFFIXES, ProgressBar, case_inputs, check_outputs, command, parse_set, say
    from fdsolver.report.sweep import format_threshold, threshold_summary

    outputs = [(args.output, "--output", ARCHIVE_SUFFIXES)]
    check_outputs(outputs, inputs=[args.case])  # before reading anything
    case = load_case(args.case, **parse_set(args.set))
    check_outputs(outputs, inputs=case_inputs(case))  # and not onto a table the case read
    bar = ProgressBar("threshold scan")
    try:
        ds = threshold(case, args.vary, state=args.state, scan=args.scan, rtol=args.rtol, progress=bar,
                                action=command("threshold", args, THRESHOLD_OPTIONS))
    finally:
        bar.close()
    if args.output:
        write_dataset(ds, args.output)
    first_only = not (args.all or args.state is not None)
    if args.json:
        print(json.dumps(_finite(threshold_summary(ds, first_only, args.state)), allow_nan=False))
    else:
        say(format_threshold(ds, first_only, args.state))
        if args.output:
            say(f"wrote {args.output}")
    return 0
