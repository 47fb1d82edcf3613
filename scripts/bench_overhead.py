#!/usr/bin/env python
"""Benchmark of start-up, per-solve overhead and many states, in CPU time with one BLAS thread.

Every figure is CPU time (time.process_time for work in this process, getrusage(RUSAGE_CHILDREN) for
commands run as child processes), with the wall time beside it, over several runs: min and median.  BLAS
runs on one thread (OMP_NUM_THREADS=1 etc. are set before numpy loads, and the solver pins it anyway).

Calibration: the machine's cost of one Sturm count per grid node (fdsolver.numerics.kernels.sturm_count on
10^6 nodes, ns per node, measured in the same run), so figures from different machines compare.

1. start-up: a bare Python start, `fdsolver --version`, `fdsolver --help`, and a cold `fdsolver solve` of a
   bundled case (numba cache and Python bytecode warm: one untimed run of each command first), printed and written
   to an archive.  Targets: --help and --version < 0.15 s CPU; the cold solve < 0.8 s CPU.  Beside them, the floor
   numba itself sets for any cold start that calls a cached kernel: a script with no fdsolver code that imports
   numba and calls one trivial cached function; the same floor with scipy.linalg kept out of numba's start, as
   fdsolver.compiled does; and (since session 15) the same function made with fdsolver.compiled's njit, which
   also loads it without numba's compile set-up, as fdsolver loads its kernels.  The floor scripts end as the
   fdsolver command does, with gc.freeze() (the shutdown then skips a full garbage collection:
   fdsolver.cli.command_line).
   Every other bundled case that ``solve`` takes is timed the same way (same target), and one invented case of
   each other kind of structure (:data:`OTHER_CASES`: erf in an expression, a harmonic trap, Gaussian traps, a
   sech^2 and a Morse well in atomic units, a nonparabolic material stack).
2. per solve: every bundled case solved warm, each figure over at least :data:`WARM_SOLVES` solves timed one at a
   time (min and median; since session 14, before that over ``--repeat`` solves), and since session 17 over at
   least :data:`WARM_CPU` of CPU (a fast solve is timed a few hundred times) in each of :data:`WARM_ROUNDS`
   rounds over all cases, with the calibration measured again after each round and its least value used (the
   machine's slow stretches last seconds: one case timed in one stretch got 0.67-0.97 ms for the same code in
   four runs of session 17); two ratios are printed: measured CPU / (node-states x Sturm ns
   per node), where node-states = sum over grid levels of (nodes x states found), and measured CPU / the lean
   estimate (node-states x 30 ns at 8 ns per Sturm node, scaled by this machine's Sturm count).  Target for the
   double wells: within 5 times of the lean estimate, about 2 ms.  Beside them, the CPU spent inside fdsolver's
   compiled kernels per solve (from one profiled pass of the same solves: the time inside each numba entry point
   called from Python) and its ratio to the lean estimate: what the solve would cost with no interpreter work at
   all, so the two ratios separate the algorithm's compiled cost from the Python around it; and the CPU of a
   solve of a new potential equal to the case's (a sweep point's cost: nothing remembered), with (since session
   18) its ratio to the lean estimate, timed in the same rounds (as many solves as the case's repeated ones).  A periodic bundled
   case has Bloch bands, not bound states: its warm band study is timed (no node-state ratio: the cell method
   does not count nodes and states that way).
3. many states (skipped with --quick; alone with --many-states): 10, 50, 200, 1000 states of a 1000 nm wide, 6000 meV deep well
   (mass 0.067, invented), and 1000 states of the same well with an off-centre step inside it (no mirror
   symmetry); CPU time, CPU per state, how many converged; a run the budget stopped with states not
   converged is repeated with the memory_mb its note names.  Target: 1000 states converged in < 30 s
   within the default budget, or a plain message naming the setting; cost per state flat from 10 to 1000.

Usage:  python scripts/bench_overhead.py [--quick | --many-states] [--repeat N]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import math
import resource  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
#: warm solves timed per figure (each on its own; min and median of them), at least: a warm solve takes
#: milliseconds, and a few of them fall into the machine's slow moments together
WARM_SOLVES = 30
#: and at least this much CPU (s) of them: the min of 30 solves of 1 ms, 30 ms in all, is biased upward on a shared
#: machine (session 17, in one process: double_square's min over its first 30 solves 0.98 ms, over the next 300
#: 0.66 ms, medians 1.12 and 1.07 ms), while the Sturm calibration beside it is the best of runs of several ms
WARM_CPU = 0.3
#: rounds over all cases: each case's solves are timed in every round, the Sturm calibration again after each
WARM_ROUNDS = 3

#: the lean estimate of a solve's cost per node-state in Sturm counts: one inverse iteration and one Rayleigh
#: quotient per state and level, about 30 ns per node-state on a machine whose Sturm count costs about 8 ns per node
LEAN_PER_STURM = 30.0 / 8.0
CASES = sorted((ROOT / "cases").glob("*.toml"))


#: invented cases beyond the bundled ones, timed cold like them (label -> case text)
OTHER_CASES = {
    "erf-graded well": ('title = "erf-graded well (invented)"\nunits = "nm-meV"\nmass = 0.067\n[[potential]]\n'
                        'shape = "expression"\nV = "-150 * 0.5 * (erf((x + 4) / 0.7) + erfc((x - 4) / 0.7) - 1)"\n'
                        '[domain]\nboundary = "hard"\nleft = -30.0\nright = 30.0\n'),
    "harmonic trap": ('title = "harmonic trap (invented)"\nunits = "nm-meV"\nmass = 0.067\n[[potential]]\n'
                      'shape = "harmonic"\ncenter = 0.0\nomega = 10.0\n'),
    "gaussian pair": ('title = "two Gaussian traps (invented)"\nunits = "nm-meV"\nmass = 0.067\n'
                      '[[potential]]\nshape = "gaussian"\ncenter = -5.0\nsigma = 2.0\ndepth = 100.0\n'
                      '[[potential]]\nshape = "gaussian"\ncenter = 5.0\nsigma = 2.0\ndepth = 100.0\n'),
    "sech2 well": ('title = "sech2 well (invented)"\nunits = "atomic"\n[[potential]]\nshape = "sech2"\n'
                   'center = 0.0\nwidth = 1.0\ndepth = 6.0\n'),
    "morse well": ('title = "Morse well (invented)"\nunits = "atomic"\nmass = 1836.0\n[[potential]]\n'
                   'shape = "morse"\ncenter = 1.4\na = 1.0\ndepth = 0.17\n'),
    "nonparabolic stack": ('title = "nonparabolic GaAs well (invented)"\nunits = "nm-meV"\nnonparabolicity = true\n'
                           '[[layer]]\nmaterial = "AlGaAs"\nx = 0.3\n[[layer]]\nmaterial = "GaAs"\n'
                           'thickness = "100 angstrom"\n[[layer]]\nmaterial = "AlGaAs"\nx = 0.3\n'
                           '[domain]\nboundary = "hard"\nleft = "-20 nm"\nright = "30 nm"\n'),
}


def child_cpu(cmd: list[str], env=None, check: bool = True, cwd=None) -> tuple[float, float]:
    """CPU seconds (user + system) and wall seconds of one child process (nan, nan if it failed and not check)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, check=check, env=os.environ if env is None else env, cwd=cwd)
    if done.returncode != 0:
        return float("nan"), float("nan")
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), wall


