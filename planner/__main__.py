"""``python -m planner`` is the same as the ``periplan`` command."""

import sys

from .cli import main

sys.exit(main())
