"""``fdsolver sweep`` and ``fdsolver threshold``: parse, call the core, print."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

from fdsolver.errors import CaseError


def register(sub) -> None:
    p = sub.add_parser("sweep", help="solve a case over a grid of param values (checkpointed, parallel)")
    p.add_argument("case", help="case file (TOML)")
    p.add_argument("--vary", action="append", metavar="NAME=START:STOP:COUNT",
                   help="swept param (repeatable: cartesian product); also NAME=START:STOP:COUNT:log and NAME=v1,v2,...; "
                   "default: [sweep] vary of the case")
    p.add_argument("--set", action="append", metavar="NAME=VALUE", help="fix a [params] entry for the whole sweep (repeatable)")
    p.add_argument("-o", "--output", metavar="SWEEP.nc", help="result file (default: CASE_sweep.nc here); the checkpoint is SWEEP.nc.checkpoint")
    p.add_argument("--save-psi", action="store_true", help="also keep the wavefunctions, on one common x grid")
    p.add_argument("--executor", choices=("serial", "processes", "dask"), help="where points run (default: processes)")
    p.add_argument("-j", "--workers", type=int, metavar="N", help="worker processes (default: all cores)")
    p.add_argument("--cluster", metavar="local:N", help="start a Dask LocalCluster of N workers")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="run on an existing Dask scheduler")
    p.add_argument("--chunk", type=int, metavar="POINTS", help="points per task (default: up to 200)")
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


def _command(name: str, args, extra=()) -> str:
    parts = [f"fdsolver {name} {args.case}"] + [f"--vary {v}" for v in args.vary or []] + [f"--set {s}" for s in args.set or []]
    return " ".join(parts + list(extra))


def run_sweep_cli(args) -> int:
    from fdsolver.input.case import load_case
    from fdsolver.parallel.checkpoint import path_for, run_sweep
    from fdsolver.cli import parse_set
    from fdsolver.cli.solve import FIG_SUFFIXES, check_output
    from fdsolver.parallel.executors import make_executor
    from fdsolver.report.sweep import format_sweep
    from fdsolver.scans.sweep import parse_axes, plan_sweep

    output = args.output or f"{Path(args.case).stem}_sweep.nc"
    check_output(output, "--output", (".nc",))
    check_output(args.plot, "--plot", FIG_SUFFIXES)
    if args.resume and args.restart:
        raise CaseError("give --resume or --restart, not both", key="--resume")
    if args.workers is not None and args.workers < 1:
        raise CaseError(f"needs at least 1 worker, got {args.workers}", key="--workers")
    if args.chunk is not None and args.chunk < 1:
        raise CaseError(f"needs at least 1 point per task, got {args.chunk}", key="--chunk")
    if args.memory_mb is not None and not args.memory_mb > 0:
        raise CaseError(f"must be positive, got {args.memory_mb:g}", key="--memory-mb")
    fixed = parse_set(args.set)
    case = load_case(args.case, **fixed)
    axes = parse_axes(args.vary, case)
    spec = plan_sweep(case, axes, fixed, args.save_psi, args.memory_mb, args.chunk)
    if args.resume and not path_for(output).exists():
        print(f"note: no checkpoint at {path_for(output)}; starting from the beginning", file=sys.stderr)
    action = _command("sweep", args, ["--save-psi"] if args.save_psi else [])
    bar = None
    try:
        with make_executor(args.executor, args.workers, args.cluster, args.scheduler) as ex:
            if ex.dashboard:
                print(f"Dask dashboard: {ex.dashboard}", file=sys.stderr)
            where = {"serial": "in this process", "processes": f"on {ex.workers} local worker processes"}.get(ex.name, f"on {ex.workers} Dask workers")
            print(f"sweeping {spec.n_points} points {where}; checkpoint {path_for(output)}", file=sys.stderr)
            from tqdm import tqdm

            bar = tqdm(total=spec.n_points, unit="point", desc="sweep", file=sys.stderr, smoothing=0.05,
                       disable=args.quiet or not sys.stderr.isatty(), dynamic_ncols=True)
            ds = run_sweep(spec, ex, output=output, resume=args.resume, restart=args.restart, action=action,
                           progress=bar.update, locate=not args.no_thresholds)
    except KeyboardInterrupt:
        if bar is not None:
            bar.close()
        print(f"interrupted: finished points are kept in {path_for(output)}; run the same command with --resume to finish",
              file=sys.stderr)
        return 130
    finally:
        if bar is not None:
            bar.close()
    print(format_sweep(ds))
    print(f"wrote {output}")
    if args.plot:
        from fdsolver.plot import plot_archive

        plot_archive(ds, args.plot)
        print(f"wrote {args.plot}")
    return 0


def parse_interval(text: str, case) -> tuple[str, float, float]:
    """NAME=LO:HI with LO < HI."""
    from fdsolver.scans.sweep import _number, split_spec

    name, rest = split_spec(text, case)
    parts = rest.split(":")
    if len(parts) != 2:
        raise CaseError(f"'{text}' should be {name}=LO:HI (the interval to search)", key="--vary")
    lo, hi = _number(parts[0], text, "--vary"), _number(parts[1], text, "--vary")
    if lo == hi:
        raise CaseError(f"'{text}' is an empty interval", key="--vary")
    if lo > hi:
        raise CaseError(f"'{text}' is reversed: LO {lo:g} is above HI {hi:g}; write {name}={parts[1]}:{parts[0]}", key="--vary")
    return name, lo, hi


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
    from fdsolver.input.case import load_case
    from fdsolver.cli import parse_set
    from fdsolver.cli.solve import check_output
    from fdsolver.report.sweep import format_search
    from fdsolver.scans.sweep import param_units
    from fdsolver.scans.thresholds import find_thresholds, search_dataset

    check_output(args.output, "--output", (".nc",))
    if args.state is not None and args.state < 0:
        raise CaseError(f"a state label is its node count, 0 or more; got {args.state}", key="--state")
    if not 3 <= args.scan <= 100000:
        raise CaseError(f"must be from 3 to 100000, got {args.scan}", key="--scan")
    if not 1e-14 <= args.rtol <= 1e-3:
        raise CaseError(f"must be from 1e-14 to 1e-3, got {args.rtol:g}", key="--rtol")
    fixed = parse_set(args.set)
    case = load_case(args.case, **fixed)
    name, lo, hi = parse_interval(args.vary, case)
    units = param_units(case, name)
    search = find_thresholds(case, name, lo, hi, fixed=fixed, state=args.state, scan=args.scan, rtol=args.rtol, units=units)
    chosen = list(search.thresholds) if (args.all or args.state is not None) else list(search.thresholds[:1])
    if args.json:
        first = chosen[0] if chosen else None
        out = {
            "param": name, "units": units, "interval": [lo, hi],
            "state": first.state if first else args.state, "value": first.value if first else None,
            "uncertainty": first.uncertainty if first else None, "direction": first.direction if first else None,
            "found": bool(chosen), "bound_states_at_lo": search.count_lo, "bound_states_at_hi": search.count_hi,
            "thresholds": [{"state": t.state, "value": t.value, "uncertainty": t.uncertainty, "direction": t.direction} for t in chosen],
            "notes": list(search.notes),
        }
        print(json.dumps(_finite(out), allow_nan=False))
    else:
        print(format_search(search, chosen, all_requested=args.all, state=args.state))
    if args.output:
        from fdsolver.io.archive import write_dataset

        action = _command("threshold", args, [f"--state {args.state}"] if args.state is not None else (["--all"] if args.all else []))
        write_dataset(search_dataset(case, search, action), args.output)
        if not args.json:
            print(f"wrote {args.output}")
    return 0
