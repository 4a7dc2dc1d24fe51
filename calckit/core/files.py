"""The one way calckit writes a file, and the one way it writes a TOML value.

Every file calckit writes (a sheet's HTML, PDF and JSON record, a built
notebook, a batch summary, an inputs file kept from the explorer) goes through
:func:`write_file`: the bytes go to a temporary file in the same folder, are
flushed to disk (``fsync``), given the permissions a new file gets under the
process's umask (``0644`` under the usual ``022``: readable by the group and
others, as files a user saves are), and then renamed into place. A reader never
sees half a file, and a crash leaves the old file or the new one, whole.

Without ``overwrite`` the name must still be free when the file appears: the
temporary file is hard-linked to the name, which fails if a file appeared
meanwhile, so a file another process wrote is never replaced.
"""

from __future__ import annotations

import errno
import json
import math
import os
import re
import tempfile
from pathlib import Path
from typing import Any

from calckit.errors import OverwriteError, StorageError

__all__ = ["new_file_mode", "refuse_existing", "storage_error", "toml_value", "write_file", "write_text"]


def free_name(path: Path, separator: str = "-", *, renumber: bool = False) -> Path:
    """*path* if no file has that name, else the first free ``<stem><separator>2<suffix>``, ``3`` ... beside it.

    With *renumber*, a number the stem already ends in (``kept_2``) is replaced, not extended.

    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> _ = (folder / "a.toml").write_text("")
    >>> free_name(folder / "a.toml").name, free_name(folder / "a.toml", "_").name
    ('a-2.toml', 'a_2.toml')
    """
    if not path.exists():
        return path
    stem = re.sub(rf"{re.escape(separator)}\d+$", "", path.stem) if renumber else path.stem
    number = 2
    while (candidate := path.with_name(f"{stem}{separator}{number}{path.suffix}")).exists():
        number += 1
    return candidate


_FULL = "Free some space on that disk (or give a folder on another) and run it again"
_DENIED = "Give a folder you may write in (or make this one writable) and run it again"
#: What a full disk or a folder one may not write in is, in the kit's words, and what to do.
_STORAGE = {
    errno.ENOSPC: ("the disk is full", _FULL),
    errno.EDQUOT: ("the disk quota is used up", _FULL),
    errno.EROFS: ("the folder is on a read-only file system", _DENIED),
    errno.EACCES: ("the folder is not writable (permission denied)", _DENIED),
    errno.EPERM: ("the folder is not writable (operation not permitted)", _DENIED),
}


def storage_error(exc: OSError, where: Path | str) -> StorageError | None:
    """The kit's own error for a full disk or a folder it may not write in (None for another OSError).

    >>> import errno
    >>> str(storage_error(OSError(errno.ENOSPC, "No space left on device"), "out/a.html"))
    'out/a.html: the disk is full. Free some space on that disk (or give a folder on another) and run it again; nothing was written there and the files it holds are as they were.'
    """
    found = _STORAGE.get(exc.errno or 0)
    if found is None:
        return None
    what, do = found
    return StorageError(
        what, where=str(where), do=do + "; nothing was written there and the files it holds are as they were"
    )


def new_file_mode() -> int:
    """Permissions of a new file under the process's umask (``0o644`` under umask ``022``).

    The umask is read from ``/proc/self/status`` where the system has it: setting it to
    read it back (the only other way) would leave it at 0 for a moment, and a file another
    thread made in that moment would be writable by everyone.
    """
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("Umask:"):
                    return 0o666 & ~int(line.split()[1], 8)
    except (OSError, ValueError):  # pragma: no cover - systems without /proc
        pass
    umask = os.umask(0o077)  # pragma: no cover - briefly restrictive, never permissive
    os.umask(umask)  # pragma: no cover
    return 0o666 & ~umask  # pragma: no cover


def _refused(path: Path, do: str | None) -> OverwriteError:
    return OverwriteError(
        "the file exists already",
        where=str(path),
        do=do
        or "Choose another name, or pass overwrite=True (--overwrite) to replace it; nothing was written",
    )


