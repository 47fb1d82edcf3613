"""``python -m fdsolver``: the same command line as ``fdsolver``."""

import sys

from fdsolver.cli import main

sys.exit(main())
