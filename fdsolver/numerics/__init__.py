"""Numerical building blocks: adaptive grids, the finite-difference operator, compiled kernels (numba), the
one exact march across cells, one-period transfer matrices, Richardson extrapolation, BLAS thread limits.

Pipeline position: below ``boundstates``; nothing here knows what a case file is.
"""
