"""Every command as one call, returning the Dataset the command line archives.

=====================  ==================================================  =======================
call                   what                                                archive kind
=====================  ==================================================  =======================
:func:`solve`          bound states of a case                               ``solve``
:func:`sweep`          a case solved over a grid of param values           ``sweep``
:func:`threshold`      param values where a state binds (no box)           ``threshold``
:func:`delta_check`    finite wells against the zero-range point model,    ``delta_check``
                       over a ladder of widths
:func:`delta_map`      the same comparison over a plane of two params      ``delta_check`` (a map)
:func:`bands`          Bloch bands of a periodic case (and N-period         ``bands``
                       stacks beside them)
:func:`band_sweep`     band edges, widths, gaps and masses over a grid     ``band_sweep``
                       of param values
:func:`transmit`       T(E), R(E) and the resonances in the range          ``transmission``
:func:`resonances`     S-matrix poles in a window (or against params)      ``resonances``
:func:`current`        Tsu-Esaki current density J(V) of a biased stack    ``current``
=====================  ==================================================  =======================

:func:`delta_check` of a periodic case compares its delta comb with combs of finite wells or
barriers (kind ``comb_check``).

``case`` is a :class:`~fdsolver.input.case.Case` (params already set with
``load_case(path, NAME=value)`` stay fixed in a scan) or the path of a case
file.  Bad input raises :class:`~fdsolver.errors.CaseError`.  Scans
(``sweep``, ``delta_map``) run on ``executor`` ("serial", "processes" (the
default), "dask", or an executor object), keep a checkpoint beside
``output`` when it is given and write it atomically at the end.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from typing import TYPE_CHECKING

from fdsolver.errors import ArchiveError, CaseError
from fdsolver.input.case import Case, case_from_dict, case_from_text, load_case
from fdsolver.io.archive import stamp
from fdsolver.io.datasets import solve_record
from fdsolver.limits import MAX_SCAN
from fdsolver.runs import not_periodic as _not_periodic
from fdsolver.runs import solve_case

if TYPE_CHECKING:
    import xarray as xr

    from fdsolver.io.record import Record

__all__ = ["case_of_run", "delta_check", "delta_map", "solve", "solve_case", "sweep", "threshold"]


def _case(case) -> Case:
    if isinstance(case, (str, os.PathLike)):
        return load_case(case)
    if not isinstance(case, Case):
        raise CaseError(f"give a case (fdsolver.load_case, case_from_dict) or the path of a case file, got "
                        f"{type(case).__name__}")
    return case


def _where(case: Case) -> str:
    return str(case.path or case.title)


def solve_optics(case: Case, refine: bool = True):
    """:func:`solve_case` plus the intersubband transitions of its states, with error estimates
    (:func:`fdsolver.optics.solved.transitions_of`): the result the solve archive is built from."""
    from fdsolver.optics.solved import WithOptics, transitions_of

    sol = solve_case(case)
    info = getattr(case, "stack_info", None)
    # confinement energies back on the library's absolute scale (holes: energies mirrored)
    band = info.bands.absolute(sol.energy) if info is not None else None
    return WithOptics(sol, transitions_of(case.potential, sol, case.units, refine=refine), band)


def solve(case: Case | str | os.PathLike, action: str | None = None) -> xr.Dataset:
    """Bound states of ``case`` as an archive-ready Dataset (kind ``solve``, :data:`fdsolver.io.specs.SOLVE`)."""
    return solve_record_of(case, action).dataset()


def solve_record_of(case: Case | str | os.PathLike, action: str | None = None) -> Record:
    """:func:`solve` without building the Dataset (no xarray import): the archive's variables and attributes."""
    case = _case(case)
    sol = solve_optics(case)
    return solve_record(case, sol, stamp(action or f"solve {_where(case)}"))


def case_of_run(ds: xr.Dataset) -> Case:
    """Rebuild the case stored in an archive (its text and the table files it read), as untrusted text.

    The stored case is validated like a case file, within the work budget, and never makes fdsolver read a
    file: a table it names must be stored in the archive too.  Every problem is an
    :class:`~fdsolver.errors.ArchiveError` naming the archive.
    """
    import json

    from fdsolver.io.specs import COMMON_ATTRS
    from fdsolver.io.untrusted import _value

    source = ds.encoding.get("source")
    attrs = getattr(ds, "attrs", None)
    if not isinstance(attrs, dict) or "case_text" not in attrs:
        raise ArchiveError("archive does not hold a stored case (no case_text attribute)", file=source)
    try:
        text = _value("case_text", COMMON_ATTRS["case_text"], attrs["case_text"], source)
        tables = json.loads(_value("case_tables", COMMON_ATTRS["case_tables"], attrs.get("case_tables", "{}"), source))
        params = json.loads(_value("params", COMMON_ATTRS["params"], attrs.get("params", "{}"), source))
        path = attrs.get("case_file") or None
        path = path if isinstance(path, str) else None
        case = case_from_text(text, path=path, tables=tables, read_files=False)
        changed = {k: v for k, v in params.items() if case.params.get(k) != v}
        if changed and case.param_units:  # stored in the case units; a param given with a unit is overridden in it
            from fdsolver.input.quantities import as_given

            changed = {k: as_given(case, k, v) for k, v in changed.items()}
        return case.with_params(**changed) if changed else case
    except ArchiveError:
        raise
    except CaseError as err:
        raise ArchiveError(f"the case stored in the archive is not valid: {err}", file=source) from None
    except (RecursionError, MemoryError, ValueError, TypeError, KeyError, AttributeError) as exc:
        raise ArchiveError(f"the case stored in the archive cannot be read ({type(exc).__name__}); it is damaged or "
                           "was not written by fdsolver", file=source) from None


