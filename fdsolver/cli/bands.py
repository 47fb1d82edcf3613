"""``fdsolver bands``: Bloch bands of a periodic case (or, with ``--vary``, its band edges over params); print, write."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from fdsolver.errors import CaseError, printable


def register(sub) -> None:
    p = sub.add_parser(
        "bands",
        help="Bloch bands of a periodic case: edges, widths, gaps, masses, E(q), density of states (or a band sweep)",
        description="Band structure of a case with [domain] boundary = \"periodic\": band edges, widths and gaps, "
        "effective masses at the band edges, E_n(q) over the zone and the density of states, each with its error "
        "estimate.  --stacks sets finite N-period stacks beside the bands; --vary sweeps the band edges over params.",
    )
    p.add_argument("case", help="case file (TOML) with [domain] boundary = \"periodic\"")
    p.add_argument("-o", "--output", metavar="BANDS.nc", help="write the result to this NetCDF archive (a band sweep: "
                   "default CASE_band_sweep.nc; its checkpoint is BANDS.nc.checkpoint)")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the band diagram (or the fan chart of a sweep)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("--bands", type=int, metavar="N", help="number of bands from the lowest (default: [solve] bands or 10)")
    p.add_argument("--wavevectors", type=int, metavar="N", help="wavevectors on [0, pi/L] (default: [solve] "
                   "wavevectors or 101)")
    p.add_argument("--bloch", nargs="?", const="0,1", metavar="Q,...", help="store every band's Bloch function at "
                   "these wavevectors, in units of pi/L (default with the flag alone: 0,1 = zone centre and boundary)")
    p.add_argument("--stacks", metavar="N,...", help="also solve finite stacks of N periods (e.g. 2,4,8,16) and set "
                   "their levels beside the bands")
    p.add_argument("--termination", choices=("hard", "open"), default="hard", help="finite stacks between hard walls "
                   "at the period ends (default) or open, in the cladding")
    p.add_argument("--vary", action="append", metavar="NAME=START:STOP:COUNT", help="sweep the band edges over a "
                   "param (repeatable: cartesian product; also :log and v1,v2,...)")
    p.add_argument("--executor", choices=("serial", "processes", "dask"), help="where sweep points run (default: "
                   "processes)")
    p.add_argument("-j", "--workers", type=int, metavar="N", help="worker processes of a sweep (default: all cores)")
    p.add_argument("--cluster", metavar="local:N", help="start a Dask LocalCluster of N workers (local:N:dashboard "
                   "also serves its dashboard)")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="run a sweep on an existing Dask scheduler")
    p.add_argument("--chunk", type=int, metavar="POINTS", help="sweep points per task")
    p.add_argument("--memory-mb", type=float, metavar="MB", help="memory budget of a sweep result")
    p.add_argument("--resume", action="store_true", help="continue a sweep from its checkpoint")
    p.add_argument("--restart", action="store_true", help="discard an old checkpoint of this sweep and start over")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=run_bands)


OPTIONS = (("--set", "set"), ("--bands", "bands"), ("--wavevectors", "wavevectors"), ("--bloch", "bloch"),
           ("--stacks", "stacks"), ("--vary", "vary"))
SWEEP_ONLY = ("--executor", "executor"), ("--workers", "workers"), ("--cluster", "cluster"), \
    ("--scheduler", "scheduler"), ("--chunk", "chunk"), ("--memory-mb", "memory_mb"), ("--resume", "resume"), \
    ("--restart", "restart")
BANDS_ONLY = (("--wavevectors", "wavevectors"), ("--bloch", "bloch"), ("--stacks", "stacks"))


def run_bands(args) -> int:
    from fdsolver.api import bands_record_of
    from fdsolver.cli._common import (
        ARCHIVE_SUFFIXES,
        FIG_SUFFIXES,
        case_inputs,
        check_outputs,
        command,
        commit_figure,
        discard,
        draw_figure,
        parse_set,
        say,
    )
    from fdsolver.input.case import load_case
    from fdsolver.io.archive import write_dataset
    from fdsolver.report import format_archive

    sweep = bool(args.vary)
    output = args.output or (f"{Path(args.case).stem}_band_sweep.nc" if sweep else None)
    outputs = [(output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]
    checkpoint = output if sweep else None
    check_outputs(outputs, inputs=[args.case], checkpoint_of=checkpoint)  # before reading anything
    wrong = [flag for flag, attr in (BANDS_ONLY if sweep else SWEEP_ONLY) if getattr(args, attr) not in (None, False)]
    if wrong:
        what = "a band structure, not a band sweep (--vary)" if sweep else "a band sweep (--vary)"
        raise CaseError(f"{wrong[0]} belongs to {what}", key=wrong[0])
    if args.termination != "hard" and args.stacks is None:
        raise CaseError("--termination says how finite stacks end; give --stacks N,... too", key="--termination")
    case = load_case(args.case, **parse_set(args.set))
    check_outputs(outputs, inputs=case_inputs(case), checkpoint_of=checkpoint)  # and not onto a table the case read
    action = command("bands", args, OPTIONS + (("--termination", "termination"),) if args.stacks else OPTIONS)
    if sweep:
        ds = _sweep(case, args, output, action)  # written by its run, which keeps the checkpoint until then
        if ds is None:
            return 130
        figure = draw_figure(ds, args.plot)
        try:
            commit_figure(figure, args.plot)
        finally:
            discard(figure if figure and os.path.exists(figure) else None)
        shown = ds
    else:  # the table prints from the archive's variables and the archive is written from them; xarray is loaded
        # only to draw
        shown = bands_record_of(case, n_bands=args.bands, wavevectors=args.wavevectors, bloch=args.bloch,
                                stacks=args.stacks, termination=args.termination, action=action)
        if output or args.plot:
            ds = shown.dataset() if args.plot else shown
            figure = draw_figure(ds, args.plot)  # first: a figure that fails leaves no archive behind
            try:
                if output:
                    write_dataset(ds, output)
                commit_figure(figure, args.plot)
            finally:
                discard(figure if figure and os.path.exists(figure) else None)
    say(format_archive(shown))
    for path in (output, args.plot):
        if path:
            say(f"wrote {path}")
    return 0


def _sweep(case, args, output, action):
    from fdsolver.api import band_sweep
    from fdsolver.cli._common import ProgressBar
    from fdsolver.cli.sweep import sigint_stops_the_run
    from fdsolver.parallel.checkpoint import path_for

    bar = ProgressBar("band sweep", args.quiet)
    try:
        with sigint_stops_the_run():
            return band_sweep(case, args.vary, n_bands=args.bands, output=output, resume=args.resume, restart=args.restart,
                              executor=args.executor, workers=args.workers,
                              cluster=args.cluster, scheduler=args.scheduler, memory_mb=args.memory_mb, chunk=args.chunk,
                              progress=bar, action=action)
    except KeyboardInterrupt:
        bar.close()
        print(f"interrupted: finished points are kept in {printable(path_for(output))}; run the same command with --resume to "
              "finish", file=sys.stderr)
        return None
    finally:
        bar.close()
