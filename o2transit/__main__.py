"""``python -m o2transit``: the same as the ``o2transit`` command."""

import sys

from .cli import main

sys.exit(main())
