"""Assertions shared by the acceptance tests: honest error bars, splittings, and notes that agree with the numbers.

They take the solver's result object by duck typing (attributes ``energy``, ``energy_error``,
``converged``, ``index``, ``splitting``, ``splitting_error``, ``splitting_bound``, ``bound_count``,
``messages``); nothing of fdsolver is imported here.

Round-off allowance: a double-precision number carries its value to half an ulp, so a comparison of a
double with an exact reference allows ``ROUND_ULPS`` ulps of the larger magnitude on top of the error
bar (common practice, no source).
"""

from __future__ import annotations

import re

import numpy as np

ROUND_ULPS = 4.0
EPS = np.finfo(float).eps


def round_allowance(*values: float) -> float:
    return ROUND_ULPS * EPS * max(abs(float(v)) for v in values)


def assert_energies(sol, ref: list[float], *, rel: float, what: str, index=None, ref_error=None, scale=None) -> None:
    """Every returned state against the exact level of the same Sturm index.

    * converged is True;
    * honest bar: |E - E_ref| <= energy_error (+ round-off allowance);
    * accuracy: |E - E_ref| <= rel * |E_ref| (relative to |E|, as README's [solve] tolerance says), or
      rel * scale(E_ref) where the zero of energy is arbitrary and a ``scale`` function is given.
    ``ref`` is indexed by the global Sturm index (``index`` overrides ``sol.index``); ``ref_error`` (same
    indexing) is the reference's own error estimate, added to the bar where the reference is not exact.
    """
    idx = np.asarray(sol.index if index is None else index)
    rows = []
    bad = False
    for k, i in enumerate(idx):
        e, err, conv = float(sol.energy[k]), float(sol.energy_error[k]), bool(sol.converged[k])
        r = float(ref[i])
        r_err = 0.0 if ref_error is None else float(ref_error[i])
        true = abs(e - r)
        honest = true <= err + r_err + round_allowance(e, r)
        size = abs(r) if scale is None else float(scale(r))
        accurate = true <= rel * size
        ok = conv and honest and accurate
        bad |= not ok
        rows.append(f"  index {i}: E = {e!r}, ref = {r!r}, |dE| = {true:.3e}, bar = {err:.3e}, "
                    f"rel = {true / max(size, 1e-300):.2e}, converged = {conv}"
                    + ("" if ok else "   <-- " + ", ".join(
                        s for s, f in (("not converged", conv), ("bar too small", honest), (f"above {rel:g} rel", accurate))
                        if not f)))
    assert not bad, f"{what}:\n" + "\n".join(rows)


def assert_splittings(sol, ref: list, *, what: str, resolvable_rel: float = 1e-7, ref_error=None) -> None:
    """Splittings E_{k+1} - E_k (consecutive returned states) against exact differences.

    ``ref`` holds the reference energies by Sturm index, in extended precision (mpmath numbers or floats),
    so that their differences are exact even where they are far below double precision; ``ref_error``
    (same indexing) is the reference's own error estimate where it is not exact.

    * a resolved splitting agrees with the reference within ``splitting_error`` (+ round-off of E);
    * a splitting flagged as an upper bound is at least the true splitting, and the true splitting is
      below ``resolvable_rel`` * |E| (a splitting of 1e-7 of E is far above what double precision
      resolves, so it must not be given as a bound: common practice, no source).
    """
    idx = np.asarray(sol.index)
    n = idx.size
    assert len(sol.splitting) == max(n - 1, 0), f"{what}: {len(sol.splitting)} splittings for {n} states"
    rows, bad = [], False
    for k in range(n - 1):
        i, j = int(idx[k]), int(idx[k + 1])
        true = float(ref[j] - ref[i])
        s, serr, bound = float(sol.splitting[k]), float(sol.splitting_error[k]), bool(sol.splitting_bound[k])
        allow = round_allowance(float(ref[i]), float(ref[j]))
        if ref_error is not None:
            allow += float(ref_error[i]) + float(ref_error[j])
        if bound:
            ok = true <= s + allow and true < resolvable_rel * abs(float(ref[i]))
        else:
            ok = abs(s - true) <= serr + allow
        bad |= not ok
        rows.append(f"  E[{j}] - E[{i}]: solver {s:.6e} +- {serr:.2e} (bound={bound}), exact {true:.6e}"
                    + ("" if ok else "   <--"))
    assert not bad, f"{what}:\n" + "\n".join(rows)


