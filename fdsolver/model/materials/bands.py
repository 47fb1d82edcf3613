"""Band edges and masses of a layer stack for one carrier, and the stack's lattice mismatch.

Carriers (Gamma point, unstrained bulk, single band each):

==============  ===============================  ==========================
carrier         absolute band energy (eV)        mass (m_e)
==============  ===============================  ==========================
``electron``    E_c = valence_band_offset + E_g  electron_mass
``heavy_hole``  E_v = valence_band_offset         1/(gamma1 - 2 gamma2) [001]
``light_hole``  E_v = valence_band_offset         1/(gamma1 + 2 gamma2) [001]
==============  ===============================  ==========================

The solver's picture.  The solver finds states of -C d/dx (1/m) d/dx + V above the minimum of V.
Electrons are solved as they are.  Holes are solved in the hole picture: the energy axis is
mirrored, V_h(x) = -E_v(x), so a layer with a *higher* valence-band edge (the hole well) has a
*lower* V_h and is a well.  Both pictures are shifted so that the band extremum of the stack sits
at 0:

    V_layer = s (E_band,layer - E_ref),    s = +1 (electron), -1 (holes),
    E_ref   = min over layers of E_c (electron) or max over layers of E_v (holes),

so every ``band_edge`` is >= 0, the deepest layer is at 0, and a solved energy epsilon is the
state's confinement energy measured from that extremum.  Back to absolute band energies (the
scale of the materials data): E = E_ref + s epsilon, i.e. E = E_c,min + epsilon for an electron and
E = E_v,max - epsilon for a hole (a hole level lies *below* the valence-band top by its confinement
energy).  An interband transition e_i - h_j therefore costs
E_ref,e - E_ref,h + epsilon_e,i + epsilon_h,j (the gap of the well material plus both confinement
energies in a type-I well); :func:`effective_gap` gives E_ref,e - E_ref,h.

Units: :class:`StackBands` holds energies in the unit system's energy unit (meV for ``"nm-meV"``,
hartree for ``"atomic"``), converted from eV with the CODATA constants of :mod:`fdsolver.model.units`.

Strain is not modelled: every layer keeps its unstrained bulk band edges and masses, so a
mismatched (pseudomorphic) layer is described wrongly by roughly the deformation-potential shifts
(tens of meV per percent of mismatch).  :func:`lattice_mismatch` warns above 0.5 %.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from fdsolver.errors import CaseError, did_you_mean
from fdsolver.model.materials.library import MaterialLibrary, builtin_library
from fdsolver.model.materials.parameters import MaterialParameters
from fdsolver.model.units import UNIT_SYSTEMS, UnitSystem

CARRIERS = ("electron", "heavy_hole", "light_hole")
#: lattice mismatch above which :func:`lattice_mismatch` warns (0.5 %)
MISMATCH_LIMIT = 0.005


def _carrier(carrier: str) -> str:
    if carrier not in CARRIERS:
        raise CaseError(f"carrier must be one of {', '.join(CARRIERS)}, got {carrier!r}{did_you_mean(carrier, CARRIERS)}",
                        key="carrier")
    return carrier


def stack_materials(specs: Sequence[Mapping], temperature: float = 300.0,
                    library: MaterialLibrary | None = None) -> list[MaterialParameters]:
    """Look up every layer of a stack: ``specs[k]`` = {"material": NAME, "x": X (alloys), "overrides": {...}}.

    Errors come back located at the layer, numbered from 1 as in case files
    (``layer[2].x``, ``layer[3].overrides.electron_mass``); the caller adds the file.
    """
    lib = library or builtin_library()
    out = []
    for k, spec in enumerate(specs, start=1):
        try:
            out.append(lib.lookup(spec["material"], spec.get("x"), temperature, spec.get("overrides")))
        except CaseError as err:
            raise err.located(key_prefix=f"layer[{k}]") from None
        except KeyError:
            raise CaseError("no material given", key=f"layer[{k}].material") from None
    return out


def band_energy(p: MaterialParameters, carrier: str) -> float:
    """Absolute band energy (eV) of ``carrier``'s band in material ``p``: E_c for electrons, E_v for holes."""
    return p.conduction_band_edge if _carrier(carrier) == "electron" else p.valence_band_offset


def carrier_mass(p: MaterialParameters, carrier: str) -> float:
    """Band-edge mass of ``carrier`` in ``p`` in m_e (hole masses along [001] from the Luttinger parameters)."""
    c = _carrier(carrier)
    return {"electron": p.electron_mass, "heavy_hole": p.heavy_hole_mass, "light_hole": p.light_hole_mass}[c]


def _units(units: str | UnitSystem) -> UnitSystem:
    if isinstance(units, UnitSystem):
        return units
    if not isinstance(units, str) or units not in UNIT_SYSTEMS:
        raise CaseError(f"units must be one of {sorted(UNIT_SYSTEMS)}, got {units!r}", key="units")
    return UNIT_SYSTEMS[units]


