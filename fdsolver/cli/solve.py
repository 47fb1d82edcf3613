"""``fdsolver solve``, ``fdsolver show`` and ``fdsolver plot``."""

from __future__ import annotations

from pathlib import Path

from fdsolver.errors import CaseError


def register(sub) -> None:
    p = sub.add_parser("solve", help="bound states of a case file")
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("-o", "--output", help="write the run to this NetCDF file")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the levels and wavefunctions to this image")
    p.set_defaults(func=run_solve)

    p = sub.add_parser("show", help="print the table of an archive")
    p.add_argument("archive", help="NetCDF file written by fdsolver")
    p.set_defaults(func=run_show)

    p = sub.add_parser("plot", help="draw an archive to an image")
    p.add_argument("archive", help="NetCDF file written by fdsolver")
    p.add_argument("-o", "--output", required=True, metavar="FIG.png", help="image file to write (.png, .pdf, .svg)")
    p.set_defaults(func=run_plot)


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


FIG_SUFFIXES = (".png", ".pdf", ".svg")


def run_solve(args) -> int:
    from fdsolver import api
    from fdsolver.io import archive
    from fdsolver.input.case import load_case
    from fdsolver.cli import parse_set
    from fdsolver.report import format_solve

    check_output(args.output, "--output", (".nc",))
    check_output(args.plot, "--plot", FIG_SUFFIXES)
    case = load_case(args.case, **parse_set(args.set))
    cmd = "fdsolver solve " + args.case + "".join(f" --set {s}" for s in (args.set or []))
    ds = api.solve(case, action=cmd)
    print(format_solve(ds))
    if args.output:
        archive.write_dataset(ds, args.output)
        print(f"wrote {args.output}")
    if args.plot:
        from fdsolver.plot import plot_archive

        plot_archive(ds, args.plot)
        print(f"wrote {args.plot}")
    return 0


def run_show(args) -> int:
    from fdsolver.io.archive import open_run
    from fdsolver.report import format_archive

    print(format_archive(open_run(args.archive)))
    return 0


def run_plot(args) -> int:
    from fdsolver.io.archive import open_run
    from fdsolver.plot import plot_archive

    check_output(args.output, "--output", FIG_SUFFIXES)
    plot_archive(open_run(args.archive), args.output)
    print(f"wrote {args.output}")
    return 0
