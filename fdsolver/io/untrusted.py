"""What an archive may hold, checked on reading: an archive is untrusted input (it may come from anyone).

:func:`fdsolver.io.archive.open_run` reads a file in steps, each refusing
with an :class:`~fdsolver.errors.ArchiveError` that names the file:

1. what stands at the path: a regular file (a pipe or a device is never
   opened: it could block or never end), no larger than the budget, starting
   with the HDF5 signature of a NetCDF-4 file;
2. its storage (:func:`fdsolver.io.hdf5.inspect`): no links, groups, external
   or virtual storage; numbers and text only; at most
   :data:`~fdsolver.limits.MAX_VARIABLES` variables and
   :data:`~fdsolver.limits.MAX_ATTRIBUTES` attributes each;
3. the declared size of its variables (what they take once read, however
   they are stored) against the memory budget, before any is read;
4. (:func:`global_attributes`) the global attributes the kind declares
   (:mod:`fdsolver.io.specs`), each of its type and within
   :data:`~fdsolver.limits.MAX_ATTRIBUTE_BYTES` (the stored case within
   :data:`~fdsolver.limits.MAX_STORED_CASE_BYTES`); any other attribute is
   dropped unread by fdsolver;
5. (:func:`declared_only`, :func:`variables`) only the variables the kind
   declares are read (the others are dropped unread; their declared size still
   counts in step 3), with their dimensions and types
   (:func:`fdsolver.io.datasets.check`), energies finite, a scan with at least
   one point; only the variable attributes in
   :data:`~fdsolver.io.specs.VAR_ATTRS` are kept.
"""

from __future__ import annotations

import json
import math
import numbers

import numpy as np

from fdsolver.errors import ArchiveError, printable, shorten
from fdsolver.io import specs
from fdsolver.limits import MAX_LAYERS, MAX_ATTRIBUTE_BYTES, MAX_PARAMS, MAX_PARAMS_BYTES, MAX_STORED_CASE_BYTES


def _fail(path, message: str) -> ArchiveError:
    return ArchiveError(message, file=str(path))


def _json(value: str, name: str, path):
    try:
        return json.loads(value)
    except (ValueError, RecursionError):
        raise _fail(path, f"attribute {name} is not readable JSON (or is nested too deep); the archive is damaged "
                          "or was not written by fdsolver") from None


def _number(v) -> bool:
    return isinstance(v, (numbers.Real, np.number)) and not isinstance(v, (bool, np.bool_))


def _value(name: str, attr: specs.Attr, value, path):
    """``value`` of global attribute ``name`` checked against its declaration (JSON texts are checked, not decoded)."""
    wrong = f"attribute {name} is not {attr.type}"
    if attr.type == specs.NUMBERS:  # a short list of numbers (one per layer)
        if isinstance(value, (int, float, np.number)):
            value = np.array([value])
        if not (isinstance(value, np.ndarray) and value.ndim == 1 and value.size <= MAX_LAYERS
                and value.dtype.kind in "iuf"):
            raise _fail(path, f"{wrong} (at most {MAX_LAYERS} numbers); the archive is damaged or was not written by "
                              "fdsolver")
        return value
    if attr.type in (specs.NUMBER, specs.WHOLE):
        if isinstance(value, np.ndarray) and value.size == 1:
            value = value.reshape(())[()]
        if not _number(value) or (attr.type == specs.WHOLE and float(value) != math.floor(float(value))):
            raise _fail(path, f"{wrong} (it is {printable(shorten(repr(value), 40))}); the archive is damaged or was "
                              "not written by fdsolver")
        return value
    if not isinstance(value, str):
        raise _fail(path, f"attribute {name} is not text (it is {type(value).__name__}); the archive is damaged or was "
                          "not written by fdsolver")
    if "\ufffd" in value:  # what the NetCDF library makes of bytes that are not UTF-8
        raise _fail(path, f"attribute {name} holds bytes that are not UTF-8 text; the archive is damaged or was not "
                          "written by fdsolver")
    size = len(value.encode("utf-8", "surrogatepass"))
    limit = MAX_PARAMS_BYTES if name == "params" else MAX_STORED_CASE_BYTES if attr.stored_case else MAX_ATTRIBUTE_BYTES
    if size > limit:
        raise _fail(path, f"attribute {name} holds {size / 2**20:.3g} MB, more than the {limit / 2**20:.3g} MB "
                          "fdsolver reads; the archive is not read")
    if attr.choices and value not in attr.choices:
        raise _fail(path, f"attribute {name} is '{printable(shorten(value, 40))}', not one of "
                          f"{', '.join(attr.choices)}; the archive is damaged or was not written by fdsolver")
    if attr.type == specs.TEXT:
        return value
    data = _json(value, name, path)
    ok = {
        specs.PARAM_VALUES: lambda d: isinstance(d, dict) and len(d) <= MAX_PARAMS and all(
            isinstance(k, str) and k.isidentifier() and _number(v) and math.isfinite(v) for k, v in d.items()),
        specs.FILE_TEXTS: lambda d: isinstance(d, dict) and all(isinstance(k, str) and isinstance(v, str)
                                                                for k, v in d.items()),
        specs.NAMES: lambda d: isinstance(d, list) and all(isinstance(n, str) for n in d),
        specs.PLAIN: lambda d: isinstance(d, dict) and all(
            isinstance(k, str) and (isinstance(v, str) or (_number(v) and math.isfinite(v))) for k, v in d.items()),
        specs.PAIR: lambda d: isinstance(d, list) and len(d) == 2 and all(_number(v) and math.isfinite(v) for v in d)
                              and d[0] < d[1],
    }[attr.type](data)
    if not ok:
        what = {specs.PARAM_VALUES: f"an object of at most {MAX_PARAMS} params and their finite values",
                specs.FILE_TEXTS: "an object of file names and their text", specs.NAMES: "a list of names",
                specs.PLAIN: "an object of names and values", specs.PAIR: "a pair [low, high]"}[attr.type]
        raise _fail(path, f"attribute {name} is not {what}; the archive is damaged or was not written by fdsolver")
    return value


