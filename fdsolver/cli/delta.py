"""``fdsolver delta-check``: parse, call the zero-range study, print, write."""

from __future__ import annotations

import sys

from fdsolver.errors import CaseError


def register(sub) -> None:
    p = sub.add_parser(
        "delta-check",
        help="how far zero-range point interactions are from finite narrow wells (width ladder or validity map)",
        description="Replace each point component by a finite well of the same strength and centroid and walk a "
        "ladder of widths, or (--from-finite) compare a case of narrow wells with its zero-range model; "
        "--map NAME=LO:HI:N twice draws a validity map over two params ('width' = the replacement width).",
    )
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("--shape", help="replacement well: square (default), smooth_square, gaussian or sech2")
    p.add_argument("--widths", metavar="LO:HI:N", help="N geometric widths from LO to HI, or one width W (length unit "
                   "of the case; gaussian: sigma); default automatic from the decay length")
    p.add_argument("--tolerance", type=float, metavar="REL", help="relative deviation the model must stay below (default 1e-2)")
    p.add_argument("--from-finite", action="store_true", default=None,
                   help="the case holds finite wells: compare them with their zero-range model")
    p.add_argument("--map", action="append", metavar="NAME=LO:HI:N[:log]", help="validity-map axis (give two)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("-o", "--output", metavar="CHECK.nc", help="write the result to this NetCDF archive")
    p.add_argument("--plot", metavar="FIG.png", help="draw the deviation against width (or the map) to this image")
    p.add_argument("-j", "--workers", type=int, metavar="N", help="worker processes for a map (default: all cores)")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=run_delta)


def _command(args) -> str:
    parts = [f"fdsolver delta-check {args.case}"]
    for flag, val in (("--shape", args.shape), ("--widths", args.widths), ("--tolerance", args.tolerance)):
        if val is not None:
            parts.append(f"{flag} {val}")
    if args.from_finite:
        parts.append("--from-finite")
    parts += [f"--map {m}" for m in args.map or []] + [f"--set {s}" for s in args.set or []]
    return " ".join(parts)


def run_delta(args) -> int:
    from fdsolver.zerorange import ladder as D
    from fdsolver.input.case import load_case
    from fdsolver.cli import parse_set
    from fdsolver.cli.solve import FIG_SUFFIXES, check_output
    from fdsolver.report.delta import format_delta

    check_output(args.output, "--output", (".nc",))
    check_output(args.plot, "--plot", FIG_SUFFIXES)
    if args.workers is not None and args.workers < 1:
        raise CaseError(f"needs at least 1 worker, got {args.workers}", key="--workers")
    if args.from_finite and args.shape is not None:
        raise CaseError("--shape chooses the wells that replace points; --from-finite uses the case's own wells",
                        key="--shape")
    fixed = parse_set(args.set)
    case = load_case(args.case, **fixed)
    options = D.read_options(case, shape=args.shape, widths=args.widths, tolerance=args.tolerance,
                             from_finite=args.from_finite, maps=args.map)
    if options.from_finite and options.widths is not None and not options.maps:
        raise CaseError("--widths sets the replacement widths; --from-finite keeps the case's own wells", key="--widths")
    if options.maps:
        ds = _run_map(case, options, fixed, args)
    else:
        ds = D.ladder_dataset(case, D.run_ladder(case, options), _command(args))
    print(format_delta(ds))
    if args.output:
        from fdsolver.io.archive import write_dataset

        write_dataset(ds, args.output)
        print(f"wrote {args.output}")
    if args.plot:
        from fdsolver.plot import plot_archive

        plot_archive(ds, args.plot)
        print(f"wrote {args.plot}")
    return 0


def _run_map(case, options, fixed, args):
    from fdsolver.scans.maps import map_dataset, plan_map, run_map
    from fdsolver.parallel.executors import ProcessExecutor, SerialExecutor

    spec = plan_map(case, options, fixed)
    n = spec.shape2[0] * spec.shape2[1]
    ex = SerialExecutor() if args.workers == 1 else ProcessExecutor(args.workers)
    from tqdm import tqdm

    with ex:
        print(f"mapping {n} points on {ex.workers} worker process(es)", file=sys.stderr)
        with tqdm(total=n, unit="point", desc="delta map", file=sys.stderr, disable=args.quiet or not sys.stderr.isatty(),
                  dynamic_ncols=True) as bar:
            res = run_map(spec, ex, progress=bar.update)
    return map_dataset(case, spec, res, _command(args))