# ------------------------------------------------------------------ scans
def _texts(vary, key: str = "--vary") -> list[str]:
    """One axis text or a sequence of them, as a list (CaseError for anything else)."""
    texts = [vary] if isinstance(vary, str) else list(vary) if isinstance(vary, (list, tuple)) else None
    if vary is None:
        return []
    if texts is None or not all(isinstance(t, str) for t in texts):
        raise CaseError(f"give axes as text like \"d=1:5:20\" (one, or a list of them), got {vary!r}", key=key)
    return texts


def _scan_checks(output, resume: bool, restart: bool, chunk) -> None:
    if resume and restart:
        raise CaseError("give --resume or --restart, not both", key="--resume")
    if (resume or restart) and output is None:
        raise CaseError("a checkpoint lives beside an output file; give one (-o) to resume or restart", key="--resume")
    if chunk is not None and (isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1):
        raise CaseError(f"needs at least 1 point per task, got {chunk!r}", key="--chunk")


def _run_on(executor, workers, cluster, scheduler, work):
    """``work(executor)`` on the executor asked for; one given as an object is used as it is (not entered)."""
    from fdsolver.scans.runner import executor_for

    ex = executor_for(executor, workers, cluster, scheduler)
    if ex is executor:
        return work(ex)
    with ex:
        return work(ex)


def sweep(case, vary: str | Sequence[str] = (), *, save_psi: bool = False, output=None, resume: bool = False,
          restart: bool = False, executor=None, workers: int | None = None, cluster: str | None = None,
          scheduler: str | None = None, memory_mb: float | None = None, chunk: int | None = None,
          thresholds: bool = True, energies_only: bool = False, progress=None, before_write=None,
          action: str | None = None) -> xr.Dataset:
    """Solve ``case`` at every point of the cartesian product of the ``vary`` axes (kind ``sweep``).

    ``vary``: ``"NAME=START:STOP:COUNT"`` (``:log`` for geometric spacing) or
    ``"NAME=v1,v2,..."``, one per swept param (default: the case's
    ``[sweep] vary``).  ``save_psi`` keeps the wavefunctions on one common x
    grid.  ``output``: the archive to write, with its checkpoint beside it
    (``resume`` continues an interrupted run, ``restart`` discards its
    checkpoint).  ``executor``/``workers``/``cluster`` ("local:N", "local:N:dashboard")/``scheduler``
    (a Dask address) say where points run.  ``memory_mb`` is the budget of the
    result, ``chunk`` the points per task, ``thresholds`` whether binding
    thresholds are located along a single swept param.  ``energies_only`` keeps
    what needs no wavefunction (energies, errors, convergence, parities, level
    widths, splittings, counts) and leaves out <x>, the spreads, the regions'
    shares, the hard-wall flags and the transitions: each point skips them
    (refused with ``save_psi``).  ``progress(n)`` is
    called as points finish, ``before_write(ds)`` with the result before it is
    written (see :func:`fdsolver.scans.runner.run`).
    """
    from fdsolver.scans.sweep import plan_sweep, run_sweep, sweep_axes

    case = _case(case)
    _not_periodic(case, f"fdsolver bands {_where(case)} --vary ... (or fdsolver.band_sweep(case, vary))")
    _scan_checks(output, resume, restart, chunk)
    fixed = dict(case.overrides)
    axes = sweep_axes(_texts(vary), case)
    spec = plan_sweep(case, axes, fixed, save_psi, memory_mb, chunk, energies_only)
    action = action or (f"sweep {_where(case)} " + " ".join(f"--vary {a.text}" for a in axes)
                        + (" --energies-only" if energies_only else ""))
    return _run_on(executor, workers, cluster, scheduler,
                   lambda ex: run_sweep(spec, ex, output=output, resume=resume, restart=restart, action=action,
                                        progress=progress, locate=thresholds, before_write=before_write))


def threshold(case, vary: str, *, state: int | None = None, scan: int = 129, rtol: float = 1e-9, progress=None,
              action: str | None = None) -> xr.Dataset:
    """Every value of a param in an interval at which a bound state appears (kind ``threshold``; no box is used).

    ``vary``: ``"NAME=LO:HI"``.  ``state``: only the state with that many
    nodes.  The interval is scanned at ``scan`` points to bracket the
    thresholds, each then found to the relative accuracy ``rtol``; ``progress``
    as for :func:`sweep` (called as scan points are done).
    """
    from fdsolver.io.datasets import Param, threshold_dataset
    from fdsolver.scans.axes import parse_interval, param_units
    from fdsolver.scans.thresholds import find_thresholds

    case = _case(case)
    _not_periodic(case, f"fdsolver bands {_where(case)} --vary ... to follow its band edges")
    if state is not None and (isinstance(state, bool) or not isinstance(state, int) or state < 0):
        raise CaseError(f"a state label is its node count, 0 or more; got {state}", key="--state")
    if isinstance(scan, bool) or not isinstance(scan, int) or not 3 <= scan <= MAX_SCAN:
        raise CaseError(f"must be a whole number from 3 to {MAX_SCAN} (the work budget), got {scan!r}", key="--scan")
    if isinstance(rtol, bool) or not isinstance(rtol, (int, float)) or not 1e-14 <= rtol <= 1e-3:
        raise CaseError(f"must be from 1e-14 to 1e-3, got {rtol!r}", key="--rtol")
    name, lo, hi = parse_interval(vary, case)
    units = param_units(case, name)
    search = find_thresholds(case, name, lo, hi, fixed=dict(case.overrides), state=state, scan=scan, rtol=rtol,
                             units=units[1], progress=progress)
    param = Param(name, *units)
    return threshold_dataset(case, search, stamp(action or f"threshold {_where(case)} --vary {vary}"), param)


