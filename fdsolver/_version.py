"""The installed version of fdsolver: its one source is the package metadata (pyproject.toml)."""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("fdsolver")
except PackageNotFoundError:  # a source tree that was never installed
    __version__ = "0+unknown"
