"""The variables of every archive kind: one table, one row per variable.

Every Dataset builder (:mod:`fdsolver.io.datasets`) and the reader's check
(:func:`fdsolver.io.archive.open_run`) are generated from these rows.  A row
(:class:`Var`) says

* ``name`` and ``dims``; :data:`PARAMS` in ``dims`` stands for the scanned
  axes of a sweep or a validity map, in their order;
* ``dtype``: the numpy type stored (``"f8"``, ``"i4"``, ``"i1"``, ``"str"``);
* ``long_name``: what it is (``{param}`` is replaced by the scanned param);
* ``units``: a physical dimension (:mod:`fdsolver.io.units`: ``"energy"``,
  ``"length"``, ``"1/length"``, ``"energy*length"``, ``"mass"``), ``"1"``
  for a number without dimension, :data:`PARAM` for the units of the scanned
  param, or ``None`` for text labels;
* ``flags``: the meanings of a flag variable's values ``flag_start``,
  ``flag_start + 1``, ... (CF ``flag_values``/``flag_meanings``);
* ``required``: an archive of the kind without it is refused on reading; an
  optional variable is left out when its source gives ``None``;
* ``source``: where the value comes from in the result the builder is given:
  an attribute name (or key of a mapping), or a function of the result;
  ``None`` means the attribute or key of the row's own name;
* ``coord``: a coordinate rather than a data variable; ``note``: a
  ``units_note`` (``{length}`` is replaced by the length unit's name).

Adding a variable to a kind is one row here (plus, for a new quantity, the
field that holds it in the result).  Adding a kind is one table added to
:data:`KINDS` and one builder function in :mod:`fdsolver.io.datasets`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

#: stands for the scanned axes (sweep params, validity-map axes) in ``dims``
PARAMS = "<params>"
#: units of the scanned param
PARAM = "param"
#: meanings of the existence flag of a validity map: bit 0 = the point model binds the state, bit 1 = the finite wells do
EXISTENCE = ("neither", "point_only", "finite_only", "both")


@dataclass(frozen=True)
class Var:
    """One variable of an archive kind (see the module docstring)."""

    name: str
    dims: tuple[str, ...]
    dtype: str
    long_name: str
    units: str | None = "1"
    flags: tuple[str, ...] | Callable[[], tuple[str, ...]] = ()
    flag_start: int = 0
    required: bool = False
    source: str | Callable[[Any], Any] | None = None
    coord: bool = False
    note: str = ""

    def value(self, result) -> Any:
        """The row's value in ``result`` (None if the result has none)."""
        src = self.source if self.source is not None else self.name
        if callable(src):
            return src(result)
        if isinstance(result, dict):
            return result.get(src)
        return getattr(result, src, None)

    def meanings(self) -> tuple[str, ...]:
        """The flag meanings (a function in ``flags`` is called: flags defined where the study sets them)."""
        return tuple(self.flags()) if callable(self.flags) else tuple(self.flags)

    def flag_values(self) -> np.ndarray:
        return np.arange(self.flag_start, self.flag_start + len(self.meanings()), dtype=np.dtype(self.dtype))


def _pad(values, n: int, fill=np.nan) -> np.ndarray:
    """``values`` (one per pair of neighbouring states) padded to one per state."""
    out = np.full(n, fill, dtype=np.asarray(values).dtype if np.size(values) else float)
    out[: np.size(values)] = values
    return out


def _zeros_if_none(values, n: int, fill: float = 0.0) -> np.ndarray:
    """``values``, or ``fill`` for each of n states (a solve of bound states only has no widths)."""
    return np.full(n, fill) if getattr(values, "__len__", None) is None else np.asarray(values, float)


def _count(name: str) -> Callable[[Any], np.ndarray]:
    """A coordinate 0, 1, ... as long as the attribute ``name`` of the result."""
    return lambda r: np.arange(len(getattr(r, name)))


def _ladder_table(field: str) -> Callable[[Any], np.ndarray]:
    return lambda lad: lad.table(field)


def _ladder_limit(lad) -> np.ndarray:
    out = np.full(lad.n_states, np.nan)
    out[: lad.energy_limit.size] = lad.energy_limit
    return out


def _first_model(field: str) -> Callable[[Any], Any]:
    return lambda lad: getattr(lad.models[0], field)


ENERGY, LENGTH, INVERSE_LENGTH, STRENGTH, MASS = "energy", "length", "1/length", "energy*length", "mass"
_SF = ("state", "final_state")


def _optics(result, name: str, of_result: bool = False):
    """A value of the solve's intersubband transitions (fdsolver.optics.solved.WithOptics), None without them."""
    tr = getattr(result, "transitions", None)
    if tr is None:
        return None
    if of_result:
        if name == "transition_energy_error":
            from fdsolver.optics.solved import transition_energy_error

            return transition_energy_error(result)
        return getattr(result, name)
    value = getattr(tr, name, None)
    if name in ("dipole_error", "oscillator_strength_error") and value is None:
        return None
    return value
PSI_NOTE = "psi in {length}^-1/2; integral psi^2 dx = 1 over the grid (lumped node weights)"