def delta_check(case, *, shape: str | None = None, widths=None, tolerance: float | None = None,
                from_finite: bool | None = None, transmission: bool = False, energies=None, progress=None,
                action: str | None = None) -> xr.Dataset:
    """Finite wells against the zero-range point model over a ladder of widths (kind ``delta_check``).

    A case whose points sit on a background (a layer stack, other components,
    hard walls) is checked against the same case with exact point
    interactions instead (kind ``delta_background``,
    :mod:`fdsolver.zerorange.background`).
    With ``transmission`` the comparison is of scattering instead: T(E) at
    ``energies`` ("LO:HI" or "LO:HI:N", case energy unit; default as for
    :func:`transmit`) and the resonances in that range (kind
    ``delta_transmission``, :mod:`fdsolver.zerorange.scattercheck`).

    Each point component is replaced by a ``shape`` well ("square",
    "smooth_square", "gaussian", "sech2") of the same strength and centroid,
    at the ``widths`` "LO:HI:N" (default: automatic from the decay length);
    with ``from_finite`` the case's own narrow wells are compared with their
    point model instead.  ``tolerance`` is the relative deviation the point
    model must stay below.  Unset options come from the case's
    ``[delta_check]`` table.
    """
    from fdsolver.io.datasets import ladder_dataset
    from fdsolver.scans.options import read_options
    from fdsolver.zerorange.background import on_background
    from fdsolver.zerorange.ladder import run_ladder

    case = _case(case)
    if from_finite and shape is not None:
        raise CaseError("--shape chooses the wells that replace points; --from-finite uses the case's own wells", key="--shape")
    if case.domain.periodic:
        return _comb_check(case, shape, widths, tolerance, from_finite, action)
    options = read_options(case, shape=shape, widths=widths, tolerance=tolerance, from_finite=from_finite)
    if options.from_finite and options.widths is not None:
        raise CaseError("--widths sets the replacement widths; --from-finite keeps the case's own wells", key="--widths")
    if transmission:
        from fdsolver.continuum.options import energies_of
        from fdsolver.io.datasets import scatter_check_dataset
        from fdsolver.zerorange.scattercheck import run_scatter_check

        if options.from_finite:
            raise CaseError("--transmission replaces points by finite wells; --from-finite does not apply",
                            key="--from-finite")
        lo, hi, n, _ = energies_of(case, energies)
        check = _located(case, lambda: run_scatter_check(case, options.shape, options.widths, options.tolerance,
                                                         (lo, hi, n), progress=progress))
        return scatter_check_dataset(case, check, stamp(action or f"delta-check {_where(case)} --transmission"))
    if energies is not None:
        raise CaseError("--energies sets the energies of a scattering check; add --transmission", key="--energies")
    if not options.from_finite and on_background(case):
        from fdsolver.io.datasets import background_dataset
        from fdsolver.zerorange.background import run_background

        check = run_background(case, options.shape, options.widths, options.tolerance, progress=progress)
        return background_dataset(case, check, stamp(action or f"delta-check {_where(case)}"))
    lad = run_ladder(case, options, progress=progress)
    return ladder_dataset(case, lad, stamp(action or f"delta-check {_where(case)}"))


def delta_map(case, maps: Sequence[str] | None = None, *, shape: str | None = None, widths=None,
              tolerance: float | None = None, from_finite: bool | None = None, output=None, resume: bool = False,
              restart: bool = False, executor=None, workers: int | None = None, cluster: str | None = None,
              scheduler: str | None = None, chunk: int | None = None, progress=None, before_write=None,
              action: str | None = None) -> xr.Dataset:
    """The zero-range comparison over a plane of two params (kind ``delta_check``, a validity map).

    ``maps``: two axes ``"NAME=LO:HI:N"`` (``:log``/``:lin``), each a case
    param or ``"width"`` (the replacement width; without it give one width in
    ``widths``); default: the case's ``[delta_check] map``.  The other
    options are those of :func:`delta_check` and, for where the points run,
    the checkpoint and ``progress``, those of :func:`sweep`.
    """
    from fdsolver.scans.maps import plan_map, run_map
    from fdsolver.scans.options import read_options
    from fdsolver.zerorange.background import on_background

    case = _case(case)
    _not_periodic(case, f"fdsolver delta-check {_where(case)} (without --map: the comb check of its bands)")
    _scan_checks(output, resume, restart, chunk)
    if from_finite and shape is not None:
        raise CaseError("--shape chooses the wells that replace points; --from-finite uses the case's own wells", key="--shape")
    options = read_options(case, shape=shape, widths=widths, tolerance=tolerance, from_finite=from_finite,
                           maps=_texts(maps, "--map") or None)
    if not options.from_finite and on_background(case):
        raise CaseError("validity maps compare points on the open line with nothing else; a case with a background "
                        "(layers, other components, walls) is checked over widths: drop --map", key="--map")
    spec = plan_map(case, options, dict(case.overrides), chunk)
    action = action or f"delta-check {_where(case)} " + " ".join(f"--map {a.text}" for a in spec.axes)
    return _run_on(executor, workers, cluster, scheduler,
                   lambda ex: run_map(spec, ex, case=case, output=output, resume=resume, restart=restart, action=action,
                                      progress=progress, before_write=before_write))



