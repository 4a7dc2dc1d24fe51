"""How a batch shows its progress: a bar on a terminal, a line per case otherwise.

:class:`BatchProgress` is the ``progress`` callback of
:func:`calckit.workflow.batch.run_batch` that ``calckit batch`` passes. On a
terminal it redraws one line: a bar, the cases done of all, how many failed,
and the time left (the mean time a case has taken so far, times the cases
left); a failed case's message is printed above the bar as it comes. Written
to a file or a pipe (a log, CI), it prints one line per case instead, which
``grep`` and a reader of a log can follow.
"""

from __future__ import annotations

import shutil
import sys
import time
from typing import Any, TextIO

__all__ = ["BatchProgress", "time_left", "bar"]


def time_left(seconds: float) -> str:
    """A duration as a reader takes it in: ``"45 s"``, ``"3 min 20 s"``, ``"1 h 05 min"``.

    >>> time_left(44.6), time_left(200), time_left(3900)
    ('45 s', '3 min 20 s', '1 h 05 min')
    """
    seconds = max(0, round(seconds))
    if seconds < 60:
        return f"{seconds} s"
    minutes, secs = divmod(seconds, 60)
    if minutes < 60:
        return f"{minutes} min {secs:02d} s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours} h {minutes:02d} min"


def bar(done: int, total: int, width: int) -> str:
    """A bar of *width* characters, ``#`` for the part done.

    >>> bar(1, 4, 8)
    '[##------]'
    """
    width = max(1, width)
    filled = width if total <= 0 else min(width, (done * width) // total)
    return "[" + "#" * filled + "-" * (width - filled) + "]"


class BatchProgress:
    """The progress of a batch on *stream* (standard error by default): a bar on a terminal, else lines."""

    def __init__(self, stream: TextIO | None = None, *, tty: bool | None = None) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.tty = tty if tty is not None else bool(getattr(self.stream, "isatty", lambda: False)())
        self.started = time.monotonic()
        self.failed = 0
        self.shown = False

    def __call__(self, done: int, total: int, case: Any) -> None:
        if not case.ok:
            self.failed += 1
        if not self.tty:
            print(self.line(done, total, case), file=self.stream, flush=True)
            return
        if not case.ok:  # the message above the bar, where it stays
            self._clear()
            print(f"{case.name}: FAILED: {case.message}", file=self.stream)
        self.stream.write("\r" + self.status(done, total))
        self.shown = True
        if done == total:
            self.stream.write("\n")
            self.shown = False
        self.stream.flush()

    def line(self, done: int, total: int, case: Any) -> str:
        """The line for one case (not on a terminal)."""
        if case.ok:
            summary = (case.record or {}).get("summary", {})
            what = f"built, {summary.get('met', 0)} of {summary.get('checks', 0)} checks met"
        else:
            what = f"FAILED: {case.message}"
        return f"[{done}/{total}] {case.name}: {what} ({case.seconds:.1f} s)"

    def status(self, done: int, total: int) -> str:
        """The bar's line: the bar, cases done, failed, time left."""
        elapsed = time.monotonic() - self.started
        left = f"about {time_left(elapsed / done * (total - done))} left" if 0 < done < total else ""
        if done == total:
            left = f"done in {time_left(elapsed)}"
        text = f" {done}/{total} cases, {self.failed} failed, {left}"
        width = shutil.get_terminal_size((80, 24)).columns
        return (bar(done, total, max(10, min(40, width - len(text) - 3))) + text)[: width - 1]

    def _clear(self) -> None:
        if self.shown:
            width = shutil.get_terminal_size((80, 24)).columns
            self.stream.write("\r" + " " * (width - 1) + "\r")
            self.shown = False