SOLVE = (
    Var("x", ("x",), "f8", "position", LENGTH, required=True, coord=True),
    Var("state", ("state",), "i4", "bound state number = Sturm index = node count (0 = ground state)", coord=True,
        source="index"),
    Var("region", ("region",), "i4", "index of the named component or layer (see region_name)", coord=True,
        source=_count("region_names")),
    Var("level", ("level",), "i4", "grid refinement level", coord=True, source=_count("level_sizes")),
    Var("region_name", ("region",), "str", "name of the component or layer", None, source="region_names"),
    Var("energy", ("state",), "f8", "bound-state energy (Richardson-extrapolated)", ENERGY, required=True),
    Var("energy_error", ("state",), "f8", "estimated absolute error of energy", ENERGY, required=True),
    Var("band_energy", ("state",), "f8", "absolute band energy of the state on the materials library's scale "
        "(electron energy; a stack of named materials only)", ENERGY, source=lambda r: getattr(r, "band_energy", None)),
    Var("converged", ("state",), "i1", "1 if energy_error is below the tolerance", flags=("not_converged", "converged"),
        required=True),
    Var("nodes", ("state",), "i4", "number of nodes of the wavefunction", required=True),
    Var("parity", ("state",), "i1", "mirror parity (+1 even, -1 odd, 0 no mirror symmetry)", required=True),
    Var("mean_x", ("state",), "f8", "expectation value of position <x>", LENGTH, required=True),
    Var("spread", ("state",), "f8", "position spread sqrt(<x^2> - <x>^2)", LENGTH, required=True),
    Var("box_error", ("state",), "f8", "estimated shift from truncating the open line to the box", ENERGY),
    Var("lives_in", ("state",), "i4", "region holding most of the state's probability (-1: none of the named ones; "
        "of regions holding equal shares within 1e-6, the first)", source="home"),
    Var("wall_state", ("state",), "i1", "the state lives at a hard wall, not in the structure",
        flags=("left_wall", "structure", "right_wall"), flag_start=-1, source="wall"),
    Var("splitting", ("state",), "f8", "splitting E[state+1] - E[state], extrapolated as a sequence of its own "
        "(NaN for the last state)", ENERGY, source=lambda r: _pad(r.splitting, r.energy.size)),
    Var("splitting_error", ("state",), "f8", "estimated absolute error of splitting", ENERGY,
        source=lambda r: _pad(r.splitting_error, r.energy.size)),
    Var("splitting_is_bound", ("state",), "i1", "1 where the splitting is below double precision: splitting is "
        "only an upper bound", flags=("value", "upper_bound"),
        source=lambda r: _pad(np.asarray(r.splitting_bound, dtype=np.int8), r.energy.size, 0)),
    Var("width", ("state",), "f8", "full width Gamma of a quasi-bound state (0 for a true bound state)", ENERGY,
        source=lambda r: _zeros_if_none(r.width, r.energy.size)),
    Var("width_error", ("state",), "f8", "estimated absolute error of width", ENERGY,
        source=lambda r: _zeros_if_none(r.width_error, r.energy.size)),
    Var("log10_width", ("state",), "f8", "log10 of width in the energy unit (finite where it underflows a double; "
        "-inf for a true bound state)", source=lambda r: _zeros_if_none(r.log10_width, r.energy.size, -np.inf)),
    Var("lifetime", ("state",), "f8", "lifetime hbar / width (inf for a true bound state)", "time",
        source=lambda r: _zeros_if_none(r.lifetime, r.energy.size, np.inf)),
    Var("log10_lifetime", ("state",), "f8", "log10 of lifetime in s (finite beyond the double range)",
        source=lambda r: _zeros_if_none(r.log10_lifetime, r.energy.size, np.inf)),
    Var("psi", ("state", "x"), "f8", "normalised wavefunction times sqrt(length unit)", note=PSI_NOTE, required=True),
    Var("potential", ("x",), "f8", "potential energy (dual-cell average at interior nodes)", ENERGY, required=True),
    Var("mass", ("x",), "f8", "effective mass in units of the free-electron mass", MASS),
    Var("probability_inside", ("state", "region"), "f8", "probability inside each named component or layer",
        source="inside"),
    Var("level_energy", ("level", "state"), "f8", "unextrapolated energy on each refinement level", ENERGY,
        source="level_energies"),
    Var("level_nodes", ("level",), "i8", "number of grid nodes per level", required=True, source="level_sizes"),
    # intersubband optics (fdsolver.optics.solved): present when the solve has states
    Var("final_state", ("final_state",), "i4", "final bound state of a transition (its Sturm index)", coord=True,
        source=lambda r: _optics(r, "index", of_result=True)),
    Var("transition_energy", _SF, "f8", "transition energy E[final_state] - E[state]", ENERGY,
        source=lambda r: _optics(r, "transition_energy")),
    Var("transition_energy_error", _SF, "f8", "estimated absolute error of transition_energy (sum of the two "
        "energies' errors)", ENERGY, source=lambda r: _optics(r, "transition_energy_error", of_result=True)),
    Var("dipole", _SF, "f8", "dipole matrix element <state|x|final_state> (diagonal: <x>); see dipole_form", LENGTH,
        source=lambda r: _optics(r, "dipole")),
    Var("dipole_error", _SF, "f8", "estimated absolute error of dipole", LENGTH, source=lambda r: _optics(r, "dipole_error")),
    Var("oscillator_strength", _SF, "f8", "intersubband oscillator strength f (velocity form, referred to "
        "reference_mass; negative for emission)", source=lambda r: _optics(r, "oscillator_strength")),
    Var("oscillator_strength_error", _SF, "f8", "estimated absolute error of oscillator_strength",
        source=lambda r: _optics(r, "oscillator_strength_error")),
    Var("reference_mass", (), "f8", "mass the oscillator strengths are referred to (1/<0|1/m|0>)", MASS,
        source=lambda r: _optics(r, "reference_mass")),
    Var("sum_rule", ("state",), "f8", "exact sum over all final states (bound and continuum) of f: "
        "reference_mass <state|1/m|state>", source=lambda r: _optics(r, "sum_rule")),
    Var("inplane_mass", ("state",), "f8", "in-plane (2D subband) mass 1/<state|1/m|state>", MASS,
        source=lambda r: _optics(r, "inplane_mass")),
)

_ST = PARAMS, "state"
SWEEP = (
    Var("state", ("state",), "i4", "bound state labelled by its number of nodes", coord=True, required=True),
    Var("x", ("x",), "f8", "position (common grid of the stored wavefunctions)", LENGTH, coord=True),
    Var("energy", _ST, "f8", "bound-state energy (Richardson-extrapolated); NaN where the state does not exist", ENERGY,
        required=True),
    Var("energy_error", _ST, "f8", "estimated absolute error of energy", ENERGY, required=True),
    Var("binding_energy", _ST, "f8", "continuum threshold minus energy", ENERGY),
    Var("converged", _ST, "i1", "1 if energy_error is below the tolerance",
        flags=("no_such_state", "not_converged", "converged"), flag_start=-1),
    Var("nodes", _ST, "i4", "number of nodes of the wavefunction (-1: no such state)"),
    Var("parity", _ST, "i1", "mirror parity (+1 even, -1 odd, 0 no mirror symmetry or no state)"),
    Var("level_width", _ST, "f8", "full width Gamma of a quasi-bound state (0 for a true bound state; NaN: no state)",
        ENERGY),
    Var("log10_level_width", _ST, "f8", "log10 of level_width in the energy unit (finite where it underflows a double; "
        "-inf for a true bound state)"),
    Var("bound_states", (PARAMS,), "i4",
        "number of bound states on the whole open line (zero-energy phase count, no box); -1 where every state is bound"),
    Var("resolved_states", (PARAMS,), "i4", "number of states the box solve returned"),
    Var("continuum_threshold", (PARAMS,), "f8", "continuum threshold (lower asymptote of V)", ENERGY),
    Var("solved", (PARAMS,), "i1", "1 if the point was solved, 0 if its case was invalid"),
    Var("tunnel_splitting", (PARAMS,), "f8", "tunnel splitting E1 - E0 where both states exist", ENERGY),
    Var("tunnel_splitting_error", (PARAMS,), "f8", "estimated absolute error of the tunnel splitting", ENERGY),
    Var("tunnel_splitting_is_bound", (PARAMS,), "i1", "1 where the splitting is below double precision: "
        "tunnel_splitting is only an upper bound", flags=("value", "upper_bound")),
    Var("psi", (PARAMS, "state", "x"), "f8", "normalised wavefunction times sqrt(length unit), linearly interpolated",
        note="psi in {length}^-1/2; zero outside the solver's box; NaN where the state does not exist"),
    Var("threshold_value", ("threshold",), "f8", "value of {param} where the state appears", PARAM),
    Var("threshold_uncertainty", ("threshold",), "f8", "uncertainty of threshold_value", PARAM),
    Var("threshold_state", ("threshold",), "i4", "node count of the state that appears"),
    Var("threshold_direction", ("threshold",), "i1", "+1 binds as the param increases, -1 as it decreases"),
    Var("psi_norm", _ST, "f8", "norm integral psi^2 dx that psi keeps on the common grid (below 1: cut by the grid's "
        "ends or too coarse there); NaN where the state does not exist"),
    Var("mean_x", _ST, "f8", "expectation value of position <x>", LENGTH),
    Var("spread", _ST, "f8", "position spread sqrt(<x^2> - <x>^2)", LENGTH),
    Var("wall_state", _ST, "i1", "the state lives at a hard wall, not in the structure",
        flags=("no_such_state", "left_wall", "structure", "right_wall"), flag_start=-2),
    Var("region", ("region",), "i4", "index of the named component or layer (see region_name)", coord=True),
    Var("region_name", ("region",), "str", "name of the component or layer", None),
    Var("probability_inside", (PARAMS, "state", "region"), "f8", "probability inside each named component or layer"),
    Var("final_state", ("final_state",), "i4", "final state of a transition (node count; the lowest states only)",
        coord=True),
    Var("dipole", (PARAMS, "state", "final_state"), "f8", "dipole matrix element <state|x|final_state> (length form, "
        "one grid; diagonal: <x>)", LENGTH),
    Var("oscillator_strength", (PARAMS, "state", "final_state"), "f8", "intersubband oscillator strength (velocity "
        "form, one grid, referred to reference_mass; negative for emission)"),
    Var("oscillator_strength_error", (PARAMS, "state", "final_state"), "f8", "estimated absolute error of "
        "oscillator_strength (difference of the length and velocity forms)"),
    Var("reference_mass", (PARAMS,), "f8", "mass the oscillator strengths are referred to (1/<0|1/m|0>)", MASS),
)