def refuse_existing(path: str | os.PathLike, *, refuse: str | None = None) -> None:
    """Raise the refusal :func:`write_file` would give without ``overwrite`` if *path* exists.

    For a writer whose bytes take long to make (a PDF printed by a browser): it
    refuses before the work instead of after it. :func:`write_file` checks again
    when it writes.

    Raises
    ------
    OverwriteError
        *path* exists; ``refuse`` is what the message tells the user to do instead.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> refuse_existing(pathlib.Path(tempfile.mkdtemp()) / "new.pdf")  # free: nothing happens
    """
    path = Path(path)
    if path.exists():
        raise _refused(path, refuse)


def write_file(
    path: str | os.PathLike, data: bytes, *, overwrite: bool = False, refuse: str | None = None
) -> Path:
    """Write *data* to *path* whole or not at all; return the path.

    Parameters
    ----------
    path : str or path
        The file to write; its folder is made if missing.
    data : bytes
        Everything the file holds.
    overwrite : bool
        Replace an existing file. Without it an existing file is refused, also
        one that appears while this file is written.
    refuse : str, optional
        What the refusal tells the user to do instead (the caller's own words).

    Raises
    ------
    OverwriteError
        The file exists and *overwrite* is false; nothing is written.
    StorageError
        The disk is full or the folder cannot be written in; nothing is written
        (no temporary file is left) and a file of that name is as it was.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> write_file(folder / "a.txt", b"one").read_bytes()
    b'one'
    >>> write_file(folder / "a.txt", b"two")
    Traceback (most recent call last):
    ...
    calckit.errors.OverwriteError: ...a.txt: the file exists already. Choose another name, ...
    """
    path = Path(path)
    if not overwrite and path.exists():
        raise _refused(path, refuse)
    try:
        return _write(path, data, overwrite=overwrite, refuse=refuse)
    except OSError as exc:
        if isinstance(exc, OverwriteError):
            raise
        raise (storage_error(exc, path) or exc) from None


def _write(path: Path, data: bytes, *, overwrite: bool, refuse: str | None) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".calckit-", suffix=path.suffix, dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, new_file_mode())  # temporary files are private; what is written is not
        if overwrite:
            os.replace(tmp, path)
        else:
            try:
                os.link(tmp, path)  # fails if the name was taken meanwhile
            except FileExistsError:
                raise _refused(path, refuse) from None
            except OSError:  # no hard links on this file system: the check above has to do
                if path.exists():
                    raise _refused(path, refuse) from None
                os.replace(tmp, path)
        _sync_folder(path.parent)
    finally:
        Path(tmp).unlink(missing_ok=True)
    return path


def write_text(
    path: str | os.PathLike, text: str, *, overwrite: bool = False, refuse: str | None = None
) -> Path:
    """:func:`write_file` for text, encoded as UTF-8."""
    return write_file(path, text.encode("utf-8"), overwrite=overwrite, refuse=refuse)


def _sync_folder(folder: Path) -> None:
    """Make the rename itself durable where the platform allows it."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover - platforms without directory handles
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


def _float_text(value: float) -> str:
    """The shortest text that reads back as the same float (TOML needs a digit after the point)."""
    if math.isnan(value) or math.isinf(value):
        return ("-" if value < 0 else "") + ("nan" if math.isnan(value) else "inf")
    return repr(value)


def toml_value(value: Any) -> str:
    """*value* written as a TOML value: booleans, numbers, arrays, and everything else as a string.

    >>> toml_value(True), toml_value(3), toml_value(0.1), toml_value("1850 kg")
    ('true', '3', '0.1', '"1850 kg"')
    >>> toml_value([1, "a"])
    '[1, "a"]'
    """
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return repr(value)
    if isinstance(value, float):
        return _float_text(value)
    if isinstance(value, tuple | list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    return json.dumps(str(value), ensure_ascii=False)
