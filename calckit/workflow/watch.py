"""Rebuild on save: one kernel kept, the sheet built again each time its inputs file changes.

:func:`watch_sheet` builds the sheet once, as ``calckit build`` does, then
looks at the inputs file (and the data files it names) every :data:`POLL_S`
seconds: its modification time and size, and when either moved, a SHA-256 of
its bytes. When the bytes changed (and stayed so for one more look: an editor
may write a file in pieces) the sheet is built again in the same kernel, reset
first as a batch worker's is (:mod:`calckit.workflow.kernel_state`), and what
moved between the previous sheet and the new one is said: the summary of
:func:`calckit.workflow.diff.diff_records`.

The refusals are the build's (:mod:`calckit.workflow.held`,
:mod:`calckit.workflow.outfolder`): the first build never replaces a sheet of
other inputs (unless ``overwrite``), nor files changed since they were built.
After it, the watch replaces the sheet *it* built, and only while the folder's
files are byte for byte the ones it wrote: a notebook annotated, a PDF signed or
a sheet built into the folder by someone else meanwhile is refused, and the
watch goes on without writing.

A bad edit (TOML that does not parse, a value the template refuses, a cell that
fails) is said as the build's error line and the watch goes on: the build is
all or nothing, so the last good sheet stays in the folder. A kernel that
died or ran past the time limit is replaced by a new one before the next build.

A watched file that disappears (deleted, or renamed away) is said once, as an
:class:`~calckit.errors.InputsError` line, and the watch keeps waiting for it:
editors that save by writing a new file and renaming it over the old one make
it vanish for a moment; a file put back is built when its bytes differ from those last seen. The
inputs file must exist when the watch starts (else the build's error, exit 2).

The watch ends on Ctrl-C (the command line says one line and exits 130) or
when *stop* (for a program that drives it) returns true.
"""

from __future__ import annotations

import asyncio
import contextlib
import hashlib
import os
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from calckit.errors import CalcError, InputsError, OverwriteError
from calckit.workflow.build import (
    CASE_TIME_LIMIT_S,
    CELL_TIMEOUT_S,
    BuildResult,
    build_in_kernel,
    check_time_limit,
    checked_inputs,
    prepared_values,
)
from calckit.workflow.held import SHEET_SUFFIXES, check_not_template, check_out_folder, held_fingerprint
from calckit.workflow.kernels import Kernel, run_sync, start_kernel
from calckit.workflow.outfolder import FolderLock
from calckit.workflow.templates import find_template, load_template

__all__ = ["POLL_S", "FileState", "file_state", "WatchEvent", "watch_sheet", "moved_summary"]

#: Seconds between two looks at the watched files.
POLL_S = 0.1
#: Seconds a changed file must keep its bytes before it is built (an editor may write it in pieces).
SETTLE_S = 0.05


@dataclass(frozen=True)
class FileState:
    """What the watch knows of a file: its modification time (ns), its size and a SHA-256 of its bytes."""

    mtime_ns: int
    size: int
    digest: str


def file_state(path: Path, known: FileState | None = None) -> FileState | None:
    """The file's :class:`FileState`, or None when it is not there (or not a file).

    The bytes are hashed only when the time or the size differ from *known*'s.
    """
    try:
        stat = path.stat()
    except OSError:
        return None
    if not path.is_file():
        return None
    if known is not None and (known.mtime_ns, known.size) == (stat.st_mtime_ns, stat.st_size):
        return known
    try:
        data = path.read_bytes()
    except OSError:
        return None
    return FileState(stat.st_mtime_ns, stat.st_size, hashlib.sha256(data).hexdigest())


@dataclass(frozen=True)
class WatchEvent:
    """One thing the watch did, as :func:`watch_sheet` hands it to *say*.

    Attributes
    ----------
    kind : str
        ``"built"`` (a sheet written), ``"failed"`` (a build refused or failed: *error*),
        ``"missing"`` (a watched file is gone), ``"back"`` (it is there again),
        ``"waiting"`` (the watch waits for a change).
    text : str
        The line to show.
    result : BuildResult or None
    error : CalcError or None
    moved : str
        For a rebuild, what moved since the previous sheet (:func:`moved_summary`).
    """

    kind: str
    text: str
    result: BuildResult | None = None
    error: CalcError | None = None
    moved: str = ""


def moved_summary(old: dict, new: dict) -> str:
    """What moved between two built sheets' records: a line of counts, then the diff's lines."""
    from calckit.workflow.diff import diff_records

    report = diff_records(old, new, old_name="previous sheet", new_name="new sheet")
    counts = [
        (len(report.inputs), "input changed", "inputs changed"),
        (len(report.results), "result moved", "results moved"),
        (len(report.flipped), "check flipped", "checks flipped"),
        (len(report.margins_moved), "margin moved", "margins moved"),
    ]
    said = [f"{n} {one if n == 1 else many}" for n, one, many in counts if n]
    if report.same_fingerprint:
        head = "nothing moved (same fingerprint)"
    elif not said:
        head = "nothing shown on the sheet moved"
    else:
        head = ", ".join(said)
    body = [line for line in report.text().splitlines() if not line.startswith(("Old: ", "New: "))]
    body = [line for line in body if not line.startswith("Same inputs, same calculation")]
    return "\n".join([f"moved: {head}", *(f"  {line}" for line in body)])