def stats(values) -> str:
    return f"min {min(values):8.4f}  median {statistics.median(values):8.4f}"


def calibrate(repeat: int) -> float:
    """ns per node of one Sturm count (compiled kernel, 10^6 nodes, a shift inside the spectrum)."""
    from fdsolver.numerics import kernels

    n = 1_000_000
    rng = np.random.default_rng(1)
    d = 2.0 + rng.random(n)
    e = -np.ones(n - 1)
    kernels.sturm_count(d, e, 2.0)  # load the kernel
    times = []
    for _ in range(max(repeat, 5)):
        t0 = time.process_time()
        kernels.sturm_count(d, e, 2.0)
        times.append(time.process_time() - t0)
    return min(times) / n * 1e9


def startup(repeat: int) -> None:
    py = sys.executable
    case = str(ROOT / "cases" / "coupled_wells.toml")
    archive = str(Path(tempfile.mkdtemp()) / "run.nc")
    # the floor of any cold start whose first call is a cached numba kernel, with no fdsolver code at all:
    # import numba, load one trivial cached function, call it once
    floor_dir = Path(tempfile.mkdtemp())
    (floor_dir / "floor_kernel.py").write_text("import numba\n\n\n@numba.njit(cache=True)\ndef one(x):\n"
                                               "    return x + 1.0\n")
    # it ends as fdsolver's command does (fdsolver.cli.command_line): gc.freeze(), so that Python's shutdown does
    # not walk numba's 100,000 objects once more (0.2-0.3 s, paid by any script that imports numba and exits)
    floor_cmd = [py, "-c", (f"import sys; sys.path.insert(0, {str(floor_dir)!r}); import floor_kernel; "
                            "floor_kernel.one(1.0); import gc; gc.freeze()")]
    # the same with scipy.linalg kept out of numba's start the way fdsolver.compiled does it (fdsolver.absent: numba
    # imports it only to ask whether the inner products of np.correlate and np.convolve may call BLAS)
    (floor_dir / "floor_hidden.py").write_text(
        "import sys\n\nsys.modules['scipy.linalg'] = None\nimport numba.np.arraymath  # noqa\n"
        "del sys.modules['scipy.linalg']\n")
    hidden_cmd = [py, "-c", (f"import sys; sys.path.insert(0, {str(floor_dir)!r}); import floor_hidden, floor_kernel; "
                             "floor_kernel.one(1.0); import gc; gc.freeze()")]
    # an installed package has its bytecode compiled at install time; a source tree run with
    # PYTHONDONTWRITEBYTECODE set (some sandboxes) would otherwise recompile every module at every start
    bytecode_env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    # the same loaded the way fdsolver loads its kernels (fdsolver.compiled: scipy.linalg kept out, and the cached
    # kernel loaded without numba's compile set-up), the floor of fdsolver's own cold start
    (floor_dir / "floor_lean.py").write_text("from fdsolver.compiled import njit\n\n\n@njit\ndef one(x):\n"
                                             "    return x + 1.0\n")
    lean_cmd = [py, "-c", (f"import sys; sys.path.insert(0, {str(floor_dir)!r}); import floor_lean; "
                           "floor_lean.one(1.0); import gc; gc.freeze()")]
    child_cpu(floor_cmd, bytecode_env)  # compiles and caches it
    child_cpu(lean_cmd, bytecode_env)
    commands = [
        ("python -c pass (bare start)", [py, "-c", "pass"], None),
        ("numba floor (one cached kernel, no fdsolver)", floor_cmd, None),
        ("  the same without scipy.linalg", hidden_cmd, None),
        ("  loaded as fdsolver loads (fdsolver.compiled)", lean_cmd, None),
        ("fdsolver --version", [py, "-m", "fdsolver", "--version"], 0.15),
        ("fdsolver --help", [py, "-m", "fdsolver", "--help"], 0.15),
        ("fdsolver solve coupled_wells (cold)", [py, "-m", "fdsolver", "solve", case], 0.8),
        ("  the same with -o run.nc (archive)", [py, "-m", "fdsolver", "solve", case, "-o", archive], 0.8),
    ]
    # every other bundled case that `solve` takes (a periodic case is refused: it has bands, not bound states)
    for other in CASES:
        cmd = [py, "-m", "fdsolver", "solve", str(other)]
        if other.stem != "coupled_wells" and not math.isnan(child_cpu(cmd, bytecode_env, check=False)[0]):
            commands.append((f"fdsolver solve {other.stem} (cold)", cmd, 0.8))
    # beyond the bundled cases, one invented case of each other kind of structure: a well whose graded interfaces
    # are written with erf and erfc in an expression (the class that once imported scipy.special for them), a
    # harmonic trap, a pair of Gaussian traps, a sech^2 well and a Morse well in atomic units, and a material
    # stack with the two-band (nonparabolic) mass
    for label, text in OTHER_CASES.items():
        path = floor_dir / f"{label.replace(' ', '_')}.toml"
        path.write_text(text)
        commands.append((f"fdsolver solve {label} (cold)", [py, "-m", "fdsolver", "solve", str(path)], 0.8))
    for _name, cmd, _target in commands:  # untimed: numba cache and bytecode warm from here on
        child_cpu(cmd, bytecode_env)
    print("1. start-up (child processes; seconds)")
    print(f"   {'command':<46} {'CPU':>30}   {'wall':>30}  target CPU")
    for name, cmd, target in commands:
        runs = [child_cpu(cmd) for _ in range(repeat)]
        cpu = [r[0] for r in runs]
        wall = [r[1] for r in runs]
        verdict = "" if target is None else f"< {target:g} s: {'met' if statistics.median(cpu) < target else 'NOT met'}"
        print(f"   {name:<46} {stats(cpu)}   {stats(wall)}  {verdict}")


