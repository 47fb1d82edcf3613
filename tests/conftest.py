"""Shared pytest configuration: the ``slow`` marker (long kill, Dask, fuzz and time-limit tests), and the hypothesis
profile of the property and fuzz tests.

The property and fuzz tests are derandomised by default (the same examples on every run, so a failure is
reproducible).  With ``FDSOLVER_HYPOTHESIS=random`` they draw fresh random examples instead, so a rerun can find
something new; a failure then prints the blob that reproduces it (``@reproduce_failure``).  CI runs the
derandomised examples (a landing must not depend on luck); the random run is a command in DEVELOPERS.md.
"""

import os


def pytest_configure(config):
    config.addinivalue_line("markers", "slow: long tests (separate processes with time limits, signals); deselect with -m 'not slow'")


try:
    from hypothesis import settings
except ImportError:  # the test extra is not installed: the tests that need hypothesis say so themselves
    settings = None
if settings is not None:
    settings.register_profile("derandomized", derandomize=True)
    settings.register_profile("random", derandomize=False, print_blob=True)
    settings.load_profile("random" if os.environ.get("FDSOLVER_HYPOTHESIS") == "random" else "derandomized")
