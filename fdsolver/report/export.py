"""Every table of any archive as CSV files, units in the header lines (``fdsolver export FILE.nc --csv DIR``).

The variables of an archive are grouped by their dimensions, and each group becomes one file:

* one dimension: one row per coordinate value (``states.csv``: energy, error, <x>, ... per state;
  ``potential.csv``: V(x) and m(x));
* several dimensions whose last is a long axis (``x``, ``photon_energy``) and whose others have few
  values together (at most :data:`WIDE_COLUMNS`): a wide table, one row per position and one column
  per state (``wavefunctions.csv``: x, psi of state 0, psi of state 1, ...);
* otherwise a long table, one row per combination of indices with a column per index
  (``transitions.csv``: state, final_state, transition_energy, dipole, oscillator_strength, ...;
  a sweep's ``by_d_state.csv``: d, state, energy, ...);
* dimensionless scalars and one-value variables go to ``scalars.csv`` (name, value, units).

Each file starts with ``#`` lines: the archive, its kind and title, the unit system, carrier and
mass, and what every column is; the header row gives each column's units in brackets
(``energy [meV]``).  Flags are written as their numbers, with their meanings in the ``#`` lines.
Text is quoted where it needs to be (the csv module's minimal quoting).  Read them with e.g.
``pandas.read_csv(path, comment="#")``.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np

from fdsolver.errors import CaseError
from fdsolver.report._common import declared, run_header, units_of

#: a group is written wide (one column per combination of the short indices) up to this many columns per variable
WIDE_COLUMNS = 64
#: dimensions that are long axes (rows of a wide table)
LONG_AXES = ("x", "photon_energy", "scan")
#: friendlier file names of common groups of dimensions
NAMES = {
    ("state",): "states", ("x",): "potential", ("state", "x"): "wavefunctions", ("state", "final_state"): "transitions",
    ("level", "state"): "levels", ("level",): "levels_nodes", ("region",): "regions", ("state", "region"): "probability_inside",
    ("photon_energy",): "spectrum", ("transition",): "absorption_lines", ("transition", "photon_energy"): "absorption_by_line",
    ("width", "state"): "ladder", ("width",): "widths", ("well",): "wells", ("threshold",): "thresholds",
    ("scan",): "scan", ("electron_state",): "electron_levels", ("heavy_hole_state",): "heavy_hole_levels",
    ("light_hole_state",): "light_hole_levels", ("electron_state", "heavy_hole_state"): "electron_heavy_hole",
    ("electron_state", "light_hole_state"): "electron_light_hole", ("electron_state", "x"): "electron_wavefunctions",
    ("heavy_hole_state", "x"): "heavy_hole_wavefunctions", ("light_hole_state", "x"): "light_hole_wavefunctions",
    ("final_state",): "final_states",
}


def _column(ds, name: str) -> str:
    """``name [units]`` (no brackets for pure numbers and text)."""
    u = units_of(ds, name)
    if not declared(ds, name):
        return f"{name} [units not declared]"
    return f"{name} [{u}]" if u else name


def _describe(ds, name: str) -> str:
    a = ds[name].attrs
    text = f"{name}: {a.get('long_name', '')}"
    u = units_of(ds, name)
    if u:
        text += f" [{u}]"
    if a.get("units_note"):
        text += f" ({a['units_note']})"
    if "flag_meanings" in a:
        vals = np.atleast_1d(a.get("flag_values", []))
        text += "; values: " + ", ".join(f"{int(v)} = {m}" for v, m in zip(vals, str(a["flag_meanings"]).split()))
    return text


def _cell(v) -> str:
    if isinstance(v, (bytes, np.bytes_)):
        return v.decode()
    if isinstance(v, (str, np.str_)):
        return str(v)
    if isinstance(v, (float, np.floating)):
        return "" if not math.isfinite(float(v)) else repr(float(v))
    if isinstance(v, (np.integer, int)):
        return str(int(v))
    return str(v)


def _header(ds, source: str, names: list[str]) -> list[str]:
    a = ds.attrs
    lines = [f"# fdsolver export of {source} (kind {a.get('fdsolver_kind', '?')}, {a.get('source', 'fdsolver')}): "
             f"{a.get('title', '')}",
             f"# {run_header(ds)}"]
    lines += [f"# {_describe(ds, n)}" for n in names]
    lines.append("# empty cells: no value (a state that does not exist, a quantity not defined there)")
    return lines


def _groups(ds) -> dict[tuple[str, ...], list[str]]:
    groups: dict[tuple[str, ...], list[str]] = {}
    for name in ds.data_vars:
        groups.setdefault(tuple(ds[name].dims), []).append(name)
    for name in ds.coords:  # coordinates that are not dimensions of anything (region_name is a data variable)
        dims = tuple(ds[name].dims)
        if dims != (name,):
            groups.setdefault(dims, []).append(name)
    return groups


def _coord_values(ds, dim: str) -> np.ndarray:
    return ds[dim].values if dim in ds.variables else np.arange(ds.sizes[dim])


def _file_name(dims: tuple[str, ...], swept: list[str]) -> str:
    if dims in NAMES:
        return NAMES[dims] + ".csv"
    rest = tuple(d for d in dims if d not in swept)
    if swept and all(d in dims for d in swept) and rest in {(), ("state",), ("state", "final_state"), ("state", "x"),
                                                            ("state", "region")}:
        return {(): "points", ("state",): "points_states", ("state", "final_state"): "points_transitions",
                ("state", "x"): "points_wavefunctions", ("state", "region"): "points_probability_inside"}[rest] + ".csv"
    return "by_" + "_".join(dims) + ".csv"


def export_csv(run, folder) -> list[Path]:
    """Write every table of an archive (a Dataset, or the path of an archive, read as untrusted input by
    :func:`fdsolver.io.archive.open_run`) as CSV files into ``folder`` (created if missing); the paths written."""
    import os

    if isinstance(run, (str, os.PathLike)):
        from fdsolver.io.archive import open_run

        return write_tables(open_run(run), folder, str(run))
    return write_tables(run, folder)


def write_tables(ds, folder, source: str | None = None) -> list[Path]:
    """Write every table of archive ``ds`` as CSV files into ``folder`` (created if missing); the paths written.

    ``source`` names the archive in the header lines (default: the file it was read from).
    """
    import json

    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise CaseError(f"'{folder}' exists and is not a folder; give a folder for the CSV files", key="--csv")
    if not folder.parent.is_dir():
        raise CaseError(f"folder '{folder.parent}' does not exist; create it first", key="--csv")
    folder.mkdir(exist_ok=True)
    source = source or str(ds.encoding.get("source", "an fdsolver archive"))
    swept = []
    for attr in ("swept_params", "map_axes"):
        try:
            swept = list(json.loads(ds.attrs.get(attr, "[]")))
        except (TypeError, ValueError):
            pass
        if swept:
            break
    written = []
    scalars = []
    for dims, names in _groups(ds).items():
        if not dims or all(ds.sizes[d] == 0 for d in dims):
            scalars += [n for n in names if not dims]
            continue
        path = folder / _file_name(dims, swept)
        written.append(_write_group(ds, dims, names, path, source))
    if scalars:
        path = folder / "scalars.csv"
        with open(path, "w", newline="", encoding="utf-8") as fh:
            fh.write("\n".join(_header(ds, source, scalars)) + "\n")
            w = csv.writer(fh)
            w.writerow(["name", "value", "units"])
            for n in scalars:
                w.writerow([n, _cell(ds[n].values.item()), units_of(ds, n)])
        written.append(path)
    return written


def _write_group(ds, dims, names, path: Path, source: str) -> Path:
    long_axis = dims[-1] in LONG_AXES and len(dims) >= 2
    short = int(np.prod([ds.sizes[d] for d in dims[:-1]])) if len(dims) > 1 else 1
    coords = [d for d in dims if d in ds.variables]
    with open(path, "w", newline="", encoding="utf-8") as fh:
        fh.write("\n".join(_header(ds, source, coords + [n for n in names if n not in coords])) + "\n")
        w = csv.writer(fh)
        if long_axis and short <= WIDE_COLUMNS:
            _wide(ds, dims, names, w)
        else:
            _long(ds, dims, names, w)
    return path


def _wide(ds, dims, names, w) -> None:
    last = dims[-1]
    idx = list(np.ndindex(*[ds.sizes[d] for d in dims[:-1]]))
    labels = [", ".join(f"{d}={_cell(_coord_values(ds, d)[i])}" for d, i in zip(dims[:-1], combo)) for combo in idx]
    head = [_column(ds, last)] if last in ds.variables else [last]
    cols = []
    for n in names:
        for combo, lab in zip(idx, labels):
            head.append(f"{n}({lab})" + (f" [{units_of(ds, n)}]" if units_of(ds, n) else ""))
            cols.append(np.asarray(ds[n].values)[combo])
    w.writerow(head)
    xs = _coord_values(ds, last)
    for k in range(ds.sizes[last]):
        w.writerow([_cell(xs[k])] + [_cell(c[k]) for c in cols])


def _long(ds, dims, names, w) -> None:
    head = [_column(ds, d) if d in ds.variables else d for d in dims]
    head += [_column(ds, n) for n in names if n not in dims]
    w.writerow(head)
    values = [np.asarray(ds[n].values) for n in names if n not in dims]
    coords = [_coord_values(ds, d) for d in dims]
    for combo in np.ndindex(*[ds.sizes[d] for d in dims]):
        w.writerow([_cell(c[i]) for c, i in zip(coords, combo)] + [_cell(v[combo]) for v in values])
