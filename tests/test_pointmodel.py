"""Checks of the zero-range point-interaction model (fdsolver.zerorange.pointmodel).

Every reference is outside the module under test: textbook closed forms,
SciPy reference functions (scipy.special.lambertw, scipy.optimize.brentq,
scipy.integrate.quad, numpy determinants/eigenvalues) or relations derived by
hand in the comments.  Where a source is quoted from memory it says so.

Conventions (same as the module): H = -C d/dx (1/m) d/dx - sum alpha_i
delta(x - x_i), g_i = m alpha_i / (2 C), E = -C kappa^2 / m.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
import scipy.constants as sc
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import lambertw

from fdsolver.boundstates.counting import Threshold
from fdsolver.errors import CaseError
from fdsolver.zerorange.pointmodel import (
    PointSpectrum,
    binding_thresholds,
    critical_separation,
    pair_closed_form,
    point_spectrum,
    zero_energy_solution,
)

AU_C = 0.5  # hbar^2/(2 m_e) in hartree bohr^2 (exact in atomic units)
# hbar^2/(2 m_e) in meV nm^2 from the CODATA values in scipy.constants
NM_MEV_C = sc.hbar**2 / (2.0 * sc.m_e) / (1e-3 * sc.e) / 1e-18


# ---------------------------------------------------------------------------
# helpers (independent of the module's internals)


def integrate(f, positions, epsrel=1e-12, tail_length=None):
    """int f over the real line with scipy.integrate.quad, split at the kinks.

    ``tail_length`` (decay length of the tails) adds breakpoints in the tails so
    that quad resolves very extended states.
    """
    xs = np.sort(np.asarray(positions, dtype=float))
    extra_l, extra_r = [], []
    if tail_length is not None:
        extra_l = [xs[0] - f_ * tail_length for f_ in (16.0, 4.0, 1.0)]
        extra_r = [xs[-1] + f_ * tail_length for f_ in (1.0, 4.0, 16.0)]
    edges = [-np.inf, *extra_l, *xs, *extra_r, np.inf]
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:]):
        total += quad(f, a, b, epsabs=1e-14, epsrel=epsrel, limit=200)[0]
    return total


def det_secular(kappa, x, g):
    """det(A) with A_ij = delta_ij - g_j exp(-kappa |x_i - x_j|) / kappa.

    The secular equation of point interactions (Albeverio, Gesztesy,
    Hoegh-Krohn, Holden, "Solvable Models in Quantum Mechanics", ch. II.2;
    from memory), evaluated with numpy.linalg.det.
    """
    x = np.asarray(x, float)
    g = np.asarray(g, float)
    e = np.exp(-kappa * np.abs(x[:, None] - x[None, :]))
    return np.linalg.det(np.eye(len(x)) - e * g[None, :] / kappa)


def random_config(rng, n, signs="attractive"):
    """n points with spacings >= 0.3 and |g| in [0.4, 2.5] (atomic units, m=1)."""
    gaps = rng.uniform(0.3, 2.5, n - 1)
    x = np.concatenate([[0.0], np.cumsum(gaps)]) + rng.uniform(-3, 3)
    g = rng.uniform(0.4, 2.5, n)
    if signs == "mixed":
        s = rng.choice([-1.0, 1.0], n)
        s[rng.integers(n)] = 1.0  # at least one attractive point
        g = g * s
    rng.shuffle(perm := np.arange(n))  # caller order need not be sorted
    return x[perm], g[perm]


def alpha_from_g(g, mass=1.0, c=AU_C):
    return 2.0 * c * np.asarray(g, float) / mass


def one_sided_derivatives(f, x0, h):
    """Second-order one-sided differences (-3f0 + 4f1 - f2) / (2h) on each side."""
    f0 = f(x0)
    right = (-3.0 * f0 + 4.0 * f(x0 + h) - f(x0 + 2 * h)) / (2 * h)
    left = (3.0 * f0 - 4.0 * f(x0 - h) + f(x0 - 2 * h)) / (2 * h)
    return left, right


# ---------------------------------------------------------------------------
# single point


@pytest.mark.parametrize("alpha,mass", [(1.3, 1.0), (0.2, 0.5), (7.0, 2.0)])
def test_single_point_atomic_units(alpha, mass):
    # Griffiths, Introduction to Quantum Mechanics (2nd ed.), sec. 2.5.2
    # (equation numbers from memory): E = -m alpha^2 / (2 hbar^2) and
    # psi = sqrt(m alpha)/hbar exp(-m alpha |x| / hbar^2); hbar = m_e = 1 here.
    sp = point_spectrum([0.3], [alpha], mass=mass, hbar2_2me=AU_C)
    assert sp.n_states == 1
    kappa_ref = mass * alpha  # m alpha / hbar^2
    assert sp.kappa[0] == pytest.approx(kappa_ref, rel=1e-15)
    assert sp.energy[0] == pytest.approx(-mass * alpha**2 / 2.0, rel=1e-14)
    x = np.linspace(-4, 4, 41) / kappa_ref + 0.3
    ref = math.sqrt(kappa_ref) * np.exp(-kappa_ref * np.abs(x - 0.3))
    np.testing.assert_allclose(sp.psi(0, x), ref, rtol=1e-14, atol=1e-300)
    # normalisation by adaptive quadrature
    assert integrate(lambda t: sp.psi(0, t) ** 2, [0.3]) == pytest.approx(1.0, abs=1e-11)
    # <x> = x0 by symmetry; <(x-x0)^2> = kappa int x^2 e^{-2 kappa |x|} = 1/(2 kappa^2)
    # (elementary integral int_0^inf x^2 e^{-a x} dx = 2/a^3, Gradshteyn & Ryzhik
    # 3.351.3, from memory)
    assert sp.mean_x(0) == pytest.approx(0.3, abs=1e-14)
    assert sp.spread(0) == pytest.approx(1.0 / (math.sqrt(2.0) * kappa_ref), rel=1e-13)
    assert list(sp.nodes) == [0] and list(sp.parity) == [1]


def test_single_point_nm_mev():
    # Same textbook result (Griffiths sec. 2.5.2, from memory) evaluated fully in
    # SI with scipy.constants (CODATA), then converted to meV: independent of the
    # module's use of C = hbar^2/(2 m_e).
    assert NM_MEV_C == pytest.approx(38.0998, rel=1e-5)  # value from memory
    mass, alpha = 0.067, 120.0  # m_e, meV nm
    sp = point_spectrum([2.0], [alpha], mass=mass, hbar2_2me=NM_MEV_C)
    m_si = mass * sc.m_e
    alpha_si = alpha * 1e-3 * sc.e * 1e-9
    e_ref_mev = -m_si * alpha_si**2 / (2.0 * sc.hbar**2) / (1e-3 * sc.e)
    kappa_ref_nm = m_si * alpha_si / sc.hbar**2 * 1e-9
    assert sp.energy[0] == pytest.approx(e_ref_mev, rel=1e-12)
    assert sp.kappa[0] == pytest.approx(kappa_ref_nm, rel=1e-12)
    assert integrate(lambda t: sp.psi(0, t) ** 2, [2.0]) == pytest.approx(1.0, abs=1e-11)


# ---------------------------------------------------------------------------
# symmetric pair against Lambert W


def lambert_pair(t):
    """kappa d for the even/odd states, kappa d = t + W0(+-t e^{-t}).

    Closed form of kappa/g = 1 +- exp(-kappa d) (Griffiths, 2nd ed., problem
    2.27, from memory); the Lambert-W solution is the double-delta example in
    Corless et al., Adv. Comput. Math. 5 (1996) 329 (from memory).  Reference
    function: scipy.special.lambertw, principal branch.
    """
    even = t + lambertw(t * math.exp(-t)).real
    odd = t + lambertw(-t * math.exp(-t)).real if t > 1 else None
    return even, odd


GD_GRID = [0.05, 0.1, 0.3, 0.5, 0.8, 0.95, 1.05, 1.2, 1.5, 2.0, 3.0, 5.0, 8.0, 12.0, 20.0, 30.0]


@pytest.mark.parametrize("t", GD_GRID)
def test_pair_closed_form_matches_lambertw(t):
    g = 0.7
    d = t / g
    ke, ko = pair_closed_form(g, d)
    ref_e, ref_o = lambert_pair(t)
    assert ke * d == pytest.approx(ref_e, rel=1e-13)
    if t > 1:
        # lambertw loses ~sqrt(eps) near its branch point -1/e (t -> 1); away from
        # it both agree to rounding
        assert ko * d == pytest.approx(ref_o, rel=1e-12 if abs(t - 1) > 0.1 else 1e-9)
    else:
        assert ko is None


@pytest.mark.parametrize("t", GD_GRID)
def test_point_spectrum_pair_matches_lambertw(t):
    g = 1.3
    d = t / g
    sp = point_spectrum([-0.5 * d, 0.5 * d], alpha_from_g([g, g]))
    ref_e, ref_o = lambert_pair(t)
    # d_c = hbar^2/(m alpha) = 1/g: common practice, no source
    assert sp.n_states == (2 if t > 1 else 1)
    assert sp.kappa[0] * d == pytest.approx(ref_e, rel=1e-13)
    if t > 1:
        assert sp.kappa[1] * d == pytest.approx(ref_o, rel=1e-12 if abs(t - 1) > 0.1 else 1e-9)
    assert list(sp.nodes) == list(range(sp.n_states))
    assert list(sp.parity) == [1, -1][: sp.n_states]


@pytest.mark.parametrize("eps", [1e-2, 1e-4, 1e-6, -1e-6, -1e-3])
def test_pair_near_critical_separation(eps):
    # Close to g d = 1 the odd state is compared with scipy.optimize.brentq on the
    # transcendental condition y = t (1 - e^{-y}) (Griffiths problem 2.27, from
    # memory) after dividing out the trivial root: (1 - e^{-y})/y = 1/t.
    # The weakly bound kappa is ill-conditioned: relative error ~ eps/(t - 1).
    g = 1.0
    t = 1.0 + eps
    d = t / g
    sp = point_spectrum([-0.5 * d, 0.5 * d], alpha_from_g([g, g]))
    ke, ko = pair_closed_form(g, d)
    if eps < 0:
        assert sp.n_states == 1 and ko is None
        return
    assert sp.n_states == 2
    y_ref = brentq(lambda y: -math.expm1(-y) / y - 1.0 / t, 1e-300, t, xtol=1e-300, rtol=1e-15)
    tol = 50 * np.finfo(float).eps / eps
    assert ko * d == pytest.approx(y_ref, rel=tol)
    assert sp.kappa[1] * d == pytest.approx(y_ref, rel=tol)
    # leading order y = 2 (t - 1) (expand 1 - e^{-y} = y - y^2/2: common practice)
    assert ko * d == pytest.approx(2 * eps, rel=3 * eps)


def test_critical_separation():
    # d_c = hbar^2 / (m alpha) = 1/g (common practice, no source)
    for g in [0.1, 1.0, 3.7]:
        assert critical_separation(g) == pytest.approx(1.0 / g, rel=1e-15)
        d = critical_separation(g)
        assert point_spectrum([0, 0.999 * d], alpha_from_g([g, g])).n_states == 1
        assert point_spectrum([0, 1.001 * d], alpha_from_g([g, g])).n_states == 2


# ---------------------------------------------------------------------------
# random configurations


def _check_roots_against_det(sp, x, g):
    """Each kappa is a simple zero of det(1 - K): tiny, with a sign change."""
    k = sp.kappa
    sep = np.min(np.abs(np.diff(k)) / k[1:]) if len(k) > 1 else 1.0
    delta = min(1e-6, sep / 20.0)
    for kn in k:
        d0 = det_secular(kn, x, g)
        dm = det_secular(kn * (1 - delta), x, g)
        dp = det_secular(kn * (1 + delta), x, g)
        assert dm * dp < 0.0, "det(1-K) must change sign at each root"
        assert abs(d0) <= 1e-7 * max(abs(dm), abs(dp))


@pytest.mark.parametrize("seed", range(12))
def test_random_attractive(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 9))
    x, g = random_config(rng, n)
    sp = point_spectrum(x, alpha_from_g(g))
    k = sp.kappa
    assert sp.n_states >= 1
    assert np.all(np.diff(k) < 0), "roots distinct and descending"
    assert np.all(k > 0) and k[0] <= np.sum(g) * (1 + 1e-15)
    assert sp.n_states <= n
    assert zero_energy_solution(x, alpha_from_g(g))[0] == sp.n_states
    _check_roots_against_det(sp, x, g)
    # Birman-Schwinger principle (Reed & Simon, Methods of Modern Mathematical
    # Physics IV, sec. XIII.3, from memory): the number of states with
    # kappa > k equals the number of eigenvalues > k of
    # B_ij(k) = sqrt(g_i g_j) exp(-k |x_i - x_j|).  Checked at k between the
    # roots, above the largest and far below the smallest (numpy.linalg.eigvalsh).
    probes = [1.5 * k[0]] + [math.sqrt(a * b) for a, b in zip(k[:-1], k[1:])] + [0.5 * k[-1], 1e-9 * k[-1]]
    sq = np.sqrt(g)
    for kp in probes:
        b = sq[:, None] * np.exp(-kp * np.abs(x[:, None] - x[None, :])) * sq[None, :]
        assert int(np.sum(np.linalg.eigvalsh(b) > kp)) == int(np.sum(k > kp))
    assert list(sp.nodes) == list(range(sp.n_states))  # oscillation theorem


@pytest.mark.parametrize("seed", range(12))
def test_random_mixed_signs(seed):
    rng = np.random.default_rng(100 + seed)
    n = int(rng.integers(2, 9))
    x, g = random_config(rng, n, signs="mixed")
    sp = point_spectrum(x, alpha_from_g(g))
    k = sp.kappa
    n_attr = int(np.sum(g > 0))
    assert sp.n_states <= n_attr
    assert zero_energy_solution(x, alpha_from_g(g))[0] == sp.n_states
    if sp.n_states:
        assert np.all(np.diff(k) < 0)
        assert k[0] <= np.sum(g[g > 0]) * (1 + 1e-15)
        _check_roots_against_det(sp, x, g)
    # independent root search: sign changes of det(1-K) on a fine log grid,
    # refined with scipy.optimize.brentq; every one must be a returned root
    kmax = float(np.sum(g[g > 0]))
    grid = np.geomspace(1e-4 * kmax, 1.01 * kmax, 3000)
    dets = np.array([det_secular(kk, x, g) for kk in grid])
    found = [brentq(det_secular, a, b, args=(x, g), xtol=1e-300, rtol=1e-14)
             for a, b, fa, fb in zip(grid[:-1], grid[1:], dets[:-1], dets[1:]) if fa * fb < 0]
    for r in found:
        assert np.min(np.abs(k - r)) <= 1e-10 * r
    assert len(found) <= sp.n_states
    assert list(sp.nodes) == list(range(sp.n_states))


@pytest.mark.parametrize("seed,signs", [(3, "attractive"), (7, "attractive"), (11, "mixed"), (12, "mixed")])
def test_random_states_jump_conditions_and_orthonormality(seed, signs):
    rng = np.random.default_rng(1000 + seed)
    n = int(rng.integers(4, 9))
    x, g = random_config(rng, n, signs=signs)
    sp = point_spectrum(x, alpha_from_g(g))
    assert sp.n_states >= 1
    # derivative jump psi'(x_i+) - psi'(x_i-) = -2 g_i psi(x_i) (integrate the
    # Schroedinger equation across the delta: Griffiths sec. 2.5.2, from memory)
    for nstate in range(sp.n_states):
        f = lambda t, n_=nstate: float(sp.psi(n_, t))  # noqa: E731
        h = 1e-4 / max(sp.kappa[nstate], np.max(np.abs(g)))
        scale = np.max(np.abs(sp.psi(nstate, np.linspace(x.min(), x.max(), 200)))) * max(
            sp.kappa[nstate], np.max(np.abs(g))
        )
        for xi, gi in zip(x, g):
            left, right = one_sided_derivatives(f, xi, h)
            assert right - left == pytest.approx(-2.0 * gi * f(xi), abs=1e-6 * scale)
        # away from the points psi'' = kappa^2 psi (central second difference)
        xm = 0.5 * (np.sort(x)[0] + np.sort(x)[1])
        hh = 1e-3 / sp.kappa[nstate]
        second = (f(xm + hh) - 2 * f(xm) + f(xm - hh)) / hh**2
        assert second == pytest.approx(sp.kappa[nstate] ** 2 * f(xm), abs=1e-5 * scale * sp.kappa[nstate])
    # orthonormality by quadrature
    for i in range(sp.n_states):
        for j in range(i, sp.n_states):
            ov = integrate(lambda t: sp.psi(i, t) * sp.psi(j, t), x, epsrel=1e-10)
            assert ov == pytest.approx(1.0 if i == j else 0.0, abs=1e-9)
    # psi is the documented sum of exponentials
    xx = np.linspace(x.min() - 3, x.max() + 3, 301)
    for i in range(sp.n_states):
        direct = np.exp(-sp.kappa[i] * np.abs(xx[:, None] - x[None, :])) @ sp.coefficients[i]
        np.testing.assert_allclose(sp.psi(i, xx), direct, atol=1e-12 * np.max(np.abs(direct)))


@pytest.mark.parametrize("seed", [2, 5])
def test_mean_and_spread_against_quadrature(seed):
    rng = np.random.default_rng(2000 + seed)
    x, g = random_config(rng, 5, signs="mixed" if seed == 5 else "attractive")
    sp = point_spectrum(x, alpha_from_g(g))
    for i in range(sp.n_states):
        mean = integrate(lambda t: t * sp.psi(i, t) ** 2, x)
        var = integrate(lambda t: (t - mean) ** 2 * sp.psi(i, t) ** 2, x)
        assert sp.mean_x(i) == pytest.approx(mean, abs=1e-10 * (1 + abs(mean)))
        assert sp.spread(i) == pytest.approx(math.sqrt(var), rel=1e-10)


def test_sign_rule_and_caller_order():
    # coefficients follow the caller's order; psi > 0 on the far left
    x = np.array([2.0, -1.0, 0.5])
    g = np.array([1.2, 0.9, 1.6])
    sp = point_spectrum(x, alpha_from_g(g))
    sp_sorted = point_spectrum(np.sort(x), alpha_from_g(g[np.argsort(x)]))
    np.testing.assert_allclose(sp.kappa, sp_sorted.kappa, rtol=1e-15)
    np.testing.assert_allclose(sp.coefficients[:, np.argsort(x)], sp_sorted.coefficients, rtol=1e-12, atol=1e-14)
    for i in range(sp.n_states):
        assert sp.psi(i, -1.0 - 1.0 / sp.kappa[i]) > 0
    # coefficient relation c_j = g_j psi(x_j) / kappa (jump condition)
    for i in range(sp.n_states):
        np.testing.assert_allclose(sp.coefficients[i], g * sp.psi(i, x) / sp.kappa[i], rtol=1e-12)


def test_zero_strength_point_changes_nothing():
    # a point of zero strength is no interaction at all (exact)
    x = [0.0, 1.1, 2.5]
    a = alpha_from_g([1.0, 0.8, 1.4])
    sp = point_spectrum(x, a)
    sp0 = point_spectrum([*x, 1.7], [*a, 0.0])
    np.testing.assert_allclose(sp0.kappa, sp.kappa, rtol=1e-14)
    xx = np.linspace(-2, 4, 97)
    for i in range(sp.n_states):
        np.testing.assert_allclose(sp0.psi(i, xx), sp.psi(i, xx), atol=1e-13)
    assert sp0.coefficients[:, 3].tolist() == [0.0] * sp.n_states


# ---------------------------------------------------------------------------
# mixed signs, all repulsive


def test_attractive_plus_repulsive_pair():
    # two points g1 > 0 at 0, g2 < 0 at d: det(1-K) = (1 - g1/k)(1 - g2/k)
    # - g1 g2 e^{-2 k d} / k^2 = 0 (secular equation, see det_secular), solved
    # here with scipy.optimize.brentq on (0, g1] (kappa <= g1 = sum of positive g).
    g1, g2, d = 1.5, -0.7, 0.9
    f = lambda k: (1 - g1 / k) * (1 - g2 / k) - g1 * g2 * math.exp(-2 * k * d) / k**2  # noqa: E731
    ref = brentq(f, 1e-3, g1, xtol=1e-300, rtol=1e-15)
    sp = point_spectrum([0.0, d], alpha_from_g([g1, g2]))
    assert sp.n_states == 1
    assert sp.kappa[0] == pytest.approx(ref, rel=1e-13)
    assert ref < g1  # a repulsive neighbour weakens the binding
    assert sp.parity[0] == 0


def test_attractive_pair_with_repulsive_barrier_symmetric():
    # mirror-symmetric mixed-sign set: parity still alternates
    x = [-2.0, 0.0, 2.0]
    g = [1.2, -3.0, 1.2]
    sp = point_spectrum(x, alpha_from_g(g))
    assert sp.n_states == 2
    assert list(sp.parity) == [1, -1] and list(sp.nodes) == [0, 1]
    xx = np.linspace(0.1, 5, 50)
    for i, p in enumerate(sp.parity):
        np.testing.assert_allclose(sp.psi(i, -xx), p * sp.psi(i, xx), atol=1e-13)
    _check_roots_against_det(sp, np.array(x), np.array(g))


def test_all_repulsive_has_no_states():
    x = [0.0, 1.0, 2.5]
    g = [-1.0, -2.0, -0.5]
    sp = point_spectrum(x, alpha_from_g(g))
    assert sp.n_states == 0
    assert sp.kappa.shape == (0,) and sp.energy.shape == (0,)
    assert sp.coefficients.shape == (0, 3)
    count, slope = zero_energy_solution(x, alpha_from_g(g))
    assert count == 0 and slope > 0
    # single repulsive point: psi = 1 left, slope jumps by -2 g psi = +2|g|
    assert zero_energy_solution([0.0], alpha_from_g([-0.8])) == (0, pytest.approx(1.6, rel=1e-15))


def test_zero_energy_solution_by_hand():
    # Piecewise-linear zero-energy solution in exact rational arithmetic
    # (fractions.Fraction), derived by hand: psi = 1, psi' = 0 on the left, slope
    # jumps by -2 g_i psi(x_i), psi advances linearly in between.
    x = [Fraction(0), Fraction(3, 2), Fraction(5, 2), Fraction(4)]
    g = [Fraction(1, 2), Fraction(-1, 4), Fraction(3, 2), Fraction(2, 5)]
    psi, slope, values = Fraction(1), Fraction(0), []
    for i, (xi, gi) in enumerate(zip(x, g)):
        if i:
            psi += slope * (xi - x[i - 1])
        values.append(psi)
        slope -= 2 * gi * psi
    sign_changes = sum(1 for a, b in zip(values, values[1:]) if a * b < 0)
    tail = 1 if psi * slope < 0 else 0
    count, s = zero_energy_solution([float(v) for v in x], alpha_from_g([float(v) for v in g]))
    assert s == pytest.approx(float(slope), rel=1e-14)
    assert count == sign_changes + tail
    assert count == point_spectrum([float(v) for v in x], alpha_from_g([float(v) for v in g])).n_states


# ---------------------------------------------------------------------------
# nodes and parity


@pytest.mark.parametrize("n_points,spacing", [(3, 1.0), (4, 1.5), (5, 2.0), (6, 0.9)])
def test_symmetric_chain_parity_alternates(n_points, spacing):
    # oscillation theorem (Courant & Hilbert, Methods of Mathematical Physics I,
    # ch. VI; from memory): state n has n nodes; in a mirror-symmetric potential
    # its parity is (-1)^n
    g = 1.0
    x = (np.arange(n_points) - 0.5 * (n_points - 1)) * spacing
    sp = point_spectrum(x, alpha_from_g(np.full(n_points, g)))
    assert list(sp.nodes) == list(range(sp.n_states))
    assert list(sp.parity) == [(-1) ** i for i in range(sp.n_states)]
    xx = np.linspace(0.0, 3 * spacing * n_points, 80)
    for i, p in enumerate(sp.parity):
        np.testing.assert_allclose(sp.psi(i, -xx), p * sp.psi(i, xx), atol=1e-12)


def test_nonuniform_symmetric_set_and_asymmetric_parity_zero():
    x = np.array([-3.0, -0.7, 0.7, 3.0])
    g = np.array([0.9, 2.0, 2.0, 0.9])
    sp = point_spectrum(x, alpha_from_g(g))
    assert list(sp.parity) == [(-1) ** i for i in range(sp.n_states)]
    assert list(sp.nodes) == list(range(sp.n_states))
    assert np.all(sp.parity[: sp.n_states] != 0)
    # break the symmetry by 1e-6: parity is no longer defined
    g2 = g.copy()
    g2[0] *= 1 + 1e-6
    assert np.all(point_spectrum(x, alpha_from_g(g2)).parity == 0)
    # within 1e-13 relative it still counts as symmetric
    g3 = g.copy()
    g3[0] *= 1 + 1e-13
    assert np.all(point_spectrum(x, alpha_from_g(g3)).parity != 0)


# ---------------------------------------------------------------------------
# binding thresholds


def test_threshold_symmetric_pair_vs_separation():
    g = 0.8
    th = binding_thresholds(lambda d: [-0.5 * d, 0.5 * d], lambda d: alpha_from_g([g, g]), 0.1, 5.0)
    assert len(th) == 1
    assert isinstance(th[0], Threshold)
    # d_c = 1/g (common practice, no source)
    assert th[0].value == pytest.approx(1.0 / g, rel=1e-10)
    assert th[0].direction == 1 and th[0].state == 1


def test_threshold_symmetric_pair_nm_mev_units():
    # in nm-meV: d_c = hbar^2/(m alpha) = 2 C / (m alpha)
    mass, alpha = 0.067, 80.0
    th = binding_thresholds(lambda d: [0.0, d], lambda d: [alpha, alpha], 0.5, 40.0,
                            mass=mass, hbar2_2me=NM_MEV_C)
    assert len(th) == 1
    assert th[0].value == pytest.approx(2 * NM_MEV_C / (mass * alpha), rel=1e-10)


def test_threshold_unbinding_direction():
    # separation decreasing with p: the odd state unbinds at d = 1/g, p = 3 - 1/g
    g = 1.0
    th = binding_thresholds(lambda p: [0.0, 3.0 - p], lambda p: alpha_from_g([g, g]), 0.0, 2.9)
    assert len(th) == 1
    assert th[0].value == pytest.approx(3.0 - 1.0 / g, rel=1e-10)
    assert th[0].direction == -1 and th[0].state == 1


def test_threshold_strength_family():
    # fixed d, coupling g = p: odd state binds at g d = 1
    d = 2.0
    th = binding_thresholds(lambda p: [0.0, d], lambda p: alpha_from_g([p, p]), 0.05, 3.0)
    assert [(t.state, t.direction) for t in th] == [(1, 1)]
    assert th[0].value == pytest.approx(1.0 / d, rel=1e-10)


@pytest.mark.parametrize("g1,g2", [(1.0, 2.5), (0.3, 0.9), (2.0, 0.5)])
def test_threshold_asymmetric_pair(g1, g2):
    # Hand derivation from the zero-energy solution: psi = 1 left of x1 = 0;
    # after x1 the slope is -2 g1; psi(d) = 1 - 2 g1 d; after x2 the slope is
    # -2 g1 - 2 g2 (1 - 2 g1 d) = -2 (g1 + g2) + 4 g1 g2 d, which vanishes at
    # d_c = (g1 + g2) / (2 g1 g2) = (1/g1 + 1/g2)/2 (matches the stated formula).
    d_c = (g1 + g2) / (2 * g1 * g2)
    th = binding_thresholds(lambda d: [0.0, d], lambda d: alpha_from_g([g1, g2]), 0.05, 3 * d_c)
    assert len(th) == 1
    assert th[0].value == pytest.approx(d_c, rel=1e-10)
    assert th[0].direction == 1 and th[0].state == 1
    assert point_spectrum([0, 0.99 * d_c], alpha_from_g([g1, g2])).n_states == 1
    assert point_spectrum([0, 1.01 * d_c], alpha_from_g([g1, g2])).n_states == 2


def test_threshold_repulsive_neighbour_kills_binding():
    # Same derivation with g2 < 0, |g2| > g1: the tail slope is
    # -2 (g1 + g2) + 4 g1 g2 d > 0 for small d (no state at all) and crosses zero
    # at d_c = (g1 + g2)/(2 g1 g2) = (1/g1 - 1/|g2|)/2 where the only state binds.
    g1, g2 = 1.0, -3.0
    d_c = (g1 + g2) / (2 * g1 * g2)
    th = binding_thresholds(lambda d: [0.0, d], lambda d: alpha_from_g([g1, g2]), 0.01, 4.0)
    assert len(th) == 1
    assert th[0].value == pytest.approx(d_c, rel=1e-10)
    assert th[0].direction == 1 and th[0].state == 0
    assert point_spectrum([0, 0.9 * d_c], alpha_from_g([g1, g2])).n_states == 0
    assert point_spectrum([0, 1.1 * d_c], alpha_from_g([g1, g2])).n_states == 1


def test_threshold_three_equal_points():
    # Hand derivation (zero-energy solution, spacing s, u = g s): psi = 1, 1 - 2u,
    # 1 - 6u + 4u^2 at the three points; final slope
    # g (-6 + 16 u - 8 u^2) = 0  <=>  4u^2 - 8u + 3 = 0  <=>  u = 1/2 or u = 3/2.
    g = 1.25
    th = binding_thresholds(lambda s: [-s, 0.0, s], lambda s: alpha_from_g([g, g, g]), 0.05, 4.0)
    assert [(t.state, t.direction) for t in th] == [(1, 1), (2, 1)]
    assert th[0].value == pytest.approx(0.5 / g, rel=1e-10)
    assert th[1].value == pytest.approx(1.5 / g, rel=1e-10)


# ---------------------------------------------------------------------------
# robustness


def test_near_degenerate_pair_gd30_resolved():
    # splitting kappa_e - kappa_o ~ 2 g e^{-g d} ~ 1.9e-13 g, i.e. ~850 ulps
    g, t = 1.0, 30.0
    d = t / g
    sp = point_spectrum([0.0, d], alpha_from_g([g, g]))
    ref_e, ref_o = lambert_pair(t)
    assert sp.n_states == 2 and sp.kappa[0] > sp.kappa[1]
    assert sp.kappa[0] * d == pytest.approx(ref_e, rel=1e-15)
    assert sp.kappa[1] * d == pytest.approx(ref_o, rel=1e-15)
    # difference from the reference function directly (lambertw at tiny args)
    split_ref = (lambertw(t * math.exp(-t)).real - lambertw(-t * math.exp(-t)).real) / d
    assert sp.kappa[0] - sp.kappa[1] == pytest.approx(split_ref, rel=1e-2)
    assert list(sp.parity) == [1, -1] and list(sp.nodes) == [0, 1]


@pytest.mark.parametrize("t", [40.0, 80.0])
def test_near_degenerate_pair_below_double_precision(t):
    # g d = 40: the splitting (~1e-17 relative) is below double precision, so both
    # kappas equal g to rounding (Lambert W: kappa d = t +- ~t e^{-t}); the two
    # states must still both be found, as distinct orthonormal states of opposite
    # parity.
    g = 0.9
    d = t / g
    sp = point_spectrum([-0.5 * d, 0.5 * d], alpha_from_g([g, g]))
    assert sp.n_states == 2
    np.testing.assert_allclose(sp.kappa, g, rtol=4 * np.finfo(float).eps)
    assert list(sp.parity) == [1, -1] and list(sp.nodes) == [0, 1]
    xx = np.linspace(0, d, 41)
    for i, p in enumerate(sp.parity):
        np.testing.assert_allclose(sp.psi(i, -xx), p * sp.psi(i, xx), atol=1e-14)
    pts = [-0.5 * d, 0.5 * d]
    assert integrate(lambda x: sp.psi(0, x) * sp.psi(1, x), pts) == pytest.approx(0.0, abs=1e-12)
    for i in range(2):
        assert integrate(lambda x: sp.psi(i, x) ** 2, pts) == pytest.approx(1.0, abs=1e-11)


def test_four_far_apart_wells():
    # four equal wells with g d = 40: all four states found, nodes 0..3, parity
    # alternating, even though all kappa agree to rounding
    g = 1.0
    x = np.array([-60.0, -20.0, 20.0, 60.0])
    sp = point_spectrum(x, alpha_from_g([g] * 4))
    assert sp.n_states == 4
    np.testing.assert_allclose(sp.kappa, g, rtol=1e-15)
    assert list(sp.nodes) == [0, 1, 2, 3]
    assert list(sp.parity) == [1, -1, 1, -1]


def test_scaling_invariance():
    # x -> L x, g -> g / L maps H to H / L^2: kappa -> kappa / L (exact scaling,
    # common practice, no source)
    x = np.array([0.0, 0.8, 2.1, 2.6])
    g = np.array([1.1, 0.7, 1.9, 1.3])
    sp = point_spectrum(x, alpha_from_g(g))
    for L in [1e-3, 7.0, 1e4]:
        sl = point_spectrum(L * x, alpha_from_g(g / L))
        np.testing.assert_allclose(sl.kappa * L, sp.kappa, rtol=1e-13)


# ---------------------------------------------------------------------------
# bad input


@pytest.mark.parametrize(
    "positions,strengths",
    [([], []), ([0.0, 1.0], [1.0]), ([0.0, 0.0], [1.0, 1.0]), ([0.0, np.nan], [1.0, 1.0]),
     ([0.0, 1.0], [1.0, np.inf]), ([[0.0, 1.0]], [[1.0, 1.0]]), (["a"], [1.0])],
)
def test_bad_points_raise_case_error(positions, strengths):
    with pytest.raises(CaseError) as err:
        point_spectrum(positions, strengths)
    assert err.value.key == "point"
    with pytest.raises(CaseError):
        zero_energy_solution(positions, strengths)


def test_bad_constants_and_indices():
    with pytest.raises(CaseError) as err:
        point_spectrum([0.0], [1.0], mass=0.0)
    assert err.value.key == "mass"
    with pytest.raises(CaseError) as err:
        point_spectrum([0.0], [1.0], hbar2_2me=-1.0)
    assert err.value.key == "hbar2_2me"
    with pytest.raises(CaseError):
        pair_closed_form(-1.0, 1.0)
    with pytest.raises(CaseError):
        pair_closed_form(1.0, 0.0)
    with pytest.raises(CaseError):
        critical_separation(0.0)
    sp = point_spectrum([0.0], [1.0])
    assert isinstance(sp, PointSpectrum)
    with pytest.raises(CaseError) as err:
        sp.psi(1, 0.0)
    assert err.value.key == "state"
    with pytest.raises(CaseError):
        binding_thresholds(lambda p: [0.0], lambda p: [1.0], 2.0, 1.0)


def test_thresholds_consistent_with_counts_random_family():
    # every returned threshold must be where point_spectrum's count changes by one
    # in the stated direction, and the thresholds must add up to the total change
    # of the count over [lo, hi] (the count itself checked by the oscillation
    # theorem tests above)
    rng = np.random.default_rng(77)
    x0 = np.array([0.0, 0.7, 1.9, 2.4, 3.8])
    g = rng.uniform(0.3, 1.5, 5) * np.array([1, 1, -1, 1, 1])
    lo, hi = 0.05, 6.0
    th = binding_thresholds(lambda p: p * x0, lambda p: alpha_from_g(g), lo, hi)
    assert len(th) >= 2
    count = lambda p: point_spectrum(p * x0, alpha_from_g(g)).n_states  # noqa: E731
    assert count(hi) - count(lo) == sum(t.direction for t in th)
    for t in th:
        before, after = count(t.value * (1 - 1e-7)), count(t.value * (1 + 1e-7))
        assert after - before == t.direction
        assert t.state == min(before, after)
        # the zero-energy tail slope vanishes there
        assert abs(zero_energy_solution(t.value * x0, alpha_from_g(g))[1]) < 1e-9 * np.sum(np.abs(g))


@pytest.mark.parametrize("d", [20.0, 40.0, 150.0])
def test_node_in_exponentially_small_tail(d):
    # Two unequal wells far apart: the state bound to the weaker well (kappa ~ g1)
    # has its node between the wells and a tail on the stronger well of relative
    # size ~e^{-g1 d} (1e-18 for d = 40, 1e-66 for d = 150), far below the
    # eigenvector's absolute accuracy.  Row 2 of psi(x_i) = sum_j
    # exp(-kappa|x_i - x_j|) g_j psi(x_j) / kappa (the secular equation, see
    # det_secular) gives exactly psi(x2)/psi(x1) = g1 e^{-kappa d} / (kappa - g2)
    # (derived by hand), negative since kappa ~ g1 < g2.
    g1, g2 = 1.0, 2.0
    sp = point_spectrum([0.0, d], alpha_from_g([g1, g2]))
    assert sp.n_states == 2
    assert list(sp.nodes) == [0, 1]
    k = sp.kappa[1]
    assert k == pytest.approx(g1, rel=1e-15)
    ratio_ref = g1 * math.exp(-k * d) / (k - g2)
    ratio = sp.psi(1, d) / sp.psi(1, 0.0)
    assert ratio == pytest.approx(ratio_ref, rel=1e-12)
    assert sp.psi(1, d + 3.0) < 0 < sp.psi(1, -3.0)


def test_node_where_the_tail_underflows():
    # as above with g1 d = 800: psi(x2)/psi(x1) ~ e^{-800} underflows to zero in
    # double precision, but the stored value keeps the (negative) sign and the
    # node is still counted
    sp = point_spectrum([0.0, 800.0], alpha_from_g([1.0, 2.0]))
    assert list(sp.nodes) == [0, 1]
    v = sp.point_values[1, 1]
    assert v == 0.0 and math.copysign(1.0, v) < 0
    # three wells: the state on the weakest well has two nodes; applying the
    # two-point relation twice, psi(1600) has the sign of
    # g2 psi(800) / (kappa - g3) > 0, which only survives in the sign bit
    sp = point_spectrum([0.0, 800.0, 1600.0], alpha_from_g([1.0, 2.0, 3.0]))
    assert list(sp.nodes) == [0, 1, 2]
    tail = sp.point_values[2, 1:]
    assert np.all(tail == 0.0)
    assert [math.copysign(1.0, t) for t in tail] == [-1.0, 1.0]


def test_sign_in_deep_valley_between_lobes():
    # wells g = 1, 2, 1 at -40, 0, 40: state 0 sits on the middle well; states 1
    # and 2 are the odd/even pair on the outer wells (splitting far below
    # rounding).  State 2 has 2 nodes, so its value at the middle point, of
    # relative size ~e^{-40}, must be negative.  The middle row of the secular
    # equation (see det_secular) gives exactly, derived by hand,
    # psi(0) = g e^{-40 kappa} (psi(-40) + psi(40)) / (kappa - g_m).
    g, gm, h = 1.0, 2.0, 40.0
    sp = point_spectrum([-h, 0.0, h], alpha_from_g([g, gm, g]))
    assert sp.n_states == 3
    assert list(sp.nodes) == [0, 1, 2] and list(sp.parity) == [1, -1, 1]
    k = sp.kappa[2]
    ref = g * math.exp(-h * k) * (sp.psi(2, -h) + sp.psi(2, h)) / (k - gm)
    assert sp.psi(2, 0.0) == pytest.approx(ref, rel=1e-12)
    assert sp.psi(2, 0.0) < 0


@pytest.mark.parametrize("eps", [1e-3, 1e-6])
def test_weakly_bound_state_normalised(eps):
    # near threshold (kappa d ~ 2 eps) the odd state is spread over ~1/kappa;
    # its norm, <x> = 0 and the orthogonality to the even state by quadrature
    g, d = 1.0, 1.0 + eps
    sp = point_spectrum([-0.5 * d, 0.5 * d], alpha_from_g([g, g]))
    assert sp.n_states == 2
    pts = [-0.5 * d, 0.5 * d]
    lt = 1.0 / sp.kappa[1]
    assert integrate(lambda x: sp.psi(1, x) ** 2, pts, tail_length=lt) == pytest.approx(1.0, abs=1e-9)
    assert integrate(lambda x: sp.psi(0, x) * sp.psi(1, x), pts, tail_length=lt) == pytest.approx(0.0, abs=1e-9)
    assert abs(sp.mean_x(1)) < 1e-9 / sp.kappa[1]
    # psi_odd = A sign(x) (1 - e^{-kappa d}) e^{-kappa |x|}-like tails: the spread
    # is dominated by the tails, 1/(sqrt(2) kappa) to leading order (same Gamma
    # integral as the single point)
    assert sp.spread(1) == pytest.approx(1.0 / (math.sqrt(2.0) * sp.kappa[1]), rel=5 * eps)


def test_small_centre_value_with_shielded_outer_wells():
    # Outer attractive wells (g = 6) shielded by strongly repulsive points
    # (g = -50) and a weak centre well: the even ground state has a centre value
    # ~1e-18 of its maximum, at the level of rounding in an eigenvector.  Its
    # sign and size follow exactly from the centre row of the secular equation
    # (see det_secular), derived by hand:
    #   psi(0) (kappa - g_0) = sum_{j != 0} g_j e^{-kappa |x_j|} psi(x_j),
    # and the state must have no node.
    x = np.array([-6.5, -5.8, 0.0, 5.8, 6.5])
    g = np.array([6.0, -50.0, 0.25, -50.0, 6.0])
    sp = point_spectrum(x, alpha_from_g(g))
    assert list(sp.nodes) == list(range(sp.n_states))
    assert list(sp.parity) == [(-1) ** i for i in range(sp.n_states)]
    k = sp.kappa[0]
    others = [0, 1, 3, 4]
    ref = sum(g[j] * math.exp(-k * abs(x[j])) * sp.psi(0, x[j]) for j in others) / (k - g[2])
    assert 0 < ref < 1e-15 * sp.psi(0, x[0])
    assert sp.psi(0, 0.0) == pytest.approx(ref, rel=1e-10)
