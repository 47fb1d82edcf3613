"""``fdsolver delta-check``: parse, call the API (a width ladder or a validity map), print, write."""

from __future__ import annotations

import sys

from fdsolver.errors import CaseError, printable


def register(sub) -> None:
    p = sub.add_parser(
        "delta-check",
        help="how far zero-range point interactions are from finite narrow wells (width ladder or validity map)",
        description="Replace each point component by a finite well of the same strength and centroid and walk a "
        "ladder of widths (on a background of layers, other components or walls: against the same case with exact "
        "point interactions), or (--from-finite) compare a case of narrow wells with its zero-range model; "
        "--map NAME=LO:HI:N twice draws a validity map over two params ('width' = the replacement width).",
    )
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("--shape", help="replacement well: square (default), smooth_square, gaussian or sech2")
    p.add_argument("--widths", metavar="LO:HI:N", help="N geometric widths from LO to HI, or one width W (length unit "
                   "of the case; gaussian: sigma); default automatic from the decay length")
    p.add_argument("--tolerance", type=float, metavar="REL", help="relative deviation the model must stay below (default 1e-2)")
    p.add_argument("--from-finite", action="store_true", default=None,
                   help="the case holds finite wells: compare them with their zero-range model")
    p.add_argument("--transmission", action="store_true",
                   help="compare scattering instead: T(E) and the resonances of the finite wells/barriers against "
                        "the point interactions")
    p.add_argument("--energies", metavar="LO:HI[:N]", help="energies of --transmission (case energy unit; default "
                   "N = 201 from the incident asymptote to 1.5x the structure, or [transport] energies)")
    p.add_argument("--map", action="append", metavar="NAME=LO:HI:N[:log]", help="validity-map axis (give two)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("-o", "--output", metavar="CHECK.nc", help="write the result to this NetCDF archive")
    p.add_argument("--plot", metavar="FIG.png", help="draw the deviation against width (or the map) to this image")
    p.add_argument("-j", "--workers", type=int, metavar="N", help="worker processes for a map (default: all cores)")
    p.add_argument("--executor", choices=("serial", "processes", "dask"), help="where map points run (default: processes)")
    p.add_argument("--resume", action="store_true", help="continue a map from its checkpoint (CHECK.nc.checkpoint)")
    p.add_argument("--restart", action="store_true", help="discard an old checkpoint of this map and start over")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=run_delta)


OPTIONS = (("--shape", "shape"), ("--widths", "widths"), ("--tolerance", "tolerance"), ("--from-finite", "from_finite"),
           ("--map", "map"), ("--set", "set"), ("--transmission", "transmission"), ("--energies", "energies"))


def run_delta(args) -> int:
    from fdsolver.api import delta_check, delta_map
    from fdsolver.input.case import load_case
    from fdsolver.io.archive import write_dataset
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
    from fdsolver.cli.sweep import sigint_stops_the_run
    from fdsolver.report import format_archive
    from fdsolver.scans.options import read_options

    outputs = [(args.output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]
    check_outputs(outputs, inputs=[args.case])  # before reading anything (the checkpoint is checked below)
    case = load_case(args.case, **parse_set(args.set))
    settings = dict(shape=args.shape, widths=args.widths, tolerance=args.tolerance, from_finite=args.from_finite)
    action = command("delta-check", args, OPTIONS)
    is_map = bool(read_options(case, **settings, maps=args.map).maps)  # --map, or the case's [delta_check] map
    check_outputs(outputs, inputs=case_inputs(case), checkpoint_of=args.output if is_map else None)
    if is_map and (args.transmission or args.energies):
        raise CaseError("--transmission compares scattering over a ladder of widths; drop --map", key="--map")
    figure: list = []

    def before_write(ds):  # the figure first: one that cannot be made leaves no archive behind
        figure.append(draw_figure(ds, args.plot))

    try:
        if is_map:
            bar = ProgressBar("delta map", args.quiet)
            try:
                with sigint_stops_the_run():
                    ds = delta_map(case, args.map, **settings, output=args.output, resume=args.resume,
                                            restart=args.restart, executor=args.executor, workers=args.workers,
                                            progress=bar, before_write=before_write, action=action)
            except KeyboardInterrupt:
                bar.close()
                discard(figure[0] if figure else None)
                if args.output:
                    print(f"interrupted: finished points are kept in {printable(args.output)}.checkpoint; run the same "
                          "command with --resume to finish", file=sys.stderr)
                return 130
            finally:
                bar.close()
            if not figure:
                before_write(ds)
        else:
            if args.resume or args.restart:
                raise CaseError("--resume and --restart continue a validity map (--map); a width ladder has no checkpoint",
                                key="--resume" if args.resume else "--restart")
            bar = ProgressBar("delta-check widths", args.quiet)
            bar.start(None, "")  # the number of widths is known only once the ladder is planned
            try:
                ds = delta_check(case, **settings, transmission=args.transmission, energies=args.energies, progress=bar,
                                 action=action)
            finally:
                bar.close()
            before_write(ds)
            if args.output:
                write_dataset(ds, args.output)
        commit_figure(figure[0] if figure else None, args.plot)
    except BaseException:
        discard(figure[0] if figure else None)
        raise
    say(format_archive(ds))  # a periodic case gives a comb check
    for path in (args.output, args.plot):
        if path:
            say(f"wrote {path}")
    return 0
