"""The output folder of a build (calckit.workflow.outfolder): the lock, the staged all-or-nothing move,
the roll-back of a move a killed build left half done, and full or read-only disks (issue 14, items 4, 7).

No kernel runs here: the moves are those a build makes, on files written by the test. What is
checked against is the operating system's own behaviour (POSIX ``rename(2)`` replaces a name at
once; ``flock(2)`` locks are held per open file and let go when the process ends), with faults
injected by patching ``os.replace`` and the writes.
"""

from __future__ import annotations

import errno
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from calckit.core.files import write_text
from calckit.errors import OverwriteError, StorageError
from calckit.workflow import cli
from calckit.workflow.outfolder import LOCK_NAME, STAGE_PREFIX, FolderLock, move_in, stage_folder

DATA = Path(__file__).parent / "data"
NAMES = ["sheet.ipynb", "sheet.html", "sheet.json"]  # the order a build moves them in: the record last


def _old_pair(out: Path) -> dict[str, bytes]:
    out.mkdir(parents=True, exist_ok=True)
    for name in NAMES:
        (out / name).write_bytes(f"old {name}".encode())
    return {name: (out / name).read_bytes() for name in NAMES}


def _staged(out: Path) -> Path:
    stage = stage_folder(out, "sheet")
    for name in NAMES:
        (stage / name).write_bytes(f"new {name}".encode())
    return stage


def _held(out: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in out.iterdir() if p.is_file() and p.name != LOCK_NAME}


class TestMove:
    def test_moved_whole(self, tmp_path):
        """All files land, the staging folder goes, the lock file stays."""
        out = tmp_path / "out"
        old = _old_pair(out)
        with FolderLock(out):
            move_in(_staged(out), out, NAMES)
        assert _held(out) == {name: f"new {name}".encode() for name in old}
        assert sorted(p.name for p in out.iterdir()) == sorted([LOCK_NAME, *NAMES])

    @pytest.mark.parametrize("failing", [2, 3])
    def test_failed_move_rolls_back(self, tmp_path, monkeypatch, failing):
        """A move that fails (the 2nd or the 3rd, the record's) leaves the old sheet whole and no staging
        folder; the error is raised."""
        out = tmp_path / "out"
        old = _old_pair(out)
        real, calls = os.replace, []

        def replace(source, target):
            calls.append(target)
            if len(calls) == failing:
                raise OSError(errno.EIO, "Input/output error", str(target))
            return real(source, target)

        with pytest.raises(OSError, match="Input/output") as info, FolderLock(out):
            stage = _staged(out)
            monkeypatch.setattr(os, "replace", replace)
            move_in(stage, out, NAMES)
        assert not isinstance(info.value, StorageError)  # not a full disk: not said to be one
        monkeypatch.undo()
        assert _held(out) == old
        assert not list(out.glob(f"{STAGE_PREFIX}*"))

    def test_full_disk_during_the_move(self, tmp_path, monkeypatch):
        """ENOSPC in the move is the kit's StorageError saying the disk is full; the old sheet is kept."""
        out = tmp_path / "out"
        old = _old_pair(out)
        real, calls = os.replace, []

        def replace(source, target):
            calls.append(target)
            if len(calls) == 2:
                raise OSError(errno.ENOSPC, "No space left on device", str(target))
            return real(source, target)

        with pytest.raises(StorageError, match="the disk is full"), FolderLock(out):
            stage = _staged(out)
            monkeypatch.setattr(os, "replace", replace)
            move_in(stage, out, NAMES)
        monkeypatch.undo()
        assert _held(out) == old and not list(out.glob(f"{STAGE_PREFIX}*"))

    def test_stale_file_removed_and_put_back(self, tmp_path, monkeypatch):
        """A file of the old sheet the new one does not write (a PDF) is removed with the move, and put
        back when the move fails."""
        out = tmp_path / "out"
        old = _old_pair(out)
        (out / "sheet.pdf").write_bytes(b"old pdf")
        old["sheet.pdf"] = b"old pdf"
        with FolderLock(out):
            stage = _staged(out)
            monkeypatch.setattr(os, "link", _fail_always)  # no hard links: copies are kept instead
            real, calls = os.replace, []

            def replace(source, target):
                calls.append(target)
                if len(calls) == 3:
                    raise OSError(errno.EIO, "Input/output error")
                return real(source, target)

            monkeypatch.setattr(os, "replace", replace)
            with pytest.raises(OSError):
                move_in(stage, out, NAMES, remove=["sheet.pdf"])
        monkeypatch.undo()
        assert _held(out) == old
        with FolderLock(out):
            move_in(_staged(out), out, NAMES, remove=["sheet.pdf"])
        assert sorted(_held(out)) == sorted(NAMES)

    def test_new_file_appearing_is_refused(self, tmp_path):
        """A name that was free when checked and taken before the move (outside calckit) is refused before
        anything moves."""
        out = tmp_path / "out"
        out.mkdir()
        with FolderLock(out):
            stage = _staged(out)
            (out / "sheet.json").write_bytes(b"someone else's")
            with pytest.raises(OverwriteError, match="appeared"):
                move_in(stage, out, NAMES, replace=set())  # the build found the folder empty
        assert _held(out) == {"sheet.json": b"someone else's"}

    def test_killed_between_moves_is_rolled_back_by_the_next_build(self, tmp_path):
        """A process killed between two moves leaves new files beside the old record; the next lock on
        the folder puts the old sheet back before anything else."""
        out = tmp_path / "out"
        old = _old_pair(out)
        script = textwrap.dedent(
            f"""
            import os
            from pathlib import Path
            from calckit.workflow.outfolder import FolderLock, move_in, stage_folder
            out = Path({str(out)!r})
            real, calls = os.replace, []
            def replace(source, target):
                calls.append(target)
                if len(calls) == 3:
                    os._exit(9)  # killed before the record moves
                return real(source, target)
            with FolderLock(out):
                stage = stage_folder(out, "sheet")
                for name in {NAMES!r}:
                    (stage / name).write_bytes(("new " + name).encode())
                os.replace = replace
                move_in(stage, out, {NAMES!r})
            """
        )
        run = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=60)
        assert run.returncode == 9, run.stderr
        half = _held(out)
        assert half["sheet.html"] == b"new sheet.html" and half["sheet.json"] == old["sheet.json"]
        assert list(out.glob(f"{STAGE_PREFIX}*"))
        with FolderLock(out):
            assert _held(out) == old
        assert not list(out.glob(f"{STAGE_PREFIX}*"))


