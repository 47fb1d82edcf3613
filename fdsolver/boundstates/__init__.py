"""Bound states with error bars: the plan of a solve, the box, eigenpairs per grid, nested levels with
Richardson extrapolation, box-free state counts and thresholds, and the Solution with its observables.

Entry point: :func:`fdsolver.boundstates.driver.solve_potential`.
"""
