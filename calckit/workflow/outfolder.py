"""The output folder of a build: one build at a time, files staged inside it, moved in all or nothing.

A build takes :class:`FolderLock` on its output folder for the whole build: an
exclusive ``flock`` on the file ``.calckit-lock`` inside it (kept there after
the build; the system lets the lock go when the process ends, however it ends).
A second build into the same folder while one runs is refused at once
(:class:`~calckit.errors.OverwriteError`, exit 2, saying that another build is
writing there); what the folder holds is read and checked under the lock, so a
refusal names the real reason.

The build's files are made in a staging folder inside the output folder
(:func:`stage_folder`, ``.calckit-build-<stem>-...``), so the final moves are
renames within one file system, and a writable output folder under a read-only
parent works. :func:`move_in` moves them in, the JSON record last: before the
first move it keeps a hard link of each file it replaces (``.replaced/`` in the
staging folder) and writes a list of the moves (``moving``); if a move fails,
the files moved are put back as they were and the error is raised. A process
killed between two moves cannot roll back; the next build into the folder
does, under the lock, before anything else (:func:`clear_stale`): it finds the
list and puts the old files back. Until then a reader can tell: the record is
moved last, so the HTML is new and the record old, and ``calckit diff``
checks a folder's HTML against its record's fingerprint. Staging folders of a
build that ended are removed by the same step.
"""

from __future__ import annotations

import contextlib
import errno
import os
import shutil
import tempfile
from collections.abc import Collection, Sequence
from pathlib import Path

from calckit.core.files import storage_error
from calckit.errors import OverwriteError

__all__ = ["LOCK_NAME", "STAGE_PREFIX", "FolderLock", "stage_folder", "move_in", "clear_stale"]

#: The lock file a build holds in its output folder (kept after the build).
LOCK_NAME = ".calckit-lock"
#: How a staging folder's name begins.
STAGE_PREFIX = ".calckit-build-"
_MOVES = "moving"
_REPLACED = ".replaced"