THRESHOLD = (
    Var("scan", ("scan",), "f8", "scanned values of {param}", PARAM, coord=True, source="scan_values", required=True),
    Var("phase_margin", ("scan",), "f8", "zero-energy phase margin Phi (state N is bound where Phi > N)",
        source="scan_margin", required=True),
    Var("bound_states", ("scan",), "i4", "number of bound states on the whole open line", required=True,
        source=lambda s: _counts_of_margin(s.scan_margin)),
    Var("threshold_value", ("threshold",), "f8", "value of {param} where the state appears", PARAM, required=True,
        source=lambda s: np.array([t.value for t in s.thresholds])),
    Var("threshold_uncertainty", ("threshold",), "f8", "uncertainty of threshold_value", PARAM, required=True,
        source=lambda s: np.array([t.uncertainty for t in s.thresholds])),
    Var("threshold_state", ("threshold",), "i4", "node count of the state that appears",
        source=lambda s: np.array([t.state for t in s.thresholds])),
    Var("threshold_direction", ("threshold",), "i1", "+1 binds as the param increases, -1 as it decreases",
        source=lambda s: np.array([t.direction for t in s.thresholds])),
)


def _counts_of_margin(margin) -> np.ndarray:
    from fdsolver.boundstates.counting import count_from_margin

    return np.array([count_from_margin(f) for f in margin])


_WS = ("width", "state")
_WELL = ("well",)
WIDTH_LONG_NAME = "width parameter of the wells (square/smooth_square/sech2: width, gaussian: sigma)"


def _validity_flags() -> tuple[str, ...]:
    from fdsolver.zerorange.ladder import VALIDITY_FLAGS

    return tuple(VALIDITY_FLAGS)


LADDER = (
    Var("width", ("width",), "f8", WIDTH_LONG_NAME, LENGTH, coord=True, source="widths", required=True),
    Var("state", ("state",), "i4", "bound state index = node count (0 = ground state)", coord=True,
        source=lambda lad: np.arange(lad.n_states)),
    Var("well", _WELL, "i4", "well index, left to right", coord=True, source=lambda lad: np.arange(lad.models[0].positions.size)),
    Var("energy", _WS, "f8", "bound-state energy of the finite-width wells", ENERGY, source=_ladder_table("energy"),
        required=True),
    Var("energy_error", _WS, "f8", "estimated absolute error of energy", ENERGY, source=_ladder_table("energy_error"),
        required=True),
    Var("resolved", _WS, "i1", "1 if energy_error <= |energy - energy_limit| / 10", flags=("not_resolved", "resolved"),
        source=_ladder_table("resolved")),
    Var("exists", _WS, "i1", "1 if the finite-width wells bind this state (zero-energy count)", flags=("absent", "bound"),
        source=_ladder_table("exists"), required=True),
    Var("energy_limit", ("state",), "f8", "bound-state energy of the zero-range point model", ENERGY,
        source=_ladder_limit, required=True),
    Var("exists_limit", ("state",), "i1", "1 if the point model binds this state", flags=("absent", "bound"),
        source=lambda lad: np.arange(lad.n_states) < lad.energy_limit.size, required=True),
    Var("deviation", _WS, "f8", "relative deviation (energy - energy_limit) / |energy_limit|",
        source=_ladder_table("deviation"), required=True),
    Var("predicted_deviation", _WS, "f8", "first-order predicted relative deviation", source=_ladder_table("predicted")),
    Var("solve_tolerance", ("width",), "f8", "relative tolerance of the finite-width solve",
        source=lambda lad: np.array([r.tolerance for r in lad.results])),
    Var("law_coefficient", ("state",), "f8", "fitted a in deviation = a * width", INVERSE_LENGTH),
    Var("law_exponent", ("state",), "f8", "fitted log-log slope of |deviation| against width"),
    Var("predicted_coefficient", ("state",), "f8", "first-order a in deviation = a * width", INVERSE_LENGTH),
    Var("validity_width", ("state",), "f8", "largest width with |deviation| below the tolerance", LENGTH,
        source="validity", required=True),
    Var("validity_flag", ("state",), "i1", "how validity_width was found", flags=_validity_flags),
    Var("binding_width", ("state",), "f8", "width at which the finite-width wells bind or unbind the state", LENGTH),
    Var("critical_separation", _WS, "f8",
        "nearest-neighbour separation above which the finite-width wells bind the state", LENGTH, source="critical"),
    Var("critical_separation_limit", ("state",), "f8",
        "nearest-neighbour separation above which the point model binds the state", LENGTH, source="critical_limit"),
    Var("well_name", _WELL, "str", "name of the well or point", None, source=_first_model("names"), required=True),
    Var("well_center", _WELL, "f8", "centroid of each well (position of the point)", LENGTH,
        source=_first_model("positions"), required=True),
    Var("well_strength", _WELL, "f8", "integrated strength int |V| dx of each well", STRENGTH,
        source=_first_model("strengths"), required=True),
    Var("well_mean_distance", _WELL, "f8", "mean distance |x - x'| over the well profile (first model)", LENGTH,
        source=_first_model("lengths")),
)

_MS = PARAMS, "state"
DELTA_MAP = (
    Var("state", ("state",), "i4", "bound state index = node count (0 = ground state)", coord=True, required=True),
    Var("energy", _MS, "f8", "bound-state energy of the finite-width wells", ENERGY, required=True),
    Var("energy_error", _MS, "f8", "estimated absolute error of energy", ENERGY),
    Var("energy_limit", _MS, "f8", "bound-state energy of the zero-range point model", ENERGY, required=True),
    Var("deviation", _MS, "f8", "relative deviation (energy - energy_limit) / |energy_limit|", required=True),
    Var("predicted_deviation", _MS, "f8", "first-order predicted relative deviation"),
    Var("existence", _MS, "i1", "which models bind the state", flags=EXISTENCE, required=True),
    Var("within_tolerance", _MS, "i1", "1 if |deviation| is below the tolerance"),
    Var("resolved", _MS, "i1", "1 if energy_error <= |energy - energy_limit| / 10", required=True),
    Var("overlap", (PARAMS,), "i1", "1 where neighbouring wells overlap (not solved)", required=True),
    Var("solved", (PARAMS,), "i1", "1 where the comparison was made", required=True),
)


# ------------------------------------------------------------ periodic cases (Bloch bands)
DOS = "1/energy/length"
BLOCH_NOTE = "psi in {length}^-1/2; integral of |psi|^2 dx over one period = 1; psi(x + L) = exp(i q L) psi(x)"
_QB = ("wavevector", "band")
_B = ("band",)


def _edges(field: str) -> Callable[[Any], Any]:
    return lambda r: getattr(r.bands.edges, field)


def _stacks(field: str, pad: bool = False) -> Callable[[Any], Any]:
    """A field of the finite-stack comparison (None without one); per-band arrays padded with NaN to every band."""
    def get(r):
        sb = r.stacks
        if sb is None:
            return None
        v = np.asarray(getattr(sb, field))
        if pad and v.shape[1] < r.bands.n_bands:
            fill = 0 if v.dtype.kind in "iu" else np.nan
            v = np.concatenate([v, np.full((v.shape[0], r.bands.n_bands - v.shape[1]), fill, v.dtype)], axis=1)
        return v
    return get


def _bloch_part(part: str) -> Callable[[Any], Any]:
    return lambda r: None if r.bloch is None else getattr(r.bloch, part)


def _points(index: int) -> Callable[[Any], Any]:
    return lambda r: np.array([p[index] for p in r.points], dtype=float) if r.points else None