def _digests(out: Path, stem: str) -> dict[str, str]:
    """SHA-256 of each file of the sheet *stem* in *out*."""
    found = {}
    for suffix in SHEET_SUFFIXES:
        path = out / f"{stem}{suffix}"
        with contextlib.suppress(OSError):
            found[suffix] = hashlib.sha256(path.read_bytes()).hexdigest()
    return found


class _Session:
    """The state of one watch: the kernel, the last good sheet, the files it wrote."""

    def __init__(self, path: Path, inputs: Path, out: Path, options: dict[str, Any]) -> None:
        self.path, self.inputs, self.out, self.options = path, inputs, out, options
        self.kernel: Kernel | None = None
        self.record: dict | None = None  # the last sheet built
        self.written: dict[str, str] = {}  # its files' digests, as written
        self.data_files: list[Path] = []  # the data files the last inputs named
        self._template: tuple[FileState | None, Any] = (None, None)  # the template as last read

    async def kernel_ready(self) -> Kernel:
        if self.kernel is not None and not self.kernel.healthy:
            await self.kernel.aclose()
            self.kernel = None
        if self.kernel is None:
            self.kernel = await start_kernel()
            await self.kernel.warm_up()
        return self.kernel

    async def build(self) -> BuildResult:
        from calckit.workflow.kernels import ResetError

        try:
            return await self._build()
        except ResetError:  # a case changed what a reset cannot undo: once more, in a new kernel
            return await self._build()

    async def _build(self) -> BuildResult:
        started = time.monotonic()
        template = self.template()
        file, wheres, given = checked_inputs(template, self.inputs)
        values = prepared_values(template, file)
        self.data_files = [Path(values[name]) for name in sorted(template.files & set(values))]
        kernel = await self.kernel_ready()
        with FolderLock(self.out):
            held = held_fingerprint(self.out, template.name)
            overwrite = self.options["overwrite"]
            if self.written:  # the folder holds the sheet this watch built: replaced only if unchanged
                now = _digests(self.out, template.name)
                changed = sorted(
                    f"{template.name}{s}"
                    for s in set(now) | set(self.written)
                    if now.get(s) != self.written.get(s)
                )
                if changed:
                    raise OverwriteError(
                        f"{', '.join(changed)} changed since this watch built the sheet (edited, or built "
                        "by another command?)",
                        where=str(self.out),
                        do="Keep a copy elsewhere and start the watch again, or watch into another folder; "
                        "nothing was written",
                    )
                overwrite = True
            result = await build_in_kernel(
                kernel, template, values, wheres, file.path.name, self.out, held,
                pdf=self.options["pdf"], overwrite=overwrite, timeout=self.options["timeout"],
                started=started, time_limit=self.options["time_limit"], **given,
            )  # fmt: skip
            self.written = _digests(self.out, template.name)
        return result

    def template(self) -> Any:
        """The template, read again only when its bytes changed (it may be edited while watching)."""
        known, template = self._template
        state = file_state(self.path, known)
        if template is None or state is None or state != known:
            template = load_template(self.path)
            self._template = (state, template)
        return template

    def watched(self) -> list[Path]:
        return [self.inputs, *self.data_files]


def _verdict(record: dict) -> str:
    summary = record.get("summary", {})
    checks = summary.get("checks", 0)
    return f"{summary.get('met', 0)} of {checks} checks met" if checks else "no checks"


