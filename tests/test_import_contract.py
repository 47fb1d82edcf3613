"""The import contract of the package (pyproject.toml, [tool.importlinter]) holds, and it can fail.

`lint-imports` (import-linter) checks the fdsolver this test session imported: the source tree in the
development loop, the installed wheel in CI.  The layers, top to bottom, are listed in pyproject.toml.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path


import fdsolver

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "pyproject.toml"
PACKAGE = Path(fdsolver.__file__).resolve().parent


def lint_imports(package_parent: Path, cwd: Path) -> subprocess.CompletedProcess:
    """Run import-linter's command on the contract of pyproject.toml, importing fdsolver from ``package_parent``."""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(package_parent), os.environ.get("PYTHONPATH", "")]))
    script = shutil.which("lint-imports", path=str(Path(sys.executable).parent))  # the command of this environment
    command = [script] if script else [sys.executable, "-c", "from importlinter.cli import lint_imports_command as c; c()"]
    return subprocess.run([*command, "--no-cache", "--no-logo", str(CONFIG)],
                          capture_output=True, text=True, cwd=cwd, env=env, timeout=300)


def test_the_package_keeps_its_import_contract(tmp_path):
    run = lint_imports(PACKAGE.parent, tmp_path)
    assert run.returncode == 0, run.stdout + run.stderr
    assert "0 broken" in run.stdout


# Each mutation breaks one contract: (file, the line appended, the contract that must report it, its importer).
MUTATIONS = [
    ("model/potential.py", "from fdsolver.plot import _common", "Layers point one way", "fdsolver.model.potential"),
    ("boundstates/result.py", "from fdsolver.report import _common", "Layers point one way", "fdsolver.boundstates.result"),
    ("scans/sweep.py", "from fdsolver.api import solve", "Layers point one way", "fdsolver.scans.sweep"),
    ("input/case.py", "from fdsolver.boundstates.driver import solve_potential", "not the solver", "fdsolver.input.case"),
    ("zerorange/models.py", "import dask", "Dask is imported only", "fdsolver.zerorange.models"),
    ("io/datasets.py", "import matplotlib", "matplotlib is imported only", "fdsolver.io.datasets"),
    ("io/archive.py", "import fdsolver", "No module imports the package __init__", "fdsolver.io.archive"),
]


def test_forbidden_imports_break_the_contract(tmp_path):
    """A copy of the package with one forbidden import per contract: every contract reports its own."""
    copy = tmp_path / "src" / "fdsolver"
    shutil.copytree(PACKAGE, copy, ignore=shutil.ignore_patterns("__pycache__"))
    for where, line, _, _ in MUTATIONS:
        target = copy / where
        target.write_text(target.read_text() + f"\n{line}  # noqa\n")
    run = lint_imports(copy.parent, tmp_path)
    assert run.returncode != 0
    report = run.stdout.split("Broken contracts", 1)[-1]
    names = {contract for _, _, contract, _ in MUTATIONS}
    starts = sorted((report.index(name), name) for name in names)  # every contract is reported broken
    sections = {name: report[at:nxt] for (at, name), (nxt, _) in zip(starts, starts[1:] + [(len(report), "")])}
    for _, _, contract, importer in MUTATIONS:
        assert importer in sections[contract], (contract, importer, report)  # naming the module that broke it
