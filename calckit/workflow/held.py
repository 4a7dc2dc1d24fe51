"""What an output folder already holds, checked before a build writes into it.

A build never silently replaces a sheet: the folder must be a folder and not the
template's own; a sheet of the same name built from other inputs (another fingerprint)
is refused (:func:`refuse_other_sheet`), and so is one of the same inputs whose files
were changed since (:func:`refuse_changed`, judged by :func:`same_file`, a PDF's print
dates aside). :mod:`calckit.workflow.build` and :mod:`calckit.workflow.batch` ask here.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from pathlib import Path

from calckit.errors import BuildError, OverwriteError

__all__ = [
    "SHEET_SUFFIXES",
    "check_not_template",
    "check_out_folder",
    "held_fingerprint",
    "refuse_changed",
    "refuse_other_sheet",
    "same_file",
]

SHEET_SUFFIXES = (".ipynb", ".html", ".json", ".pdf")


def check_out_folder(out: Path) -> None:
    """Refuse an output path that is a file (a folder, or nothing yet, is fine)."""
    if out.exists() and not out.is_dir():
        raise BuildError(
            "the output path is a file, not a folder",
            where=str(out),
            do="Give a folder for --out (it is created if missing)",
        )


def check_not_template(out: Path, template: Path) -> None:
    target = out / f"{template.stem}.ipynb"
    if target.exists() and target.resolve() == template.resolve():
        raise BuildError(
            "the output folder is the template's own folder: the executed notebook would replace the template",
            where=str(target),
            do="Give another folder for --out",
        )


def held_fingerprint(out: Path, stem: str) -> tuple[bool, str | None]:
    """Whether the folder holds files of a sheet called *stem*, and their fingerprint (None if unreadable)."""
    present = [out / f"{stem}{suffix}" for suffix in SHEET_SUFFIXES if (out / f"{stem}{suffix}").exists()]
    if not present:
        return False, None
    from calckit.sheet import existing_fingerprint

    for suffix in (".json", ".html"):
        found = existing_fingerprint(out / f"{stem}{suffix}")
        if found:
            return True, found
    return True, None


def refuse_other_sheet(out: Path, stem: str, held: str | None) -> OverwriteError:
    what = (
        f"a sheet with fingerprint {held[:12]}"
        if held
        else "files of a sheet whose fingerprint cannot be read"
    )
    return OverwriteError(
        f"the output folder already holds {what}, built from other inputs",
        where=str(out / f"{stem}.json"),
        do="Build into another folder, or pass overwrite=True (--overwrite) to replace it",
    )


def refuse_changed(out: Path, names: Sequence[str]) -> OverwriteError:
    one = len(names) == 1
    return OverwriteError(
        f"the output folder holds this sheet (same fingerprint), but {', '.join(names)} "
        f"{'differs' if one else 'differ'} from what this build writes (edited since it was built?)",
        where=str(out),
        do=f"Keep a copy elsewhere, build into another folder, or pass overwrite=True (--overwrite) "
        f"to replace {'it' if one else 'them'}",
    )


_PDF_DATES = re.compile(rb"/(CreationDate|ModDate) ?\(D:[0-9Z+'-]*\)")


def same_file(held: Path, written: Path) -> bool:
    """Whether a file in the output folder holds what the build wrote: the same bytes (a PDF's dates aside)."""
    try:
        old, new = held.read_bytes(), written.read_bytes()
    except OSError:
        return False
    if old == new:
        return True
    if written.suffix == ".pdf":  # Chromium stamps each print with its time
        return _PDF_DATES.sub(rb"/\1 ()", old) == _PDF_DATES.sub(rb"/\1 ()", new)
    return False
