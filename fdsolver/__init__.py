"""fdsolver: bound states of 1D wells on adaptive finite-difference grids."""
__version__ = "0.1.0"
