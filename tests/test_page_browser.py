"""Tests for calckit.render.page, and headless-Chromium checks of the exported page.

The browser tests load pages from files with Debian's chromium (tests/browser.py)
and skip with a reason where it is not installed. Screenshots and PDFs are left
in tests/_artifacts/ for a person to look at.
"""

from __future__ import annotations

import re
import struct

import pytest

from calckit.errors import SheetError
from calckit.render.page import Html, escape, html_page, math_block, math_inline, section, table
from tests.browser import (
    ARTIFACTS,
    chromium_path,
    inspect_page,
    needs_chromium,
    pdf_page_count,
    pdf_text,
    print_pdf,
    screenshot,
)
from tests.test_mathml import CONSTRUCTS


def _step(label: str, latex: str, note: str) -> Html:
    return Html(
        f'<div class="step"><p class="label">{escape(label)}</p>{math_block(latex)}<p>{escape(note)}</p></div>'
    )


def _sample_body() -> Html:
    """A small sheet in an invented scenario: a pump skid on four spring mounts."""
    title_block = Html(
        '<div class="title-block"><h1>Pump skid P-12: spring mounts</h1>'
        + table(
            ["Job", "Sheet", "Revision", "Prepared", "Checked"],
            [["118 Ridgeway plant", "3 of 5", "A", "J. Okafor", "L. Brandt"]],
        )
        + "</div>"
    )
    constructs = "".join(_step(c.name.capitalize(), c.latex, f"Construct: {c.name}.") for c in CONSTRUCTS)
    inputs = table(
        ["Input", "Symbol", "Value", "Source"],
        [
            ["Mass", math_inline("m"), "420 kg", "Vendor data sheet"],
            ["Stiffness", math_inline("k"), "1.2 MN/m", "Mount catalogue"],
            ["Damping ratio", math_inline(r"\zeta"), "0.05", "Assumed"],
        ],
    )
    checks = Html(
        '<div class="check"><span class="verdict">Meets</span>: transmissibility '
        + math_inline(r"T = 0.18 \le 0.25")
        + "</div>"
        '<div class="check check-failed"><span class="verdict">Does not meet</span>: static deflection '
        + math_inline(r"\delta = 3.4\;\mathrm{mm} > 3\;\mathrm{mm}")
        + "</div>"
    )
    caution = Html(
        '<div class="caution">The results support, and do not replace, the judgment of a qualified '
        "engineer and the codes that apply locally.</div>"
    )
    signoff = Html(
        '<div class="signoff">'
        + table(
            ["Role", "Name", "Signature", "Date"],
            [["Prepared", "J. Okafor", "", ""], ["Checked", "", "", ""]],
        )
        + "</div>"
    )
    return Html(
        title_block
        + section(1, "Inputs", inputs)
        + section(2, "Derivation", Html(constructs))
        + section(3, "Checks", checks + caution)
        + section(4, "Sign-off", signoff)
    )


def _sample_page() -> str:
    return html_page(
        "Pump skid P-12: spring mounts",
        _sample_body(),
        header_left="118 Ridgeway plant",
        header_right="Pump skid P-12",
        footer_left="Rev. A",
        footer_right="calckit 0.1.0",
    )


class TestEscape:
    """escape() makes text safe and lets Html through."""

    def test_escapes_markup(self):
        """<, >, & and quotes are escaped."""
        assert escape("a < b & \"c\" > 'd'") == "a &lt; b &amp; &quot;c&quot; &gt; &#x27;d&#x27;"

    def test_html_passes_through(self):
        """Html is already safe and is returned unchanged."""
        assert escape(Html("<b>x</b>")) == "<b>x</b>"

    def test_result_is_html(self):
        """The result is Html, so escaping twice changes nothing."""
        assert escape(escape("a & b")) == "a &amp; b"


class TestTable:
    """table() builds a header row and escaped cells."""

    def test_cells_escaped_and_html_kept(self):
        """Plain cells are escaped; Html cells such as inline math are kept."""
        out = table(["a<b", "x"], [["1 & 2", math_inline("x")]], cls="inputs")
        assert out.startswith('<table class="inputs"><thead><tr><th>a&lt;b</th><th>x</th></tr></thead>')
        assert "<td>1 &amp; 2</td>" in out
        assert '<td><span class="math-inline"><math' in out

    def test_row_length_must_match(self):
        """A row with the wrong number of cells is refused."""
        with pytest.raises(SheetError) as info:
            table(["a", "b"], [["1", "2"], ["3"]])
        assert (
            str(info.value)
            == "table: row 2 has 1 cells but there are 2 headings. Give every row one cell per heading."
        )


class TestSection:
    """section() numbers its heading and keeps its content."""

    def test_numbered_heading(self):
        """The number and escaped title go in <h2>; the id follows the number."""
        out = section("3.2", "Checks & margins", Html("<p>x</p>"))
        assert out == (
            '<section class="section" id="section-3-2"><h2><span class="number">3.2</span> '
            "Checks &amp; margins</h2><p>x</p></section>"
        )


