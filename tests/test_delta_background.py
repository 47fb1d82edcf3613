"""Zero-range check on a background (`fdsolver delta-check` of a case whose points sit on layers, fields or walls).

Outside references: a point interaction inside an infinite square well, and its square-well replacement, have
exact matching conditions solved here with mpmath (derived in the docstrings; independent of the code under test).
Invented parameters.
"""

from __future__ import annotations

from pathlib import Path

import mpmath as mp
import numpy as np
import pytest

import fdsolver
from fdsolver.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"
L, X0, ALPHA = 2.0, 0.7, 1.5  # box [0, L], point at X0, strength alpha (atomic units, m = 1): invented


def _box_case(extra=None) -> dict:
    case = {"title": "point in a box (invented)", "units": "atomic",
            "potential": [{"shape": "point", "name": "sheet", "center": X0, "strength": ALPHA}],
            "domain": {"boundary": "hard", "left": 0.0, "right": L}, "solve": {"max_states": 3}}
    case.update(extra or {})
    return case


def _u(e, x):
    """sin(kx)/k and its derivative cos(kx), k = sqrt(2E): entire in E, real for E < 0 too (sinh(kappa x)/kappa)."""
    k = mp.sqrt(2 * mp.mpf(e)) if e != 0 else mp.mpf(10) ** -30
    return mp.re(mp.sin(k * x) / k), mp.re(mp.cos(k * x))


def _point_condition(e):
    """Derived here: H = -(1/2) d2/dx2 - alpha delta(x - x0), psi(0) = psi(L) = 0.  Left psi = u(x), right
    phi = u(L - x); continuity and the jump psi'(x0+) - psi'(x0-) = -2 alpha psi(x0) give
    phi'(x0) psi(x0) - psi'(x0) phi(x0) + 2 alpha psi(x0) phi(x0) = 0, with phi'(x) = -u'(L - x)."""
    p, dp = _u(e, X0)
    q, dq = _u(e, L - X0)
    return -dq * p - dp * q + 2 * ALPHA * p * q


def _square_condition(e, w):
    """Derived here: the point replaced by V = -alpha/w on |x - x0| < w/2.  psi = u(x) up to a = x0 - w/2, then
    cos/sin with q = sqrt(2 (E + alpha/w)) across the well, and it must meet phi = u(L - x) at b = x0 + w/2 with
    equal log-derivatives: psi(b) phi'(b) - psi'(b) phi(b) = 0."""
    a, b = X0 - w / 2, X0 + w / 2
    p, dp = _u(e, a)
    q = mp.sqrt(2 * (mp.mpf(e) + ALPHA / mp.mpf(w)))
    pb = p * mp.cos(q * w) + dp * mp.sin(q * w) / q
    dpb = -p * q * mp.sin(q * w) + dp * mp.cos(q * w)
    f, df = _u(e, L - b)
    return pb * (-df) - dpb * f


def _root(f, guess):
    mp.mp.dps = 30
    return float(mp.findroot(f, mp.mpf(guess), tol=mp.mpf(10) ** -25))


def test_point_in_a_box_against_exact_matching_conditions():
    ds = fdsolver.delta_check(fdsolver.case_from_dict(_box_case()), widths="0.001:0.1:3")
    assert ds.attrs["fdsolver_kind"] == "delta_background" and ds.sizes["state"] == 3
    for s in range(3):
        exact = _root(_point_condition, float(ds.energy_limit[s]))
        assert abs(float(ds.energy_limit[s]) - exact) < 1e-8 * max(1.0, abs(exact))
        assert abs(float(ds.energy_limit[s]) - exact) <= 10 * float(ds.energy_limit_error[s]) + 1e-12
        for i, w in enumerate(ds.width.values):
            fin = _root(lambda e, w=float(w): _square_condition(e, w), float(ds.energy[i, s]))
            assert abs(float(ds.energy[i, s]) - fin) < 1e-8 * max(1.0, abs(fin))
            # the archived deviation is the difference of the two exact roots to within both error bars
            assert abs(float(ds.energy_deviation[i, s]) - (fin - exact)) <= 2e-8 * max(1.0, abs(fin))
    # replacement depth alpha / w of a square well; widths in decay lengths 1/kappa = 1/(m alpha) (hbar = m = 1)
    assert np.allclose(ds.replacement_depth.values[:, 0], ALPHA / ds.width.values, rtol=1e-12)
    assert np.allclose(ds.width_in_decay_lengths.values[:, 0], ds.width.values * ALPHA, rtol=1e-12)


