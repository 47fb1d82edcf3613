"""Floating-point facts every numerical module shares."""

import numpy as np

#: machine epsilon of IEEE double precision
EPS = float(np.finfo(float).eps)
