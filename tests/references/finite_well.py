"""The finite square well, exactly: Griffiths, Introduction to Quantum Mechanics, sec. 2.6.

What it computes
    The bound states of -C/m psi'' + V psi = E psi with V = outside - depth on |x - c| < width/2 and
    V = outside elsewhere (one mass m everywhere; C = hbar^2/(2 m_e), see :mod:`.constants`).
    With a = width/2, z = a sqrt(m (E - V_in)/C) and z0 = a sqrt(m depth / C), the even states solve
    tan z = sqrt((z0/z)^2 - 1) and the odd states -cot z = sqrt((z0/z)^2 - 1); state n has
    z in (n pi/2, (n+1) pi/2), so there are ceil(2 z0 / pi) bound states.  The energy is
    E = outside - C (z0^2 - z^2) / (m a^2), computed from the binding term so that a state bound by
    1e-12 of the depth keeps all its digits.

Accuracy: roots by bisection in mpmath at ``dps`` digits (default 50), to about 10^-(dps-5) relative.
Units: those of C (hartree and bohr for "atomic", meV and nm for "nm-meV"); masses in m_e.
"""

from __future__ import annotations

import mpmath as mp

from .constants import hbar2_2me


def square_well_levels(width: float, depth: float, *, mass: float = 1.0, units: str = "atomic",
                       outside: float = 0.0, dps: int = 50) -> list[mp.mpf]:
    """All bound-state energies (mpmath numbers, ascending), absolute: measured on the scale where V = ``outside`` outside."""
    with mp.workdps(dps):
        c = hbar2_2me(units)
        a = mp.mpf(width) / 2
        m = mp.mpf(mass)
        z0 = a * mp.sqrt(m * mp.mpf(depth) / c)
        out = []
        n = 0
        while n * mp.pi / 2 < z0:
            lo = n * mp.pi / 2
            hi = min((n + 1) * mp.pi / 2, z0)
            even = n % 2 == 0

            def f(z, even=even):
                # monotone increasing on (n pi/2, (n+1) pi/2): z tan z (even) or -z cot z (odd) minus sqrt(z0^2 - z^2)
                lhs = z * mp.tan(z) if even else -z * mp.cot(z)
                return lhs - mp.sqrt(max(z0**2 - z**2, mp.mpf(0)))

            a_, b_ = lo, hi
            if n == 0:
                a_ = mp.mpf(0)
            for _ in range(int(3.4 * dps) + 20):
                mid = (a_ + b_) / 2
                if mid == a_ or mid == b_:
                    break
                v = f(mid) if mid != 0 else -z0
                if v < 0:
                    a_ = mid
                else:
                    b_ = mid
            z = (a_ + b_) / 2
            out.append(mp.mpf(outside) - c * (z0 - z) * (z0 + z) / (m * a**2))
            n += 1
        return out


def square_well_count(width: float, depth: float, *, mass: float = 1.0, units: str = "atomic") -> int:
    """ceil(2 z0 / pi): the number of bound states (sec. 2.6)."""
    with mp.workdps(50):
        z0 = mp.mpf(width) / 2 * mp.sqrt(mp.mpf(mass) * mp.mpf(depth) / hbar2_2me(units))
        return int(mp.ceil(2 * z0 / mp.pi))