BANDS = (
    Var("wavevector", ("wavevector",), "f8", "Bloch wavevector q on the irreducible zone [0, pi/L]", INVERSE_LENGTH,
        coord=True, source=lambda r: r.bands.wavevector, required=True),
    Var("band", _B, "i4", "band index (0 = lowest band)", coord=True, source=lambda r: np.arange(r.bands.n_bands),
        required=True),
    Var("dos_energy", ("dos_energy",), "f8", "energies of the density-of-states table", ENERGY, coord=True,
        source=lambda r: r.bands.dos_energy, required=True),
    Var("x", ("x",), "f8", "position over one period [start, start + L]", LENGTH, coord=True, source="x"),
    Var("bloch_wavevector", ("bloch_wavevector",), "f8", "wavevector of the stored Bloch functions", INVERSE_LENGTH,
        coord=True),
    Var("point", ("point",), "i4", "point interaction of the period", coord=True,
        source=lambda r: np.arange(len(r.points)) if r.points else None),
    Var("n_periods", ("n_periods",), "i4", "number of periods of the finite stack", coord=True,
        source=_stacks("n_periods")),
    Var("level", ("level",), "i4", "level of the finite stack, lowest first", coord=True,
        source=lambda r: None if r.stacks is None else np.arange(r.stacks.energy.shape[1])),
    Var("energy", _QB, "f8", "band energy E_n(q)", ENERGY, source=lambda r: r.bands.energy, required=True),
    Var("energy_error", _QB, "f8", "estimated absolute error of energy", ENERGY, source=lambda r: r.bands.energy_error,
        required=True),
    Var("band_bottom", _B, "f8", "lowest energy of the band (at q = 0 or q = pi/L)", ENERGY, source=_edges("band_bottom"),
        required=True),
    Var("band_bottom_error", _B, "f8", "estimated absolute error of band_bottom", ENERGY,
        source=_edges("band_bottom_error")),
    Var("band_top", _B, "f8", "highest energy of the band (at q = 0 or q = pi/L)", ENERGY, source=_edges("band_top"),
        required=True),
    Var("band_top_error", _B, "f8", "estimated absolute error of band_top", ENERGY, source=_edges("band_top_error")),
    Var("band_width", _B, "f8", "band_top - band_bottom", ENERGY, source=_edges("band_width"), required=True),
    Var("band_width_error", _B, "f8", "estimated absolute error of band_width", ENERGY,
        source=_edges("band_width_error")),
    Var("gap_above", _B, "f8", "energy gap between the band and the next one (0 where they touch)", ENERGY,
        source=_edges("gap_above"), required=True),
    Var("gap_above_error", _B, "f8", "estimated absolute error of gap_above", ENERGY, source=_edges("gap_above_error")),
    Var("gap_closed", _B, "i1", "1 where the gap above the band is closed or not larger than its error",
        flags=("open", "closed"), source=lambda r: r.bands.edges.gap_closed.astype(np.int8)),
    Var("effective_mass_bottom", _B, "f8", "effective mass at the band bottom, hbar^2 / (d^2E/dq^2)", MASS,
        source=_edges("effective_mass_bottom"), required=True),
    Var("effective_mass_bottom_error", _B, "f8", "estimated absolute error of effective_mass_bottom", MASS,
        source=_edges("effective_mass_bottom_error")),
    Var("effective_mass_top", _B, "f8", "effective mass at the band top, hbar^2 / (d^2E/dq^2) (negative)", MASS,
        source=_edges("effective_mass_top"), required=True),
    Var("effective_mass_top_error", _B, "f8", "estimated absolute error of effective_mass_top", MASS,
        source=_edges("effective_mass_top_error")),
    Var("converged", _B, "i1", "1 if the band's edges and width are within the tolerance",
        flags=("not_converged", "converged"), source=lambda r: r.bands.edges.converged.astype(np.int8), required=True),
    Var("density_of_states", ("dos_energy",), "f8", "density of states per unit length and energy, one spin "
        "orientation", DOS, source=lambda r: r.bands.density_of_states, required=True),
    Var("density_of_states_error", ("dos_energy",), "f8", "estimated absolute error of density_of_states", DOS,
        source=lambda r: r.bands.density_of_states_error),
    Var("states_below", ("dos_energy",), "f8", "number of states per unit length below the energy, one spin "
        "orientation", INVERSE_LENGTH, source=lambda r: r.bands.states_below(r.bands.dos_energy)),
    Var("potential", ("x",), "f8", "potential energy over one period (point interactions not included)", ENERGY),
    Var("mass", ("x",), "f8", "effective mass in units of the free-electron mass", MASS),
    Var("point_position", ("point",), "f8", "position of the point interaction in the period window", LENGTH,
        source=_points(0)),
    Var("point_strength", ("point",), "f8", "strength alpha of the point interaction -alpha delta(x - x_j) "
        "(> 0 attracts)", STRENGTH, source=_points(1)),
    Var("bloch_energy", ("bloch_wavevector", "band"), "f8", "energy of the stored Bloch function", ENERGY),
    Var("bloch_real", ("bloch_wavevector", "band", "x"), "f8", "real part of the Bloch function times sqrt(length "
        "unit)", note=BLOCH_NOTE, source=_bloch_part("real")),
    Var("bloch_imag", ("bloch_wavevector", "band", "x"), "f8", "imaginary part of the Bloch function times "
        "sqrt(length unit)", note=BLOCH_NOTE, source=_bloch_part("imag")),
    Var("stack_energy", ("n_periods", "level"), "f8", "level of the finite N-period stack (NaN: no such level)",
        ENERGY, source=_stacks("energy")),
    Var("stack_energy_error", ("n_periods", "level"), "f8", "estimated absolute error of stack_energy", ENERGY,
        source=_stacks("energy_error")),
    Var("stack_level_band", ("n_periods", "level"), "i4", "band holding the level (-1: in a gap, -2: no level)",
        source=_stacks("band")),
    Var("stack_wavevector", ("n_periods", "level"), "f8", "Bloch wavevector arccos(D(E)) / L of the level "
        "(NaN in a gap)", INVERSE_LENGTH, source=_stacks("wavevector")),
    Var("stack_predicted_energy", ("n_periods", "level"), "f8", "exact level between hard walls: E_n(j pi / N L) "
        "and the one-period levels with psi = 0 at both ends (NaN for open stacks)", ENERGY,
        source=_stacks("predicted_energy")),
    Var("cluster_count", ("n_periods", "band"), "i4", "number of the stack's levels inside the band",
        source=_stacks("cluster_count", True)),
    Var("cluster_bottom", ("n_periods", "band"), "f8", "lowest level of the stack inside the band", ENERGY,
        source=_stacks("cluster_bottom", True)),
    Var("cluster_top", ("n_periods", "band"), "f8", "highest level of the stack inside the band", ENERGY,
        source=_stacks("cluster_top", True)),
    Var("cluster_width", ("n_periods", "band"), "f8", "cluster_top - cluster_bottom", ENERGY,
        source=_stacks("cluster_width", True)),
    Var("width_ratio", ("n_periods", "band"), "f8", "cluster_width / band_width (tends to 1 as N grows)",
        source=_stacks("width_ratio", True)),
    Var("predicted_width", ("n_periods", "band"), "f8", "width of the exact cluster between hard walls "
        "(NaN for open stacks)", ENERGY, source=_stacks("predicted_width", True)),
)

_PB = PARAMS, "band"
BAND_SWEEP = (
    Var("band", _B, "i4", "band index (0 = lowest band)", coord=True, required=True),
    Var("band_bottom", _PB, "f8", "lowest energy of the band", ENERGY, required=True),
    Var("band_bottom_error", _PB, "f8", "estimated absolute error of band_bottom", ENERGY),
    Var("band_top", _PB, "f8", "highest energy of the band", ENERGY, required=True),
    Var("band_top_error", _PB, "f8", "estimated absolute error of band_top", ENERGY),
    Var("band_width", _PB, "f8", "band_top - band_bottom", ENERGY, required=True),
    Var("band_width_error", _PB, "f8", "estimated absolute error of band_width", ENERGY),
    Var("gap_above", _PB, "f8", "energy gap between the band and the next one (0 where they touch)", ENERGY,
        required=True),
    Var("gap_above_error", _PB, "f8", "estimated absolute error of gap_above", ENERGY),
    Var("gap_closed", _PB, "i1", "1 where the gap above the band is closed or not larger than its error",
        flags=("no_value", "open", "closed"), flag_start=-1),
    Var("effective_mass_bottom", _PB, "f8", "effective mass at the band bottom", MASS),
    Var("effective_mass_bottom_error", _PB, "f8", "estimated absolute error of effective_mass_bottom", MASS),
    Var("effective_mass_top", _PB, "f8", "effective mass at the band top (negative)", MASS),
    Var("effective_mass_top_error", _PB, "f8", "estimated absolute error of effective_mass_top", MASS),
    Var("converged", _PB, "i1", "1 if the band's edges and width are within the tolerance",
        flags=("not_solved", "not_converged", "converged"), flag_start=-1, required=True),
    Var("solved", (PARAMS,), "i1", "1 if the point was solved, 0 if its case was invalid", required=True),
)


