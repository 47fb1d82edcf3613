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
    "transmission": Kind("transmission", "transmission", TRANSMISSION, axes_attr="swept_params"),
    "resonances": Kind("resonances", "resonances", RESONANCES, axes_attr="swept_params"),
    "current": Kind("current", "current", CURRENT),
    "delta_background": Kind("delta_background", "delta_background", DELTA_BACKGROUND),
    "delta_transmission": Kind("delta_transmission", "delta_transmission", DELTA_TRANSMISSION),
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
