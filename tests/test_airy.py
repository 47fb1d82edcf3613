"""fdsolver's Airy functions (fdsolver.numerics.airy) against mpmath, SciPy and the Wronskian.

References: mpmath's airyai / airybi at 40 digits (an independent arbitrary-precision library); scipy.special.airy
(the Amos library, a second double-precision implementation); the Wronskian Ai Bi' - Ai' Bi = 1/pi (DLMF 9.2.7).
Near a zero a value's error is measured against the local envelope, as for any double-precision method: on the
negative real axis the modulus M = sqrt(Ai^2 + Bi^2) (DLMF 9.8.3), elsewhere in the oscillating sector
2 pi / 3 < |ph z| the sizes of the two terms of DLMF 9.2.12 (|Ai(w z)| + |Ai(w^2 z)|, w = exp(2 pi i / 3)).
Beyond |z| = 12 the bound grows like |zeta| = (2/3) |z|^(3/2): the phase exp(-i Im zeta) of a value carries the
rounding of zeta (the condition number of Ai there; scipy's errors grow the same way, measured below).
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
import scipy.special

from fdsolver.numerics.airy import R_FAR, ai_scaled, airy

mpmath.mp.dps = 40
W = mpmath.exp(2j * mpmath.pi / 3)


def _reference(z: complex):
    """(Ai, Ai', scale of Ai, scale of Ai') at z from mpmath (module docstring for the scales)."""
    zz = mpmath.mpc(z.real, z.imag)
    ai, aip = mpmath.airyai(zz), mpmath.airyai(zz, derivative=1)
    if abs(np.angle(z)) <= 2 * np.pi / 3 - 0.3:
        return ai, aip, abs(ai), abs(aip)
    scale = abs(mpmath.airyai(W * zz)) + abs(mpmath.airyai(W * W * zz))
    scale_d = abs(mpmath.airyai(W * zz, derivative=1)) + abs(mpmath.airyai(W * W * zz, derivative=1))
    return ai, aip, max(abs(ai), scale), max(abs(aip), scale_d)


def _errors(points):
    """Errors of Ai and Ai' at the points against mpmath, each relative to its scale (module docstring)."""
    m, d, g = ai_scaled(points)
    err, err_d = [], []
    for z, mi, di, gi in zip(points, m, d, g):
        ai, aip, scale, scale_d = _reference(complex(z))
        err.append(float(abs(mpmath.mpc(mi) * mpmath.exp(gi) - ai) / scale))
        err_d.append(float(abs(mpmath.mpc(di) * mpmath.exp(gi) - aip) / scale_d))
    return np.array(err), np.array(err_d)


def test_ai_inside_the_circle_is_accurate_to_round_off():
    # the lattice and its Taylor steps: every point of the square around the circle |z| < 12 (measured: 1.5e-14)
    rng = np.random.default_rng(11)
    points = rng.uniform(-R_FAR, R_FAR, 250) + 1j * rng.uniform(-R_FAR, R_FAR, 250)
    points = np.concatenate([points, [0.0, 1e-9j, 0.5 + 0.5j, -0.5, 11.999, -11.999, 11.999j, 3 - 11.9j]])
    err, err_d = _errors(points)
    assert err.max() < 5e-14 and err_d.max() < 5e-14, (err.max(), err_d.max())


def test_ai_outside_the_circle_in_every_direction():
    rng = np.random.default_rng(12)
    radius = rng.uniform(R_FAR, 50.0, 200)
    points = radius * np.exp(1j * rng.uniform(-np.pi, np.pi, 200))
    # the directions where the expansion hands over to the connection formula, and the negative axis
    edges = np.array([R_FAR * 1.0001, 20.0]) [:, None] * np.exp(1j * np.array([2 * np.pi / 3, -2 * np.pi / 3, np.pi,
                                                                               2 * np.pi / 3 + 1e-3]))[None, :]
    points = np.concatenate([points, edges.ravel()])
    err, err_d = _errors(points)
    zeta = (2.0 / 3.0) * np.abs(points) ** 1.5
    assert np.all(err < 4e-15 * (1.0 + zeta)), err.max()
    assert np.all(err_d < 4e-15 * (1.0 + zeta)), err_d.max()


def test_no_step_across_the_circle():
    # the two methods meet at |z| = 12: a value just outside equals the value just inside carried across the gap
    # by its Taylor polynomial (Ai'' = z Ai, DLMF 9.2.1), in every direction, to round-off
    phase = np.exp(1j * np.linspace(-np.pi, np.pi, 25))
    z_in, gap = (R_FAR - 1e-7) * phase, 2e-7 * phase
    m, d, g = ai_scaled(z_in)
    mo, do, go = ai_scaled(z_in + gap)
    ai, aip = m * np.exp(g), d * np.exp(g)
    carried = ai + gap * aip + gap**2 / 2 * z_in * ai + gap**3 / 6 * (ai + z_in * aip)
    carried_d = aip + gap * z_in * ai + gap**2 / 2 * (ai + z_in * aip)
    assert np.all(np.abs(mo * np.exp(go) - carried) < 1e-13 * np.abs(carried))
    assert np.all(np.abs(do * np.exp(go) - carried_d) < 1e-13 * np.abs(carried_d))