class TestMath:
    """math_block() and math_inline() wrap MathML in a classed element."""

    def test_block(self):
        """A block formula is a div.math around display="block" MathML."""
        out = math_block(r"\frac{1}{2}")
        assert re.fullmatch(r'<div class="math"><math [^>]*display="block">.*</math></div>', out)

    def test_inline(self):
        """An inline formula is a span.math-inline around display="inline" MathML."""
        out = math_inline("x")
        assert re.fullmatch(r'<span class="math-inline"><math [^>]*display="inline">.*</math></span>', out)

    def test_bad_latex_raises(self):
        """Bad LaTeX raises SheetError from the converter."""
        with pytest.raises(SheetError):
            math_block(r"\frac{1}{")


class TestHtmlPage:
    """html_page() writes one self-contained file."""

    def test_head(self):
        """Doctype, charset, escaped title and inline CSS."""
        page = html_page("A & B", "<p>x</p>")
        assert page.startswith("<!DOCTYPE html>\n")
        assert '<meta charset="utf-8">' in page
        assert "<title>A &amp; B</title>" in page
        assert "<style>" in page and "@page" in page

    def test_no_script_and_no_external_reference(self):
        """No script, and no address other than the MathML namespace name."""
        page = _sample_page()
        assert "<script" not in page.lower()
        assert not re.search(r"\b(src|href)\s*=|url\(|@import", page)
        addresses = set(re.findall(r"[a-z]+://[^\s\"'<>)]+", page))
        assert addresses == {"http://www.w3.org/1998/Math/MathML"}

    def test_running_text_in_margin_boxes(self):
        """Header and footer text go in @page margin boxes, with page N of M at the bottom."""
        page = html_page("t", "", header_left="Job 118", footer_right="Rev. B")
        assert '@top-left { content: "Job 118"; font-size: 8pt; }' in page
        assert '@bottom-right { content: "Rev. B"; font-size: 8pt; }' in page
        assert '@bottom-center { content: "page " counter(page) " of " counter(pages);' in page
        assert "@top-right" not in page

    def test_margin_text_cannot_escape_css(self):
        """Quotes, backslashes and '</style>' in header text are CSS-escaped."""
        page = html_page("t", "", header_left='a "b" \\ </style><p>')
        assert (
            '@top-left { content: "a \\22 b\\22  \\5c  \\3c /style\\3e \\3c p\\3e "; font-size: 8pt; }'
            in page
        )
        assert page.count("</style>") == 1

    def test_running_text_on_screen(self):
        """Header and footer also appear on screen, escaped."""
        page = html_page("t", "", header_left="A<B", footer_left="Rev. A")
        assert '<header class="running"><span>A&lt;B</span><span></span></header>' in page
        assert '<footer class="running"><span>Rev. A</span><span></span></footer>' in page

    def test_print_rules(self):
        """Steps, table rows, figures and checks are not split across pages."""
        css = html_page("t", "")
        rule = re.search(r"([^{}]*)\{\s*break-inside: avoid;", css)
        assert rule is not None
        for selector in ("tr", "figure", ".step", ".check", ".caution", ".signoff"):
            assert selector in [s.strip() for s in rule.group(1).split(",")]


class TestHarness:
    """The Chromium helpers themselves, without a browser."""

    def test_skip_reason(self):
        """Tests that need Chromium skip with a reason that says how to get it."""
        assert needs_chromium.kwargs["reason"] == "Debian's chromium is not installed; .ci/run installs it"

    def test_override_to_missing_binary(self, monkeypatch, tmp_path):
        """CALCKIT_CHROMIUM naming no file means no Chromium, so the tests skip rather than fail."""
        monkeypatch.setenv("CALCKIT_CHROMIUM", str(tmp_path / "no-such-chromium"))
        assert chromium_path() is None

    def test_page_count_ignores_pages_tree(self, tmp_path):
        """/Type /Pages nodes are not counted as pages."""
        pdf = tmp_path / "x.pdf"
        pdf.write_bytes(
            b"1 0 obj << /Type /Pages /Kids [2 0 R 3 0 R] >> endobj "
            b"2 0 obj << /Type /Page >> endobj 3 0 obj <</Type/Page/Parent 1 0 R>> endobj"
        )
        assert pdf_page_count(pdf) == 2


def _png_size(path) -> tuple[int, int]:
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", data[16:24])