# ------------------------------------------------------------------ periodic cases
def bands(case, *, n_bands: int | None = None, wavevectors: int | None = None, bloch=None, stacks=None,
          termination: str = "hard", action: str | None = None) -> xr.Dataset:
    """Bloch bands of a periodic case (kind ``bands``): edges, widths, gaps, band-edge masses, E_n(q), density of states.

    ``n_bands`` and ``wavevectors`` override the case's ``[solve] bands`` and
    ``wavevectors``.  ``bloch``: wavevectors in units of pi/L ("0,1" or a
    list) at which every band's Bloch function is stored.  ``stacks``:
    numbers of periods N ("2,4,8,16" or a list) of finite stacks, solved as
    bound-state problems and set beside the bands (``termination`` "hard":
    walls at the period ends; "open": in the cladding).
    """
    return bands_record_of(case, n_bands=n_bands, wavevectors=wavevectors, bloch=bloch, stacks=stacks,
                           termination=termination, action=action).dataset()


def bands_record_of(case, *, n_bands: int | None = None, wavevectors: int | None = None, bloch=None, stacks=None,
                    termination: str = "hard", action: str | None = None) -> Record:
    """:func:`bands` without building the Dataset (no xarray import): the archive's variables and attributes."""
    from fdsolver.bloch.study import band_study
    from fdsolver.io.datasets import bands_record

    case = _case(case)
    try:
        study = band_study(case, n_bands=n_bands, n_wavevectors=wavevectors, bloch=bloch, stacks=stacks,
                           termination=termination)
    except CaseError as err:  # an option's error names the case it was given with, as --vary's does
        raise err.located(file=case.path) from None
    return bands_record(case, study, stamp(action or f"bands {_where(case)}"))


def _comb_check(case: Case, shape, widths, tolerance, from_finite, action) -> xr.Dataset:
    """:func:`delta_check` of a periodic case: its delta comb against finite lattices (kind ``comb_check``)."""
    from fdsolver.io.datasets import comb_check_dataset
    from fdsolver.scans.options import read_options
    from fdsolver.zerorange.combcheck import check_case

    options = read_options(case, shape=shape, widths=widths, tolerance=tolerance, from_finite=from_finite)
    if options.maps:
        raise CaseError("a validity map (--map, [delta_check] map) is for bound states; a periodic case gets the comb "
                        "check over a width ladder", file=case.path, key="delta_check.map")
    check = check_case(case, options)
    return comb_check_dataset(case, check, stamp(action or f"delta-check {_where(case)}"))


def band_sweep(case, vary: str | Sequence[str] = (), *, n_bands: int | None = None, output=None, resume: bool = False,
               restart: bool = False, executor=None, workers: int | None = None, cluster: str | None = None,
               scheduler: str | None = None, memory_mb: float | None = None, chunk: int | None = None, progress=None,
               action: str | None = None) -> xr.Dataset:
    """Band edges, widths, gaps and band-edge masses of a periodic case over a grid of params (kind ``band_sweep``).

    ``vary`` as for :func:`sweep` (default: the case's ``[sweep] vary``);
    ``n_bands`` overrides ``[solve] bands``.  Where the points run, the
    checkpoint beside ``output``, ``memory_mb``, ``chunk`` and ``progress``
    are those of :func:`sweep`.
    """
    from fdsolver.bloch.study import lattice_of
    from fdsolver.scans.bandsweep import plan_band_sweep, run_band_sweep
    from fdsolver.scans.sweep import sweep_axes

    case = _case(case)
    lattice_of(case)  # a case that is not periodic is refused before anything else
    _scan_checks(output, resume, restart, chunk)
    if memory_mb is not None and (isinstance(memory_mb, bool) or not memory_mb > 0):
        raise CaseError(f"must be positive, got {memory_mb!r}", key="--memory-mb")
    axes = sweep_axes(_texts(vary), case, "band_sweep")
    spec = plan_band_sweep(case, axes, dict(case.overrides), n_bands, memory_mb, chunk)
    action = action or f"bands {_where(case)} " + " ".join(f"--vary {a.text}" for a in axes)
    return _run_on(executor, workers, cluster, scheduler,
                   lambda ex: run_band_sweep(spec, ex, output=output, resume=resume, restart=restart, action=action,
                                             progress=progress))


# ------------------------------------------------------------------ optics and materials
def _run(run) -> xr.Dataset:
    from fdsolver.io.archive import open_run

    return open_run(run) if isinstance(run, (str, os.PathLike)) else run


def _quantity_option(value, dimension: str, case: Case, key: str) -> float:
    """A number in the case units, or a string with a unit converted to them (``"5 meV"``)."""
    from fdsolver.input.quantities import split_quantity, to_case_units

    q = split_quantity(value)
    if q is not None:
        return to_case_units(q[0], q[1], dimension, case.units, case.carrier, key=key)
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise CaseError(f"must be a number or a number with a unit, got {value!r}", key=key) from None
    return v


