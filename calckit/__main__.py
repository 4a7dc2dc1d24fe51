"""``python -m calckit``: the same as the ``calckit`` command (whose entry point is :func:`run`).

Ctrl-C ends the command with one line and exit code 130 at any moment, also while the
command line's modules are still being imported, before
:func:`calckit.workflow.cli.main` has set its own handler.
"""

import sys


def run() -> int:
    """Import the command line and run it; Ctrl-C during the import is one line and 130 too."""
    try:
        from calckit.workflow.cli import main
    except KeyboardInterrupt:
        print("calckit: interrupted", file=sys.stderr, flush=True)
        return 130
    return main()


if __name__ == "__main__":
    sys.exit(run())
