"""The contract of a potential component, and the registry that maps ``shape = "..."`` to its class.

A shape is one frozen dataclass, registered with :func:`register`.  It knows

* ``value(x)``: its potential energy at positions ``x`` (case energy unit),
  vectorised over numpy arrays;
* ``features()``: positions that must be grid nodes (discontinuities, edges,
  centres), so that the finite-difference scheme keeps its order;
* ``scale()``: the length over which it varies near its features (sets the
  finest grid spacing there), or ``None``;
* ``asymptote(side)``: its limit at ``side * infinity`` (``side`` = -1 or +1),
  ``+inf``/``-inf`` for shapes that grow without bound;
* ``strength()``: the integrated strength  int |V| dx  (energy * length) of a
  localised well or barrier, ``nan`` for extended shapes;
* ``centroid()`` and ``region()``: its centre, and the interval counted as
  "inside" it when the probability inside each named component is reported;
* ``point_terms()``: zero-range terms ``(position, alpha)``, -alpha delta(x - position);
* for wells that can stand in for a point interaction (``replaces_points``):
  ``replacement(name, center, alpha, width)``, the well of integrated strength
  alpha and width parameter ``width``; ``width_parameter`` and
  ``mean_distance()``, the mean |x - x'| of two points drawn from the profile
  (the first-order zero-range correction, :mod:`fdsolver.zerorange.narrow`).

What a case file may write for a shape is declared on the class by
:func:`register`: its keys, the physical dimension of each (so values with
units can be converted and swept params get units), which must be positive,
and whether it takes ``depth`` (a well, V = -depth) or ``height`` (a barrier).
:meth:`Shape.build` turns validated key values into an instance; shapes that
need more than their keys (a table file, an expression, the particle mass)
override it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable, ClassVar, Mapping

import numpy as np

from fdsolver.errors import CaseError

INF = math.inf

#: physical dimensions of case-file values (the case's own units give their size); COUNT is a whole number
LENGTH, ENERGY, STRENGTH, FIELD, INVERSE_LENGTH, MASS, NUMBER, COUNT, TEXT = (
    "length", "energy", "energy*length", "energy/length", "1/length", "mass", "1", "count", "text")


@dataclass(frozen=True)
class BuildContext:
    """What a shape may need besides its own keys: the particle mass, C = hbar^2/2m_e, and two readers.

    ``where`` is the dotted key of the component being built (``potential[2]``);
    the readers are given the full key of the value they read.
    """

    mass: float
    hbar2_2me: float
    params: Mapping[str, float]
    reader: Callable[..., tuple] | None = None  # (file name, x column, v column, full key) -> (xs, vs)
    compiler: Callable[..., Any] | None = None  # (text, full key) -> compiled expression in x and the params
    where: str = ""

    def _key(self, key: str) -> str:
        return f"{self.where}.{key}" if self.where else key

    def read_table(self, fname: str, x_column: int, v_column: int, key: str):
        """(xs, vs) of the table file ``fname`` (relative to the case file)."""
        if self.reader is None:
            raise CaseError("tables can only be read for a case file", key=self._key(key))
        return self.reader(fname, x_column, v_column, self._key(key))

    def compile(self, text: str, key: str):
        """The safe expression ``text`` in x and the params, compiled once."""
        if self.compiler is None:
            raise CaseError("expressions can only be compiled for a case", key=self._key(key))
        return self.compiler(text, self._key(key))


@dataclass(frozen=True)
class Shape:
    """Common interface of all potential components (see module docstring)."""

    name: str | None

    kind: ClassVar[str] = "shape"
    #: key -> physical dimension, required and optional (set by :func:`register`)
    required: ClassVar[tuple[str, ...]] = ()
    optional: ClassVar[tuple[str, ...]] = ()
    dimensions: ClassVar[dict[str, str]] = {}
    positive: ClassVar[tuple[str, ...]] = ()
    signed: ClassVar[bool] = False
    #: key -> what a value must be, for messages ("a string expression in x and the params")
    hints: ClassVar[dict[str, str]] = {}
    #: True if V is constant between the features (marched exactly, one cell per segment)
    piecewise_constant: ClassVar[bool] = False
    #: True for wells that can replace a point interaction of the same integrated strength
    replaces_points: ClassVar[bool] = False
    #: True if ``integrate(a, b)`` gives exact integrals of V over intervals (else Gauss quadrature is used)
    exact_integrals: ClassVar[bool] = False

    @classmethod
    def summer(cls, shapes) -> Callable[[np.ndarray], np.ndarray]:
        """A function x -> sum of the instances' values, prepared once; classes override it to avoid O(N K) work."""
        if len(shapes) == 1:
            return shapes[0].value

        def total(x):
            v = shapes[0].value(x)
            for shape in shapes[1:]:
                v = v + shape.value(x)
            return v

        return total

    def integrate(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:  # pragma: no cover - optional
        """Exact integrals of V over [a_i, b_i] (only for classes with ``exact_integrals``)."""
        raise NotImplementedError

    @classmethod
    def build(cls, name: str | None, values: Mapping[str, Any], ctx: BuildContext) -> "Shape":
        """An instance from validated key values (``amplitude`` = -depth or +height for signed shapes)."""
        return cls(name, **values)

    def value(self, x: np.ndarray) -> np.ndarray:  # pragma: no cover - interface
        raise NotImplementedError

    def features(self) -> list[float]:
        return []

    def scale(self) -> float | None:
        return None

    def asymptote(self, side: int) -> float:
        return 0.0

    def strength(self) -> float:
        return math.nan

    def centroid(self) -> float:
        return math.nan

    def region(self) -> tuple[float, float] | None:
        return None

    def point_terms(self) -> list[tuple[float, float]]:
        """Zero-range terms ``(position, alpha)`` meaning ``-alpha * delta(x - position)``."""
        return []


#: shape name in a case file -> its class
SHAPES: dict[str, type[Shape]] = {}


def register(kind: str, *, keys: Mapping[str, str], optional: Mapping[str, str] | None = None, positive=(),
             signed: bool = False, hints: Mapping[str, str] | None = None):
    """Class decorator: register a shape under ``kind`` with its case-file keys.

    ``keys`` and ``optional`` map each key to its dimension (:data:`LENGTH`,
    :data:`ENERGY`, ...).  ``signed`` shapes take exactly one of ``depth`` or
    ``height``, passed to the constructor as ``amplitude``.
    """
    def deco(cls):
        if kind in SHAPES:
            raise ValueError(f"shape '{kind}' is registered twice")
        cls.kind = kind
        cls.required = tuple(keys)
        cls.optional = tuple(optional or {})
        cls.dimensions = {**dict(keys), **dict(optional or {}), **({"depth": ENERGY, "height": ENERGY} if signed else {})}
        cls.positive = tuple(positive)
        cls.signed = signed
        cls.hints = dict(hints or {})
        SHAPES[kind] = cls
        return cls

    return deco


def finite_replacements() -> dict[str, Callable[..., Shape]]:
    """Shape name -> ``replacement(name, center, alpha, width)`` for every well that can stand in for a point."""
    return {kind: cls.replacement for kind, cls in SHAPES.items() if cls.replaces_points}  # type: ignore[attr-defined]
