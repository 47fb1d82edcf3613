"""Richardson extrapolation over nested grid levels, and the error estimate.

Level k has step h_k = h_0 / 2^k.  On nested refinements the flux-form
scheme's energies expand as E_k = E + c2 h_k^2 + c4 h_k^4 + ... (see
:mod:`fdsolver.grid`), so the Romberg table

    R[k][0] = E_k
    R[k][j] = R[k][j-1] + (R[k][j-1] - R[k-1][j-1]) / (4^j - 1)

removes one even power per column.  The reported energy is the most
extrapolated entry of the newest row, R[k][m] with m = min(k, 2) (error
O(h^6) when the expansion holds), and its error estimate is

    |R[k][m] - R[k-1][m]|     when the previous row has column m,
    |R[k][m] - R[k][m-1]|     otherwise,

i.e. the change of the best estimate from the previous level (or from the
less extrapolated value): an estimate of the error of the *previous* best
value.  It bounds the error of the reported value by the factor gained per
level (64 for h^6, 16 when an h^4 term survives) as long as the
convergence is monotone in the asymptotic range, and stays an overestimate
when a higher-order term spoils the expansion.  A round-off floor is added by
the caller.  Energies in the case energy unit.
"""

from __future__ import annotations

import numpy as np

MAX_COLUMNS = 2


class Romberg:
    """Romberg table for a vector of energies that grows one level at a time."""

    def __init__(self) -> None:
        self.rows: list[list[np.ndarray]] = []

    def add(self, energies: np.ndarray) -> None:
        """Append the energies of the next finer level (same states, same order)."""
        e = np.asarray(energies, dtype=float)
        row = [e]
        if self.rows:
            prev = self.rows[-1]
            for j in range(1, min(len(prev), MAX_COLUMNS) + 1):
                row.append(row[j - 1] + (row[j - 1] - prev[j - 1]) / (4.0**j - 1.0))
        self.rows.append(row)

    @property
    def levels(self) -> int:
        return len(self.rows)

    def value(self) -> np.ndarray:
        """Best estimate: the most extrapolated entry of the newest row."""
        return self.rows[-1][-1]

    def error(self) -> np.ndarray:
        """Estimated error of :meth:`value` (inf with a single level)."""
        row = self.rows[-1]
        if len(row) < 2:
            return np.full_like(row[0], np.inf)
        m = len(row) - 1
        if len(self.rows) >= 2 and len(self.rows[-2]) > m:
            return np.abs(row[m] - self.rows[-2][m])
        return np.abs(row[m] - row[m - 1])

    def observed_order(self) -> np.ndarray | None:
        """Observed convergence order from the last three raw levels (nan where undefined)."""
        if len(self.rows) < 3:
            return None
        e0, e1, e2 = (self.rows[-3][0], self.rows[-2][0], self.rows[-1][0])
        with np.errstate(all="ignore"):
            return np.log2(np.abs((e1 - e0) / (e2 - e1)))
