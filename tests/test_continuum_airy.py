"""Linear (Airy) cells against Airy functions (mpmath): a tilted barrier's transmission derived here by matching
Airy functions, for strong and for very weak fields (where Bi(z) exceeds the double range).  Invented numbers."""

import mpmath as mp
import numpy as np
import pytest

from fdsolver.continuum.transmission import transmission
from fdsolver.input.case import case_from_dict


def _tilted_T(v_left, v_right, width, e):
    """Derived here (hbar = m = 1): V = 0 for x < 0, v_left + (v_right - v_left) x / width inside, 0 beyond.

    Inside, psi = a Ai(z) + b Bi(z), z = beta (x + (v_left - E)/F), beta = (2F)^(1/3), F the slope; outside plane
    waves.  Matching psi and psi' at both ends with a transmitted exp(ikx) gives the incoming amplitude.
    """
    mp.mp.dps = 60
    f = (mp.mpf(v_right) - v_left) / width
    beta = mp.sign(f) * mp.cbrt(2 * abs(f))  # the real cube root
    e = mp.mpf(e)
    k = mp.sqrt(2 * e)
    z0, z1 = beta * (v_left - e) / f, beta * (width + (v_left - e) / f)
    a0, ap0, b0, bp0 = mp.airyai(z0), mp.airyai(z0, 1), mp.airybi(z0), mp.airybi(z0, 1)
    a1, ap1, b1, bp1 = mp.airyai(z1), mp.airyai(z1, 1), mp.airybi(z1), mp.airybi(z1, 1)
    # at x = width: psi = 1, psi' = i k  ->  coefficients (a, b) via the Wronskian 1/pi
    psi, dpsi = 1.0, 1j * k
    a = mp.pi * (bp1 * psi - b1 * dpsi / beta)
    b = mp.pi * (-ap1 * psi + a1 * dpsi / beta)
    p0, d0 = a * a0 + b * b0, beta * (a * ap0 + b * bp0)
    inc = (p0 + d0 / (1j * k)) / 2
    return float(1 / abs(inc) ** 2)


@pytest.mark.parametrize("v_right", [0.2, 1.4, 0.999, 1.0 + 1e-7])
def test_tilted_barrier_against_airy_matching(v_right):
    v_left, width = 1.0, 3.0
    # the inner layer carries v_left, a two-row table the tilt; the right cladding takes the tilt's end value back
    # off, so V is exactly 0 outside (steps on layer interfaces, no ramps)
    tilt = v_right - v_left
    pot = case_from_dict({"units": "atomic", "layer": [
        {"band_edge": 0.0}, {"band_edge": v_left, "thickness": width}, {"band_edge": -tilt}],
        "potential": [{"shape": "table", "file": "tilt.csv"}]},
        tables={"tilt.csv": f"x,V\n0,0\n{width},{tilt}\n"}).potential
    e = np.array([0.3, 0.8, 1.7])
    tr = transmission(pot, e)
    assert tr.levels == 1
    exact = np.array([_tilted_T(v_left, v_right, width, x) for x in e])
    assert np.max(np.abs(tr.transmission / exact - 1)) < 1e-10
