"""``python -m calckit``: the same as the ``calckit`` command."""

import sys

from calckit.workflow.cli import main

sys.exit(main())
