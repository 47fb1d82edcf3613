"""``fdsolver transmit``, ``fdsolver resonances`` and ``fdsolver current``: parse, call the API, print, write."""

from __future__ import annotations

import sys

SCAN_HELP = {
    "-j": "worker processes (default: all cores)",
    "--executor": "where points run (default: processes)",
    "--resume": "continue from the checkpoint beside -o (OUT.nc.checkpoint)",
    "--restart": "discard an old checkpoint of this run and start over",
}


def _scan_options(p, what: str) -> None:
    p.add_argument("-j", "--workers", type=int, metavar="N", help=SCAN_HELP["-j"])
    p.add_argument("--executor", choices=("serial", "processes", "dask"), help=SCAN_HELP["--executor"])
    p.add_argument("--cluster", metavar="local:N", help="start a Dask LocalCluster of N workers (local:N:dashboard "
                   "also serves its dashboard)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="use the Dask scheduler at ADDRESS")
    p.add_argument("--chunk", type=int, metavar="N", help=f"{what} per task")
    p.add_argument("--resume", action="store_true", help=SCAN_HELP["--resume"])
    p.add_argument("--restart", action="store_true", help=SCAN_HELP["--restart"])
    p.add_argument("-q", "--quiet", action="store_true", help="no progress bar")


def _common(p, out: str) -> None:
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="override a [params] entry (repeatable)")
    p.add_argument("-o", "--output", metavar=out, help="write the result to this NetCDF archive")
    p.add_argument("--plot", metavar="FIG.png", help="also draw the result to this image (.png, .pdf, .svg)")


def register(sub) -> None:
    p = sub.add_parser("transmit", help="transmission T(E) and reflection R(E) of a potential or layer stack",
                       description="T(E) and R(E) of a wave incident from one side (flux-normalised, BenDaniel-Duke "
                       "matching), with the resonances in the range found and marked. Without N the energy grid "
                       "adapts until every resonance is sampled, whatever its width.")
    _common(p, "T.nc")
    p.add_argument("--energies", metavar="LO:HI[:N]", help="energy range (case energy unit); with N, exactly N even "
                   "energies; default [transport] energies, else from the incident asymptote to 1.5x the structure")
    p.add_argument("--incident", choices=("left", "right"), help="side the wave comes from (default left)")
    p.add_argument("--vary", action="append", metavar="NAME=START:STOP:COUNT",
                   help="sweep a param (repeatable; needs --energies LO:HI:N, one common grid)")
    _scan_options(p, "points")
    p.set_defaults(func=run_transmit)

    p = sub.add_parser("resonances", help="resonance energies, widths and lifetimes (S-matrix poles) in a window",
                       description="Every S-matrix pole E_r - i Gamma/2 with E_r in the window (and the true bound "
                       "states there): energies, full widths and lifetimes hbar/Gamma with error estimates. With "
                       "--vary, the same window at every point of a sweep.")
    _common(p, "R.nc")
    p.add_argument("--window", metavar="LO:HI", help="energy window (case energy unit); default [transport] window, "
                   "else the lowest to the highest V of the structure")
    p.add_argument("--max-width", type=float, metavar="GAMMA", help="widest resonance searched (default: the window's "
                   "width)")
    p.add_argument("--vary", action="append", metavar="NAME=START:STOP:COUNT", help="sweep a param (repeatable)")
    _scan_options(p, "points")
    p.set_defaults(func=run_resonances)

    p = sub.add_parser("current", help="Tsu-Esaki current density J(V) of a layer stack under bias",
                       description="J(V) of a layer stack whose bias drops linearly across its inner layers, with "
                       "Fermi-Dirac supply in the emitter (left) and collector (right) and an energy integral "
                       "adapted to the resonances. The figure marks the peak and the valley.")
    _common(p, "J.nc")
    p.add_argument("--bias", metavar="LO:HI:N", help="biases in V (or V1,V2,...); default [transport] bias")
    p.add_argument("--temperature", type=float, metavar="K", help="temperature in K (default [transport] "
                   "temperature, else 300)")
    p.add_argument("--fermi-level", type=float, metavar="EF", help="emitter Fermi level (case energy unit); "
                   "default [transport] fermi_level")
    _scan_options(p, "biases")
    p.set_defaults(func=run_current)


def _outputs(args):
    from fdsolver.cli._common import ARCHIVE_SUFFIXES, FIG_SUFFIXES

    return [(args.output, "--output", ARCHIVE_SUFFIXES), (args.plot, "--plot", FIG_SUFFIXES)]