class FolderLock:
    """The exclusive lock on an output folder, for a ``with`` block (the folder is made if missing).

    On leaving the block the staging folders are removed; a folder the lock made
    is removed again if the block failed and the folder holds nothing else.

    Raises
    ------
    OverwriteError
        Another build holds the lock.
    StorageError
        The folder cannot be made or written in.
    """

    def __init__(self, out: str | os.PathLike):
        self.out = Path(out)
        self.made = False
        self._fd: int | None = None

    def __enter__(self) -> FolderLock:
        import fcntl

        try:
            try:
                self.out.mkdir(parents=True)
                self.made = True
            except FileExistsError:
                pass
            self._fd = os.open(self.out / LOCK_NAME, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC, 0o644)
        except OSError as exc:
            self._undo_made()
            raise (storage_error(exc, self.out) or exc) from None
        try:
            fcntl.flock(self._fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(self._fd)
            self._fd = None
            raise OverwriteError(
                "another calckit build is writing a sheet into this folder now",
                where=str(self.out),
                do="Wait for it to end and build again, or build into another folder; nothing was written",
            ) from None
        try:
            clear_stale(self.out)
        except BaseException:
            self.__exit__(None, None, None)
            raise
        return self

    def __exit__(self, kind, value, traceback) -> None:
        if self._fd is None:
            return
        try:
            clear_stale(self.out)
            if kind is not None and self.made:  # a failed build leaves no folder it made
                names = {p.name for p in self.out.iterdir()}
                if names <= {LOCK_NAME}:
                    (self.out / LOCK_NAME).unlink(missing_ok=True)  # still locked: no one else uses it
                    with contextlib.suppress(OSError):
                        self.out.rmdir()
        except OSError:
            pass
        finally:
            os.close(self._fd)
            self._fd = None

    def _undo_made(self) -> None:
        if self.made:
            with contextlib.suppress(OSError):
                self.out.rmdir()


def stage_folder(out: Path, stem: str) -> Path:
    """A new staging folder inside *out* (which the caller has locked)."""
    try:
        return Path(tempfile.mkdtemp(prefix=f"{STAGE_PREFIX}{stem}-", dir=out)).resolve()
    except OSError as exc:
        raise (storage_error(exc, out) or exc) from None


def clear_stale(out: Path) -> None:
    """Under the lock: roll back a move a killed build left half done, then remove every staging folder."""
    for stage in sorted(out.glob(f"{STAGE_PREFIX}*")):
        if not stage.is_dir():
            continue
        journal = stage / _MOVES
        if journal.exists():
            _roll_back(out, stage, journal.read_text(encoding="utf-8").split("\n"))
        shutil.rmtree(stage, ignore_errors=True)


def _roll_back(out: Path, stage: Path, names: Sequence[str]) -> None:
    """Put the folder back as it was before the moves of *names* (those made, in any number)."""
    for name in reversed([n for n in names if n]):
        staged, kept, target = stage / name, stage / _REPLACED / name, out / name
        if staged.exists():  # not moved yet (or a file to remove: kept only)
            if kept.exists() and not target.exists():
                os.replace(kept, target)
            elif not kept.exists() and target.exists() and os.path.samefile(staged, target):
                target.unlink()  # a new file linked in, its staged name not yet removed
            continue
        if kept.exists():
            os.replace(kept, target)
        else:
            target.unlink(missing_ok=True)


def move_in(
    stage: Path,
    out: Path,
    names: Sequence[str],
    *,
    remove: Sequence[str] = (),
    replace: Collection[str] | None = None,
) -> None:
    """Move the files *names* from *stage* into *out*, in that order, and delete *remove*: all or nothing.

    The caller holds the lock on *out* and has checked what may be replaced:
    the names in *replace* (None: any). A file that appeared meanwhile (outside
    calckit, since the lock is held) under another name is refused
    (:class:`~calckit.errors.OverwriteError`) before anything moves. On any failure the files already moved are
    put back as they were and the error is raised (a full disk or a folder
    that cannot be written in as :class:`~calckit.errors.StorageError`).
    """
    kept = stage / _REPLACED
    for name in names:
        if replace is not None and name not in replace and (out / name).exists():
            raise _appeared(out / name)
    try:
        kept.mkdir()
        for name in [*names, *remove]:
            target = out / name
            if target.exists():
                _keep(target, kept / name)
        # the files to remove sit in the list as staged files that never move: see _roll_back
        for name in remove:
            (stage / name).touch()
        _write_journal(stage, [*remove, *names])
    except OSError as exc:
        raise (storage_error(exc, out) or exc) from None
    try:
        for name in remove:
            (out / name).unlink(missing_ok=True)
        for name in names:
            source, target = stage / name, out / name
            if (kept / name).exists():
                os.replace(source, target)
            else:
                try:
                    os.link(source, target)  # refuses a file that appeared since the check
                except FileExistsError:
                    raise _appeared(target) from None
                except OSError as exc:
                    if exc.errno not in (errno.EPERM, errno.EMLINK, errno.EOPNOTSUPP):
                        raise
                    os.replace(source, target)  # no hard links on this file system
                else:
                    source.unlink()
    except BaseException as exc:
        with contextlib.suppress(OSError):
            _roll_back(out, stage, [*remove, *names])
            (stage / _MOVES).unlink(missing_ok=True)
        if isinstance(exc, OSError) and not isinstance(exc, OverwriteError):
            raise (storage_error(exc, out) or exc) from None
        raise
    (stage / _MOVES).unlink()  # every move made: nothing to roll back
    _sync(out)


def _appeared(target: Path) -> OverwriteError:
    return OverwriteError(
        "the file appeared while the sheet was being built (written by something other than calckit)",
        where=str(target),
        do="Move it away and build again, or build into another folder; nothing was changed",
    )


def _keep(target: Path, kept: Path) -> None:
    try:
        os.link(target, kept)
    except OSError:  # no hard links here: a copy does
        shutil.copy2(target, kept)


def _write_journal(stage: Path, names: Sequence[str]) -> None:
    path = stage / _MOVES
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("\n".join(names) + "\n")
        handle.flush()
        os.fsync(handle.fileno())


def _sync(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