def compiled_entry_points() -> set[tuple[str, int, str]]:
    """(file, first line, name) of every numba entry point fdsolver has made so far, module-level or compiled on
    first use (a table's spline): how cProfile names a call to one."""
    import gc

    from numba.core.dispatcher import Dispatcher

    found = set()
    for obj in gc.get_objects():
        if isinstance(obj, Dispatcher) and str(getattr(obj.py_func, "__module__", "")).startswith("fdsolver."):
            code = obj.py_func.__code__
            found.add((code.co_filename, code.co_firstlineno, code.co_name))
    return found


def compiled_cpu(work, repeat: int) -> float:
    """CPU seconds per call of ``work`` spent inside fdsolver's compiled kernels (one profiled pass of ``repeat``
    calls).  A kernel's own loops are not slowed by the profiler, which only sees the calls into it; the figure
    includes a little of the profiler's own cost per call (a solve makes a few dozen such calls), so it slightly
    overstates the kernels' share."""
    import cProfile
    import pstats

    prof = cProfile.Profile(time.process_time)
    prof.enable()
    for _ in range(repeat):
        work()
    prof.disable()
    entry = compiled_entry_points()
    inside = sum(row[2] for key, row in pstats.Stats(prof).stats.items() if key in entry)
    return inside / repeat