def _load(args, scan: bool):
    """The case, with every output checked before it is read and again against the tables it read."""
    from fdsolver.cli._common import case_inputs, check_outputs, parse_set
    from fdsolver.input.case import load_case

    checkpoint = args.output if scan else None
    check_outputs(_outputs(args), inputs=[args.case], checkpoint_of=checkpoint)
    case = load_case(args.case, **parse_set(args.set))
    check_outputs(_outputs(args), inputs=case_inputs(case), checkpoint_of=checkpoint)
    return case


def _finish(ds, args, written_by_run: bool) -> int:
    """The figure first (one that fails leaves no archive of ours), the archive, then the table.  ``ds`` may be
    the :class:`~fdsolver.io.record.Record` of one structure's run: it is written and printed as it is, and made
    a Dataset (xarray loaded) only to draw."""
    import os

    from fdsolver.cli._common import commit_figure, discard, draw_figure, say
    from fdsolver.io.archive import write_dataset
    from fdsolver.io.record import Record
    from fdsolver.report import format_archive

    figure = draw_figure(ds.dataset() if args.plot and isinstance(ds, Record) else ds, args.plot)
    try:
        if args.output and not written_by_run:
            write_dataset(ds, args.output)
        commit_figure(figure, args.plot)
    finally:
        discard(figure if figure and os.path.exists(figure) else None)
    say(format_archive(ds))
    for path in (args.output, args.plot):
        if path:
            say(f"wrote {path}")
    return 0


def run_transmit(args) -> int:
    from fdsolver.api import transmit, transmit_record_of
    from fdsolver.cli._common import command

    case = _load(args, bool(args.vary))
    action = command("transmit", args, (("--energies", "energies"), ("--incident", "incident"), ("--vary", "vary"),
                                        ("--set", "set")))
    if not args.vary:  # printed and written from the archive's variables; xarray is loaded only to draw
        shown = transmit_record_of(case, args.energies, incident=args.incident, resume=args.resume,
                                   restart=args.restart, action=action)
        return _finish(shown, args, False)
    ds = _scan(args, lambda bar: transmit(case, args.energies, incident=args.incident, vary=args.vary,
                                                   progress=bar, action=action, **_executor(args)), "T(E) sweep")
    return _finish(ds, args, True)


def _scan(args, call, what: str):
    from fdsolver.cli._common import ProgressBar

    from fdsolver.cli.sweep import sigint_stops_the_run
    from fdsolver.errors import printable

    bar = ProgressBar(what, args.quiet)
    try:
        with sigint_stops_the_run():
            return call(bar)
    except KeyboardInterrupt:
        bar.close()
        if args.output:
            print(f"interrupted: finished points are kept in {printable(args.output)}.checkpoint; run the same command with "
                  "--resume to finish", file=sys.stderr)
        raise
    finally:
        bar.close()


def _executor(args) -> dict:
    return dict(executor=args.executor, workers=args.workers, cluster=args.cluster, scheduler=args.scheduler,
                chunk=args.chunk, resume=args.resume, restart=args.restart, output=args.output)


def run_resonances(args) -> int:
    from fdsolver.api import resonances, resonances_record_of
    from fdsolver.cli._common import command

    case = _load(args, bool(args.vary))
    action = command("resonances", args, (("--window", "window"), ("--max-width", "max_width"), ("--vary", "vary"),
                                          ("--set", "set")))
    if not args.vary:  # printed and written from the archive's variables; xarray is loaded only to draw
        shown = resonances_record_of(case, args.window, max_width=args.max_width, resume=args.resume,
                                     restart=args.restart, action=action)
        return _finish(shown, args, False)
    ds = _scan(args, lambda bar: resonances(case, args.window, max_width=args.max_width, vary=args.vary,
                                                     progress=bar, action=action, **_executor(args)), "resonances")
    return _finish(ds, args, True)


def run_current(args) -> int:
    from fdsolver.api import current
    from fdsolver.cli._common import command

    case = _load(args, True)
    action = command("current", args, (("--bias", "bias"), ("--temperature", "temperature"),
                                       ("--fermi-level", "fermi_level"), ("--set", "set")))
    ds = _scan(args, lambda bar: current(case, args.bias, temperature=args.temperature,
                                                  fermi_level=args.fermi_level, progress=bar, action=action,
                                                  **_executor(args)), "J(V)")
    return _finish(ds, args, True)