def ev_in(units: str | UnitSystem) -> float:
    """One electronvolt in the energy unit of ``units`` (1000 for nm-meV)."""
    from fdsolver.model.units import ELEMENTARY_CHARGE

    return ELEMENTARY_CHARGE / _units(units).energy_si


@dataclass(frozen=True)
class StackBands:
    """Band edges and masses of a stack for one carrier, in the solver's picture (see the module doc).

    ``band_edge[k]`` and ``gap[k]`` are in the energy unit of ``units``; ``mass[k]`` in m_e;
    ``reference`` is the absolute band energy (same unit) of the extremum the edges are measured from;
    ``sign`` is +1 for electrons and -1 for holes.
    """

    carrier: str
    units: str
    sign: int
    reference: float
    band_edge: tuple[float, ...]
    mass: tuple[float, ...]
    gap: tuple[float, ...]
    labels: tuple[str, ...]

    def absolute(self, energy):
        """Absolute band energy (energy unit) of solver energies ``energy``: E_ref + sign * energy."""
        return self.reference + self.sign * np.asarray(energy, dtype=float)

    def confinement(self, energy):
        """Confinement energy of solver energies ``energy``: measured from the stack's band extremum (the lowest band edge)."""
        return np.asarray(energy, dtype=float) - min(self.band_edge)


def stack_bands(materials: Sequence[MaterialParameters], carrier: str = "electron",
                units: str | UnitSystem = "nm-meV", reference: float | None = None) -> StackBands:
    """Band edges and masses of ``materials`` (one per layer, in stack order) for ``carrier``.

    ``reference`` (eV, absolute) replaces the default extremum (min E_c, or max E_v for holes);
    with it, band edges may be negative.  Energies come back in the energy unit of ``units``.
    """
    c = _carrier(carrier)
    u = _units(units)
    if not materials:
        raise CaseError("a stack needs at least one layer", key="layer")
    scale = ev_in(u)
    sign = 1 if c == "electron" else -1
    raw = [band_energy(p, c) for p in materials]
    ref = (min(raw) if sign > 0 else max(raw)) if reference is None else float(reference)
    edges = tuple(sign * (e - ref) * scale + 0.0 for e in raw)  # + 0.0: no negative zero
    return StackBands(carrier=c, units=u.name, sign=sign, reference=ref * scale, band_edge=edges,
                      mass=tuple(carrier_mass(p, c) for p in materials),
                      gap=tuple(p.band_gap * scale for p in materials), labels=tuple(p.label for p in materials))


def effective_gap(electrons: StackBands, holes: StackBands) -> float:
    """E_ref,electron - E_ref,hole (energy unit): the energy of an e-h pair at both band extrema.

    An interband transition e_i - h_j costs ``effective_gap + epsilon_e,i + epsilon_h,j`` with the
    solver (confinement) energies of both carriers.
    """
    if electrons.sign != 1 or holes.sign != -1:
        raise ValueError("effective_gap needs an electron StackBands and a hole StackBands")
    if electrons.units != holes.units:
        raise ValueError(f"unit systems differ: {electrons.units} and {holes.units}")
    return electrons.reference - holes.reference


@dataclass(frozen=True)
class LatticeMismatch:
    """Relative lattice mismatch (a - a_ref)/a_ref of every layer against the reference material."""

    reference: str
    mismatch: tuple[float, ...]
    worst: float
    worst_layer: int
    limit: float
    warning: str | None


def lattice_mismatch(materials: Sequence[MaterialParameters], reference: int | MaterialParameters = 0,
                     names: Sequence[str] | None = None, limit: float = MISMATCH_LIMIT) -> LatticeMismatch:
    """Mismatch of each layer against ``reference`` (a layer index, default the first layer, or a substrate).

    Lattice constants at each material's lookup temperature.  ``warning`` is a one-line text when
    the largest |mismatch| exceeds ``limit`` (0.5 % by default), saying that strain is not modelled.
    """
    if not materials:
        raise CaseError("a stack needs at least one layer", key="layer")
    ref = materials[reference] if isinstance(reference, int) else reference
    a_ref = ref.lattice_constant
    mism = tuple((p.lattice_constant - a_ref) / a_ref for p in materials)
    k = int(np.argmax(np.abs(mism)))
    worst = mism[k]
    warning = None
    if abs(worst) > limit:
        who = f"layer {k + 1}" + (f" '{names[k]}'" if names and names[k] else "")
        kind = "compressive" if worst > 0 else "tensile"
        warning = (f"lattice mismatch {100 * worst:+.2f} % ({who}, {materials[k].label} on {ref.label}; {kind} if "
                   f"pseudomorphic) exceeds {100 * limit:g} %: strain is not modelled, so this layer's band edges "
                   f"and masses are those of unstrained bulk and may be off by tens of meV")
    return LatticeMismatch(reference=ref.label, mismatch=mism, worst=worst, worst_layer=k, limit=limit, warning=warning)