def _comb_flags() -> tuple[str, ...]:
    from fdsolver.zerorange.combcheck import VALIDITY_FLAGS

    return tuple(VALIDITY_FLAGS)


def _finite(field: str) -> Callable[[Any], np.ndarray]:
    return lambda c: np.array([getattr(f, field) for f in c.finite])


def _limit(field: str) -> Callable[[Any], np.ndarray]:
    return lambda c: getattr(c.point, field)


_WB = ("width", "band")
_WQB = ("width", "quantity", "band")
_QB2 = ("quantity", "band")
COMB_DEVIATION = ("relative deviation of the finite lattice from the delta comb: band edges by max(|E_bottom|, "
                  "|E_top|) of the comb's band, widths and gaps by their own comb values")
COMB_CHECK = (
    Var("width", ("width",), "f8", WIDTH_LONG_NAME, LENGTH, coord=True, source="widths", required=True),
    Var("band", _B, "i4", "band index (0 = lowest band)", coord=True, source=lambda c: np.arange(c.point.n_bands),
        required=True),
    Var("quantity", ("quantity",), "i4", "compared quantity (see quantity_name)", coord=True,
        source=lambda c: np.arange(c.deviation.shape[1]), required=True),
    Var("point", ("point",), "i4", "point interaction of the period", coord=True,
        source=lambda c: np.arange(len(c.comb.positions))),
    Var("quantity_name", ("quantity",), "str", "name of the compared quantity", None, required=True,
        source=lambda c: _comb_quantities()),
    Var("band_bottom", _WB, "f8", "band bottom of the finite lattice", ENERGY, source=_finite("band_bottom"),
        required=True),
    Var("band_bottom_error", _WB, "f8", "estimated absolute error of band_bottom", ENERGY,
        source=_finite("band_bottom_error")),
    Var("band_top", _WB, "f8", "band top of the finite lattice", ENERGY, source=_finite("band_top"), required=True),
    Var("band_top_error", _WB, "f8", "estimated absolute error of band_top", ENERGY, source=_finite("band_top_error")),
    Var("band_width", _WB, "f8", "band width of the finite lattice", ENERGY, source=_finite("band_width")),
    Var("band_width_error", _WB, "f8", "estimated absolute error of band_width", ENERGY,
        source=_finite("band_width_error")),
    Var("gap_above", _WB, "f8", "gap above the band, finite lattice", ENERGY, source=_finite("gap_above")),
    Var("gap_above_error", _WB, "f8", "estimated absolute error of gap_above", ENERGY,
        source=_finite("gap_above_error")),
    Var("band_bottom_limit", _B, "f8", "band bottom of the delta comb (closed form)", ENERGY,
        source=_limit("band_bottom"), required=True),
    Var("band_top_limit", _B, "f8", "band top of the delta comb (closed form)", ENERGY, source=_limit("band_top"),
        required=True),
    Var("band_width_limit", _B, "f8", "band width of the delta comb", ENERGY, source=_limit("band_width")),
    Var("gap_above_limit", _B, "f8", "gap above the band, delta comb", ENERGY, source=_limit("gap_above")),
    Var("gap_closed_limit", _B, "i1", "1 where the comb's gap above the band is closed", flags=("open", "closed"),
        source=lambda c: c.point.gap_closed.astype(np.int8)),
    Var("deviation", _WQB, "f8", COMB_DEVIATION, required=True),
    Var("predicted_deviation", _WQB, "f8", "first-order predicted relative deviation", source="predicted"),
    Var("resolved", _WQB, "i1", "1 if the finite value's error is at most a tenth of its difference from the comb",
        flags=("not_resolved", "resolved"), source=lambda c: c.resolved.astype(np.int8)),
    Var("law_coefficient", _QB2, "f8", "fitted a in deviation = a * width", INVERSE_LENGTH),
    Var("law_exponent", _QB2, "f8", "fitted log-log slope of |deviation| against width"),
    Var("predicted_coefficient", _QB2, "f8", "first-order a in deviation = a * width", INVERSE_LENGTH),
    Var("validity_width", _B, "f8", "largest width with the band's edge and width deviations below the tolerance",
        LENGTH, required=True),
    Var("validity_flag", _B, "i1", "how validity_width was found", flags=_comb_flags),
    Var("point_position", ("point",), "f8", "position of the point interaction in the period window", LENGTH,
        source=lambda c: np.asarray(c.comb.positions, float)),
    Var("point_strength", ("point",), "f8", "strength alpha of the point interaction (> 0 attracts)", STRENGTH,
        source=lambda c: np.asarray(c.comb.strengths, float)),
)


def _comb_quantities() -> list[str]:
    from fdsolver.zerorange.combcheck import QUANTITIES

    return [{"bottom": "band_bottom", "top": "band_top", "width": "band_width", "gap": "gap_above"}[q]
            for q in QUANTITIES]


# ------------------------------------------------------------------ attributes
#: the types a global attribute may have: text; a number; a whole number; a JSON object ``{name: number}`` (params);
#: a JSON object ``{name: text}`` (the stored table files); a JSON list of names (scanned axes); a JSON object of
#: anything plain (fixed params); a JSON pair [low, high] of numbers (a search interval)
TEXT, NUMBER, WHOLE, PARAM_VALUES, FILE_TEXTS, NAMES, PLAIN, PAIR, NUMBERS = (
    "text", "number", "whole", "param values", "file texts", "names", "plain", "pair", "numbers")


@dataclass(frozen=True)
class Attr:
    """One global attribute of an archive kind: its type (above), whether an archive without it is refused,
    the values it may take, and whether it is the stored case (its size is bounded as a whole, not per attribute)."""

    type: str = TEXT
    required: bool = False
    choices: tuple[str, ...] = ()
    stored_case: bool = False