def _fail_always(*args, **kwargs):
    raise OSError(errno.EPERM, "Operation not permitted")


class TestLock:
    def test_second_build_refused(self, tmp_path):
        """While one build holds the folder, another is refused at once, saying so (flock(2) locks
        each open file: two in one process exclude each other too)."""
        out = tmp_path / "out"
        with FolderLock(out):
            with pytest.raises(OverwriteError) as info, FolderLock(out):
                pass
            assert "another calckit build is writing a sheet into this folder now" in str(info.value)
            assert (out / LOCK_NAME).exists()
        with FolderLock(out):  # let go at the end of the first
            pass

    def test_lock_let_go_when_the_process_dies(self, tmp_path):
        """A build killed (SIGKILL) holds no lock: the system lets it go with the process."""
        out = tmp_path / "out"
        script = (
            "import os; from calckit.workflow.outfolder import FolderLock\n"
            f"FolderLock({str(out)!r}).__enter__(); os.kill(os.getpid(), 9)\n"
        )
        run = subprocess.run([sys.executable, "-c", script], capture_output=True, timeout=60)
        assert run.returncode == -9
        with FolderLock(out):
            pass

    def test_failed_build_leaves_no_folder_it_made(self, tmp_path):
        """A folder the lock made is removed again when the build fails, lock file and all."""
        out = tmp_path / "new" / "out"
        with pytest.raises(RuntimeError), FolderLock(out):
            stage_folder(out, "sheet")
            raise RuntimeError("the build failed")
        assert not out.exists()

    def test_writable_folder_under_a_read_only_parent(self, tmp_path, monkeypatch):
        """Staging happens inside the output folder: nothing is written in its parent."""
        out = tmp_path / "out"
        out.mkdir()
        real = os.open

        def no_writes_beside(path, flags, *args, **kwargs):
            if Path(path).parent == tmp_path and flags & (os.O_CREAT | os.O_WRONLY | os.O_RDWR):
                raise PermissionError(errno.EACCES, "Permission denied", str(path))
            return real(path, flags, *args, **kwargs)

        monkeypatch.setattr(os, "open", no_writes_beside)
        with FolderLock(out):
            stage = _staged(out)
            assert stage.parent == out.resolve()
            move_in(stage, out, NAMES)
        assert sorted(_held(out)) == sorted(NAMES)


class TestStorageErrors:
    def test_full_disk_on_write(self, tmp_path, monkeypatch):
        """ENOSPC while writing (patched into the write) is StorageError naming a full disk; the file
        there is as it was and no temporary file is left."""
        target = tmp_path / "sheet.html"
        target.write_text("good sheet")

        def full(fd, data):
            raise OSError(errno.ENOSPC, "No space left on device")

        monkeypatch.setattr(os, "write", full)
        monkeypatch.setattr(os, "fdopen", lambda fd, mode: _FullFile(fd))
        with pytest.raises(StorageError) as info:
            write_text(target, "new sheet", overwrite=True)
        assert str(info.value).startswith(f"{target}: the disk is full. Free some space")
        monkeypatch.undo()
        assert target.read_text() == "good sheet"
        assert [p.name for p in tmp_path.iterdir()] == ["sheet.html"]

    @pytest.mark.parametrize(
        ("code", "said"),
        [(errno.EROFS, "read-only file system"), (errno.EACCES, "not writable (permission denied)")],
    )
    def test_cli_read_only_output_folder(self, tmp_path, monkeypatch, capsys, code, said):
        """A folder that cannot be made or written in ends the build with exit 2 and what it is, never
        'please report it'; refused before any kernel starts."""
        inputs = tmp_path / "in.toml"
        inputs.write_text('subject = "x"\n')
        out = tmp_path / "out"

        def refused(path, *args, **kwargs):
            raise OSError(code, os.strerror(code), str(path))

        monkeypatch.setattr(Path, "mkdir", refused)
        status = cli.main(["build", str(DATA / "sleeps.ipynb"), "--inputs", str(inputs), "--out", str(out)])
        err = capsys.readouterr().err
        assert status == 2
        assert err.startswith(f"calckit build: error: {out}: the folder is ") and said in err
        assert "report" not in err and len(err.splitlines()) == 1
        assert not out.exists()


class _FullFile:
    """A file whose every write finds the disk full (what ``write(2)`` says with ENOSPC)."""

    def __init__(self, fd: int):
        self.fd = fd

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        os.close(self.fd)

    def write(self, data):
        raise OSError(errno.ENOSPC, "No space left on device")
