"""An archive's contents before (or instead of) an xarray Dataset: what a table needs to print a fresh result.

Building an :class:`xarray.Dataset` imports xarray and pandas (about 0.3 s
of start-up); ``fdsolver solve`` without ``--plot`` prints a table and writes
its archive (:mod:`fdsolver.io.netcdf`) from the record alone.
:class:`Record` holds the same variables, coordinates and
attributes as the archive (built from the same rows of
:mod:`fdsolver.io.specs`) and answers the few questions the tables ask of a
Dataset: ``record.attrs``, ``record.sizes``, ``record["energy"].values`` /
``.attrs`` / ``.dims``, ``record.energy``, ``"splitting" in record``.
:meth:`Record.dataset` turns it into the Dataset when one is wanted.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np


@dataclass(frozen=True)
class Field:
    """One variable or coordinate: its dimensions, values and attributes."""

    dims: tuple[str, ...]
    values: np.ndarray
    attrs: dict

    @property
    def ndim(self) -> int:
        return len(self.dims)


@dataclass
class Record:
    """The variables (``data``) and coordinates (``coords``) of an archive, by name, with its global ``attrs``."""

    data: dict[str, Field]
    coords: dict[str, Field]
    attrs: dict
    encoding: dict = field(default_factory=dict)

    def __getitem__(self, name: str) -> Field:
        if name in self.data:
            return self.data[name]
        return self.coords[name]

    def __getattr__(self, name: str) -> Any:
        if name.startswith("_") or name in ("data", "coords", "attrs", "encoding"):
            raise AttributeError(name)
        try:
            return self[name]
        except KeyError:
            raise AttributeError(name) from None

    def __contains__(self, name: object) -> bool:
        return name in self.data or name in self.coords

    @property
    def variables(self) -> list[str]:
        return [*self.coords, *self.data]

    @property
    def sizes(self) -> dict[str, int]:
        out: dict[str, int] = {}
        for f in (*self.coords.values(), *self.data.values()):
            for dim, n in zip(f.dims, np.shape(f.values)):
                out.setdefault(dim, int(n))
        return out

    @property
    def nbytes(self) -> int:
        """Bytes of all values (as :attr:`xarray.Dataset.nbytes` counts them)."""
        return int(sum(np.asarray(f.values).nbytes for f in (*self.coords.values(), *self.data.values())))

    def dataset(self):
        """The :class:`xarray.Dataset` of the archive (imports xarray)."""
        from fdsolver.io.lightxr import xarray

        return xarray().Dataset(
            data_vars={k: (f.dims, f.values, f.attrs) for k, f in self.data.items()},
            coords={k: (f.dims, f.values, f.attrs) for k, f in self.coords.items()},
            attrs=self.attrs,
        )
