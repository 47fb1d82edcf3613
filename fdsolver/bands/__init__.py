"""Bloch bands of periodic potentials: one period's transfer matrix, band edges none missed, error bars.

Pipeline: :mod:`~fdsolver.bands.lattice` (one period from a Potential) -> :mod:`~fdsolver.bands.cellgrid`
(cells of the period on nested levels) -> :mod:`~fdsolver.bands.edges` (band edges by the band index) ->
:mod:`~fdsolver.bands.structure` (masses, E_n(q), Richardson, density of states) ->
:mod:`~fdsolver.bands.result` (frozen dataclasses); :mod:`~fdsolver.bands.finite` sets N-period stacks
beside the bands.
"""
