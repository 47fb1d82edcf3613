"""Heterostructure layer stacks: layers of given thickness, band edge (energy) and effective mass (m_e).

The first and last layers extend to -infinity and +infinity; the first inner
layer starts at ``origin``.  Lengths in the case length unit.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from fdsolver.model.shapes import INF


@dataclass(frozen=True)
class Layer:
    """One layer: ``thickness`` (length; ignored for the two outer layers), band edge (energy), mass (m_e)."""

    name: str | None
    thickness: float
    band_edge: float
    mass: float


@dataclass(frozen=True)
class LayerStack:
    """Layers left to right; interfaces at ``origin`` + cumulative thicknesses of the inner layers."""

    layers: tuple[Layer, ...]
    origin: float = 0.0

    @cached_property
    def interfaces(self) -> np.ndarray:
        """Interface positions (computed once: the stack is immutable)."""
        inner = [layer.thickness for layer in self.layers[1:-1]]
        out = self.origin + np.concatenate([[0.0], np.cumsum(inner)]) if len(self.layers) > 1 else np.array([])
        out.flags.writeable = False
        return out

    @cached_property
    def _edges(self) -> np.ndarray:
        return np.array([layer.band_edge for layer in self.layers])

    @cached_property
    def _masses(self) -> np.ndarray:
        return np.array([layer.mass for layer in self.layers])

    def index(self, x: np.ndarray) -> np.ndarray:
        """Layer index of each position (a point on an interface belongs to the layer on its right)."""
        return np.searchsorted(self.interfaces, np.asarray(x, dtype=float), side="right")

    def band_edge(self, x):
        return self._edges[self.index(x)]

    def mass(self, x):
        return self._masses[self.index(x)]

    def regions(self) -> list[tuple[str | None, float, float]]:
        bounds = np.concatenate([[-INF], self.interfaces, [INF]])
        return [(layer.name, float(bounds[i]), float(bounds[i + 1])) for i, layer in enumerate(self.layers)]

    def scale(self) -> float | None:
        inner = [layer.thickness for layer in self.layers[1:-1]]
        return min(inner) if inner else None
