"""The progress of a batch: a bar on a terminal, a line per case in a log."""

from __future__ import annotations

import io

from calckit.workflow.batch import CaseResult
from calckit.workflow.progress import BatchProgress, bar, time_left

BUILT = CaseResult("p101-a", True, "out/p101-a", record={"summary": {"met": 2, "checks": 3}}, seconds=1.23)
FAILED = CaseResult(
    "p101-b", False, "out/p101-b", message="p101.toml, line 16, mass: must be greater than zero."
)


def test_a_line_per_case_when_not_a_terminal():
    stream = io.StringIO()
    progress = BatchProgress(stream, tty=False)
    progress(1, 2, BUILT)
    progress(2, 2, FAILED)
    assert stream.getvalue() == (
        "[1/2] p101-a: built, 2 of 3 checks met (1.2 s)\n"
        "[2/2] p101-b: FAILED: p101.toml, line 16, mass: must be greater than zero. (0.0 s)\n"
    )


def test_a_bar_on_a_terminal_with_failures_above_it():
    stream = io.StringIO()
    progress = BatchProgress(stream, tty=True)
    progress(1, 4, BUILT)
    first = stream.getvalue()
    assert first.startswith("\r[") and " 1/4 cases, 0 failed, about " in first and first.endswith(" left")
    progress(2, 4, FAILED)
    text = stream.getvalue()[len(first) :]
    # the bar's line is cleared, the failure printed on its own line, then the bar again
    assert "\rp101-b: FAILED: p101.toml, line 16, mass: must be greater than zero.\n\r[" in text
    assert text.rstrip().endswith("left") and " 2/4 cases, 1 failed, " in text
    progress(3, 4, BUILT)
    progress(4, 4, BUILT)
    assert stream.getvalue().endswith("\n") and " 4/4 cases, 1 failed, done in " in stream.getvalue()


def test_bar_and_time_left():
    assert bar(0, 4, 8) == "[--------]" and bar(2, 4, 8) == "[####----]" and bar(4, 4, 8) == "[########]"
    assert (time_left(0), time_left(59.4), time_left(61), time_left(7322)) == (
        "0 s",
        "59 s",
        "1 min 01 s",
        "2 h 02 min",
    )