def timed_enough(work, repeat: int) -> tuple[list[float], list[float]]:
    """CPU and wall seconds of calls of ``work``: at least ``repeat`` calls and at least :data:`WARM_CPU` of CPU."""
    cpu, wall = timed_runs(work, repeat)
    while sum(cpu) < WARM_CPU:
        more_cpu, more_wall = timed_runs(work, repeat)
        cpu += more_cpu
        wall += more_wall
    return cpu, wall


def timed_runs(work, repeat: int) -> tuple[list[float], list[float]]:
    """CPU and wall seconds of ``repeat`` calls of ``work``."""
    cpu, wall = [], []
    for _ in range(repeat):
        t0, w0 = time.process_time(), time.perf_counter()
        work()
        cpu.append(time.process_time() - t0)
        wall.append(time.perf_counter() - w0)
    return cpu, wall


def fresh_potential(case):
    """``case`` with a new potential equal to its own: what a potential works out once and keeps (its mirror
    test, its summed shapes) is not carried over from an earlier solve."""
    import dataclasses

    return dataclasses.replace(case, potential=dataclasses.replace(case.potential))


def per_solve(repeat: int, sturm_ns: float) -> None:
    from fdsolver.bloch.study import band_study
    from fdsolver.input.case import load_case
    from fdsolver.runs import solve_case

    solves = max(repeat, WARM_SOLVES)
    print(f"2. warm solves (CPU in this process; each figure over at least {solves} solves and {WARM_CPU:g} s of CPU in "
          f"each of {WARM_ROUNDS} rounds over all cases, each solve timed on its own)")
    periodic, warm = [], []
    for path in CASES:
        case = load_case(path)
        if case.domain.periodic:
            periodic.append(case)
            continue
        warm.append((path, case, solve_case(case), [], [], []))  # warm: kernels loaded, grid planned once
    # the rounds: every case timed in each, and the calibration again after each, so that every figure and the
    # calibration sample the whole run (the machine's slow stretches last seconds)
    sturms = [sturm_ns]
    for _ in range(WARM_ROUNDS):
        for _path, case, _sol, cpu, wall, fresh_cpu in warm:
            more_cpu, more_wall = timed_enough(lambda case=case: solve_case(case), solves)
            cpu += more_cpu
            wall += more_wall
            fresh = iter([fresh_potential(case) for _ in range(len(more_cpu))])  # made before the clock runs
            fresh_cpu += timed_runs(lambda fresh=fresh: solve_case(next(fresh)), len(more_cpu))[0]
        sturms.append(calibrate(repeat))
    sturm_ns = min(sturms)
    print(f"   calibration in the rounds: {', '.join(f'{v:.2f}' for v in sturms)} ns per node; the ratios use the "
          f"least, {sturm_ns:.2f}, as each CPU min is the least of its rounds")
    print(f"   {'case':<22} {'states':>6} {'levels':>6} {'node-states':>11} {'CPU min [ms]':>12} {'median':>7} "
          f"{'wall med':>8} {'Sturm [ms]':>10} {'ratio':>6} {'to lean':>7} {'kernels [ms]':>12} {'to lean':>7} "
          f"{'fresh [ms]':>9} {'to lean':>7}")
    for path, case, sol, cpu, wall, fresh_cpu in warm:
        inside = compiled_cpu(lambda case=case: solve_case(case), solves)
        node_states = int(np.sum(sol.level_sizes)) * max(int(sol.energy.size), 1)
        sturm = node_states * sturm_ns * 1e-9  # one Sturm count per node-state
        lean = sturm * LEAN_PER_STURM
        print(f"   {path.stem:<22} {sol.energy.size:6d} {len(sol.level_sizes):6d} {node_states:11d} "
              f"{min(cpu) * 1e3:12.2f} {statistics.median(cpu) * 1e3:7.2f} {statistics.median(wall) * 1e3:8.2f} "
              f"{sturm * 1e3:10.3f} {min(cpu) / sturm:6.1f} {min(cpu) / lean:7.1f} {inside * 1e3:12.2f} "
              f"{inside / lean:7.1f} {min(fresh_cpu) * 1e3:9.2f} {min(fresh_cpu) / lean:7.1f}")
    print("   Sturm = node-states x Sturm ns per node; ratio = measured / Sturm; to lean = measured / (node-states x "
          f"{LEAN_PER_STURM:g} x Sturm ns per node), the lean estimate of one inverse iteration and one Rayleigh")
    print("   quotient per node-state (30 ns where a Sturm count costs 8 ns per node); kernels = CPU inside the "
          "compiled kernels per solve (profiled pass), and its ratio to the lean estimate.")
    print("   fresh = min CPU of a solve of a new potential equal to the case's (nothing a potential remembers, such as")
    print("   its mirror test, carried over from the solve before), as a sweep point solves one, and its ratio to the "
          "lean estimate.")
    print("   Target for the double wells: within 5 times of the lean estimate, about 2 ms")
    if periodic:
        print("   periodic cases (Bloch bands by the cell method; no node-state estimate):")
        print(f"   {'case':<22} {'bands':>6} {'wavevectors':>11} {'CPU min [ms]':>12} {'median':>7} {'wall med':>8}")
    for case in periodic:
        study = band_study(case)  # warm
        cpu, wall = timed_runs(lambda case=case: band_study(case), repeat)
        print(f"   {Path(case.path).stem:<22} {study.bands.n_bands:6d} "
              f"{case.settings.wavevectors:11d} {min(cpu) * 1e3:12.2f} {statistics.median(cpu) * 1e3:7.2f} "
              f"{statistics.median(wall) * 1e3:8.2f}")


