"""Energy-dependent (non-parabolic) mass, solved state by state as a fixed point.

Two-band Kane model: the conduction-band mass at energy E in a layer with band edge E_edge and gap
E_g is

    m(E) = m_edge [1 + (E - E_edge)/E_g]          (m in m_e, energies in one unit),

so a state of energy E sees the mass profile m(x, E) and E must solve E = F(E), where F(E') is the
energy of the same state (same index) computed with the profile m(x, E').  The model is valid for
|E - E_edge| well below E_g; :func:`kane_mass` refuses a factor 1 + (E - E_edge)/E_g below 0.05.
For holes in the hole picture the same formula applies to light holes (the two-band partner of the
conduction band); heavy holes are not coupled in this model.

The iteration (:func:`solve_nonparabolic`) takes two callables: ``mass_at_energy(E)`` builds the
mass profile for E (any object, e.g. per-layer masses from :func:`kane_mass`), and
``solve_at_mass(profile)`` returns ``(energy, energy_error, payload)`` of the wanted state with that
profile (payload: anything, e.g. the whole solve, handed back with the result).  Steps: one plain
step E1 = F(E0) from the parabolic energy E0, then secant steps on G(E) = F(E) - E.

Convergence criterion and error.  With the secant slope s = G'(E) (so F' = 1 + s; the Kane mass
gives -1 < F' < 0, a heavier mass lowers the energy), the last solved energy F(E_k) differs from the
fixed point E* by about G_k F'/(1 - F') = -G_k (1 + s)/s (first order in G_k; conservative once
the secant converges superlinearly).  The iteration stops when this is <= ``tolerance`` (absolute,
energy unit), or when |G_k| is within twice the solver's own error (noise floor).  The solver's
error delta of F(E_k) propagates into the fixed point as delta/|1 - F'| = delta/|s|.  The returned
``error`` = iteration estimate + propagated solver error is the error bar to report for the state.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from fdsolver.errors import CaseError

#: smallest allowed factor 1 + (E - E_edge)/E_g of the Kane mass
MIN_KANE_FACTOR = 0.05


def kane_mass(m_edge, band_edge, gap, energy):
    """m(E) = m_edge [1 + (E - E_edge)/E_g], element-wise over layers or positions (m in m_e).

    ``band_edge``, ``gap`` and ``energy`` in one energy unit.  Raises :class:`CaseError` (key
    ``nonparabolicity``) where the factor falls below :data:`MIN_KANE_FACTOR`.
    """
    m0 = np.asarray(m_edge, dtype=float)
    g = np.asarray(gap, dtype=float)
    if np.any(~(g > 0)):
        raise CaseError("the band gap of every layer must be positive for the energy-dependent mass", key="nonparabolicity")
    factor = 1.0 + (float(energy) - np.asarray(band_edge, dtype=float)) / g
    if np.any(factor < MIN_KANE_FACTOR):
        k = int(np.argmin(factor))
        raise CaseError(f"the energy-dependent mass at E = {float(energy):g} is outside the two-band model "
                        f"(1 + (E - E_edge)/E_g = {float(np.ravel(factor)[k]):.3g} in layer {k + 1}); "
                        "switch nonparabolicity off for this stack or check the band edges and gaps",
                        key="nonparabolicity")
    return m0 * factor


@dataclass(frozen=True)
class NonparabolicState:
    """Result of :func:`solve_nonparabolic`; energies in the caller's unit."""

    energy: float  # F(E_k): the state's energy solved with the mass profile at E_k
    error: float  # iteration_error + solver_error: the error bar of ``energy``
    iteration_error: float
    solver_error: float  # the solver's error of F(E_k), propagated to the fixed point
    mass_energy: float  # E_k, the energy at which the final mass profile was evaluated
    slope: float  # estimate of dF/dE at the fixed point
    iterations: int  # solves done
    converged: bool
    payload: Any  # the third item returned by the final solve
    history: tuple[tuple[float, float], ...]  # (E_in, F(E_in)) of every solve