def _sheet_density(value) -> float:
    """A sheet density in cm^-2: a number (cm^-2) or a string with a unit ("1e11 cm^-2", "0.01 nm^-2")."""
    from fdsolver.input.quantities import _quantity, pint_module, split_quantity

    q = split_quantity(value)
    if q is not None:
        pint = pint_module()
        try:
            v = float(_quantity(q[0], q[1], None, "--density").to("1/cm**2").magnitude)
        except pint.errors.DimensionalityError:
            raise CaseError(f"'{value}' is not a sheet density (carriers per area, e.g. 1e11 cm^-2)", key="--density") from None
    else:
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise CaseError(f"must be a sheet density in cm^-2, got {value!r}", key="--density") from None
    if not (v >= 0 and v < 1e16):
        raise CaseError(f"must be a sheet density from 0 to 1e16 cm^-2, got {v:g}", key="--density")
    return v


def absorption(run, *, density, broadening, temperature=None, refractive_index: float = 3.3, period=None,
               energies: str | None = None, action: str | None = None) -> xr.Dataset:
    """The intersubband absorption spectrum of a solve archive (kind ``absorption``).

    ``run``: a solve archive (Dataset or path) with oscillator strengths.  ``density``: the sheet
    density of carriers in cm^-2 (or a string with a unit, "1e11 cm^-2").  ``broadening``: the
    Lorentzian FWHM in the case energy unit (or "5 meV").  ``temperature`` (K, default the case's) fills
    the subbands; ``refractive_index`` n; ``period`` (a length, or "30 nm") gives the absorption
    coefficient of a stack of such wells.  ``energies``: "LO:HI:N" photon energies (default: around the
    transitions).  Formula and source: :mod:`fdsolver.optics.absorption`.
    """
    import numpy as np

    from fdsolver.io.datasets import absorption_dataset
    from fdsolver.optics.absorption import absorption_study

    ds = _run(run)
    where = ds.encoding.get("source") or ds.attrs.get("case_file") or "the run"
    if ds.attrs.get("fdsolver_kind") != "solve":
        raise CaseError(f"needs a solve archive (fdsolver solve -o RUN.nc), got one of kind "
                        f"'{ds.attrs.get('fdsolver_kind')}'", file=str(where))
    if "oscillator_strength" not in ds or ds.sizes.get("state", 0) < 2:
        raise CaseError("the run has fewer than two bound states (no intersubband transition); nothing absorbs",
                        file=str(where))
    case = case_of_run(ds)
    gamma = _quantity_option(broadening, "energy", case, "--broadening")
    if not (np.isfinite(gamma) and gamma > 0):
        raise CaseError(f"the broadening (FWHM) must be positive, got {gamma:g}", key="--broadening")
    t = case.temperature if temperature is None else _quantity_option(temperature, "temperature", case, "--temperature")
    if not (np.isfinite(t) and 0 <= t <= 5000):
        raise CaseError(f"must be from 0 to 5000 K, got {t:g}", key="--temperature")
    if not (isinstance(refractive_index, (int, float)) and 0.5 <= refractive_index <= 10):
        raise CaseError(f"must be a refractive index from 0.5 to 10, got {refractive_index!r}", key="--refractive-index")
    per = None if period is None else _quantity_option(period, "length", case, "--period")
    if per is not None and not per > 0:
        raise CaseError(f"must be a positive length, got {per:g}", key="--period")
    ph = None
    if energies is not None:
        from fdsolver.scans.axes import parse_axis

        class _Ph:  # the axis parser wants a case with params; photon energies are a study axis of their own
            params: dict = {}
            path = None

        from fdsolver.scans.axes import Extra

        eu = case.units.energy
        axis = parse_axis(f"photon_energy={energies}", _Ph, "--energies", extra={"photon_energy": Extra(eu, eu, "photon energy")})
        ph = axis.values
    study = absorption_study(ds.energy.values, ds.oscillator_strength.values, ds.inplane_mass.values,
                             float(ds.reference_mass.values), case.units, sheet_density=_sheet_density(density),
                             broadening=gamma, temperature=t, refractive_index=float(refractive_index), period=per,
                             photon_energy=ph, threshold=float(ds.attrs.get("continuum_threshold", np.inf)))
    extra = {"broadening": gamma, "broadening_note": "Lorentzian full width at half maximum, case energy unit",
             "refractive_index": float(refractive_index), "solve_run": str(where),
             "period": np.nan if per is None else per, "reference_mass": float(ds.reference_mass.values)}
    cmd = action or f"absorption {where} --density {density} --broadening {broadening}"
    return absorption_dataset(case, study, stamp(cmd), extra)


