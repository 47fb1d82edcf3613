"""A potential keeps facts the solver works out from it alone (its open-line bound count, whether it leaks, its
largest length, the box facts of a domain and tolerance, its decay walks, its grid cones:
``Potential.remembered``).  A solve that finds them kept must give the same result, to the last bit, as a solve
of a new potential equal to it that works them out again, whatever the earlier solves asked for (another
tolerance, another domain, another energy window, other grid settings).  The reference is fdsolver's own
solve of a fresh potential: this checks that no kept fact leaks from one question into another.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
from same_results import fields_of, same

from fdsolver.boundstates.settings import SolveSettings
from fdsolver.input.case import load_case
from fdsolver.model.domain import Domain
from fdsolver.runs import solve_case

CASES = Path(__file__).resolve().parent.parent / "cases"


def _variants(case):
    """The case asked in several ways: its own, a looser and a tighter tolerance, a window around the lowest
    states, hard walls around the structure, and a coarser grid."""
    s = case.settings
    lo, hi = case.potential.support()
    width = hi - lo
    walls = Domain("hard", lo - 0.6 * width, hi + 0.6 * width)
    first = solve_case(case)
    window = None
    if first.energy.size:
        e0 = float(first.energy[0])
        window = (e0 - 1.0, e0 + 0.5 * abs(e0) + 1.0)
    out = [case,
           dataclasses.replace(case, settings=dataclasses.replace(s, tolerance=1e-6)),
           dataclasses.replace(case, settings=dataclasses.replace(s, tolerance=1e-10)),
           dataclasses.replace(case, domain=walls),
           dataclasses.replace(case, settings=dataclasses.replace(
               s, grid=dataclasses.replace(s.grid, wave_fraction=1.5 * s.grid.wave_fraction)))]
    if window is not None:
        out.append(dataclasses.replace(case, settings=dataclasses.replace(s, energy_window=window)))
    return out


@pytest.mark.parametrize("name", ["double_square", "coupled_wells", "impurity_pair", "sheet_in_well",
                                  "graded_well", "double_barrier"])
def test_kept_facts_give_the_fresh_result(name):
    case = load_case(CASES / f"{name}.toml")
    assert isinstance(case.settings, SolveSettings)
    variants = _variants(case)
    kept = [solve_case(v) for v in variants]  # one potential for all: the later solves find its facts kept
    for v in reversed(variants):  # the other way round too, so each question follows others
        solve_case(v)
    for v, got in zip(variants, kept):
        fresh = solve_case(dataclasses.replace(v, potential=dataclasses.replace(v.potential)))
        a, b = fields_of(got), fields_of(fresh)
        differ = [k for k in a if not same(a[k], b[k])]
        assert not differ, (name, v.domain, v.settings.tolerance, differ)
    # the facts were indeed kept (else this test checks nothing)
    assert case.potential._facts, "the potential kept no facts"