def solve_nonparabolic(solve_at_mass: Callable[[Any], tuple[float, float, Any]],
                       mass_at_energy: Callable[[float], Any], start: float, *, tolerance: float,
                       max_iterations: int = 30) -> NonparabolicState:
    """Fixed point E = F(E) of one state with an energy-dependent mass (see the module doc).

    ``start`` is the first guess (the parabolic energy), ``tolerance`` the absolute target of the
    iteration error in the energy unit.
    """
    if not tolerance > 0:
        raise ValueError("tolerance must be positive")
    history: list[tuple[float, float]] = []

    def step(e_in: float):
        e_out, err, payload = solve_at_mass(mass_at_energy(e_in))
        history.append((float(e_in), float(e_out)))
        return float(e_out), float(err), payload

    e_prev = float(start)
    f_prev, err, payload = step(e_prev)
    g_prev = f_prev - e_prev
    if g_prev == 0.0:
        return NonparabolicState(f_prev, err, 0.0, err, e_prev, math.nan, 1, True, payload, tuple(history))
    e_cur = f_prev
    slope = math.nan
    for _ in range(max_iterations - 1):
        f_cur, err, payload = step(e_cur)
        g_cur = f_cur - e_cur
        s = (g_cur - g_prev) / (e_cur - e_prev) if e_cur != e_prev else math.nan
        if not math.isfinite(s) or s == 0.0:
            s = -1.0  # no slope information: treat as a plain fixed-point step (F' = 0)
        slope = 1.0 + s
        iter_err = abs(g_cur * (1.0 + s) / s)
        solver_err = err / abs(s)
        if iter_err <= tolerance or abs(g_cur) <= 2.0 * err or g_cur == 0.0:
            return NonparabolicState(f_cur, iter_err + solver_err, iter_err, solver_err, e_cur, slope,
                                     len(history), True, payload, tuple(history))
        e_next = e_cur - g_cur / s
        if not math.isfinite(e_next):
            e_next = f_cur
        e_prev, g_prev, e_cur = e_cur, g_cur, e_next
    iter_err = abs(g_cur * slope / (1.0 - slope)) if slope != 1.0 else math.inf
    return NonparabolicState(f_cur, iter_err + solver_err, iter_err, solver_err, e_cur, slope, len(history), False,
                             payload, tuple(history))


# --------------------------------------------------------------- a whole solve
@dataclass(frozen=True)
class KaneSolution:
    """A :class:`~fdsolver.boundstates.result.Solution` with an energy-dependent mass, and each state's mass.

    Reads like the Solution it wraps (``sol.energy``, ``sol.psi``, ...); ``state_mass[k]`` is the mass
    profile m(x, E_k) of state k on the nodes ``x`` (m_e), ``iterations[k]`` its number of solves.
    """

    solution: Any
    state_mass: np.ndarray
    iterations: np.ndarray

    def __getattr__(self, name: str):
        if name.startswith("__"):
            raise AttributeError(name)
        return getattr(self.solution, name)


def _with_masses(potential, masses):
    """``potential`` with its layer stack's masses replaced by ``masses`` (one per layer)."""
    from dataclasses import replace

    stack = potential.stack
    layers = tuple(replace(layer, mass=float(m)) for layer, m in zip(stack.layers, masses))
    return replace(potential, stack=replace(stack, layers=layers))


