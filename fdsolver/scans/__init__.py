"""Studies over many points of a case: parameter sweeps, binding thresholds and zero-range validity maps.

* :mod:`.axes`: the one parser of scanned axes (``--vary``, ``--map``, search intervals) and the units of a param;
* :mod:`.options`: the settings of a zero-range study from ``[delta_check]`` and the caller;
* :mod:`.runner`: the one chunked, checkpointed, resumable runner of every scan, its per-process case cache and
  the workers' warm-up;
* :mod:`.sweep`: sweeps (plan, per-point solve, arrays, ``run_sweep``);
* :mod:`.bandsweep`: band edges, widths, gaps and masses of a periodic case over a grid of params;
* :mod:`.maps`: validity maps (plan, per-point comparison, arrays, ``run_map``);
* :mod:`.thresholds`: binding thresholds of a case param, without a box.

The archives they produce are built in :mod:`fdsolver.io.datasets`; one call per study is in :mod:`fdsolver.api`.
"""
