"""The continuum: transmission, resonances (S-matrix poles), quasi-bound states in fields, tunnelling current.

Results are frozen dataclasses of numpy arrays in the case units (stated in
each docstring).  The numerics are the complex march of
:mod:`fdsolver.numerics.waves` over the cells of :mod:`fdsolver.continuum.profile`.
"""
