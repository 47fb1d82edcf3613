"""``fdsolver solve``, ``fdsolver show`` and ``fdsolver plot``."""

from __future__ import annotations

from fdsolver.cli._common import ARCHIVE_SUFFIXES, FIG_SUFFIXES, check_output, command, parse_set, write_figure


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
    import fdsolver
    from fdsolver.report.solve import format_solve

    check_output(args.output, "--output", ARCHIVE_SUFFIXES)
    check_output(args.plot, "--plot", FIG_SUFFIXES)
    from fdsolver.api import solve_record_of

    case = fdsolver.load_case(args.case, **parse_set(args.set))
    rec = solve_record_of(case, action=command("solve", args, [("--set", "set")]))
    print(format_solve(rec, transitions=args.transitions))
    if args.output or args.plot:  # xarray is imported only when an archive or a figure is made
        ds = rec.dataset()
        if args.output:
            fdsolver.write_dataset(ds, args.output)
            print(f"wrote {args.output}")
        write_figure(ds, args.plot)
    return 0


def run_show(args) -> int:
    import fdsolver
    from fdsolver.report import format_archive

    print(format_archive(fdsolver.open_run(args.archive)))
    return 0


def run_plot(args) -> int:
    import fdsolver

    check_output(args.output, "--output", FIG_SUFFIXES)
    write_figure(fdsolver.open_run(args.archive), args.output)
    return 0
