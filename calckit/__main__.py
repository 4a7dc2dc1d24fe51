"""``python -m calckit``: the same as the ``calckit`` command."""

import sys

from .cli import main

sys.exit(main())
