"""``python -m tonebank``: the command line (see :mod:`tonebank.cli`)."""

import sys

from .cli import main

sys.exit(main())
