"""``calckit watch``: one session in a subprocess, one kernel start for all of it.

The session builds the P-101 example, then is driven through what a user does
while watching: an edit of the running speed (rebuilt, the diff's lines said,
the new amplitude checked against the textbook closed form), a bad edit (the
error line, the last good sheet untouched), a sheet file changed behind the
watch's back (refused, nothing written), the inputs file deleted (said, and the
watch waits) and put back, and Ctrl-C (SIGINT: one line, exit 130, no traceback).
"""

from __future__ import annotations

import json
import math
import os
import queue
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from calckit.workflow.watch import FileState, file_state

ROOT = Path(__file__).parent.parent
EXAMPLE = ROOT / "examples" / "harrow_creek_p101.toml"
STEM = "single_mass_harmonic"


class Session:
    """A ``calckit watch`` child process whose output lines are read as they come."""

    def __init__(self, folder: Path, inputs: Path) -> None:
        env = dict(os.environ)
        env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH", "")) if p)
        self.process = subprocess.Popen(
            [sys.executable, "-m", "calckit", "watch", STEM, "--inputs", inputs.name, "--out", "built"],
            cwd=folder,
            env=env,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        self.lines: queue.Queue = queue.Queue()
        self.seen: list[str] = []
        self.readers = [
            threading.Thread(target=self._read, args=(stream, name), daemon=True)
            for stream, name in ((self.process.stdout, "out"), (self.process.stderr, "err"))
        ]
        for reader in self.readers:
            reader.start()

    def _read(self, stream, name: str) -> None:
        for line in stream:
            self.lines.put(f"{name}: {line.rstrip()}")

    def wait_for(self, start: str, timeout: float = 240.0) -> list[str]:
        """The lines up to and with the first one that starts with *start* (after out:/err:)."""
        got = []
        deadline = time.monotonic() + timeout
        while True:
            try:
                line = self.lines.get(timeout=max(0.1, deadline - time.monotonic()))
            except queue.Empty:
                raise AssertionError(f"no line {start!r} within {timeout} s; saw {self.seen[-20:]}") from None
            self.seen.append(line)
            got.append(line)
            if line.split(": ", 1)[1].startswith(start):
                return got

    def stop(self) -> None:
        if self.process.poll() is None:
            self.process.kill()
            self.process.wait(timeout=30)
        for reader in self.readers:  # at the end of the streams once the process has ended
            reader.join(timeout=10)
        self.process.stdout.close()
        self.process.stderr.close()


def _edit(path: Path, old: str, new: str) -> None:
    text = path.read_text(encoding="utf-8")
    assert text.count(old) == 1, old
    path.write_text(text.replace(old, new), encoding="utf-8")


def _record(folder: Path) -> dict:
    return json.loads((folder / "built" / f"{STEM}.json").read_text(encoding="utf-8"))


def _files(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted((folder / "built").glob(f"{STEM}.*"))}


def _closed_form_amplitude(rpm: float) -> float:
    """X = F0 / sqrt((k - m w^2)^2 + (c w)^2), c = 2 zeta sqrt(k m): the steady-state amplitude of a
    damped single mass under F0 cos(w t) (S. S. Rao, Mechanical Vibrations, 5th ed., sec. 3.4, from
    memory), with the P-101 example's numbers, in m."""
    m, k, zeta, f0 = 1850.0, 720e3, 0.05, 900.0
    w = rpm * 2 * math.pi / 60
    c = 2 * zeta * math.sqrt(k * m)
    return f0 / math.hypot(k - m * w**2, c * w)


@pytest.fixture(scope="module")
def session(tmp_path_factory):
    folder = tmp_path_factory.mktemp("watch")
    inputs = folder / "p101.toml"
    inputs.write_bytes(EXAMPLE.read_bytes())
    watch = Session(folder, inputs)
    try:
        first = watch.wait_for("Watching")
        yield folder, inputs, watch, first
    finally:
        watch.stop()


@pytest.mark.slow
def test_watch_session(session):
    folder, inputs, watch, first = session
    assert any(line.startswith(f"out: Built {STEM} from p101.toml in ") for line in first), first
    assert _record(folder)["inputs"]  # the first sheet is there

    # an edit: rebuilt in the same kernel, what moved is said, the new numbers are right
    _edit(inputs, 'forcing_frequency = "1480 rpm"', 'forcing_frequency = "1200 rpm"')
    rebuilt = watch.wait_for("Watching")
    text = "\n".join(rebuilt)
    assert f"out: Rebuilt {STEM} from p101.toml in " in text
    assert "out: moved: 1 input changed, " in text
    assert "out:     forcing_frequency: 1480 rpm -> 1200 rpm" in text
    assert any("Steady-state amplitude" in line and "0.02058 mm -> " in line for line in rebuilt), text
    amplitude = {r["name"]: r["value"] for r in _record(folder)["results"]}["amplitude"]
    # the sheet carries its intermediate values as printed (4 figures: omega = 125.7 rad/s), so it
    # agrees with the closed form in full precision to about one part in 10^3
    assert amplitude == pytest.approx(_closed_form_amplitude(1200), rel=1e-3)
    good = _files(folder)

    # a bad edit: the error line, the watch goes on, the last good sheet stays as it was
    _edit(inputs, 'mass = "1850 kg"', 'mass = "1850 kg')
    bad = watch.wait_for("calckit watch: error:")
    assert bad[-1] == (
        "err: calckit watch: error: p101.toml, line 16, column 71: the inputs file is not valid TOML: illegal "
        "character '\\n'. Check that line: text needs quotes (mass = \"250 kg\") and each key is set once. "
        "(the last good sheet stays in built)"
    )
    assert _files(folder) == good

    # a sheet file changed behind the watch's back (a checker's note in the notebook): refused
    notebook = folder / "built" / f"{STEM}.ipynb"
    notebook.write_bytes(notebook.read_bytes().replace(b'"cells": [', b'"cells": [ ', 1))
    changed = _files(folder)
    _edit(inputs, 'mass = "1850 kg', 'mass = "1900 kg"')
    refused = watch.wait_for("calckit watch: error:")
    assert refused[-1] == (
        f"err: calckit watch: error: built: {STEM}.ipynb changed since this watch built the sheet (edited, or "
        "built by another command?). Keep a copy elsewhere and start the watch again, or watch into another "
        "folder; nothing was written. (the last good sheet stays in built)"
    )
    assert _files(folder) == changed

    # the inputs file disappears: said once, the watch waits; put back, it builds no more than it must
    inputs.unlink()
    gone = watch.wait_for("calckit watch: error:")
    assert gone[-1] == (
        "err: calckit watch: error: p101.toml: the watched file is gone (deleted or renamed). Put it back (the "
        "watch waits for it and builds when it is there again), or press Ctrl-C to stop."
    )
    inputs.write_bytes(EXAMPLE.read_bytes())
    watch.wait_for("p101.toml is there again")

    # Ctrl-C: one line, exit 130, no traceback
    time.sleep(0.5)
    watch.process.send_signal(signal.SIGINT)
    code = watch.process.wait(timeout=60)
    for reader in watch.readers:  # the reader threads take the last lines
        reader.join(timeout=10)
    rest = []
    while not watch.lines.empty():
        rest.append(watch.lines.get())
    assert code == 130
    every = watch.seen + rest
    assert rest[-1] == "err: calckit watch: interrupted", rest
    assert not any("Traceback" in line for line in every)


def test_file_state(tmp_path):
    """The bytes are hashed when the time or the size moved, and only then; a missing file is None."""
    path = tmp_path / "a.toml"
    assert file_state(path) is None
    path.write_text('mass = "1 kg"\n', encoding="utf-8")
    first = file_state(path)
    assert isinstance(first, FileState) and first.size == 14
    assert file_state(path, first) is first  # unchanged: not read again
    os.utime(path, ns=(first.mtime_ns + 10**9, first.mtime_ns + 10**9))
    touched = file_state(path, first)
    assert touched is not first and touched.digest == first.digest  # read again, same bytes
    path.write_text('mass = "2 kg"\n', encoding="utf-8")
    assert file_state(path, touched).digest != first.digest