def watch_sheet(
    template: str | os.PathLike,
    inputs: str | os.PathLike,
    out: str | os.PathLike,
    *,
    pdf: bool = False,
    overwrite: bool = False,
    timeout: int = CELL_TIMEOUT_S,
    time_limit: float | None = CASE_TIME_LIMIT_S,
    poll: float = POLL_S,
    say: Callable[[WatchEvent], None] | None = None,
    stop: Callable[[], bool] | None = None,
) -> int:
    """Build a sheet, then build it again in the same kernel each time its inputs file changes.

    Keeps one kernel for the whole watch, so a rebuild costs the template's own
    work, not a kernel's start. After each rebuild it says what moved since the
    previous sheet (inputs, results, checks flipped, margins). A bad edit is
    said as the build's error and the watch goes on; the last good sheet stays.
    A watched file that disappears is said once, and the watch waits for it to
    come back. Ends on Ctrl-C.

    Parameters
    ----------
    template : str or path
        A template notebook, or the name of a bundled template.
    inputs : str or path
        The inputs file (TOML) to watch; it must exist when the watch starts.
    out : str or path
        The output folder; created if missing.
    pdf : bool
        Also print the sheet to PDF at each build.
    overwrite : bool
        Let the first build replace a sheet in the folder built from other
        inputs (as for :func:`build_sheet`). Later builds replace the sheet this
        watch built, and only while its files are as the watch wrote them.
    timeout : int
        Seconds one cell may run.
    time_limit : float or None
        Seconds one build's cells may run in all (see :func:`build_sheet`).
    poll : float
        Seconds between two looks at the watched files.
    say : callable, optional
        Called with each :class:`WatchEvent` (by default its text is printed).
    stop : callable, optional
        Called between looks; the watch ends when it returns true.

    Returns
    -------
    int
        The number of sheets built.

    Raises
    ------
    InputsError
        The inputs file is not there when the watch starts.
    BuildError
        No such template, or the output folder is the template's own.
    """
    path = find_template(template)
    inputs = Path(inputs)
    out = Path(out)
    check_out_folder(out)
    check_not_template(out, path)
    check_time_limit(time_limit)
    if not (isinstance(poll, int | float) and 0 < poll <= 60):
        raise InputsError(f"a poll of {poll!r} s", where="poll", do="Give a number of seconds from 0 to 60")
    if not inputs.is_file():
        raise InputsError(
            "the inputs file is not there", where=str(inputs), do="Give the path of an existing inputs file"
        )
    tell = say or (lambda event: print(event.text + (f"\n{event.moved}" if event.moved else ""), flush=True))
    options = {"pdf": pdf, "overwrite": overwrite, "timeout": timeout, "time_limit": time_limit}
    session = _Session(path, inputs, out, options)
    return run_sync(lambda: _watch(session, poll, tell, stop))


async def _watch(session: _Session, poll: float, tell: Callable, stop: Callable | None) -> int:
    built = 0
    try:
        states = {p: file_state(p) for p in session.watched()}
        while True:
            if all(states.get(p) is not None for p in session.watched()):
                built += await _one_build(session, tell, first=built == 0 and session.record is None)
                states = {p: file_state(p, states.get(p)) for p in session.watched()}
                tell(WatchEvent("waiting", f"Watching {session.inputs} for changes (Ctrl-C to stop)"))
            states = await _wait_for_change(session, states, poll, tell, stop)
            if states is None:
                return built
    finally:
        if session.kernel is not None:
            await session.kernel.aclose()


async def _one_build(session: _Session, tell: Callable, *, first: bool) -> int:
    try:
        result = await session.build()
    except CalcError as exc:
        keep = f" (the last good sheet stays in {session.out})" if session.record is not None else ""
        tell(WatchEvent("failed", f"calckit watch: error: {exc}{keep}", error=exc))
        return 0
    what = "Built" if first else "Rebuilt"
    text = f"{what} {session.path.stem} from {session.inputs.name} in {result.seconds:.1f} s: {_verdict(result.record)}"
    moved = moved_summary(session.record, result.record) if session.record is not None else ""
    first_sheet = session.record is None
    session.record = result.record
    tell(WatchEvent("built", text, result=result, moved=moved))
    if (
        first_sheet
    ):  # while the user reads: load what the diff needs (units, about a second), not after an edit
        moved_summary(result.record, result.record)
    return 1


async def _wait_for_change(
    session: _Session, states: dict, poll: float, tell: Callable, stop: Callable | None
) -> dict | None:
    """Wait until a watched file's bytes change and stay so for one more look; None when told to stop."""
    missing: set[Path] = {p for p, s in states.items() if s is None}
    for gone in sorted(missing):
        tell(_missing(gone))
    while True:
        if stop is not None and stop():
            return None
        await asyncio.sleep(poll)
        now = {p: file_state(p, states.get(p)) for p in session.watched()}
        for p, state in now.items():
            if state is None and p not in missing:
                missing.add(p)
                tell(_missing(p))
            elif state is not None and p in missing:
                missing.discard(p)
                tell(WatchEvent("back", f"{p} is there again"))
        changed = [p for p in now if now[p] is not None and _digest(now[p]) != _digest(states.get(p))]
        if changed and not missing:
            await asyncio.sleep(min(poll, SETTLE_S))  # settled: the same bytes a moment later
            again = {p: file_state(p, now.get(p)) for p in session.watched()}
            if all(_digest(again[p]) == _digest(now[p]) for p in now) and None not in again.values():
                return again
            now = again
        states = {p: (now[p] if now[p] is not None else states.get(p)) for p in now}


def _digest(state: FileState | None) -> str | None:
    return state.digest if state is not None else None


def _missing(path: Path) -> WatchEvent:
    error = InputsError(
        "the watched file is gone (deleted or renamed)",
        where=str(path),
        do="Put it back (the watch waits for it and builds when it is there again), or press Ctrl-C to stop",
    )
    return WatchEvent("missing", f"calckit watch: error: {error}", error=error)