#: the global attributes every kind has (:func:`fdsolver.io.datasets.base_attrs`)
COMMON_ATTRS: dict[str, Attr] = {
    "Conventions": Attr(), "title": Attr(), "source": Attr(), "history": Attr(), "references": Attr(),
    "comment": Attr(),
    "fdsolver_kind": Attr(required=True),
    "units_system": Attr(choices=("atomic", "nm-meV")),
    "units_note": Attr(), "hbar2_2me": Attr(NUMBER), "hbar2_2me_units": Attr(), "particle_mass": Attr(NUMBER),
    "case_file": Attr(),
    "case_text": Attr(required=True, stored_case=True),
    "case_tables": Attr(FILE_TEXTS, stored_case=True),
    "params": Attr(PARAM_VALUES),
    # the carrier, temperature, materials and unit notes of a case (io.datasets.case_attrs)
    "carrier": Attr(), "temperature": Attr(NUMBER),
    "temperature_units": Attr(), "nonparabolicity": Attr(WHOLE), "param_units": Attr(PLAIN), "case_notes": Attr(),
    "materials": Attr(), "band_reference": Attr(NUMBER), "band_reference_note": Attr(), "layer_gaps": Attr(NUMBERS),
    "layer_masses": Attr(NUMBERS), "materials_source": Attr(),
}
SOLVE_ATTRS = {
    "continuum_threshold": Attr(NUMBER), "box_left": Attr(NUMBER), "box_right": Attr(NUMBER),
    "boundary": Attr(choices=("open", "hard")), "mirror_center": Attr(NUMBER), "tolerance": Attr(NUMBER),
    "bound_state_count": Attr(WHOLE), "resolved_state_count": Attr(WHOLE), "energy_reference": Attr(NUMBER),
    "messages": Attr(), "dipole_form": Attr(), "oscillator_strength_form": Attr(), "optics_accuracy": Attr(),
}
SWEEP_ATTRS = {
    "swept_params": Attr(NAMES), "axes": Attr(NAMES), "fixed_params": Attr(PLAIN), "points": Attr(WHOLE),
    "failed_points": Attr(WHOLE), "state_labels": Attr(), "tolerance": Attr(NUMBER), "notes_count": Attr(WHOLE),
    "notes": Attr(),
}
THRESHOLD_ATTRS = {
    "swept_params": Attr(NAMES, required=True), "interval": Attr(PAIR, required=True),
    "bound_states_at_lo": Attr(WHOLE, required=True), "bound_states_at_hi": Attr(WHOLE, required=True),
    "notes": Attr(), "method": Attr(),
}
LADDER_ATTRS = {
    "delta_mode": Attr(choices=("replace", "from_finite")), "replacement_shape": Attr(),
    "tolerance": Attr(NUMBER, required=True), "messages": Attr(), "well_shapes": Attr(),
}
MAP_ATTRS = {
    "delta_mode": Attr(required=True, choices=("replace_map", "from_finite_map")), "replacement_shape": Attr(),
    "tolerance": Attr(NUMBER, required=True), "replacement_width": Attr(NUMBER), "map_axes": Attr(NAMES),
    "fixed_params": Attr(PLAIN), "messages": Attr(),
}
#: the attributes a variable may carry (the rest, NetCDF's own aside, are dropped on reading)
VAR_ATTRS = ("long_name", "units", "units_name", "units_note", "flag_values", "flag_meanings", "spacing")
ABSORPTION_ATTRS = {
    "sheet_density": Attr(NUMBER), "sheet_density_units": Attr(), "carrier_temperature": Attr(NUMBER),
    "carrier_temperature_note": Attr(), "chemical_potential": Attr(NUMBER), "notes": Attr(), "formula": Attr(),
    "formula_source": Attr(), "broadening": Attr(NUMBER), "broadening_note": Attr(), "refractive_index": Attr(NUMBER),
    "solve_run": Attr(), "period": Attr(NUMBER), "reference_mass": Attr(NUMBER),
}
INTERBAND_ATTRS = {
    "effective_gap": Attr(NUMBER), "effective_gap_note": Attr(), "conduction_band_reference": Attr(NUMBER),
    "valence_band_reference": Attr(NUMBER), "notes": Attr(), "overlap_note": Attr(),
    "heavy_hole_layer_masses": Attr(NUMBERS), "light_hole_layer_masses": Attr(NUMBERS),
}
TRANSMISSION_ATTRS = {
    "swept_params": Attr(NAMES), "incident_side": Attr(choices=("left", "right")), "method": Attr(),
    "energy_grid": Attr(), "normalisation": Attr(), "notes": Attr(),
}
RESONANCES_ATTRS = {
    "swept_params": Attr(NAMES), "window": Attr(PAIR), "max_width": Attr(NUMBER), "fixed_params": Attr(PLAIN),
    "method": Attr(), "notes": Attr(),
}
CURRENT_ATTRS = {
    "temperature_K": Attr(NUMBER), "emitter_fermi_level": Attr(NUMBER), "emitter_fermi_level_units": Attr(),
    "emitter_band_edge": Attr(NUMBER), "model": Attr(), "notes": Attr(),
}
BACKGROUND_ATTRS = {
    "delta_mode": Attr(), "replacement_shape": Attr(), "tolerance": Attr(NUMBER), "messages": Attr(),
    "reference_energy": Attr(NUMBER), "reference_note": Attr(),
}
SCATTER_CHECK_ATTRS = {
    "delta_mode": Attr(), "replacement_shape": Attr(), "tolerance": Attr(NUMBER), "messages": Attr(),
    "incident_side": Attr(choices=("left", "right")), "reference": Attr(),
}
PERIODIC_ATTRS = {"boundary": Attr(choices=("periodic",)), "period": Attr(NUMBER), "period_start": Attr(NUMBER)}
BANDS_ATTRS = {
    **PERIODIC_ATTRS, "method": Attr(), "tolerance": Attr(NUMBER), "zone_energy": Attr(NUMBER),
    "zone_energy_note": Attr(), "cell_levels": Attr(WHOLE), "cells": Attr(WHOLE), "density_of_states_note": Attr(),
    "messages": Attr(), "stack_termination": Attr(choices=("hard", "open")), "stack_bands": Attr(WHOLE),
    "stack_continuum_threshold": Attr(NUMBER),
}
BAND_SWEEP_ATTRS = {**SWEEP_ATTRS, "boundary": Attr(choices=("periodic",))}
COMB_ATTRS = {
    **PERIODIC_ATTRS, "replacement_shape": Attr(), "tolerance": Attr(NUMBER), "zone_energy": Attr(NUMBER),
    "method": Attr(), "messages": Attr(),
}


_TR = ("transition",)
ABSORPTION = (
    Var("photon_energy", ("photon_energy",), "f8", "photon energy", ENERGY, coord=True, required=True),
    Var("state", ("state",), "i4", "subband (bound state number of the solve)", coord=True,
        source=lambda a: np.arange(a.state_energy.size)),
    Var("transition", _TR, "i4", "index of an upward transition between populated subbands", coord=True,
        source=lambda a: np.arange(a.transition_initial.size)),
    Var("absorption", ("photon_energy",), "f8", "fraction of the light absorbed per pass by the sheet, electric "
        "field along the growth axis", required=True),
    Var("absorption_coefficient", ("photon_energy",), "f8", "absorption coefficient of a stack with the given period "
        "(absorption / period)", INVERSE_LENGTH),
    Var("state_energy", ("state",), "f8", "subband energy", ENERGY, required=True),
    Var("population", ("state",), "f8", "sheet density of carriers in the subband", "1/length/length", required=True),
    Var("transition_initial", _TR, "i4", "initial subband of the transition", required=True),
    Var("transition_final", _TR, "i4", "final subband of the transition", required=True),
    Var("transition_energy", _TR, "f8", "transition energy", ENERGY, required=True),
    Var("transition_oscillator_strength", _TR, "f8", "oscillator strength of the transition (referred to the "
        "solve's reference_mass)"),
    Var("integrated_absorption", _TR, "f8", "area under the transition's line: integral of its absorption over "
        "photon energy", ENERGY),
    Var("transition_absorption", ("transition", "photon_energy"), "f8", "absorption per pass of each transition"),
)

