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

from dataclasses import dataclass
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
    Var("lives_in", ("state",), "i4", "region holding most of the state's probability (-1: none of the named ones)",
        source="home"),
    Var("wall_state", ("state",), "i1", "the state lives at a hard wall, not in the structure",
        flags=("left_wall", "structure", "right_wall"), flag_start=-1, source="wall"),
    Var("splitting", ("state",), "f8", "splitting E[state+1] - E[state], extrapolated as a sequence of its own "
        "(NaN for the last state)", ENERGY, source=lambda r: _pad(r.splitting, r.energy.size)),
    Var("splitting_error", ("state",), "f8", "estimated absolute error of splitting", ENERGY,
        source=lambda r: _pad(r.splitting_error, r.energy.size)),
    Var("splitting_is_bound", ("state",), "i1", "1 where the splitting is below double precision: splitting is "
        "only an upper bound", flags=("value", "upper_bound"),
        source=lambda r: _pad(np.asarray(r.splitting_bound, dtype=np.int8), r.energy.size, 0)),
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


@dataclass(frozen=True)
class Kind:
    """One archive kind: its ``fdsolver_kind`` attribute, the ``delta_mode`` values that select it, its rows."""

    name: str
    fdsolver_kind: str
    rows: tuple[Var, ...]
    modes: tuple[str, ...] = ()
    #: global attribute holding the JSON list of the scanned axes (what PARAMS stands for)
    axes_attr: str = ""

    def row(self, name: str) -> Var:
        return next(r for r in self.rows if r.name == name)

    def names(self) -> set[str]:
        """Every variable and fixed dimension name of the kind (a scanned param may not take one)."""
        return {r.name for r in self.rows} | {d for r in self.rows for d in r.dims if d != PARAMS}


KINDS: dict[str, Kind] = {
    "solve": Kind("solve", "solve", SOLVE),
    "sweep": Kind("sweep", "sweep", SWEEP, axes_attr="swept_params"),
    "threshold": Kind("threshold", "threshold", THRESHOLD),
    "delta_check": Kind("delta_check", "delta_check", LADDER, modes=("replace", "from_finite")),
    "delta_map": Kind("delta_map", "delta_check", DELTA_MAP, modes=("replace_map", "from_finite_map"), axes_attr="map_axes"),
    "absorption": Kind("absorption", "absorption", ABSORPTION),
    "interband": Kind("interband", "interband", INTERBAND),
}
#: the values of the global attribute fdsolver_kind
ARCHIVE_KINDS = tuple(dict.fromkeys(k.fdsolver_kind for k in KINDS.values()))


def kind_of(attrs) -> Kind | None:
    """The :class:`Kind` of an archive from its global attributes (None if it is none of ours)."""
    found = [k for k in KINDS.values() if k.fdsolver_kind == attrs.get("fdsolver_kind")]
    if len(found) > 1:
        mode = attrs.get("delta_mode", "replace")
        found = [k for k in found if mode in k.modes] or found[:1]
    return found[0] if found else None