def many_states() -> None:
    import re

    from fdsolver.input.case import case_from_dict
    from fdsolver.runs import solve_case

    print("3. many states of a 1000 nm x 6000 meV well (mass 0.067; invented), default memory budget; 'shoulder': "
          "the same well with a 100 nm x 50 meV step inside it, off centre (no mirror symmetry)")
    print(f"   {'states':>6} {'CPU [s]':>8} {'wall [s]':>8} {'CPU/state [ms]':>14} {'converged':>10}  finest grid")
    well = [{"shape": "square", "center": 0.0, "width": 1000.0, "depth": 6000.0}]
    shoulder = well + [{"shape": "square", "center": 300.0, "width": 100.0, "depth": 50.0}]
    runs = [(n, None, "") for n in (10, 50, 200, 1000)] + [(1000, None, "shoulder")]
    solve_case(case_from_dict({"units": "nm-meV", "mass": 0.067, "solve": {"max_states": 10}, "potential": well}))
    while runs:  # (after one untimed solve: the kernels are loaded, as in a warm process)
        n, memory, kind = runs.pop(0)
        solve = {"max_states": n} if memory is None else {"max_states": n, "memory_mb": memory}
        case = case_from_dict({"units": "nm-meV", "mass": 0.067, "solve": solve,
                               "potential": shoulder if kind else well})
        t0, w0 = time.process_time(), time.perf_counter()
        sol = solve_case(case)
        cpu, wall = time.process_time() - t0, time.perf_counter() - w0
        print(f"   {n:6d} {cpu:8.2f} {wall:8.2f} {cpu / n * 1e3:14.2f} {int(sol.converged.sum()):5d}/{sol.energy.size:<4d}"
              f"  {int(sol.level_sizes[-1])} nodes" + ("" if memory is None else f"  (memory_mb = {memory:g})")
              + (f"  {kind}" if kind else ""))
        for m in sol.messages[:1]:
            print(f"          note: {m[:320]}")
        need = next((re.search(r"it needs about (\d+) MB", m) for m in sol.messages if "exceeds the memory" in m), None)
        if memory is None and need and not sol.converged.all():  # once more with the memory the note names
            runs.append((n, float(need.group(1)), kind))
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print(f"   peak resident memory of this process so far: {peak:.0f} MB")
    print("   target: 1000 states converged in < 30 s CPU within the default budget, or a plain message naming the "
          "setting; cost per state flat")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="skip the many-states runs")
    ap.add_argument("--many-states", action="store_true", help="only the many-states runs")
    ap.add_argument("--repeat", type=int, default=7, help="runs per figure (min and median are printed)")
    args = ap.parse_args()
    import fdsolver

    print(f"fdsolver {fdsolver.__version__}, Python {sys.version.split()[0]}, {os.cpu_count()} CPUs, one BLAS thread")
    if args.many_states:
        many_states()
        return
    sturm_ns = calibrate(args.repeat)
    print(f"calibration: one Sturm count costs {sturm_ns:.2f} ns per node on this machine (10^6 nodes, best of "
          f"{max(args.repeat, 5)})")
    startup(args.repeat)
    per_solve(args.repeat, sturm_ns)
    if not args.quick:
        many_states()


if __name__ == "__main__":
    main()