_EH, _HH, _LH = "electron_state", "heavy_hole_state", "light_hole_state"
INTERBAND = (
    Var("x", ("x",), "f8", "position (every node of the three solves' grids)", LENGTH, coord=True, required=True),
    Var(_EH, (_EH,), "i4", "electron state number (Sturm index)", coord=True, required=True),
    Var(_HH, (_HH,), "i4", "heavy-hole state number (Sturm index)", coord=True, required=True),
    Var(_LH, (_LH,), "i4", "light-hole state number (Sturm index)", coord=True, required=True),
    Var("electron_energy", (_EH,), "f8", "electron confinement energy above the lowest conduction-band edge", ENERGY,
        required=True),
    Var("electron_energy_error", (_EH,), "f8", "estimated absolute error of electron_energy", ENERGY),
    Var("heavy_hole_energy", (_HH,), "f8", "heavy-hole confinement energy below the highest valence-band edge",
        ENERGY, required=True),
    Var("heavy_hole_energy_error", (_HH,), "f8", "estimated absolute error of heavy_hole_energy", ENERGY),
    Var("light_hole_energy", (_LH,), "f8", "light-hole confinement energy below the highest valence-band edge",
        ENERGY, required=True),
    Var("light_hole_energy_error", (_LH,), "f8", "estimated absolute error of light_hole_energy", ENERGY),
    Var("heavy_hole_transition_energy", (_EH, _HH), "f8", "e-hh transition energy: effective gap + electron + "
        "hole confinement energies", ENERGY, required=True),
    Var("heavy_hole_transition_energy_error", (_EH, _HH), "f8", "estimated absolute error of "
        "heavy_hole_transition_energy", ENERGY),
    Var("heavy_hole_overlap", (_EH, _HH), "f8", "squared envelope overlap |<e|hh>|^2", required=True),
    Var("heavy_hole_overlap_error", (_EH, _HH), "f8", "estimated absolute error of heavy_hole_overlap"),
    Var("light_hole_transition_energy", (_EH, _LH), "f8", "e-lh transition energy: effective gap + electron + "
        "hole confinement energies", ENERGY, required=True),
    Var("light_hole_transition_energy_error", (_EH, _LH), "f8", "estimated absolute error of "
        "light_hole_transition_energy", ENERGY),
    Var("light_hole_overlap", (_EH, _LH), "f8", "squared envelope overlap |<e|lh>|^2", required=True),
    Var("light_hole_overlap_error", (_EH, _LH), "f8", "estimated absolute error of light_hole_overlap"),
    Var("conduction_band_edge", ("x",), "f8", "conduction-band edge (absolute scale of the materials data)", ENERGY),
    Var("valence_band_edge", ("x",), "f8", "valence-band edge (absolute scale of the materials data; heavy and "
        "light holes share it without strain)", ENERGY),
    Var("electron_psi", (_EH, "x"), "f8", "electron envelope times sqrt(length unit)", note=PSI_NOTE),
    Var("heavy_hole_psi", (_HH, "x"), "f8", "heavy-hole envelope times sqrt(length unit)", note=PSI_NOTE),
    Var("light_hole_psi", (_LH, "x"), "f8", "light-hole envelope times sqrt(length unit)", note=PSI_NOTE),
)


# ------------------------------------------------------------ the continuum
TIME, VOLTAGE, CURRENT_DENSITY, TEMPERATURE = "time", "voltage", "current_density", "temperature"
_R = PARAMS, "resonance"
_E = PARAMS, "energy"


def resonance_rows(dims: tuple[str, ...], required: bool) -> tuple[Var, ...]:
    """The per-resonance variables over ``dims`` (the resonances of a window, or of T(E)'s range)."""
    return (
        Var("resonance", ("resonance",), "i4", "resonance number, counted from the low end of the window (0 = lowest)",
            coord=True, required=required),
        Var("resonance_energy", dims, "f8", "resonance energy E_r (S-matrix pole at E_r - i Gamma/2); NaN where "
            "there is no such resonance", ENERGY, required=required),
        Var("resonance_energy_error", dims, "f8", "estimated absolute error of resonance_energy", ENERGY),
        Var("resonance_width", dims, "f8", "full width Gamma of the resonance (0 for a true bound state)", ENERGY,
            required=required),
        Var("resonance_width_error", dims, "f8", "estimated absolute error of resonance_width", ENERGY),
        Var("log10_resonance_width", dims, "f8", "log10 of resonance_width in the energy unit (finite where Gamma "
            "underflows a double)"),
        Var("lifetime", dims, "f8", "lifetime hbar / Gamma (inf for a true bound state)", TIME, required=required),
        Var("lifetime_error", dims, "f8", "estimated absolute error of lifetime", TIME),
        Var("log10_lifetime", dims, "f8", "log10 of lifetime in s (finite beyond the double range)"),
        Var("bound", dims, "i1", "true bound state (a real pole below every threshold) rather than a resonance",
            flags=("resonance", "bound_state")),
    )


TRANSMISSION = (
    Var("energy", ("energy",), "f8", "energy of the incident wave", ENERGY, coord=True, required=True),
    Var("transmission", _E, "f8", "transmission probability T (flux ratio, BenDaniel-Duke)", required=True),
    Var("transmission_error", _E, "f8", "estimated absolute error of transmission", required=True),
    Var("reflection", _E, "f8", "reflection probability R (flux ratio)", required=True),
    Var("log10_transmission", _E, "f8", "log10 T (finite where T underflows a double)"),
    Var("unitarity_defect", _E, "f8", "|R + T - 1| where the incident channel is open (0 elsewhere)"),
    Var("incident_open", _E, "i1", "1 where a wave can come in from the incident side",
        flags=("closed", "open")),
) + resonance_rows(_R, False)

RESONANCES = resonance_rows(_R, True) + (
    Var("solved", (PARAMS,), "i1", "1 if the point was solved, 0 if its case was invalid"),
    Var("resonance_count", (PARAMS,), "i4", "number of poles found in the window"),
)

CURRENT = (
    Var("bias", ("bias",), "f8", "applied bias (emitter Fermi level minus collector Fermi level, over e)", VOLTAGE,
        coord=True, required=True),
    Var("current_density", ("bias",), "f8", "Tsu-Esaki current density, emitter to collector", CURRENT_DENSITY,
        required=True),
    Var("current_density_error", ("bias",), "f8", "estimated absolute error of current_density", CURRENT_DENSITY,
        required=True),
    Var("solved", ("bias",), "i1", "1 if the bias point was solved"),
    Var("transmission_evaluations", ("bias",), "i4", "energies at which T(E) was computed for the integral"),
    Var("resonance", ("resonance",), "i4", "resonance number at each bias, from the low end of the transport window",
        coord=True),
    Var("resonance_energy", ("bias", "resonance"), "f8", "resonance energy of the biased structure (NaN: none)",
        ENERGY),
    Var("resonance_width", ("bias", "resonance"), "f8", "full width of the resonance", ENERGY),
    Var("peak_bias", (), "f8", "bias of the resonant peak current (the local maximum followed by the deepest drop)",
        VOLTAGE),
    Var("peak_current_density", (), "f8", "current density at peak_bias", CURRENT_DENSITY),
    Var("valley_bias", (), "f8", "bias of the valley current (the minimum after the peak)", VOLTAGE),
    Var("valley_current_density", (), "f8", "current density at valley_bias", CURRENT_DENSITY),
)


_BS, _BP = ("width", "state"), ("width", "point")
#: zero-range check on a background (fdsolver.zerorange.background): the reference is the case with exact point terms
DELTA_BACKGROUND = (
    Var("width", ("width",), "f8", WIDTH_LONG_NAME, LENGTH, coord=True, source="widths", required=True),
    Var("state", ("state",), "i4", "state index = Sturm number (0 = ground state)", coord=True,
        source=lambda c: np.arange(c.energy_limit.size)),
    Var("point", ("point",), "i4", "point index, left to right", coord=True,
        source=lambda c: np.arange(c.positions.size)),
    Var("energy", _BS, "f8", "energy of the case with the points replaced by finite-width wells", ENERGY,
        required=True),
    Var("energy_error", _BS, "f8", "estimated absolute error of energy", ENERGY, required=True),
    Var("energy_limit", ("state",), "f8", "energy of the case with exact point interactions (finite-difference "
        "solve, derivative jump at a node)", ENERGY, required=True),
    Var("energy_limit_error", ("state",), "f8", "estimated absolute error of energy_limit", ENERGY),
    Var("energy_deviation", _BS, "f8", "energy - energy_limit", ENERGY, required=True),
    Var("deviation", _BS, "f8", "relative deviation (energy - energy_limit) / |energy_limit - reference_energy|",
        required=True),
    Var("resolved", _BS, "i1", "1 if energy_error + energy_limit_error <= |energy_deviation| / 10",
        flags=("not_resolved", "resolved"), source=lambda c: c.resolved.astype(np.int8)),
    Var("predicted_deviation", _BS, "f8", "first-order relative deviation sum_p m alpha_p^2 psi(x_p)^2 l_p / "
        "(2 hbar^2/2m_e) / |energy_limit - reference_energy| (l_p: mean distance over the well)", source="predicted"),
    Var("law_coefficient", ("state",), "f8", "fitted a in deviation = a * width on the narrowest widths",
        INVERSE_LENGTH),
    Var("law_exponent", ("state",), "f8", "fitted log-log slope of |deviation| against width (1: first order)"),
    Var("validity_width", ("state",), "f8", "largest width with |deviation| below the tolerance", LENGTH,
        source="validity", required=True),
    Var("validity_flag", ("state",), "i1", "how validity_width was found", flags=_validity_flags),
    Var("states_returned", ("width",), "i4", "states the finite-width solve returned", source="count"),
    Var("point_name", ("point",), "str", "name of the point component", None, source="names", required=True),
    Var("point_center", ("point",), "f8", "position of the point", LENGTH, source="positions", required=True),
    Var("point_strength", ("point",), "f8", "strength alpha of the point (-alpha delta(x - x_j); > 0 attracts)",
        STRENGTH, source="strengths", required=True),
    Var("decay_length", ("point",), "f8", "1/kappa = 2 (hbar^2/2m_e) / (m |alpha|): the decay length of the point "
        "alone", LENGTH),
    Var("width_in_decay_lengths", _BP, "f8", "width / decay_length"),
    Var("replacement_depth", _BP, "f8", "depth of the replacement well (its -V at the centre; < 0: a barrier's "
        "height)", ENERGY, source="depth"),
)

