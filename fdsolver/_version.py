"""The installed version of fdsolver: its one source is the package metadata (pyproject.toml -> METADATA).

``importlib.metadata`` costs about 60 ms of imports (it parses e-mail headers),
more than the rest of ``fdsolver --version``; the ``Version:`` line of the
installed distribution's METADATA file is read directly, with
``importlib.metadata`` as the fallback.
"""

from __future__ import annotations

import os
import sys


def _from_dist_info() -> str | None:
    here = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    for folder in dict.fromkeys([here] + [p for p in sys.path if p]):
        try:
            names = os.listdir(folder)
        except OSError:
            continue
        for name in names:
            if name.startswith("fdsolver-") and name.endswith(".dist-info"):
                try:
                    with open(os.path.join(folder, name, "METADATA"), encoding="utf-8") as fh:
                        for line in fh:
                            if line.startswith("Version:"):
                                return line.split(":", 1)[1].strip()
                            if not line.strip():
                                break
                except OSError:
                    continue
    return None


def _version() -> str:
    found = _from_dist_info()
    if found:
        return found
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("fdsolver")
    except PackageNotFoundError:  # a source tree that was never installed
        return "0+unknown"


__version__ = _version()