def interband(case, *, action: str | None = None) -> xr.Dataset:
    """Electrons, heavy holes and light holes of one stack of named materials, and their e-h transitions
    (kind ``interband``): confinement energies, E(e_i - h_j) = effective gap + e_i + h_j, and |<e_i|h_j>|^2
    extrapolated over nested grids (:mod:`fdsolver.optics.interband`).  The case's ``carrier`` is ignored;
    the energy-dependent mass, if asked for, applies to electrons and light holes (not to heavy holes)."""
    from fdsolver.io.datasets import interband_dataset
    from fdsolver.model.materials import effective_gap
    from fdsolver.optics.interband import interband_study

    case = _case(case)
    if case.stack_info is None:
        raise CaseError("interband transitions need a [[layer]] stack of named materials (material = \"GaAs\", ...) "
                        "so that the valence band and the gap are known", file=case.path, key="layer")
    made = {}
    notes = list(case.notes)
    for carrier in ("electron", "heavy_hole", "light_hole"):
        data = {**case.data, "carrier": carrier}
        if carrier == "heavy_hole" and data.get("nonparabolicity"):
            data["nonparabolicity"] = False
            notes.append("heavy holes are solved with a constant mass (not in the two-band model)")
        c = case_from_dict(data, path=case.path, text=case.text, overrides=case.overrides, tables=case.tables)
        made[carrier] = (c, solve_case(c, notes=False))
        for m in made[carrier][1].messages:
            notes.append(f"{carrier.replace('_', ' ')}s: {m}")
    if any(c.potential.shapes for c, _ in made.values()) and any(not _has_field_units(c) for c, _ in made.values()):
        notes.append("[[potential]] components given in energy units act the same way on every carrier, each in its "
                     "own picture; give a field as an electric field (\"20 kV/cm\") to apply it physically")
    (ce, se), (ch, sh), (cl, sl) = made["electron"], made["heavy_hole"], made["light_hole"]
    be, bh = ce.stack_info.bands, ch.stack_info.bands
    study = interband_study((ce.potential, se), (ch.potential, sh), (cl.potential, sl), effective_gap(be, bh),
                            be.reference, bh.reference, tuple(dict.fromkeys(notes)))
    import numpy as np

    ds = interband_dataset(ce, study, stamp(action or f"interband {_where(case)}"))
    ds.attrs["heavy_hole_layer_masses"] = np.array(bh.mass, dtype=float)
    ds.attrs["light_hole_layer_masses"] = np.array(cl.stack_info.bands.mass, dtype=float)
    ds.attrs["carrier"] = "electron, heavy_hole, light_hole"
    return ds


def _has_field_units(case: Case) -> bool:
    """True if every [[potential]] component of the case data gives its values with electrostatic units (its own,
    or those of the [params] entry it names)."""
    from fdsolver.input.quantities import split_quantity

    for comp in case.data.get("potential") or []:
        for k, v in comp.items():
            if k in ("shape", "name", "center", "width", "sigma", "edge", "file", "interpolation", "x_column",
                     "v_column", "V", "a"):
                continue
            q = split_quantity(v)
            unit = q[1] if q is not None else case.param_units.get(v.strip()) if isinstance(v, str) else None
            if unit is None or "V" not in unit or "eV" in unit:  # a plain param reference takes its param's unit
                return False
    return True


def materials(name: str | None = None, *, x: float | None = None, temperature: float = 300.0, file=None,
              text: bool = False):
    """The materials library: with ``name``, the parameters of that material (composition ``x``, ``temperature``
    in K) with the source of every value; without, the list of materials.  ``file`` adds a data file of your
    own.  Returns JSON-able data, or with ``text=True`` the (text, data) pair the command prints
    (:func:`fdsolver.model.materials.format_material`)."""
    from fdsolver.model.materials import format_material, load_library

    out = format_material(name, x=x, temperature=temperature, library=load_library(file))
    return out if text else out[1]


# ------------------------------------------------------------------ the continuum
def _located(case: Case, call):
    """``call()`` with a core CaseError located in the case file."""
    try:
        return call()
    except CaseError as err:
        raise err.located(file=case.path) from None


def transmission_values(tr) -> dict:
    """The variables of a transmission archive from a :class:`~fdsolver.continuum.transmission.Transmission`."""
    import numpy as np

    from fdsolver.scans.continuum import resonance_arrays

    out = {"energy": tr.energy, "transmission": tr.transmission, "transmission_error": tr.transmission_error,
           "reflection": tr.reflection, "log10_transmission": tr.log_transmission / np.log(10.0),
           "unitarity_defect": tr.unitarity_defect, "incident_open": tr.open.astype(np.int8)}
    if tr.resonances is not None:
        out.update(resonance_arrays(tr.resonances))
    return out


def _below_asymptotes(case, lo: float, hi: float, side: str) -> str | None:
    """The message for an energy range where no wave comes in from ``side`` (None if that is not the trouble)."""
    import math

    unit = case.units.energy
    v_l, v_r = case.potential.asymptote(-1), case.potential.asymptote(1)
    v_in, v_out = (v_l, v_r) if side == "left" else (v_r, v_l)
    if not (math.isfinite(v_in) and hi <= v_in):
        return None
    other = "right" if side == "left" else "left"
    if math.isfinite(v_out) and hi <= v_out or v_out == math.inf:
        return (f"the range {lo:g}:{hi:g} {unit} lies below both asymptotes (left {v_l:g}, right {v_r:g} {unit}): "
                f"no wave can come in from either side; give energies above {min(v_l, v_r):g} {unit}")
    return (f"the range {lo:g}:{hi:g} {unit} lies below the {side} asymptote ({v_in:g} {unit}): no wave comes in from "
            f"the {side}; give energies above it, or --incident {other}")


