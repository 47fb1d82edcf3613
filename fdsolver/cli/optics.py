"""``fdsolver absorption``, ``fdsolver interband``, ``fdsolver materials`` and ``fdsolver export``: parse, call the API,
print."""

from __future__ import annotations

import json


def register(sub) -> None:
    p = sub.add_parser("absorption", help="intersubband absorption spectrum of a solve archive")
    p.add_argument("run", metavar="RUN.nc", help="solve archive (fdsolver solve CASE.toml -o RUN.nc)")
    p.add_argument("--density", required=True, metavar="NS",
                   help="sheet density of carriers in cm^-2, or with a unit (\"1e11 cm^-2\")")
    p.add_argument("--broadening", required=True, metavar="FWHM",
                   help="Lorentzian full width at half maximum, in the case energy unit or with a unit (\"5 meV\")")
    p.add_argument("--temperature", metavar="T", help="temperature of the carriers in K (default: the case's)")
    p.add_argument("--refractive-index", type=float, default=3.3, metavar="N", help="refractive index (default 3.3)")
    p.add_argument("--period", metavar="L", help="period of a stack of such wells: also the absorption coefficient")
    p.add_argument("--energies", metavar="LO:HI:N", help="photon energies (default: around the transitions)")
    p.add_argument("-o", "--output", metavar="A.nc", help="write the spectrum to this NetCDF file")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the spectrum to this image")
    p.set_defaults(func=run_absorption)

    p = sub.add_parser("interband", help="electron, heavy- and light-hole levels of a stack and their e-h transitions")
    p.add_argument("case", help="case file (TOML) whose layers name their materials")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("-o", "--output", metavar="I.nc", help="write the transitions to this NetCDF file")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the band diagram and the transitions")
    p.set_defaults(func=run_interband)

    p = sub.add_parser("materials", help="the materials library: list it, or one material's parameters and sources")
    p.add_argument("name", nargs="?", help="a material (GaAs, AlGaAs, ...); none: list them all")
    p.add_argument("--x", type=float, metavar="X", help="alloy composition (fraction of the first-named cation)")
    p.add_argument("--temperature", type=float, default=300.0, metavar="T", help="temperature in K (default 300)")
    p.add_argument("--file", metavar="MATERIALS.toml", help="add the materials of a data file of your own")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(func=run_materials)

    p = sub.add_parser("export", help="write the tables of an archive as CSV files")
    p.add_argument("archive", help="NetCDF file written by fdsolver (any kind)")
    p.add_argument("--csv", required=True, metavar="DIR", help="folder for the CSV files (created if missing)")
    p.set_defaults(func=run_export)


def _echo(name: str, target: str, args, options) -> str:
    parts = [f"fdsolver {name} {target}"]
    for flag, attr in options:
        v = getattr(args, attr, None)
        if v is None or v is False:
            continue
        parts.extend([f"{flag} {x}" for x in v] if isinstance(v, list) else [f"{flag} {v}"])
    return " ".join(parts)


def run_absorption(args) -> int:
    from fdsolver.api import absorption
    from fdsolver.cli._common import ARCHIVE_SUFFIXES, FIG_SUFFIXES, check_outputs
    from fdsolver.report.optics import format_absorption

    outputs = [(args.output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]
    check_outputs(outputs, inputs=[args.run])  # before reading anything
    opts = [("--density", "density"), ("--broadening", "broadening"), ("--temperature", "temperature"),
            ("--refractive-index", "refractive_index"), ("--period", "period"), ("--energies", "energies")]
    ds = absorption(args.run, density=args.density, broadening=args.broadening, temperature=args.temperature,
                    refractive_index=args.refractive_index, period=args.period, energies=args.energies,
                    action=_echo("absorption", args.run, args, opts))
    return _finish(ds, args, format_absorption(ds))


def run_interband(args) -> int:
    from fdsolver.api import interband
    from fdsolver.cli._common import ARCHIVE_SUFFIXES, FIG_SUFFIXES, case_inputs, check_outputs, command, parse_set
    from fdsolver.input.case import load_case
    from fdsolver.report.optics import format_interband

    outputs = [(args.output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]
    check_outputs(outputs, inputs=[args.case])  # before reading anything
    case = load_case(args.case, **parse_set(args.set))
    check_outputs(outputs, inputs=case_inputs(case))  # and not onto a table the case read
    ds = interband(case, action=command("interband", args, [("--set", "set")]))
    return _finish(ds, args, format_interband(ds))


def _finish(ds, args, table: str) -> int:
    """Figure first (one that fails leaves no archive), then the archive, then the table and what was written."""
    import os

    from fdsolver.cli._common import commit_figure, discard, draw_figure, say
    from fdsolver.io.archive import write_dataset

    figure = draw_figure(ds, args.plot)
    try:
        if args.output:
            write_dataset(ds, args.output)
        commit_figure(figure, args.plot)
    finally:
        discard(figure if figure and os.path.exists(figure) else None)
    say(table)
    for path in (args.output, args.plot):
        if path:
            say(f"wrote {path}")
    return 0


def run_materials(args) -> int:
    from fdsolver.api import materials
    from fdsolver.cli._common import say

    text, data = materials(args.name, x=args.x, temperature=args.temperature, file=args.file, text=True)
    if args.json:
        print(json.dumps(data, allow_nan=False))
    else:
        say(text)
    return 0


def run_export(args) -> int:
    from fdsolver.cli._common import say
    from fdsolver.report.export import export_csv

    for path in export_csv(args.archive, args.csv):
        say(f"wrote {path}")
    return 0
