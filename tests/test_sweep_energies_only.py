"""Energies-only sweeps: the same energies, errors, flags and splittings as a full sweep, nothing that needs psi.

References: the full sweep of the same points (each of its energies is checked against single solves and the
closed forms elsewhere: tests/test_sweep.py, tests/test_closed_forms.py), and the oscillation theorem (state n
of a 1D bound-state problem has exactly n nodes; Courant and Hilbert, vol. 1, ch. VI) for the sign check.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import fdsolver
from fdsolver.boundstates import result as R
from fdsolver.boundstates.driver import solve_potential
from fdsolver.cli import main
from fdsolver.parallel import checkpoint as ck
from fdsolver.parallel.executors import SerialExecutor
from fdsolver.scans import sweep as sw

CASES = Path(__file__).resolve().parent.parent / "cases"
SQUARE = str(CASES / "double_square.toml")
#: what an energies-only sweep leaves out (each needs the wavefunctions)
WAVE_VARIABLES = {"mean_x", "spread", "wall_state", "probability_inside", "region_name", "dipole",
                  "oscillator_strength", "oscillator_strength_error", "reference_mass"}


def _sweep(case_path, varies, energies_only, **kw):
    case = fdsolver.load_case(case_path)
    spec = sw.plan_sweep(case, sw.sweep_axes(varies, case), energies_only=energies_only, chunk=4)
    return sw.run_sweep(spec, SerialExecutor(), **kw)


@pytest.mark.parametrize("case, varies", [
    (SQUARE, ["d=0.2:6:9", "depth=60:160:3"]),            # the odd state appears along d
    (str(CASES / "coupled_wells.toml"), None),             # a layer stack with its own [sweep] axes
    (str(CASES / "impurity_pair.toml"), None),             # point terms in a well
])
def test_energies_only_keeps_the_full_sweeps_numbers_bit_for_bit(case, varies):
    c = fdsolver.load_case(case)
    if varies is None:
        name = next(iter(c.params))
        v = c.params[name]
        varies = [f"{name}={0.8 * v}:{1.2 * v}:7"]
    full = _sweep(case, varies, False)
    light = _sweep(case, varies, True)
    assert set(full.data_vars) - set(light.data_vars) == WAVE_VARIABLES & set(full.data_vars)
    assert not WAVE_VARIABLES & set(light.data_vars)
    for name in light.data_vars:
        a, b = full[name].values, light[name].values
        assert a.shape == b.shape and a.dtype == b.dtype, name
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), name
    assert np.isfinite(light.energy.values).any()


def test_without_wavefunctions_the_convergence_and_notes_are_the_same():
    for name in ("double_square", "coupled_wells", "graded_well", "sheet_in_well", "impurity_pair"):
        case = fdsolver.load_case(str(CASES / f"{name}.toml"))
        a = solve_potential(case.potential, case.domain, case.settings)
        b = solve_potential(case.potential, case.domain, case.settings, wavefunctions=False)
        assert np.array_equal(a.energy, b.energy) and np.array_equal(a.energy_error, b.energy_error), name
        assert np.array_equal(a.converged, b.converged) and a.messages == b.messages, name
        assert b.psi.shape == (a.energy.size, 0) and np.isnan(b.mean_x).all()


def test_the_sign_check_flags_a_state_with_too_many_nodes():
    # state 1 may change sign once (oscillation theorem); a resolved psi with four sign changes is flagged
    x = np.linspace(-1.0, 1.0, 401)
    psi = np.vstack([np.cos(0.5 * np.pi * x), np.sin(2.0 * np.pi * x + 0.3)])  # 0 and 4 sign changes inside
    index = np.array([0, 1])
    conv = np.array([True, True])
    messages: list[str] = []
    R._check_signs((x, psi), index, conv, messages)
    assert conv.tolist() == [True, False]
    assert len(messages) == 1 and "state 1" in messages[0] and "4 times" in messages[0]
    conv, messages = np.array([True, True]), []
    R._check_signs((x, psi), np.array([0, 4]), conv, messages)
    assert conv.tolist() == [True, True] and not messages


def test_energies_only_with_psi_is_refused_and_writes_nothing(tmp_path, capsys):
    out = tmp_path / "s.nc"
    rc = main(["sweep", SQUARE, "--vary", "d=1:3:3", "--energies-only", "--save-psi", "-o", str(out), "-q"])
    err = capsys.readouterr().err.strip()
    assert rc == 2 and "\n" not in err and "--energies-only" in err and "--save-psi" in err
    assert not out.exists() and not ck.path_for(out).exists()


def test_a_checkpoint_is_not_resumed_with_the_other_record(tmp_path, capsys):
    out = tmp_path / "s.nc"
    calls = []

    def stop(n):
        calls.append(n)
        if len(calls) >= 1:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        _sweep(SQUARE, ["d=2:5:12"], True, output=out, progress=stop)
    before = ck.path_for(out).read_bytes()
    rc = main(["sweep", SQUARE, "--vary", "d=2:5:12", "-o", str(out), "--resume", "--executor", "serial", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and "different sweep" in err and "--energies-only" in err and "not set" in err
    assert ck.path_for(out).read_bytes() == before and not out.exists()
    rc = main(["sweep", SQUARE, "--vary", "d=2:5:12", "-o", str(out), "--resume", "--energies-only", "--executor",
               "serial", "-q"])
    assert rc == 0 and out.exists() and not ck.path_for(out).exists()
    done = fdsolver.open_run(out)
    assert "mean_x" not in done and "energies-only" in done.attrs["history"]
