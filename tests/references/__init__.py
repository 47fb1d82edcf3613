"""Independent reference solvers for the acceptance tests (no part of fdsolver is imported here).

* :mod:`.constants`   -- hbar^2/(2 m_e) from CODATA (scipy.constants), in extended precision
* :mod:`.transfer`    -- piecewise-constant stacks, BenDaniel-Duke matching, mpmath transfer matrices
* :mod:`.shooting`    -- mirror-symmetric smooth potentials, even/odd shooting with scipy solve_ivp
* :mod:`.airy`        -- piecewise-linear potentials between hard walls, exact Airy solutions
* :mod:`.finite_well` -- the finite square well's transcendental equations in mpmath
* :mod:`.checks`      -- assertions shared by the tests (honest error bars, notes that agree with numbers)
"""
