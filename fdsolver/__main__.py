"""``python -m fdsolver``: the same command line as ``fdsolver``."""

import sys

from fdsolver.cli import command_line

sys.exit(command_line())