class TestInBrowser:
    """The exported page in headless Chromium."""

    pytestmark = [pytest.mark.browser, needs_chromium]

    def test_constructs_lay_out_offline(self, tmp_path):
        """Every formula has a box, fractions stack, subscripts drop, nothing is requested."""
        path = tmp_path / "sheet.html"
        page = _sample_page()
        path.write_text(page, encoding="utf-8")
        report = inspect_page(path)
        assert report.math_count == len(CONSTRUCTS) + 5  # 3 inputs, 2 checks inline
        assert report.math_zero_size == 0
        assert report.fraction_count == page.count("<mfrac>") >= 2
        assert report.fractions_stacked == report.fraction_count
        assert report.subscript_count == page.count("<msub>") >= 5
        assert report.subscripts_lowered == report.subscript_count
        assert report.requests == ()
        assert report.references == ()
        assert report.document_height > 1000

    def test_external_resource_is_detected(self, tmp_path):
        """A page that points at a remote image or a local file is caught, so the check can fail."""
        body = Html(
            '<p>x</p><img src="http://example.invalid/x.png" alt="">'
            '<div style="background: url(http://example.invalid/bg.png)">y</div>'
            '<img src="figure.png" alt="">'
        )
        path = tmp_path / "leaky.html"
        path.write_text(html_page("leaky", body), encoding="utf-8")
        report = inspect_page(path)
        assert "http://example.invalid/x.png" in report.requests
        assert "http://example.invalid/bg.png" in report.requests
        assert set(report.references) == {
            "http://example.invalid/x.png",
            "http://example.invalid/bg.png",
            (tmp_path / "figure.png").as_uri(),
        }

    def test_broken_math_is_detected(self, tmp_path):
        """Hidden math counts as zero-size and MathML outside <math> does not stack, so the checks can fail."""
        body = Html(
            '<math style="display:none"><mi>x</mi></math>'
            "<div><mfrac><mi>a</mi><mi>b</mi></mfrac><msub><mi>x</mi><mi>p</mi></msub></div>"
        )
        path = tmp_path / "broken.html"
        path.write_text(html_page("broken", body), encoding="utf-8")
        report = inspect_page(path)
        assert (report.math_count, report.math_zero_size) == (1, 1)
        assert (report.fraction_count, report.fractions_stacked) == (1, 0)
        assert (report.subscript_count, report.subscripts_lowered) == (1, 0)

    def test_screenshot(self):
        """A screenshot of the sample sheet is written for a person to look at."""
        html_path = ARTIFACTS / "page_constructs.html"
        ARTIFACTS.mkdir(exist_ok=True)
        html_path.write_text(_sample_page(), encoding="utf-8")
        png = screenshot(html_path, ARTIFACTS / "page_constructs.png", width=1000, height=2400)
        assert _png_size(png) == (1000, 2400)
        assert png.stat().st_size > 20_000  # a blank page compresses to a few kB

    def test_print_pdf_pages_and_running_text(self):
        """The printed sheet has page N of M and the running header and footer on every page."""
        html_path = ARTIFACTS / "page_print.html"
        ARTIFACTS.mkdir(exist_ok=True)
        html_path.write_text(_sample_page(), encoding="utf-8")
        pdf = print_pdf(html_path, ARTIFACTS / "page_print.pdf")
        count = pdf_page_count(pdf)
        assert count >= 2
        pages = pdf_text(pdf)
        assert len(pages) == count
        for number, text in enumerate(pages, start=1):
            assert f"page {number} of {count}" in text
            assert "118 Ridgeway plant" in text and "Pump skid P-12" in text
            assert "Rev. A" in text and "calckit 0.1.0" in text
        assert "Does not meet" in pages[-1] or "Does not meet" in pages[-2]

    def test_prints_on_a4_too(self, tmp_path):
        """Forced to A4 (the sheet itself asks for size: auto), the print keeps its running text.

        A4 is 595.28 x 841.89 pt (ISO 216, from memory); Chromium's default paper is Letter, 612 x 792 pt.
        """
        page = _sample_page().replace("</style>", "@page { size: A4; }\n</style>", 1)
        path = tmp_path / "a4.html"
        path.write_text(page, encoding="utf-8")
        pdf = print_pdf(path, tmp_path / "a4.pdf")
        boxes = set(re.findall(rb"/MediaBox\s*\[0 0 ([\d.]+) ([\d.]+)\]", pdf.read_bytes()))
        assert {(round(float(w)), round(float(h))) for w, h in boxes} == {(595, 842)}
        pages = pdf_text(pdf)
        assert pages and all(f"of {len(pages)}" in text and "Rev. A" in text for text in pages)

    def test_steps_not_split_across_pages(self, tmp_path):
        """Each step's first and last lines print on the same page (break-inside: avoid)."""
        steps = "".join(
            f'<div class="step"><p>Begin step {i:02d}</p>'
            + math_block(r"\begin{aligned} a &= b \\ c &= d \\ e &= f \\ g &= h \end{aligned}")
            + f"<p>End step {i:02d}</p></div>"
            for i in range(1, 25)
        )
        path = tmp_path / "steps.html"
        path.write_text(html_page("steps", Html(steps)), encoding="utf-8")
        pages = pdf_text(print_pdf(path, tmp_path / "steps.pdf"))
        assert len(pages) >= 2
        for i in range(1, 25):
            begin = [n for n, text in enumerate(pages) if f"Begin step {i:02d}" in text]
            end = [n for n, text in enumerate(pages) if f"End step {i:02d}" in text]
            assert begin == end and len(begin) == 1, f"step {i}: begins on {begin}, ends on {end}"