def solve_energy_dependent(potential, domain, settings, gaps, solve) -> KaneSolution:
    """Bound states with the Kane mass m(E) = m_edge [1 + (E - E_edge)/E_g] in every layer, state by state.

    ``potential`` must have a layer stack (band edges E_edge and band-edge masses m_edge per layer);
    ``gaps`` (one per layer, case energy unit) the E_g; ``solve(potential, domain, settings)`` is the
    parabolic solver (:func:`fdsolver.boundstates.driver.solve_potential`).  Each state of the parabolic
    solve is iterated by :func:`solve_nonparabolic` to ``settings.tolerance`` of its energy measured from
    the solver's reference; its error bar is the iteration error plus the solver's error propagated
    through the fixed point (module doc).  The wavefunctions of the final solves are put on the parabolic
    solve's grid by linear interpolation (O(h^2), renormalised with its weights), so all states share one
    grid for the optics (flux form with each state's own mass).  E_edge is the layer's band edge: the
    [[potential]] terms (a field) do not enter the Kane factor, an error of order (their change across the
    layer)/E_g in the mass.
    """
    from dataclasses import replace

    from fdsolver.boundstates.result import _cell_overlap, home_regions

    base = solve(potential, domain, settings)
    stack = potential.stack
    edges = np.array([layer.band_edge for layer in stack.layers], dtype=float)
    m_edge = np.array([layer.mass for layer in stack.layers], dtype=float)
    g = np.asarray(gaps, dtype=float)
    x = base.x
    h = np.diff(x)
    w = np.concatenate([[0.0], 0.5 * (h[:-1] + h[1:]), [0.0]])
    layer_of = stack.index(x)
    keep, energy, error, psi, masses, solves = [], [], [], [], [], []
    messages = list(base.messages)
    for k in range(base.energy.size):
        idx = int(base.index[k])
        sub = replace(settings, max_states=idx + 1, energy_window=None)

        def solve_at(mass, idx=idx, sub=sub):
            sol = solve(_with_masses(potential, mass), domain, sub)
            where = np.flatnonzero(sol.index == idx)
            if where.size == 0:
                raise CaseError(f"state {idx} is not bound with the energy-dependent mass", key="nonparabolicity")
            j = int(where[0])
            return float(sol.energy[j]), float(sol.energy_error[j]), (sol, j)

        scale = max(abs(float(base.energy[k]) - float(base.reference)), 1e-300)
        try:
            st = solve_nonparabolic(solve_at, lambda e: kane_mass(m_edge, edges, g, e), float(base.energy[k]),
                                    tolerance=0.5 * settings.tolerance * scale)  # half the bar: room for the solver's
        except CaseError as err:
            if err.key == "nonparabolicity" and "not bound" in err.message:
                messages.append(f"state {idx}: {err.message}; left out")
                continue
            raise
        sol_k, j = st.payload
        p = np.interp(x, sol_k.x, sol_k.psi[j], left=0.0, right=0.0)
        p /= math.sqrt(float(np.sum(w * p * p)))
        keep.append(k)
        energy.append(st.energy)
        error.append(st.error)
        psi.append(p)
        masses.append(kane_mass(m_edge, edges, g, st.mass_energy)[layer_of])
        solves.append(st.iterations)
        if not st.converged:
            messages.append(f"state {idx}: the energy-dependent mass iteration did not converge in {st.iterations} "
                            f"solves (iteration error {st.iteration_error:.2e})")
    messages.append("energy-dependent (two-band Kane) mass: each state solved as a fixed point E = F(E) "
                    f"({min(solves) if solves else 0} to {max(solves) if solves else 0} solves per state); the iteration "
                    "error is inside energy_error")
    keep_a = np.asarray(keep, dtype=int)
    e = np.asarray(energy, dtype=float)
    err = np.asarray(error, dtype=float)
    psi_a = np.asarray(psi, dtype=float).reshape(len(keep), x.size)
    mean_x = psi_a**2 @ (w * x)
    spread = np.sqrt(np.maximum(0.0, np.einsum("kx,x,kx->k", psi_a**2, w, (x[None, :] - mean_x[:, None]) ** 2)))
    regions = potential.regions()
    inside = np.zeros((len(keep), len(regions)))
    for r, (_, lo, hi) in enumerate(regions):
        inside[:, r] = psi_a**2 @ _cell_overlap(x, lo, hi)
    home = home_regions(inside) if regions and len(keep) else np.full(len(keep), -1)
    scale = np.maximum(np.abs(e - float(base.reference)), 1e-300)
    sol = replace(
        base, energy=e, energy_error=err, converged=err <= settings.tolerance * scale, psi=psi_a,
        nodes=base.nodes[keep_a], parity=base.parity[keep_a], mean_x=mean_x, spread=spread, inside=inside,
        level_energies=np.full((base.level_energies.shape[0], len(keep)), np.nan), box_error=base.box_error[keep_a],
        index=base.index[keep_a], home=home.astype(int), wall=base.wall[keep_a],
        splitting=np.diff(e), splitting_error=err[1:] + err[:-1], splitting_bound=np.zeros(max(len(keep) - 1, 0), bool),
        messages=tuple(dict.fromkeys(messages)),
    )
    return KaneSolution(sol, np.asarray(masses, dtype=float).reshape(len(keep), x.size), np.asarray(solves, dtype=int))
