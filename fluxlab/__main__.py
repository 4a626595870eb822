"""``python -m fluxlab``: the command line."""

import sys

from fluxlab.cli import main

sys.exit(main())
