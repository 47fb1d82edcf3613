"""``fdsolver bands``: Bloch bands of a periodic case (or, with ``--vary``, its band edges over params); print, write."""

from __future__ import annotations

import sys
from pathlib import Path

from fdsolver.errors import CaseError


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
    p.add_argument("--cluster", metavar="local:N", help="start a Dask LocalCluster of N workers")
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
    import fdsolver
    import fdsolver.api
    from fdsolver.cli._common import ARCHIVE_SUFFIXES, FIG_SUFFIXES, check_output, command, parse_set, write_figure

    sweep = bool(args.vary)
    output = args.output or (f"{Path(args.case).stem}_band_sweep.nc" if sweep else None)
    check_output(output, "--output", ARCHIVE_SUFFIXES)
    check_output(args.plot, "--plot", FIG_SUFFIXES)
    wrong = [flag for flag, attr in (BANDS_ONLY if sweep else SWEEP_ONLY) if getattr(args, attr) not in (None, False)]
    if wrong:
        what = "a band structure, not a band sweep (--vary)" if sweep else "a band sweep (--vary)"
        raise CaseError(f"{wrong[0]} belongs to {what}", key=wrong[0])
    if args.termination != "hard" and args.stacks is None:
        raise CaseError("--termination says how finite stacks end; give --stacks N,... too", key="--termination")
    case = fdsolver.load_case(args.case, **parse_set(args.set))
    action = command("bands", args, OPTIONS + (("--termination", "termination"),) if args.stacks else OPTIONS)
    if sweep:
        ds = _sweep(case, args, output, action)
        if ds is None:
            return 130
    else:  # the table prints from the archive's variables; xarray is loaded only to write or draw
        rec = fdsolver.api.bands_record_of(case, n_bands=args.bands, wavevectors=args.wavevectors, bloch=args.bloch,
                                           stacks=args.stacks, termination=args.termination, action=action)
    from fdsolver.report import format_archive

    print(format_archive(ds if sweep else rec))
    if not sweep and (output or args.plot):
        ds = rec.dataset()
    if output:
        if not sweep:  # a sweep is written by its run, which keeps the checkpoint until then
            fdsolver.write_dataset(ds, output)
        print(f"wrote {output}")
    write_figure(ds if output or args.plot else None, args.plot)
    return 0


def _sweep(case, args, output, action):
    from fdsolver.api import band_sweep
    from fdsolver.cli._common import ProgressBar
    from fdsolver.parallel.checkpoint import path_for

    bar = ProgressBar("band sweep", args.quiet)
    try:
        return band_sweep(case, args.vary, n_bands=args.bands, output=output, resume=args.resume, restart=args.restart,
                          executor=args.executor, workers=args.workers,
                          cluster=args.cluster, scheduler=args.scheduler, memory_mb=args.memory_mb, chunk=args.chunk,
                          progress=bar, action=action)
    except KeyboardInterrupt:
        bar.close()
        print(f"interrupted: finished points are kept in {path_for(output)}; run the same command with --resume to "
              "finish", file=sys.stderr)
        return None
    finally:
        bar.close()
