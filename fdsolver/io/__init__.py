"""Archives: the variable table of every archive kind, the Dataset builders generated from it, atomic NetCDF
writes and checked reads.

* :mod:`.specs`: one row per variable of every kind (solve, sweep, threshold, delta_check, delta_map);
* :mod:`.units`: a physical dimension -> its UDUNITS-2 string and plain name in a case's unit system;
* :mod:`.datasets`: ``solve_record``, ``sweep_dataset``, ``threshold_dataset``, ``ladder_dataset``,
  ``map_dataset`` (all through ``build``) and ``check``, the reader's test of an archive against its rows;
* :mod:`.archive`: ``write_dataset`` (temp file + fsync + rename, Ctrl-C held), ``open_run``, ``stamp``;
* :mod:`.netcdf`: the one NetCDF-4 writer (netCDF4 library alone, from a ``Record`` or a Dataset);
* :mod:`.record`: an archive's variables without xarray; :mod:`.lightxr`: xarray without unused array imports.
"""
