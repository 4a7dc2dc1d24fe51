"""Every demo sheet, printed on A4 and on Letter, shows every formula whole.

``calckit demo`` builds the demo sheets once for this module. Each sheet is laid
out by headless Chromium in print media at the printable width of the paper
(tests/browser.py, ``print_layout``: the DevTools protocol's print-media emulation
and ``Page.printToPDF``), and:

* no ``<math>`` element's box reaches past the printable width (its content's
  ``getBoundingClientRect()``), nor any table or the content of any of its cells, so
  nothing is cut at the margin;
* the PDF's text, read back by poppler's ``pdftotext``, holds as many ``sin``
  and ``cos`` factors, and as many ``=`` signs, as the laid-out page's text
  (``innerText``): a factor cut at the margin would be missing from the PDF;
* no number on a sheet has more than 12 digits (common practice, no source: a
  value no one can read or retype is no use to a checker);
* a matrix's entries are separate cells, each sign set on its own entry.

PDFs are left in tests/_artifacts/print-fit/ for a person to look at.
"""

from __future__ import annotations

import html
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.browser import ARTIFACTS, PAPERS, needs_chromium, print_layout

ROOT = Path(__file__).resolve().parent.parent
#: a digit run longer than this on a sheet is a number no engineer can read (common practice, no source)
MAX_DIGITS = 12
#: tolerance for sub-pixel rounding of box edges, in CSS pixels
EDGE_PX = 0.5
#: factors whose counts must agree between the laid-out page and the PDF's text
FACTORS = ("sin", "cos", "=")


@pytest.fixture(scope="module")
def demo_sheets(shared_demo) -> dict[str, Path]:
    root, run = shared_demo  # the run's one demo build (tests/conftest.py)
    # 3: built, with a check not met (the SP-601 demo's separation check is not met on purpose)
    assert run.returncode in (0, 3), run.stderr[-3000:]
    sheets = {p.parent.name: p for p in sorted((root / "demo").glob("*/*.html"))}
    assert len(sheets) >= 6, sorted(sheets)
    return sheets


def _count(token: str, text: str) -> int:
    if token == "=":
        return text.count("=")
    return len(re.findall(rf"(?<![A-Za-z]){token}(?![A-Za-z])", text))


def _pdftotext(pdf: Path) -> str:
    done = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    return done.stdout


@needs_chromium
@pytest.mark.browser
@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils (pdftotext) is not installed")
@pytest.mark.parametrize("paper", sorted(PAPERS))
def test_every_formula_fits_and_prints_whole(demo_sheets, paper):
    """No math box past the printable width; the PDF holds every factor the page shows."""
    folder = ARTIFACTS / "print-fit"
    folder.mkdir(parents=True, exist_ok=True)
    overflow, missing, widest = [], [], {}
    for name, page in demo_sheets.items():
        layout = print_layout(page, paper)
        right = max(m["right"] for m in layout.maths)
        widest[name] = f"{right:.0f} of {layout.printable_px:.0f} px"
        overflow += [
            f"{name}: {m['right']:.0f} px > {layout.printable_px:.0f} px: {m['text'][:60]}"
            for m in layout.maths
            if m["right"] > layout.printable_px + EDGE_PX or m["left"] < -EDGE_PX
        ]
        overflow += [  # a table (or a cell's content) past the margin is cut as surely as a formula
            f"{name}: table {t['right']:.0f} px > {layout.printable_px:.0f} px: {t['text'][:60]!r}"
            for t in layout.tables
            if t["right"] > layout.printable_px + EDGE_PX or t["left"] < -EDGE_PX
        ]
        pdf = folder / f"{name}.{paper}.pdf"
        pdf.write_bytes(layout.pdf)
        printed = _pdftotext(pdf)
        for token in FACTORS:
            shown, got = _count(token, layout.text), _count(token, printed)
            if got < shown:
                missing.append(f"{name}: {token!r} {shown} on the page, {got} in the PDF")
    print(f"widest formula per sheet ({paper}):", widest)
    assert not overflow, "\n".join(overflow)
    assert not missing, "\n".join(missing)


def _sheet_text(page: Path) -> str:
    source = page.read_text(encoding="utf-8")
    source = re.sub(r"<style>.*?</style>", " ", source, flags=re.S)
    source = re.sub(r"<code>[0-9a-f]{64}</code>|fingerprint [0-9a-f]{12}", " ", source)
    source = re.sub(r'\s[a-z-]+="[^"]*"', "", source)  # attribute values (fingerprint, ids)
    return html.unescape(re.sub(r"<[^>]+>", " ", source))


def test_no_number_longer_than_twelve_digits(demo_sheets):
    """Every digit run in every sheet's text (a number with its decimal point counts whole)."""
    too_long = []
    for name, page in demo_sheets.items():
        for match in re.finditer(r"\d+(?:\.\d+)?", _sheet_text(page)):
            digits = match.group(0).replace(".", "")
            if len(digits) > MAX_DIGITS:
                too_long.append(f"{name}: {match.group(0)}")
    assert not too_long, "\n".join(too_long[:20])


def test_matrix_entries_are_separate_cells(demo_sheets):
    """The absorber's stiffness matrix: each entry in its own padded cell, a sign tight on
    its entry (MathML Core: ``mo`` with ``form="prefix"``), never between two entries."""
    page = demo_sheets["b201-absorber"].read_text(encoding="utf-8")
    cells = re.findall(r"<mtd style=\"([^\"]*)\">(.*?)</mtd>", page)
    matrix_cells = [(style, body) for style, body in cells if "padding: 0.15em 0.9em" in style]
    assert matrix_cells, "no matrix cells found"
    for _style, body in matrix_cells:
        signs = re.findall(r"<mo([^>]*)>[\u2212+]</mo>", body)
        if body.startswith("<mo") and signs:
            assert 'form="prefix"' in signs[0]
