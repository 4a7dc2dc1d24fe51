"""Printing a sheet's HTML to PDF with headless Chromium (Debian's ``chromium``).

The HTML is self-contained, so Chromium is started with everything that would
reach the network switched off. Without Chromium a clear error says how to
install it; the HTML itself is still the sheet of record.

Chromium prints into a private temporary folder; the finished PDF's bytes then
go through :func:`calckit.core.files.write_file`, the one writer (temporary file
in the target folder, fsync, rename, the permissions of a new file), so a PDF
is written like every other file calckit writes, refusals to overwrite included.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

from calckit.core.files import refuse_existing, write_file
from calckit.errors import SheetError

__all__ = ["find_chromium", "html_to_pdf", "CHROMIUM_FLAGS"]

CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-extensions",
)
TIMEOUT_S = 120


def find_chromium() -> str | None:
    """Path of Chromium, or None. ``CALCKIT_CHROMIUM`` overrides the search."""
    override = os.environ.get("CALCKIT_CHROMIUM")
    if override:
        return override if Path(override).is_file() else None
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return None


def html_to_pdf(
    html: str, pdf_path: str | os.PathLike, *, overwrite: bool = False, refuse: str | None = None
) -> Path:
    """Print *html* to *pdf_path* through headless Chromium; return the path written.

    The file is written by :func:`calckit.core.files.write_file`: whole or not at
    all, with the permissions of a new file. An existing *pdf_path* is replaced
    only with ``overwrite=True``; ``refuse`` is what the refusal tells the user
    to do instead.

    Raises
    ------
    SheetError
        Chromium is missing, fails, or does not finish within ``TIMEOUT_S`` seconds.
    OverwriteError
        *pdf_path* exists and *overwrite* is false; nothing is written.
    """
    pdf_path = Path(pdf_path)
    if not overwrite and pdf_path.exists():  # refuse before the minutes Chromium may take
        refuse_existing(pdf_path, refuse=refuse)
    browser = find_chromium()
    if browser is None:
        raise SheetError(
            "printing to PDF needs Chromium, which is not installed",
            where=str(pdf_path),
            do="Install it (Debian/Ubuntu: apt-get install chromium), set CALCKIT_CHROMIUM to its path, "
            "or save as .html and print from a browser",
        )
    with tempfile.TemporaryDirectory(prefix="calckit-print-") as work:
        work_dir = Path(work)
        page = work_dir / "sheet.html"
        page.write_text(
            html, encoding="utf-8"
        )  # a scratch copy for Chromium in a private folder, not a user file
        out = work_dir / "sheet.pdf"
        command = [
            browser,
            *CHROMIUM_FLAGS,
            f"--user-data-dir={work_dir / 'profile'}",
            "--no-pdf-header-footer",
            f"--print-to-pdf={out}",
            page.as_uri(),
        ]
        try:
            done = subprocess.run(command, capture_output=True, text=True, timeout=TIMEOUT_S, check=False)
        except subprocess.TimeoutExpired as exc:
            raise SheetError(
                f"Chromium did not finish printing within {TIMEOUT_S} s",
                where=str(pdf_path),
                do="Try again, or save as .html and print from a browser",
            ) from exc
        if done.returncode != 0 or not out.exists() or out.stat().st_size == 0:
            tail = (done.stderr or "").strip().splitlines()[-1:] or ["no message"]
            raise SheetError(
                f"Chromium could not print the sheet (exit code {done.returncode}: {tail[0]})",
                where=str(pdf_path),
                do="Save as .html and print from a browser",
            )
        return write_file(pdf_path, out.read_bytes(), overwrite=overwrite, refuse=refuse)