_TW, _TR = ("width", "energy"), ("width", "resonance")
#: zero-range check for scattering (fdsolver.zerorange.scattercheck)
DELTA_TRANSMISSION = (
    Var("width", ("width",), "f8", WIDTH_LONG_NAME, LENGTH, coord=True, source="widths", required=True),
    Var("energy", ("energy",), "f8", "energy of the incident wave", ENERGY, coord=True, required=True),
    Var("resonance", ("resonance",), "i4", "resonance of the point model, by energy", coord=True,
        source=lambda c: np.arange(c.resonance_energy_limit.size)),
    Var("point", ("point",), "i4", "point index, left to right", coord=True,
        source=lambda c: np.arange(c.positions.size)),
    Var("transmission", _TW, "f8", "transmission T of the finite-width wells or barriers", required=True),
    Var("transmission_error", _TW, "f8", "estimated absolute error of transmission"),
    Var("transmission_limit", ("energy",), "f8", "transmission of the point interactions", required=True),
    Var("transmission_deviation", ("width",), "f8", "largest |transmission - transmission_limit| over the energies",
        required=True),
    Var("resonance_energy_limit", ("resonance",), "f8", "resonance energy E_r of the point model", ENERGY),
    Var("resonance_width_limit", ("resonance",), "f8", "full width Gamma of the point model's resonance", ENERGY),
    Var("resonance_energy", _TR, "f8", "resonance energy of the finite model (nearest pole)", ENERGY),
    Var("resonance_width", _TR, "f8", "full width of the finite model's resonance", ENERGY),
    Var("resonance_energy_deviation", _TR, "f8", "resonance_energy - resonance_energy_limit", ENERGY),
    Var("resonance_relative_shift", _TR, "f8", "resonance_energy_deviation / (resonance_energy_limit - incident "
        "asymptote)"),
    Var("resonance_width_deviation", _TR, "f8", "resonance_width / resonance_width_limit - 1"),
    Var("law_coefficient", (), "f8", "fitted a in transmission_deviation = a * width on the narrowest widths",
        INVERSE_LENGTH),
    Var("law_exponent", (), "f8", "fitted log-log slope of transmission_deviation against width (1: first order)"),
    Var("validity_width", (), "f8", "largest width up to which transmission_deviation and every relative resonance "
        "shift and width change stay below the tolerance", LENGTH, source="validity", required=True),
    Var("point_name", ("point",), "str", "name of the point component", None, source="names", required=True),
    Var("point_center", ("point",), "f8", "position of the point", LENGTH, source="positions", required=True),
    Var("point_strength", ("point",), "f8", "strength alpha of the point (-alpha delta(x - x_j); > 0 attracts)",
        STRENGTH, source="strengths", required=True),
    Var("decay_length", ("point",), "f8", "2 (hbar^2/2m_e) / (m |alpha|): the length scale of the point", LENGTH),
    Var("width_in_decay_lengths", ("width", "point"), "f8", "width / decay_length"),
    Var("replacement_depth", ("width", "point"), "f8", "depth of the replacement well (its -V at the centre; < 0: a "
        "barrier's height)", ENERGY, source="depth"),
)

@dataclass(frozen=True)
class Kind:
    """One archive kind: its ``fdsolver_kind`` attribute, the ``delta_mode`` values that select it, its rows and
    its global attributes beside :data:`COMMON_ATTRS`."""

    name: str
    fdsolver_kind: str
    rows: tuple[Var, ...]
    modes: tuple[str, ...] = ()
    #: global attribute holding the JSON list of the scanned axes (what PARAMS stands for)
    axes_attr: str = ""
    #: the scanned axes may be none (a study that is also run on its own, without --vary)
    axes_optional: bool = False
    attrs: dict = field(default_factory=dict)

    def attributes(self) -> dict[str, Attr]:
        """Every global attribute the kind declares."""
        return {**COMMON_ATTRS, **self.attrs}

    def row(self, name: str) -> Var:
        return next(r for r in self.rows if r.name == name)

    def names(self) -> set[str]:
        """Every variable and fixed dimension name of the kind (a scanned param may not take one)."""
        return {r.name for r in self.rows} | {d for r in self.rows for d in r.dims if d != PARAMS}


KINDS: dict[str, Kind] = {
    "solve": Kind("solve", "solve", SOLVE, attrs=SOLVE_ATTRS),
    "sweep": Kind("sweep", "sweep", SWEEP, axes_attr="swept_params", attrs=SWEEP_ATTRS),
    "threshold": Kind("threshold", "threshold", THRESHOLD, attrs=THRESHOLD_ATTRS),
    "delta_check": Kind("delta_check", "delta_check", LADDER, modes=("replace", "from_finite"), attrs=LADDER_ATTRS),
    "delta_map": Kind("delta_map", "delta_check", DELTA_MAP, modes=("replace_map", "from_finite_map"), axes_attr="map_axes",
                      attrs=MAP_ATTRS),
    "bands": Kind("bands", "bands", BANDS, attrs=BANDS_ATTRS),
    "band_sweep": Kind("band_sweep", "band_sweep", BAND_SWEEP, axes_attr="swept_params", attrs=BAND_SWEEP_ATTRS),
    "comb_check": Kind("comb_check", "comb_check", COMB_CHECK, attrs=COMB_ATTRS),
    "absorption": Kind("absorption", "absorption", ABSORPTION, attrs=ABSORPTION_ATTRS),
    "interband": Kind("interband", "interband", INTERBAND, attrs=INTERBAND_ATTRS),
    "transmission": Kind("transmission", "transmission", TRANSMISSION, axes_attr="swept_params", axes_optional=True,
                         attrs=TRANSMISSION_ATTRS),
    "resonances": Kind("resonances", "resonances", RESONANCES, axes_attr="swept_params", axes_optional=True,
                       attrs=RESONANCES_ATTRS),
    "current": Kind("current", "current", CURRENT, attrs=CURRENT_ATTRS),
    "delta_background": Kind("delta_background", "delta_background", DELTA_BACKGROUND, attrs=BACKGROUND_ATTRS),
    "delta_transmission": Kind("delta_transmission", "delta_transmission", DELTA_TRANSMISSION,
                               attrs=SCATTER_CHECK_ATTRS),
}
#: the values of the global attribute fdsolver_kind
ARCHIVE_KINDS = tuple(dict.fromkeys(k.fdsolver_kind for k in KINDS.values()))


def kind_of(attrs) -> Kind | None:
    """The :class:`Kind` of an archive from its global attributes (None if it is none of ours)."""
    kind = attrs.get("fdsolver_kind")
    found = [k for k in KINDS.values() if isinstance(kind, str) and k.fdsolver_kind == kind]
    if len(found) > 1:
        mode = attrs.get("delta_mode", "replace")
        mode = mode if isinstance(mode, str) else ""
        found = [k for k in found if mode in k.modes] or found[:1]
    return found[0] if found else None
