"""The physical model of a case: unit systems, potential shapes, layer stacks, the summed potential, the domain.

Pipeline position: after ``input``.  Everything here is in the case's units and knows nothing of grids.
"""
