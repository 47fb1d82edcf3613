"""Shared pytest configuration: the ``slow`` marker (long kill, Dask, fuzz and time-limit tests)."""


def pytest_configure(config):
    config.addinivalue_line("markers", "slow: long tests (separate processes with time limits, signals); deselect with -m 'not slow'")
