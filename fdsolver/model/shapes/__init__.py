"""Potential components: one class per shape, registered by name (see :mod:`.base` for the contract).

Adding a shape: write one frozen dataclass in the module of its family (or a
new module imported here), decorate it with :func:`register` naming its
case-file keys and their dimensions, and add a closed-form test (see
DEVELOPERS.md).  The case reader, the schema and the units of swept params
all read the registry.
"""

from fdsolver.model.shapes.base import (
    COUNT,
    ENERGY,
    FIELD,
    INF,
    INVERSE_LENGTH,
    LENGTH,
    MASS,
    NUMBER,
    SHAPES,
    STRENGTH,
    TEXT,
    BuildContext,
    Shape,
    finite_replacements,
    register,
)
# registration order is the order shapes are listed in messages: wells first
from fdsolver.model.shapes.wells import Gaussian, Localised, Sech2, SmoothSquare, Square  # noqa: I001
from fdsolver.model.shapes.fields import Harmonic, Linear, Morse
from fdsolver.model.shapes.sampled import ExpressionShape, Table
from fdsolver.model.shapes.point import Point

#: shape name -> replacement(name, center, alpha, width) for the wells that can stand in for a point
FINITE_REPLACEMENTS = finite_replacements()

__all__ = [
    "COUNT", "ENERGY", "FIELD", "INF", "INVERSE_LENGTH", "LENGTH", "MASS", "NUMBER", "STRENGTH", "TEXT",
    "SHAPES", "FINITE_REPLACEMENTS", "BuildContext", "Shape", "register", "finite_replacements",
    "Square", "SmoothSquare", "Gaussian", "Sech2", "Localised", "Harmonic", "Morse", "Linear", "Table",
    "ExpressionShape", "Point",
]