def test_first_order_law_on_the_narrowest_widths():
    # Derived here: a point alone, -alpha delta, replaced by a square well of width w and depth alpha/w has
    # kappa' = kappa (1 - kappa w / 3) + O(w^2) (expand k tan(k w/2) = kappa'), so dE = 2 kappa (w/3) |E0| =
    # w alpha^2 psi(x0)^2 / 3 with psi(x0)^2 = kappa (hbar = m = 1).  In the box the same local kink gives
    # dE_n = w alpha^2 psi_n(x0)^2 / 3 with psi_n the exact normalised state (built and integrated here by mpmath).
    ds = fdsolver.delta_check(fdsolver.case_from_dict(_box_case()), widths="0.0005:0.005:4")
    assert np.all(ds.resolved.values == 1)
    assert np.all(ds.energy_deviation.values[0] > 0)  # a finite well of the same strength binds less
    for s in (0, 1):  # state 2 has a node within 0.04 of x0: its psi(x0)^2 is small and the w^2 term competes
        e = _root(_point_condition, float(ds.energy_limit[s]))
        p, q = _u(e, X0)[0], _u(e, L - X0)[0]
        norm = mp.quad(lambda x, e=e, p=p, q=q: (_u(e, x)[0] / p) ** 2 if x < X0 else (_u(e, L - x)[0] / q) ** 2,
                       [0, X0, L])
        law = ALPHA**2 / float(norm) / 3 / abs(e)  # relative to |E - 0| (the box floor is the reference energy)
        assert abs(float(ds.law_exponent[s]) - 1) < 0.01
        assert abs(float(ds.law_coefficient[s]) / law - 1) < 3e-3
        assert np.allclose(ds.predicted_deviation.values[:, s], law * ds.width.values, rtol=1e-4)


def test_sheet_in_a_quantum_well_from_the_command_line(tmp_path, capsys):
    out, fig = tmp_path / "bg.nc", tmp_path / "bg.png"
    assert main(["delta-check", str(CASES / "sheet_in_well.toml"), "--widths", "0.01:2:4", "--tolerance", "1e-3",
                 "-o", str(out), "--plot", str(fig)]) == 0
    text = capsys.readouterr().out
    assert "exact point interactions" in text and "E - E_point [meV]" in text and "depth [meV]" in text
    ds = fdsolver.open_run(out)
    assert ds.energy_deviation.attrs["units"] == "meV" and ds.validity_width.attrs["units"] == "nm"
    assert fig.stat().st_size > 20_000
    # validity width: the tolerance lies between |deviation| at the neighbouring widths
    dev = np.abs(ds.deviation.values[:, 0])
    v = float(ds.validity_width[0])
    if dev[-1] > 1e-3:
        k = int(np.searchsorted(ds.width.values, v))
        assert dev[k - 1] < 1e-3 <= dev[k]
    assert main(["show", str(out)]) == 0


@pytest.mark.parametrize("argv, needle", [
    (["--map", "width=0.01:1:3", "--map", "alpha=10:50:3"], "drop --map"),
    (["--widths", "0.1:x:3"], "LO:HI:N"),
    (["--shape", "triangle"], "not a replacement shape"),
])
def test_bad_input_exit_2_one_line(tmp_path, capsys, argv, needle):
    out = tmp_path / "x.nc"
    assert main(["delta-check", str(CASES / "sheet_in_well.toml"), *argv, "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert needle in err and err.count("\n") == 1
    assert not out.exists()


def test_nothing_bound_is_refused(tmp_path, capsys):
    case = tmp_path / "none.toml"
    case.write_text('units = "nm-meV"\nmass = 0.067\n[[layer]]\nband_edge = 0.0\n[[layer]]\nthickness = 5.0\n'
                    'band_edge = 100.0\n[[layer]]\nband_edge = 0.0\n'
                    '[[potential]]\nshape = "point"\ncenter = 2.5\nstrength = -50.0\n')
    assert main(["delta-check", str(case), "-o", str(tmp_path / "x.nc")]) == 2
    err = capsys.readouterr().err
    assert "binds no state" in err and err.count("\n") == 1
