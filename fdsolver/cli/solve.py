"""``fdsolver solve``, ``fdsolver show`` and ``fdsolver plot``."""

from __future__ import annotations

import os

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
    write_figure,
)


def register(sub) -> None:
    p = sub.add_parser("solve", help="bound states of a case file")
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("-o", "--output", help="write the run to this NetCDF file")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the levels and wavefunctions to this image")
    p.add_argument("--transitions", action="store_true",
                   help="also print the strongest intersubband transitions (energies, dipoles, oscillator strengths)")
    p.set_defaults(func=run_solve)

    p = sub.add_parser("show", help="print the table of an archive")
    p.add_argument("archive", help="NetCDF file written by fdsolver")
    p.set_defaults(func=run_show)

    p = sub.add_parser("plot", help="draw an archive to an image")
    p.add_argument("archive", help="NetCDF file written by fdsolver")
    p.add_argument("-o", "--output", required=True, metavar="FIG.png", help="image file to write (.png, .pdf, .svg)")
    p.set_defaults(func=run_plot)


def run_solve(args) -> int:
    from fdsolver.api import solve_record_of
    from fdsolver.input.case import load_case
    from fdsolver.io.archive import write_dataset
    from fdsolver.report.solve import format_solve

    outputs = [(args.output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]
    check_outputs(outputs, inputs=[args.case])  # before reading anything
    case = load_case(args.case, **parse_set(args.set))
    check_outputs(outputs, inputs=case_inputs(case))  # and not onto a table the case read
    rec = solve_record_of(case, action=command("solve", args, [("--set", "set")]))
    if args.output or args.plot:  # xarray is imported only when a figure is made (the archive is written without it)
        ds = rec.dataset() if args.plot else rec
        figure = draw_figure(ds, args.plot)  # first: a figure that fails leaves no archive behind
        try:
            if args.output:
                write_dataset(ds, args.output)
            commit_figure(figure, args.plot)
        finally:
            discard(figure if figure and os.path.exists(figure) else None)
    say(format_solve(rec, transitions=args.transitions))
    for path in (args.output, args.plot):
        if path:
            say(f"wrote {path}")
    return 0


def run_show(args) -> int:
    from fdsolver.io.archive import open_run
    from fdsolver.report import format_archive

    say(format_archive(open_run(args.archive)))
    return 0


def run_plot(args) -> int:
    from fdsolver.io.archive import open_run

    check_outputs([(args.output, "--output", FIG_SUFFIXES)], inputs=[args.archive])
    write_figure(open_run(args.archive), args.output)
    return 0