def transmit(case, energies=None, *, incident: str | None = None, vary: str | Sequence[str] = (), output=None,
             resume: bool = False, restart: bool = False, executor=None, workers: int | None = None,
             cluster: str | None = None, scheduler: str | None = None, chunk: int | None = None, progress=None,
             action: str | None = None) -> xr.Dataset:
    """T(E) and R(E) of ``case`` (kind ``transmission``), every resonance in the range found and resolved.

    ``energies``: ``"LO:HI"`` (an adaptive grid that samples every resonance
    in the range, whatever its width) or ``"LO:HI:N"`` (exactly N even
    energies); default: the case's ``[transport] energies``, else from just
    above the incident asymptote to 1.5 times the structure's height.
    ``incident``: ``"left"`` (default) or ``"right"``.  With ``vary``
    (``"NAME=START:STOP:COUNT"``, as for :func:`sweep`) T(E) is computed at
    every point of the swept params through the scan runner, on one common
    grid: ``energies`` must then give a count (``"LO:HI:N"``); ``output``,
    ``resume``, ``restart``, ``executor``, ``workers``, ``cluster``,
    ``scheduler``, ``chunk`` and ``progress`` as for :func:`sweep`.
    """
    from fdsolver.continuum.options import energies_of, incident_of

    case = _case(case)
    texts = _texts(vary)
    if texts:
        side = incident_of(case, incident)
        return _transmit_sweep(case, texts, energies_of(case, energies, side), side, energies, output=output,
                               resume=resume, restart=restart, executor=executor, workers=workers, cluster=cluster,
                               scheduler=scheduler, chunk=chunk, progress=progress, action=action)
    ds = transmit_record_of(case, energies, incident=incident, resume=resume, restart=restart, action=action).dataset()
    if output is not None:
        from fdsolver.io.archive import write_dataset

        write_dataset(ds, output)
    return ds


def transmit_record_of(case, energies=None, *, incident: str | None = None, resume: bool = False,
                       restart: bool = False, action: str | None = None) -> Record:
    """:func:`transmit` of one structure (no ``vary``) without building the Dataset (no xarray import): the
    archive's variables and attributes."""
    from fdsolver.continuum.options import energies_of, incident_of
    from fdsolver.continuum.scan import fixed_grid, transmission_scan
    from fdsolver.io.datasets import transmission_record

    case = _case(case)
    side = incident_of(case, incident)
    lo, hi, n, src = energies_of(case, energies, side)
    if resume or restart:
        raise CaseError("--resume and --restart continue a sweep (--vary); one T(E) has no checkpoint",
                        key="--resume" if resume else "--restart")

    def run():
        if n is None:
            return transmission_scan(case.potential, lo, hi, incident=side, domain=case.domain)
        return fixed_grid(case.potential, lo, hi, n, incident=side, domain=case.domain)

    try:
        tr = run()
    except CaseError as err:
        if err.key == "energies":  # name the option or table key the range came from, and both asymptotes
            raise CaseError(_below_asymptotes(case, lo, hi, side) or err.message, file=src.file or case.path,
                            key=src.key) from None
        raise err.located(file=case.path) from None
    grid = (f"{n} even energies" if n is not None else
            f"adaptive: {tr.energy.size} energies (every pole in the range sampled uniformly in its phase)")
    text = action or f"transmit {_where(case)}" + (f" --energies {energies}" if energies else "")
    return transmission_record(case, transmission_values(tr), stamp(text), incident=side, method=tr.method,
                               grid=grid, notes=tr.notes)


def _transmit_sweep(case, texts, span, side, energies, *, output, resume, restart, executor, workers, cluster,
                    scheduler, chunk, progress, action):
    """:func:`transmit` over swept params (one common grid of N even energies) through the runner."""
    from fdsolver.io.datasets import transmission_dataset
    from fdsolver.io.specs import KINDS
    from fdsolver.scans.axes import parse_axes
    from fdsolver.scans.continuum import plan_transmission_sweep
    from fdsolver.scans.runner import run

    lo, hi, n, src = span
    if n is None:
        raise CaseError(f"a sweep needs one common energy grid: give a count, e.g. {lo:g}:{hi:g}:201",
                        file=src.file or case.path, key=src.key)
    msg = _below_asymptotes(case, lo, hi, side)
    if msg:
        raise CaseError(msg, file=src.file or case.path, key=src.key)
    _scan_checks(output, resume, restart, chunk)
    axes = parse_axes(texts, case, "--vary", reserved=KINDS["transmission"].names())
    spec = plan_transmission_sweep(case, axes, dict(case.overrides), (lo, hi, n), side, chunk)
    base = case.with_params(**spec.fixed) if spec.fixed else case
    text = action or f"transmit {_where(case)}" + (f" --energies {energies}" if energies else "") + \
        "".join(f" --vary {t}" for t in texts)

    def finish(results, history):
        return transmission_dataset(base, results.arrays(), history, incident=side,
                                    method="exact per segment (constant and Airy cells) or nested cells with "
                                           "Richardson; complex march from the transmitted side",
                                    grid=f"{n} even energies at every point", notes=results.notes(), axes=axes)

    return _run_on(executor, workers, cluster, scheduler,
                   lambda ex: run(spec, ex, finish, action=text, output=output, resume=resume, restart=restart,
                                  progress=progress))


