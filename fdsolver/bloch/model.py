"""What a :class:`~fdsolver.bloch.result.Bands` keeps to answer more questions after the calculation.

The discriminant providers of the cell levels used and their edge sets: the density of states at any
energy (Richardson-extrapolated over the levels at fixed energy, :mod:`fdsolver.bloch.dos`), the
number of states below an energy, E_n(q) at other wavevectors and Bloch functions
(:mod:`fdsolver.bloch.bloch`, on the finest level).  Units as in :mod:`fdsolver.bloch.result`.
"""

from __future__ import annotations

import math

import numpy as np

from fdsolver.bloch.bloch import bloch_values
from fdsolver.bloch.dispersion import dispersion
from fdsolver.bloch.dos import density, density_error, states_below
from fdsolver.bloch.result import BlochFunction
from fdsolver.errors import CaseError
from fdsolver.numerics.richardson import Romberg


class BandModel:
    """Providers of the levels used, their edge sets, and the source (period, start, energy scale, Bloch cells)."""

    def __init__(self, source, levels: list, edge_sets: list):
        self.source = source
        self.levels = levels
        self.edge_sets = edge_sets

    def _rows(self, energies):
        table = Romberg()
        for cells in self.levels:
            table.add(cells.evaluate(energies, False)[:, :4])
        return table.value(), (table.error() if len(self.levels) > 1 else np.zeros((energies.size, 4)))

    def dos(self, energies):
        """(g, error of g) at ``energies`` (1 / (energy * length))."""
        e = np.atleast_1d(energies)
        rows, extrap = self._rows(e)
        d, dd = rows[:, 0], rows[:, 1]
        d_err, dd_err = rows[:, 2] + extrap[:, 0], rows[:, 3] + extrap[:, 1]
        p = self.source.period
        return density(d, dd, p), density_error(d, dd, d_err, dd_err, p)

    def states_below(self, energies):
        """Integrated density of states per unit length at ``energies`` (finest level)."""
        return states_below(self.levels[-1].evaluate(np.atleast_1d(energies)), self.source.period)

    def energies_at(self, band: int, q):
        """(E_n(q), error) at other wavevectors, extrapolated over the levels as the table was."""
        q = np.atleast_1d(np.asarray(q, dtype=float))
        table = Romberg()
        for cells, es in zip(self.levels, self.edge_sets):
            e, ro, _ = dispersion(cells.evaluate, es, [band], q, self.source.period, self.source.zone_energy)
            table.add(e[:, 0])
        err = table.error() if len(self.levels) > 1 else np.zeros(q.size)
        return table.value(), err + ro[:, 0]

    def dirichlet_levels(self):
        """(mu_g, error) for g = 1 .. n_bands: eigenvalues of one period with psi = 0 at both of its ends.

        mu_g is the simple root of M12(E) (the psi-component of the solution started with psi = 0,
        u = 1) in the closed gap g, i.e. in [top_{g-1}, bottom_g] (:mod:`fdsolver.bloch.edges`, fact 2;
        M12 has no root inside a band); the bracket is widened by 1e-6 of the neighbouring band widths
        so that a root on an edge is still a sign change.  Brent's method to round-off on each level,
        Richardson-extrapolated over the levels.
        """
        from scipy.optimize import brentq

        table = Romberg()
        for provider, es in zip(self.levels, self.edge_sets):
            cells = self.source.bloch_cells(provider)
            n = es.top.size
            mu = np.empty(n)
            for g in range(1, n + 1):
                w_lo = es.top[g - 1] - es.bottom[g - 1]
                w_hi = es.top[g] - es.bottom[g] if g < n else w_lo
                a, b = es.top[g - 1] - 1e-6 * w_lo, es.bottom[g] + 1e-6 * w_hi

                def m12(e, cells=cells):
                    return cells.monodromy(e)[0][0, 1]

                mu[g - 1] = brentq(m12, a, b, xtol=1e-15 * (abs(a) + abs(b)), rtol=4 * np.finfo(float).eps)
            table.add(mu)
        err = table.error() if table.levels > 1 else np.zeros(table.value().size)
        return table.value(), err + 4 * np.finfo(float).eps * np.abs(table.value())

    def bloch(self, bands, band: int, q: float, x, points: int) -> BlochFunction:
        src = self.source
        if not 0 <= band < bands.n_bands:
            raise CaseError(f"band must be from 0 to {bands.n_bands - 1}, got {band}", key="band")
        qr = abs(math.remainder(q, 2.0 * math.pi / src.period))
        e, err = self.energies_at(band, [qr])
        if x is None:
            x = np.linspace(src.start, src.start + src.period, points)
        x = np.asarray(x, dtype=float)
        cells = src.bloch_cells(self.levels[-1])
        # the eigenvector needs the finest level's own root of D = cos(qL): at the extrapolated energy D misses
        # it by that level's O(h^2), which a narrow band (tiny D') turns into a large admixture of the other solution
        own = dispersion(self.levels[-1].evaluate, self.edge_sets[-1], [band], [qr], src.period, src.zone_energy)[0]
        psi = bloch_values(cells, src.start, src.period, float(own[0, 0]), q, x)
        return BlochFunction(band, float(q), float(e[0]), float(err[0]), x, psi)