def assert_ordered(sol, what: str) -> None:
    """Levels in order and splittings that can be true.

    In one dimension bound states are non-degenerate (Landau & Lifshitz, Quantum Mechanics, sec. 21), so
    E_{k+1} - E_k > 0: energies must not decrease with the index (equal is allowed, for doublets split
    below double precision), an upper bound of a splitting must be positive, and a resolved splitting
    must be positive within its bar.
    """
    e = np.asarray(sol.energy, dtype=float)
    assert np.all(np.diff(e) >= 0), f"{what}: energies decrease with the index: {e!r}"
    for k in range(len(sol.splitting)):
        s, serr, bound = float(sol.splitting[k]), float(sol.splitting_error[k]), bool(sol.splitting_bound[k])
        if bound:
            assert s > 0, f"{what}: splitting {k} given as an upper bound {s!r}, which no splitting is below"
        else:
            assert s + serr > 0, f"{what}: splitting {k} = {s!r} +- {serr!r} is negative"


_NOT_CONV = re.compile(r"state (-?\d+) is not converged")
_ABOVE = re.compile(r"estimated error ([0-9.eE+-]+) is above the tolerance ([0-9.eE+-]+)")
_EXIST = re.compile(r"(\d+) bound state\(s\) exist, (\d+) not resolved")
_MORE = re.compile(r"(\d+) more bound state\(s\) exist above the (\d+) returned")
_NONE = re.compile(r"no bound state|binds nothing", re.IGNORECASE)
_VANISHED = re.compile(r"state\(s\) (-?\d+) to (-?\d+) [^.]*\(not resolved\)")


def assert_notes_agree(sol, what: str) -> None:
    """No note contradicts the numbers it sits beside.

    * "state N is not converged" only for a returned state N whose converged flag is False;
    * "estimated error X is above the tolerance Y" only with X > Y;
    * "N bound state(s) exist, M not resolved" only with N == bound_count and 0 < M <= N;
    * "K more bound state(s) exist above the R returned" only with R == number returned and
      R + K <= bound_count;
    * "no bound state" / "binds nothing" only when nothing is bound (bound_count 0, no state returned);
    * "state(s) A to B ... (not resolved)" names no state that is returned as converged.
    """
    idx = [int(i) for i in np.asarray(sol.index)]
    conv = {i: bool(c) for i, c in zip(idx, np.asarray(sol.converged))}
    n = len(idx)
    problems = []
    for msg in sol.messages:
        for m in _NOT_CONV.finditer(msg):
            i = int(m.group(1))
            if i not in conv:
                problems.append(f"note names state {i}, which is not returned: {msg!r}")
            elif conv[i]:
                problems.append(f"note says state {i} is not converged, but its flag says converged: {msg!r}")
        for m in _ABOVE.finditer(msg):
            if not float(m.group(1)) > float(m.group(2)):
                problems.append(f"note claims {m.group(1)} is above {m.group(2)}: {msg!r}")
        for m in _EXIST.finditer(msg):
            whole, missing = int(m.group(1)), int(m.group(2))
            if whole != sol.bound_count or not 0 < missing <= whole:
                problems.append(f"note '{m.group(0)}' but bound_count = {sol.bound_count}, {n} returned")
        for m in _MORE.finditer(msg):
            more, returned = int(m.group(1)), int(m.group(2))
            if returned != n or returned + more > sol.bound_count:
                problems.append(f"note '{m.group(0)}' but {n} returned, bound_count = {sol.bound_count}")
        for m in _VANISHED.finditer(msg):
            named = set(range(int(m.group(1)), int(m.group(2)) + 1))
            if any(conv.get(i, False) for i in named):
                problems.append(f"note calls states {sorted(named)} not resolved, but they are returned as converged: {msg!r}")
        if _NONE.search(msg) and (n > 0 or sol.bound_count > 0):
            problems.append(f"note denies bound states, but bound_count = {sol.bound_count}, {n} returned: {msg!r}")
    assert not problems, f"{what}:\n  " + "\n  ".join(problems) + f"\n  all notes: {sol.messages!r}"
