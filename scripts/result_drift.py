#!/usr/bin/env python
"""Did a change move any result beyond its error bar?  Solve a seeded set of random invented structures with
two versions of fdsolver and compare.

    python scripts/result_drift.py dump OUT.pkl [--seed 7] [--count 150]
    python scripts/result_drift.py compare BEFORE.pkl AFTER.pkl

Run ``dump`` once with each version (e.g. ``PYTHONPATH=/path/to/worktree python scripts/result_drift.py dump
before.pkl`` for the old one), then ``compare``.  The structures (all invented, nm and meV, mass 0.067 m_e):
one to three square, Gaussian or graded square wells from 3e-3 to 8 nm wide and up to 300 eV deep, point
terms, a well beside a barrier, layer stacks with their own masses, and any of these between hard walls.
``compare`` prints every structure whose number of states, indices, parities or bound-state count changed,
whose converged flag changed, or whose energies moved by more than their error bar (the larger of the two),
and the largest moves in units of the bar; <x> moves are printed in units of the state's spread (they carry
no error bar of their own).  Exit code 1 if anything moved beyond its bar or a count changed.
"""

from __future__ import annotations

import argparse
import pickle
import sys
import warnings

import numpy as np


def structures(seed: int, count: int) -> list[dict]:
    """Case tables of ``count`` random invented structures (see the module docstring)."""
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(count):
        kind = str(rng.choice(["square", "gaussian", "smooth_square", "layers", "points", "walls", "mixed"]))
        data: dict = {"units": "nm-meV", "mass": 0.067}
        n = int(rng.integers(1, 4))
        if kind == "layers":
            lay = [{"band_edge": float(rng.uniform(50, 300)), "mass": float(rng.uniform(0.05, 0.1))}]
            for _ in range(n):
                lay.append({"thickness": float(rng.uniform(1, 8)), "band_edge": float(rng.uniform(-20, 20)),
                            "mass": float(rng.uniform(0.04, 0.09))})
                lay.append({"thickness": float(rng.uniform(0.5, 6)), "band_edge": float(rng.uniform(50, 300)),
                            "mass": float(rng.uniform(0.05, 0.1))})
            lay[-1].pop("thickness")
            data["layer"] = lay
            out.append(data)
            continue
        comps, x = [], 0.0
        for _ in range(n):
            w = float(10 ** rng.uniform(-2.5 if kind in ("square", "walls", "mixed") else -0.5, 0.9))
            strength = float(rng.uniform(20, 600))
            depth = min(strength / w, 3e5)
            shape = kind if kind in ("square", "gaussian", "smooth_square") else str(rng.choice(["square", "gaussian"]))
            if kind == "points":
                comps.append({"shape": "point", "center": x, "strength": strength})
            elif shape == "gaussian":
                comps.append({"shape": "gaussian", "center": x + 2 * w, "sigma": w, "depth": min(depth, 2000.0)})
            else:
                comp = {"shape": shape, "center": x + w / 2, "width": w, "depth": depth}
                if shape == "smooth_square":
                    comp["edge"] = 0.1 * w
                comps.append(comp)
            x += (4 * w if shape == "gaussian" else w) + float(rng.uniform(0.5, 8))
        if kind == "mixed":
            comps.append({"shape": "square", "center": x / 2, "width": float(rng.uniform(0.5, 3)),
                          "height": float(rng.uniform(10, 200))})
        data["potential"] = comps
        if kind == "walls":
            data["domain"] = {"boundary": "hard", "left": -float(rng.uniform(5, 60)), "right": x + float(rng.uniform(5, 60))}
        out.append(data)
    return out


def dump(path: str, seed: int, count: int) -> None:
    import fdsolver
    from fdsolver.runs import solve_case

    rows = []
    for data in structures(seed, count):
        try:
            s = solve_case(fdsolver.case_from_dict(data))
        except fdsolver.FdsolverError as err:
            rows.append({"case": data, "error": str(err)})
            continue
        rows.append({"case": data, "energy": s.energy, "error_bar": s.energy_error, "index": s.index,
                     "parity": s.parity, "converged": s.converged, "bound": int(s.bound_count),
                     "mean_x": s.mean_x, "spread": s.spread})
    with open(path, "wb") as f:
        pickle.dump({"seed": seed, "count": count, "rows": rows}, f)
    print(f"{path}: {len(rows)} structures, {sum('error' in r for r in rows)} refused")


def compare(before: str, after: str) -> int:
    with open(before, "rb") as f:
        a = pickle.load(f)
    with open(after, "rb") as f:
        b = pickle.load(f)
    if (a["seed"], a["count"]) != (b["seed"], b["count"]):
        print("the two dumps are of different structures (seed or count differ)")
        return 2
    moves, x_moves, failed = [], [], 0
    for ra, rb in zip(a["rows"], b["rows"]):
        if "error" in ra or "error" in rb:
            if ra.get("error") != rb.get("error"):
                print(f"refusal changed: {ra.get('error')!r} -> {rb.get('error')!r}\n   {ra['case']}")
                failed += 1
            continue
        same = (ra["energy"].size == rb["energy"].size and np.array_equal(ra["index"], rb["index"])
                and np.array_equal(ra["parity"], rb["parity"]) and ra["bound"] == rb["bound"])
        if not same:
            print(f"states changed: {ra['index']} {ra['parity']} ({ra['bound']} bound) -> {rb['index']} {rb['parity']} "
                  f"({rb['bound']} bound)\n   {ra['case']}")
            failed += 1
            continue
        if not np.array_equal(ra["converged"], rb["converged"]):
            print(f"converged flags changed: {ra['converged']} -> {rb['converged']}\n   {ra['case']}")
        if ra["energy"].size:
            bar = np.maximum(np.maximum(ra["error_bar"], rb["error_bar"]), 1e-300)
            move = float(np.max(np.abs(ra["energy"] - rb["energy"]) / bar))
            moves.append(move)
            if move > 1.0:
                print(f"moved by {move:.3g} error bars: {ra['energy']} -> {rb['energy']}\n   {ra['case']}")
                failed += 1
            x_moves.append(float(np.nanmax(np.abs(ra["mean_x"] - rb["mean_x"]) / np.maximum(ra["spread"], 1e-300))))
    moves.sort(reverse=True)
    x_moves.sort(reverse=True)
    print(f"{len(a['rows'])} structures; largest energy moves in error bars: {', '.join(f'{m:.3g}' for m in moves[:5])}; "
          f"largest <x> moves in spreads: {', '.join(f'{m:.2g}' for m in x_moves[:3])}; "
          f"{failed} beyond a bar or with changed states")
    return 1 if failed else 0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    sub = ap.add_subparsers(dest="what", required=True)
    d = sub.add_parser("dump", help="solve the structures and write their results")
    d.add_argument("out")
    d.add_argument("--seed", type=int, default=7)
    d.add_argument("--count", type=int, default=150)
    c = sub.add_parser("compare", help="compare two dumps of the same structures")
    c.add_argument("before")
    c.add_argument("after")
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    if args.what == "dump":
        dump(args.out, args.seed, args.count)
        return 0
    return compare(args.before, args.after)


if __name__ == "__main__":
    sys.exit(main())