def kind_attribute(attrs, path) -> specs.Kind:
    """The kind an archive declares (``fdsolver_kind``, and ``delta_mode`` for zero-range checks)."""
    value = attrs.get("fdsolver_kind")
    if value is None:
        raise _fail(path, "is a NetCDF file but not an fdsolver archive (no fdsolver_kind attribute)")
    if not isinstance(value, str) or value not in specs.ARCHIVE_KINDS:
        raise _fail(path, f"is a NetCDF file but not an fdsolver archive (fdsolver_kind is "
                          f"{printable(shorten(repr(value), 60))}, not one of {', '.join(specs.ARCHIVE_KINDS)})")
    kind = specs.kind_of(attrs)
    assert kind is not None
    return kind


def global_attributes(attrs, kind: specs.Kind, path) -> dict:
    """The global attributes ``kind`` declares, checked (module docstring); the others are dropped."""
    declared = kind.attributes()
    for name, attr in declared.items():
        if attr.required and name not in attrs:
            what = "it was not written by fdsolver" if name == "case_text" else "it is damaged or was not written by fdsolver"
            raise _fail(path, f"archive has no {name} attribute; {what}")
    out = {name: _value(name, declared[name], value, path) for name, value in attrs.items() if name in declared}
    stored = sum(len(out.get(n, "")) for n, a in declared.items() if a.stored_case)
    if stored > MAX_STORED_CASE_BYTES:
        raise _fail(path, f"the stored case (its text and tables) holds {stored / 2**20:.3g} MB, more than the "
                          f"{MAX_STORED_CASE_BYTES / 2**20:.3g} MB fdsolver reads")
    stored_tables(out["case_text"], json.loads(out.get("case_tables", "{}")), path)
    return out


def stored_tables(text: str, tables: dict, path) -> None:
    """The stored case is TOML whose table files are all stored beside it: re-reading it never reads another file.
    (:func:`fdsolver.api.case_of_run` validates the rest, as a case file is validated.)"""
    import tomllib

    try:
        data = tomllib.loads(text[1:] if text.startswith("\ufeff") else text)
    except (ValueError, RecursionError):
        return  # nothing can be rebuilt from it: case_of_run says why
    comps = data.get("potential", [])
    for i, comp in enumerate(comps if isinstance(comps, list) else [], start=1):
        name = comp.get("file") if isinstance(comp, dict) and comp.get("shape") == "table" else None
        if isinstance(name, str) and name not in tables:
            raise _fail(path, f"the stored case names the table '{printable(shorten(name, 60))}' (potential[{i}].file), "
                              "which the archive does not hold; it is damaged or was not written by fdsolver")


def declared_only(ds, kind: specs.Kind, path):
    """``ds`` (opened lazily) without the variables ``kind`` does not declare: they are never read."""
    from fdsolver.io.datasets import axes_of

    axes = axes_of(ds, kind, path)
    allowed = {r.name for r in kind.rows} | {d for r in kind.rows for d in r.dims if d != specs.PARAMS} | set(axes)
    return ds.drop_vars([v for v in ds.variables if v not in allowed])


def variables(ds, kind: specs.Kind, path) -> None:
    """Sane values where fdsolver never writes others, and only the declared variable attributes (module docstring)."""
    from fdsolver.io.datasets import axes_of

    axes = axes_of(ds, kind, path)
    for a in axes:
        if a in ds.sizes and ds.sizes[a] == 0:
            raise _fail(path, f"the scanned axis {printable(shorten(a, 40))} has no points; the archive is damaged")
    if kind.name == "solve":  # every state of a solve has a finite energy, and an error bar (inf: one level only)
        bad = [n for n, ok in (("energy", np.isfinite), ("energy_error", lambda v: v >= 0))
               if n in ds.variables and ds[n].dtype.kind == "f" and not np.all(ok(ds[n].values))]
        if bad:
            raise _fail(path, f"variable {bad[0]} holds values fdsolver never writes (not finite, or a negative error); "
                              "the archive is damaged or altered")
    for v in ds.variables.values():
        v.attrs = {k: x for k, x in v.attrs.items() if k in specs.VAR_ATTRS}
        for k, x in v.attrs.items():
            if isinstance(x, str) and len(x) > MAX_ATTRIBUTE_BYTES:
                raise _fail(path, f"attribute {k} of a variable holds more than {MAX_ATTRIBUTE_BYTES} bytes")
