"""The work budget: every count and size fdsolver accepts, in one place (README.md, "What fdsolver checks").

Beside the memory budgets (``[solve] memory_mb`` for the grid, ``[sweep]
memory_mb`` / ``--memory-mb`` for a sweep's result) these bound the work a
small input can ask for.  Each limit is reported in the message that refuses
it.  The values are design ceilings, far above what the structures fdsolver
is for need (a superlattice of 500 periods has 1000 layers), and low enough
that a refused input costs a fraction of a second.  Local worker processes
(``-j``, ``--cluster local:N``) are at most 2 per core of the machine:
:func:`fdsolver.parallel.executors.max_local_workers` (the executors import
nothing of fdsolver but its errors).
"""

from __future__ import annotations

# ---------------------------------------------------------------- numbers
#: a number of smaller or larger magnitude (but not 0) cannot be carried through a solve in double precision
TINY, HUGE = 1e-200, 1e200
#: masses in m_e outside this range make hbar^2/2m leave the range a grid can resolve
MASS_RANGE = (1e-8, 1e8)

# ---------------------------------------------------------------- case files
#: most [params] entries (resolving them is linear in their number)
MAX_PARAMS = 10_000
#: most [[potential]] components and most [[layer]] entries (set-up is O(K log K) and the grid grows with the
#: structure: 10^4 point terms solve in about 10 s, so 2 x 10^4 bounds a case to well under a minute)
MAX_COMPONENTS = 20_000
MAX_LAYERS = 20_000
#: most data rows of one table file, and the largest case or table file read (bytes)
MAX_TABLE_ROWS = 100_000
MAX_INPUT_BYTES = 50 * 2**20
#: most states one solve returns
MAX_STATES = 1_000
#: largest memory budget that may be given (MB) for a grid or a sweep result: 1 TB
MAX_MEMORY_MB = 1_000_000.0

# ---------------------------------------------------------------- scans
#: most points of one sweep (10,000 points take about 30 s on 2 cores: a million is a day's run, with progress shown)
MAX_SWEEP_POINTS = 1_000_000
#: most scan points of a threshold search (--scan)
MAX_SCAN = 10_000

# ---------------------------------------------------------------- archives (untrusted input)
#: most bytes of all variables an archive may declare when read (MB); ``open_run(path, memory_mb=...)`` changes it
ARCHIVE_MEMORY_MB = 2048.0
#: most variables (dimensions included) of an archive, and most attributes on the archive and on each variable
MAX_VARIABLES = 200
MAX_ATTRIBUTES = 100
#: most bytes of one attribute, and of the stored case (case_text plus case_tables) and of params
MAX_ATTRIBUTE_BYTES = 256 * 2**10
MAX_STORED_CASE_BYTES = 64 * 2**20
MAX_PARAMS_BYTES = 4 * 2**20

