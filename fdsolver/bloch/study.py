"""A periodic case's band study: the lattice and settings of a case, and everything one ``bands`` run reports.

:func:`lattice_of` reads a case with ``[domain] boundary = "periodic"`` as a
:class:`~fdsolver.bloch.lattice.Lattice`; :func:`settings_of` turns its ``[solve]`` table into
:class:`~fdsolver.bloch.structure.BandSettings` (``bands``, ``wavevectors``, ``tolerance``,
``max_levels``); :func:`band_study` computes the band structure (edges, widths, gaps, band-edge
masses, E_n(q) and the density of states, each with its error estimate), the potential over one
period, Bloch functions at the wavevectors asked for and, when asked, N-period stacks set beside the
bands (:func:`fdsolver.bloch.finite.stack_bands`).  The archive of kind ``bands`` is built from a
:class:`BandStudy` by :func:`fdsolver.io.datasets.bands_dataset`.

Units: energies in the case energy unit, lengths in its length unit, wavevectors in 1/length, masses
in m_e, densities of states in 1/(energy length) for one spin orientation, Bloch functions in
length^-1/2.  Bloch wavevectors are given in units of pi/L (0 = zone centre, 1 = zone boundary).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from fdsolver.bloch.finite import StackBands, stack_bands
from fdsolver.bloch.lattice import TERMINATIONS, Lattice, lattice
from fdsolver.bloch.result import Bands
from fdsolver.bloch.structure import BandSettings, band_structure
from fdsolver.errors import CaseError

#: bands of the finished run unless [solve] bands says otherwise
DEFAULT_BANDS = 10
#: points of the one-period grid of the potential and the Bloch functions
PERIOD_POINTS = 401
#: most bands a finite-stack comparison solves by default (N * bands levels per stack)
STACK_BANDS = 4
#: most periods of a finite stack
MAX_PERIODS = 200


def lattice_of(case) -> Lattice:
    """The lattice of a periodic case; CaseError (naming the file) for a case that is not periodic."""
    if not case.domain.periodic:
        raise CaseError('the case is not periodic: set [domain] boundary = "periodic" with period = L (one period '
                        "of the potential)", file=case.path, key="domain.boundary")
    try:
        return lattice(case.potential, case.domain.period, case.domain.start)
    except CaseError as err:
        raise err.located(file=case.path) from None


def settings_of(case, n_bands: int | None = None, n_wavevectors: int | None = None,
                default_bands: int = DEFAULT_BANDS) -> BandSettings:
    """BandSettings from the case's [solve] table; ``n_bands`` / ``n_wavevectors`` (the caller's) win."""
    s = case.settings
    for key, v in (("--bands", n_bands), ("--wavevectors", n_wavevectors)):
        if v is not None and (isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < (1 if key == "--bands" else 2)):
            raise CaseError(f"must be a whole number of at least {1 if key == '--bands' else 2}, got {v!r}", key=key)
    nb = int(n_bands if n_bands is not None else (s.bands if s.bands is not None else default_bands))
    nq = int(n_wavevectors if n_wavevectors is not None else s.wavevectors)
    try:
        return BandSettings(n_bands=nb, n_wavevectors=nq, tolerance=float(s.tolerance),
                            max_levels=max(int(s.max_levels), 3)).checked()
    except CaseError as err:
        raise err.located(file=case.path) from None


@dataclass(frozen=True, eq=False)
class BandStudy:
    """One ``bands`` run: the band structure, one period's potential and mass on ``x``, Bloch functions, stacks.

    ``bloch_wavevector`` (n,) in 1/length, ``bloch_energy`` (n, n_bands) and ``bloch`` (n, n_bands, x)
    complex (length^-1/2), or None; ``points`` ((position, alpha) of the point terms in the window);
    ``stacks``: :class:`~fdsolver.bloch.finite.StackBands` or None, comparing ``stack_band_count`` bands;
    ``stack_threshold``: the continuum threshold of open stacks (the cladding's band edge; inf between
    hard walls), above which an open stack binds nothing.
    """

    lattice: Lattice
    bands: Bands
    x: np.ndarray
    potential: np.ndarray
    mass: np.ndarray
    points: tuple
    bloch_wavevector: np.ndarray | None = None
    bloch_energy: np.ndarray | None = None
    bloch: np.ndarray | None = None
    stacks: StackBands | None = None
    stack_band_count: int = 0
    stack_threshold: float = float("inf")


def parse_numbers(text, key: str, *, whole: bool = False) -> list:
    """'a,b,c' (or a list) as numbers; CaseError naming ``key``."""
    items = text if isinstance(text, (list, tuple)) else str(text).split(",")
    out = []
    for item in items:
        s = str(item).strip()
        if not s:
            continue
        try:
            v = int(s) if whole else float(s)
        except ValueError:
            what = "whole numbers" if whole else "numbers"
            raise CaseError(f"'{text}' is not a comma-separated list of {what}", key=key) from None
        if not math.isfinite(v):
            raise CaseError(f"'{s}' in '{text}' is not finite", key=key)
        out.append(v)
    if not out:
        raise CaseError(f"'{text}' is an empty list", key=key)
    return out


def _bloch(bands: Bands, fractions, x):
    period = bands.period
    q = np.asarray(fractions, dtype=float) * math.pi / period
    energy = np.empty((q.size, bands.n_bands))
    psi = np.empty((q.size, bands.n_bands, x.size), dtype=complex)
    for i, qi in enumerate(q):
        for n in range(bands.n_bands):
            f = bands.bloch(n, float(qi), x)
            energy[i, n], psi[i, n] = f.energy, f.psi
    return q, energy, psi


def band_study(case, *, n_bands: int | None = None, n_wavevectors: int | None = None, bloch=None, stacks=None,
               termination: str = "hard", stack_band_count: int | None = None) -> BandStudy:
    """The band study of a periodic case (module docstring).

    ``bloch``: wavevectors in units of pi/L at which every band's Bloch function is kept (a list or
    "0,1"); ``stacks``: numbers of periods N of finite stacks ("2,4,8" or a list), terminated by
    ``termination`` ("hard": walls at the period ends; "open": in the cladding), compared with the
    lowest ``stack_band_count`` bands (default min(bands, 4)).
    """
    lat = lattice_of(case)
    settings = settings_of(case, n_bands, n_wavevectors)
    ns = None
    if stacks is not None:
        ns = sorted(set(parse_numbers(stacks, "--stacks", whole=True)))
        if ns[0] < 1 or ns[-1] > MAX_PERIODS:
            raise CaseError(f"numbers of periods must be from 1 to {MAX_PERIODS}, got '{stacks}'", key="--stacks")
        if termination not in TERMINATIONS:
            raise CaseError(f"must be one of {', '.join(TERMINATIONS)}, got {termination!r}", key="--termination")
    fractions = None if bloch is None else parse_numbers(bloch, "--bloch")
    try:
        b = band_structure(lat, settings)
        x = np.linspace(lat.start, lat.start + lat.period, PERIOD_POINTS)
        cell = lat.cell()
        points = tuple((float(p), float(a)) for p, a in cell.point_terms())
        q = e = psi = None
        if fractions is not None:
            q, e, psi = _bloch(b, fractions, x)
        sb, k, threshold = None, 0, math.inf
        if ns is not None:
            if termination == "open":
                pot, _ = lat.finite(1, "open")
                threshold = min(pot.asymptote(-1), pot.asymptote(1))
            k = min(settings.n_bands, STACK_BANDS if stack_band_count is None else int(stack_band_count))
            sb = stack_bands(lat, ns, termination, bands=b if k == settings.n_bands else None, n_bands=k,
                             tolerance=max(float(case.settings.tolerance), 1e-10))
    except CaseError as err:
        raise err.located(file=case.path) from None
    return BandStudy(lat, b, x, np.asarray(cell.value(x), float), np.asarray(cell.mass_at(x), float), points,
                     q, e, psi, sb, k, threshold)


__all__ = ["DEFAULT_BANDS", "BandStudy", "band_study", "lattice_of", "parse_numbers", "settings_of"]