def test_real_axis_ai_and_bi_against_mpmath():
    x = np.concatenate([np.linspace(-60.0, 30.0, 181), [-R_FAR, R_FAR, 1e-300]])
    ai, aip, la, bi, bip, lb = airy(x)
    assert ai.dtype == bi.dtype == np.float64
    for v, a, ad, gla, b, bd, glb in zip(x, ai, aip, la, bi, bip, lb):
        xx = mpmath.mpf(v)
        ref = [mpmath.airyai(xx), mpmath.airyai(xx, derivative=1), mpmath.airybi(xx), mpmath.airybi(xx, derivative=1)]
        modulus = mpmath.sqrt(ref[0] ** 2 + ref[2] ** 2)  # DLMF 9.8.3
        modulus_d = mpmath.sqrt(ref[1] ** 2 + ref[3] ** 2)
        scales = [abs(ref[0]), abs(ref[1]), abs(ref[2]), abs(ref[3])] if v >= 0 else [modulus, modulus_d] * 2
        got = [a * mpmath.exp(gla), ad * mpmath.exp(gla), b * mpmath.exp(glb), bd * mpmath.exp(glb)]
        for g_, r, s in zip(got, ref, scales):
            assert abs(g_ - r) <= 1e-13 * s, (v, float(g_), float(r))


def test_exponential_growth_is_kept_in_the_log():
    # Ai(1e4) ~ exp(-666667) and Bi(3000) ~ exp(109545): far outside double precision, exact in (mantissa, log)
    ai, aip, la, bi, _bip, lb = airy(np.array([1.0e4, 3000.0]))
    for got, log, ref in ((ai[0], la[0], mpmath.airyai(1e4)), (bi[1], lb[1], mpmath.airybi(3000)),
                          (aip[0], la[0], mpmath.airyai(1e4, derivative=1))):
        assert abs(mpmath.log(abs(got)) + log - mpmath.log(abs(ref))) < 1e-9
        assert np.sign(got) == mpmath.sign(ref)


@pytest.mark.parametrize("complex_points", [False, True])
def test_wronskian(complex_points):
    # W(Ai, Bi) = Ai Bi' - Ai' Bi = 1 / pi everywhere (DLMF 9.2.7)
    rng = np.random.default_rng(5)
    z = rng.uniform(-25, 25, 300)
    if complex_points:
        z = z + 1j * rng.uniform(-25, 25, 300)
    ai, aip, la, bi, bip, lb = airy(z)
    scale = np.exp(la + lb)
    w = (ai * bip - aip * bi) * scale
    # the round-off of a difference of two products: where Ai and Bi both grow, each product is far above 1/pi
    size = (np.abs(ai * bip) + np.abs(aip * bi)) * scale
    assert np.all(np.abs(w - 1.0 / np.pi) <= 1e-13 * size)


def test_against_scipy():
    # a second double-precision library on a grid of the plane (|z| <= 20), against the same scales
    x, y = np.meshgrid(np.linspace(-20, 20, 41), np.linspace(-20, 20, 41))
    z = (x + 1j * y).ravel()
    z = z[np.abs(z) <= 20]
    ai_ref, aip_ref, _, _ = scipy.special.airy(z)
    m, d, g = ai_scaled(z)
    ours, ours_d = m * np.exp(g), d * np.exp(g)
    scale = np.maximum(np.abs(ai_ref), np.abs(scipy.special.airy(z * complex(W))[0])
                       + np.abs(scipy.special.airy(z * complex(W * W))[0]))
    scale_d = np.maximum(np.abs(aip_ref), np.abs(scipy.special.airy(z * complex(W))[1])
                         + np.abs(scipy.special.airy(z * complex(W * W))[1]))
    ok = np.abs(np.angle(z)) > 2 * np.pi / 3 - 0.3
    scale = np.where(ok, scale, np.abs(ai_ref))
    scale_d = np.where(ok, scale_d, np.abs(aip_ref))
    assert np.all(np.abs(ours - ai_ref) <= 2e-13 * scale)
    assert np.all(np.abs(ours_d - aip_ref) <= 2e-13 * scale_d)


def test_shapes_and_real_input_kept():
    z = np.array([[0.0, 1.0], [-2.0, 3.0]])
    out = airy(z)
    assert all(v.shape == (2, 2) for v in out)
    assert out[0].dtype == np.float64 and out[2].dtype == np.float64
    m, _d, g = ai_scaled(np.array([1.0 + 1.0j]))
    assert m.dtype == np.complex128 and g.dtype == np.float64
