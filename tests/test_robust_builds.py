"""Builds under kills, interrupts, races and time limits (issue 14, items 3, 4, 6, 7).

Every test runs real builds of the tiny template ``tests/data/sleeps.ipynb`` (a cell that writes
its kernel's process id to a file, then sleeps as long as its input says). What is checked is the
operating system's word, not calckit's: a process is gone when ``kill(pid, 0)`` fails or
``/proc/<pid>/stat`` shows it a zombie (proc(5)); exit codes are those the shell sees.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from calckit.errors import BuildError
from calckit.workflow.batch import run_batch
from calckit.workflow.build import build_sheet

pytestmark = pytest.mark.slow  # builds (the kernel marker: see tests/conftest.py)

DATA = Path(__file__).parent / "data"
SLEEPS = DATA / "sleeps.ipynb"


def _inputs(path: Path, seconds: float, pid_file: Path | None = None, subject: str = "x") -> Path:
    path.write_text(f'subject = "{subject}"\nseconds = {seconds}\npid_file = "{pid_file or ""}"\n')
    return path


def _calckit(*args: str) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "calckit", *args], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )


def _wait_for_pid(pid_file: Path, process: subprocess.Popen, limit: float = 120) -> int:
    end = time.monotonic() + limit
    while time.monotonic() < end:
        if pid_file.exists() and pid_file.read_text().strip():
            return int(pid_file.read_text())
        if process.poll() is not None:
            raise AssertionError(f"ended before its kernel ran: {process.communicate()}")
        time.sleep(0.1)
    raise AssertionError("no kernel ran")


def _alive(pid: int) -> bool:
    """Whether the process runs: kill(pid, 0) succeeds and proc(5) does not show it a zombie."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat.rsplit(")", 1)[1].split()[0] != "Z"


def _gone_within(pid: int, seconds: float) -> bool:
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        if not _alive(pid):
            return True
        time.sleep(0.1)
    return not _alive(pid)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="PR_SET_PDEATHSIG is Linux's")
@pytest.mark.parametrize("command", ["build", "batch"])
def test_killed_build_takes_its_kernel(tmp_path, command):
    """A build or a batch killed by SIGKILL (nothing of it runs after) takes its kernel with it, within
    a few seconds; for a batch, through its worker process."""
    pid_file = tmp_path / "kernel.pid"
    if command == "build":
        inputs = _inputs(tmp_path / "in.toml", 120, pid_file)
        process = _calckit("build", str(SLEEPS), "--inputs", str(inputs), "--out", str(tmp_path / "out"))
    else:
        cases = tmp_path / "cases.csv"
        cases.write_text(f"case,seconds,pid_file\nlong,120,{pid_file}\n")
        process = _calckit("batch", str(SLEEPS), "--cases", str(cases), "--out", str(tmp_path / "out"))
    kernel = _wait_for_pid(pid_file, process)
    assert _alive(kernel)
    process.kill()
    process.communicate(timeout=30)
    assert process.returncode == -signal.SIGKILL
    assert _gone_within(kernel, 10), f"kernel {kernel} outlived its {command}"


def test_interrupted_build(tmp_path):
    """Ctrl-C (SIGINT) while a cell runs: one line, exit 130, the kernel killed, no folder left."""
    pid_file = tmp_path / "kernel.pid"
    inputs = _inputs(tmp_path / "in.toml", 120, pid_file)
    out = tmp_path / "out"
    process = _calckit("build", str(SLEEPS), "--inputs", str(inputs), "--out", str(out))
    kernel = _wait_for_pid(pid_file, process)
    process.send_signal(signal.SIGINT)
    stdout, stderr = process.communicate(timeout=60)
    assert (process.returncode, stdout, stderr) == (130, "", "calckit build: interrupted\n")
    assert _gone_within(kernel, 10)
    assert not out.exists()


def test_race_of_two_builds(tmp_path):
    """Two builds of other inputs into one folder at once: exactly one is built; the other exits 2
    saying why (another build writes there, or its sheet is there), and the winner's sheet is whole."""
    out = tmp_path / "out"
    runs = [
        _calckit("build", str(SLEEPS), "--inputs", str(_inputs(tmp_path / f"{n}.toml", 2, subject=n)),
                 "--out", str(out))
        for n in ("first", "second")
    ]  # fmt: skip
    ended = [(run.wait(timeout=300), *run.communicate()) for run in runs]
    codes = sorted(code for code, _, _ in ended)
    assert codes == [0, 2], ended
    loser = next(err for code, _, err in ended if code == 2)
    assert loser.startswith("calckit build: error: ")
    assert (
        "another calckit build is writing a sheet into this folder now" in loser
        or "already holds a sheet with fingerprint" in loser
    ), loser
    from calckit.sheet import existing_fingerprint, read_record

    record = read_record(out / "sleeps.json")
    assert existing_fingerprint(out / "sleeps.html") == record.fingerprint
    winner = next(out_ for code, out_, _ in ended if code == 0)
    assert record.fingerprint[:16] in winner
    assert not list(out.glob(".calckit-build-*"))


def test_time_limit_of_a_build(tmp_path):
    """A cell that runs past the build's time limit stops it with a BuildError naming the cell (its
    number and first line) and the limit; nothing is written."""
    inputs = _inputs(tmp_path / "in.toml", 120)
    started = time.monotonic()
    with pytest.raises(BuildError) as info:
        build_sheet(SLEEPS, inputs, tmp_path / "out", time_limit=2)
    assert time.monotonic() - started < 90
    text = str(info.value)
    assert "ran past its time limit of 2 s, in cell 3 ('import os')" in text, text
    assert not (tmp_path / "out").exists()


def test_time_limit_exit_code(tmp_path):
    """At the command line a build past its time limit exits 2, as the README's exit codes say (an input
    or usage problem: the limit given, or a template that does not end), with one line naming the cell."""
    inputs = _inputs(tmp_path / "in.toml", 120)
    process = _calckit("build", str(SLEEPS), "--inputs", str(inputs), "--out", str(tmp_path / "out"), "--time-limit", "2")
    stdout, stderr = process.communicate(timeout=120)
    assert process.returncode == 2, stderr
    assert stderr.startswith("calckit build: error: ") and stderr.count("\n") == 1
    assert "ran past its time limit of 2 s, in cell 3 ('import os')" in stderr
    readme = (Path(__file__).parents[1] / "README.md").read_text(encoding="utf-8")
    assert "a build past its time limit (exit 2" in " ".join(readme.split())


def test_time_limit_in_a_batch(tmp_path):
    """In a batch, a case that hangs fails on time and the case after it is built, in one worker (its
    kernel is replaced)."""
    cases = tmp_path / "cases.csv"
    cases.write_text("case,seconds\nhangs,600\nquick,0\n")
    started = time.monotonic()
    result = run_batch(SLEEPS, cases, tmp_path / "out", workers=1, time_limit=3)
    assert time.monotonic() - started < 200
    hangs, quick = result.cases
    assert not hangs.ok and "ran past its time limit of 3 s, in cell 3" in hangs.message
    assert quick.ok and (tmp_path / "out" / "quick" / "sleeps.json").is_file()
    assert not (tmp_path / "out" / "hangs").exists()