def resonances(case, window=None, *, max_width=None, vary: str | Sequence[str] = (), output=None,
               resume: bool = False, restart: bool = False, executor=None, workers: int | None = None,
               cluster: str | None = None, scheduler: str | None = None, chunk: int | None = None, progress=None,
               action: str | None = None) -> xr.Dataset:
    """Resonances (S-matrix poles E_r - i Gamma/2) and bound states in an energy window (kind ``resonances``).

    ``window``: ``"LO:HI"`` or ``(lo, hi)`` (case energy unit); default: the
    case's ``[transport] window``, else the lowest to the highest V of the
    structure.  ``max_width``: the widest pole searched (default the window's
    width).  With ``vary`` (``"NAME=START:STOP:COUNT"``, as for
    :func:`sweep`) the window is searched at every point of the swept params
    through the scan runner (``output``, ``resume``, ``restart``,
    ``executor``, ``workers``, ``cluster``, ``scheduler``, ``chunk`` and
    ``progress`` as for :func:`sweep`); resonances are numbered from the low
    end of the window at each point.
    """
    from fdsolver.continuum.options import positive_energy, window_of
    from fdsolver.io.datasets import resonances_dataset

    case = _case(case)
    texts = _texts(vary)
    if not texts:
        ds = resonances_record_of(case, window, max_width=max_width, resume=resume, restart=restart,
                                  action=action).dataset()
        if output is not None:
            from fdsolver.io.archive import write_dataset

            write_dataset(ds, output)
        return ds
    if isinstance(window, (tuple, list)):
        window = f"{window[0]!r}:{window[1]!r}"
    lo, hi, _ = window_of(case, window)
    width = positive_energy(case, "max_width", max_width, "--max-width")
    text = action or f"resonances {_where(case)}" + (f" --window {window}" if window else "") + \
        "".join(f" --vary {t}" for t in texts)
    from fdsolver.io.specs import KINDS
    from fdsolver.scans.axes import parse_axes
    from fdsolver.scans.continuum import plan_resonance_sweep
    from fdsolver.scans.runner import run

    _scan_checks(output, resume, restart, chunk)
    axes = parse_axes(texts, case, "--vary", reserved=KINDS["resonances"].names())
    spec = plan_resonance_sweep(case, axes, dict(case.overrides), (lo, hi), width, chunk)
    base = case.with_params(**spec.fixed) if spec.fixed else case

    def finish(results, history):
        return resonances_dataset(base, results.arrays(), history, window=(lo, hi),
                                  max_width=width if width is not None else hi - lo, notes=results.notes(), axes=axes,
                                  fixed=spec.fixed)

    return _run_on(executor, workers, cluster, scheduler,
                   lambda ex: run(spec, ex, finish, action=text, output=output, resume=resume, restart=restart,
                                  progress=progress))


def resonances_record_of(case, window=None, *, max_width=None, resume: bool = False, restart: bool = False,
                         action: str | None = None) -> Record:
    """:func:`resonances` in one window (no ``vary``) without building the Dataset (no xarray import): the
    archive's variables and attributes."""
    from fdsolver.continuum.options import positive_energy, window_of
    from fdsolver.continuum.resonances import find_resonances
    from fdsolver.io.datasets import resonances_record
    from fdsolver.scans.continuum import resonance_arrays

    case = _case(case)
    if isinstance(window, (tuple, list)):
        window = f"{window[0]!r}:{window[1]!r}"
    lo, hi, _ = window_of(case, window)
    width = positive_energy(case, "max_width", max_width, "--max-width")
    text = action or f"resonances {_where(case)}" + (f" --window {window}" if window else "")
    if resume or restart:
        raise CaseError("--resume and --restart continue a sweep (--vary); one window has no checkpoint",
                        key="--resume" if resume else "--restart")
    res = _located(case, lambda: find_resonances(case.potential, (lo, hi), max_width=width, domain=case.domain))
    values = {**resonance_arrays(res), "solved": 1, "resonance_count": len(res)}
    notes = [n for n in res.notes if not n.startswith("no resonance")]  # the table says so itself
    return resonances_record(case, values, stamp(text), window=(lo, hi), max_width=res.max_width, notes=notes)


def current(case, bias=None, *, temperature: float | None = None, fermi_level: float | None = None, output=None,
            resume: bool = False, restart: bool = False, executor=None, workers: int | None = None,
            cluster: str | None = None, scheduler: str | None = None, chunk: int | None = None, progress=None,
            action: str | None = None) -> xr.Dataset:
    """Tsu-Esaki current density J(V) of a layer stack under bias (kind ``current``), with peak and valley.

    ``bias``: ``"LO:HI:N"`` (V), ``"V1,V2,..."`` or a sequence of values;
    default the case's ``[transport] bias``.  ``temperature`` in K (default
    300), ``fermi_level`` the emitter Fermi level in the case energy unit
    (required: here or in ``[transport]``).  The bias points run through the
    scan runner (executor options, checkpoint and ``progress`` as for
    :func:`sweep`).
    """
    import numpy as np

    from fdsolver.continuum.options import biases_of, fermi_level_of, temperature_of
    from fdsolver.io.datasets import current_dataset
    from fdsolver.scans.continuum import plan_current
    from fdsolver.scans.runner import run

    case = _case(case)
    _scan_checks(output, resume, restart, chunk)
    if bias is not None and not isinstance(bias, str):
        values = np.atleast_1d(np.asarray(bias, dtype=float))
        text_bias = ",".join(repr(float(v)) for v in values)
    else:
        values, text_bias = biases_of(case, bias)[0], bias
    kt = temperature_of(case, temperature)
    ef = fermi_level_of(case, fermi_level)
    spec = plan_current(case, values, kt, ef, dict(case.overrides), chunk)
    text = action or f"current {_where(case)}" + (f" --bias {text_bias}" if text_bias else "")

    def finish(results, history):
        return current_dataset(case, results.arrays(), history, temperature=kt, fermi_level=ef, notes=results.notes())

    return _run_on(executor, workers, cluster, scheduler,
                   lambda ex: run(spec, ex, finish, action=text, output=output, resume=resume, restart=restart,
                                  progress=progress))
