"""Where jobs run and how their results survive a crash; nothing here knows what the jobs compute.

* :mod:`.executors`: ``SerialExecutor``, ``ProcessExecutor``, ``DaskExecutor`` (Dask imported only inside it),
  each with ``imap_unordered``, one BLAS thread per process (threadpoolctl) and the caller's initializer;
* :mod:`.checkpoint`: the checkpoint file format (JSON lines with CRCs, locked, resumable).
"""
