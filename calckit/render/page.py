"""A self-contained HTML page for an exported calculation sheet.

One file: inline CSS, MathML for equations, no script, no font, image or style
sheet fetched from anywhere. The same page reads on screen and prints on A4 or
Letter: ``@page`` margin boxes carry the running header and footer and
"page N of M", and steps, table rows and figures are kept whole across page
breaks.

The small builders below return :class:`Html`, a ``str`` that is already safe
to place in a page; anything else handed to them is escaped as text.

Examples
--------
>>> body = section(1, "Stiffness", math_block(r"k = 2 \\cdot 10^{4}\\;\\mathrm{N/m}"))
>>> page = html_page("Pump skid", body, footer_left="Rev. A")
>>> page.startswith("<!DOCTYPE html>") and "<script" not in page
True
"""

from __future__ import annotations

import html
import re
from collections.abc import Iterable, Sequence

from calckit.errors import SheetError
from calckit.render.mathml import latex_to_mathml

__all__ = [
    "SHEET_CSS",
    "Html",
    "escape",
    "html_page",
    "math_block",
    "math_inline",
    "prose",
    "prose_parts",
    "prose_text",
    "section",
    "table",
]


class Html(str):
    """Text that is already HTML and goes into a page as it is.

    Examples
    --------
    >>> Html("<b>x</b>") + "y"
    '<b>x</b>y'
    """

    __slots__ = ()


SHEET_CSS = """\
/* calckit calculation sheet: one stylesheet for screen and for print (A4 or Letter).
   Black on white, thin rules, no colour that carries meaning on its own. */

:root { color-scheme: light; }
html { background: #fff; color: #000; }
body {
  font-family: "Latin Modern Roman", "STIX Two Text", "DejaVu Serif", Georgia, "Times New Roman", serif;
  font-size: 11pt;
  line-height: 1.45;
  max-width: 50rem;
  margin: 1.5rem auto 3rem;
  padding: 0 1.5rem;
}
math { font-family: "Latin Modern Math", "STIX Two Math", "DejaVu Math TeX Gyre", math; }

/* Running header and footer: shown on screen here, in the page margins when printed. */
.running { display: flex; justify-content: space-between; gap: 2em; font-size: 9pt; }
header.running { border-bottom: 0.5pt solid #000; padding-bottom: 0.2em; margin-bottom: 1em; }
footer.running { border-top: 0.5pt solid #000; padding-top: 0.2em; margin-top: 2em; }

h1 { font-size: 1.6em; font-weight: bold; margin: 0.4em 0 0.5em; }
h2 { font-size: 1.2em; margin: 1.6em 0 0.5em; padding-bottom: 0.15em; border-bottom: 0.75pt solid #000; }
h3 { font-size: 1.05em; margin: 1.1em 0 0.4em; }
h2 .number, h3 .number { display: inline-block; min-width: 2.2em; }
p { margin: 0.4em 0; }

/* Tables: the title block, inputs, results, checks, sign-off. */
table { border-collapse: collapse; width: 100%; margin: 0.6em 0; font-size: 0.95em; }
th, td { border: 0.5pt solid #000; padding: 0.25em 0.5em; text-align: left; vertical-align: top; }
th { font-weight: bold; background: #f2f2f2; }
td.number, th.number { text-align: right; font-variant-numeric: tabular-nums; }
/* values, limits and margins stay on one line */
table.inputs td:nth-child(3) { white-space: nowrap; }
/* the checks table has fixed columns, so the basis keeps a readable width and a long name in it
   (scipy.integrate.solve_ivp) wraps rather than push the table off the page */
table.checks { table-layout: fixed; }
table.checks th { font-size: 0.85em; }
table.checks th:nth-child(1) { width: 15.5%; } table.checks th:nth-child(2) { width: 10%; }
table.checks th:nth-child(3) { width: 12.5%; } table.checks th:nth-child(4) { width: 8%; }
table.checks th:nth-child(5) { width: 10%; } table.checks th:nth-child(6) { width: 12%; }
table.checks th:nth-child(7) { width: 8%; } table.checks th:nth-child(8) { width: 24%; }
table.checks td { overflow-wrap: anywhere; }
/* a value, limit, margin or utilisation wraps only between its number and its unit, never inside a number */
table.checks td:nth-child(n+3):nth-child(-n+6) { overflow-wrap: normal; }
thead { display: table-header-group; }
/* a batch summary: the cases a few a table, long labels and messages wrapped to the page */
table.summary-cases, table.summary-wide { table-layout: fixed; }
table.summary-cases td, table.summary-wide td:first-child { overflow-wrap: anywhere; }
table.summary-wide td + td, table.summary-wide th + th { white-space: nowrap; }  /* a number never breaks */
table.summary-cases th:nth-child(1) { width: 18%; }
table.summary-cases th:nth-child(2) { width: 10%; }
table.summary-cases th:nth-child(3) { width: 12%; }
table.summary-wide th:first-child { width: 34%; }
tr, figure, .step, .check, .caution, .signoff, .math { break-inside: avoid; page-break-inside: avoid; }
.step.tall, .math.tall { break-inside: auto; page-break-inside: auto; }
h1, h2, h3 { break-after: avoid; page-break-after: avoid; }

.title-block { margin-bottom: 1.2em; }
.title-block table { border: 1.5pt solid #000; }
.title-block th { width: 22%; background: none; font-weight: normal; font-size: 0.85em; }
.title-block td { font-weight: bold; }

/* Equations. */
/* No scroll bar, no clipping: formulas are broken into rows that fit (calckit.render.layout). */
.math { margin: 0.5em 0 0.5em 1.5em; padding: 0.15em 0; overflow: visible; }
.math math { display: block; text-align: left; math-style: normal; }
.math-inline { white-space: nowrap; }

/* Steps: formula, substitution, result. */
.step { margin: 0.8em 0; padding-left: 0.8em; border-left: 1pt solid #000; }
.step .label { font-weight: bold; }
.step .result { font-weight: bold; }

/* Checks: the words "meets" / "does not meet" carry the verdict; the rules only repeat it. */
.check { margin: 0.6em 0; padding: 0.3em 0.6em; border: 0.5pt solid #000; }
.check .verdict { font-weight: bold; }
.check-failed { border: 2pt solid #000; }
.check-failed .verdict { text-decoration: underline; }
tr.check-failed td { font-weight: bold; border-width: 1.5pt; }

.caution { margin: 1em 0; padding: 0.5em 0.8em; border: 1pt solid #000; border-left-width: 4pt; }
.caution::before { content: "Caution. "; font-weight: bold; }

figure { margin: 1em 0; text-align: center; }
figure svg, figure img { max-width: 100%; height: auto; }
figcaption { font-size: 0.9em; margin-top: 0.3em; }

.signoff { margin-top: 2em; }
.signoff td { height: 2.4em; }

.fingerprint { font-family: "DejaVu Sans Mono", monospace; font-size: 0.8em; word-break: break-all; }

@page {
  size: auto;
  margin: 20mm 16mm 20mm 18mm;
}

@media print {
  body { max-width: none; margin: 0; padding: 0; font-size: 10pt; }
  .running { display: none; }
  .math { overflow: visible; }
  .math math { font-size: 0.95em; }
  .math math mtable mtable { font-size: 0.9em; }  /* a matrix's entries (a 6 x 6 stiffness matrix fits A4) */
  a { color: inherit; text-decoration: none; }
  th { background: none; }
}
"""


def escape(text: object) -> Html:
    """Escape text for HTML; :class:`Html` passes through unchanged.

    Examples
    --------
    >>> escape("k < 2 & c > 0")
    'k &lt; 2 &amp; c &gt; 0'
    """
    if isinstance(text, Html):
        return text
    return Html(html.escape(str(text), quote=True))


#: A displayed formula of this many rows or more is allowed to break across pages (class ``tall``): kept whole,
#: one taller than a page left the page before it blank in Chromium's print.
TALL_ROWS = 16


def math_block(latex: str) -> Html:
    r"""A displayed equation: ``<div class="math">`` around block MathML.

    Examples
    --------
    >>> math_block(r"\zeta = \frac{c}{2 \sqrt{k m}}")[:18]
    '<div class="math">'
    """
    tall = " tall" if latex.count(r"\\") >= TALL_ROWS else ""  # may break across pages, not start a page blank
    return Html(f'<div class="math{tall}">{latex_to_mathml(latex, display=True)}</div>')


def math_inline(latex: str) -> Html:
    r"""An equation inside running text or a table cell.

    Examples
    --------
    >>> math_inline(r"\omega_n")[:32]
    '<span class="math-inline"><math '
    """
    return Html(f'<span class="math-inline">{latex_to_mathml(latex, display=False)}</span>')


_PROSE_MATH = re.compile(r"(?<!\\)\$((?:[^$\\]|\\.)+?)(?<!\\)\$", re.DOTALL)


def prose_parts(text: str) -> list[tuple[bool, str]]:
    r"""Sheet text split into (is_math, piece): inline LaTeX lies between single ``$``.

    A literal dollar is written ``\$``; a ``$`` with no partner stays text.

    Examples
    --------
    >>> prose_parts(r"Put $x = e^{\lambda t}$ in; costs \$5")
    [(False, 'Put '), (True, 'x = e^{\\lambda t}'), (False, ' in; costs $5')]
    """
    parts: list[tuple[bool, str]] = []
    position = 0
    for match in _PROSE_MATH.finditer(text):
        if match.start() > position:
            parts.append((False, text[position : match.start()]))
        parts.append((True, match.group(1)))
        position = match.end()
    if position < len(text):
        parts.append((False, text[position:]))
    return [(is_math, piece if is_math else piece.replace(r"\$", "$")) for is_math, piece in parts]


def prose(text: object) -> Html:
    r"""Sheet text as HTML: the prose escaped, each ``$...$`` as inline MathML.

    :class:`Html` passes through unchanged.

    Raises
    ------
    calckit.errors.SheetError
        The LaTeX between two ``$`` cannot be converted; the message names it.

    Examples
    --------
    >>> "<math" in prose(r"The roots of $p(\lambda)$ are simple.")
    True
    >>> prose(r"No maths, \$20.")
    'No maths, $20.'
    """
    if isinstance(text, Html):
        return text
    out = []
    for is_math, piece in prose_parts(str(text)):
        if is_math:
            out.append(_strip_namespace(math_inline(piece)))
        else:
            out.append(escape(piece))
    return Html("".join(out))


def prose_text(text: str) -> str:
    r"""Sheet text as plain text: the ``$`` delimiters dropped, the LaTeX spelled plainly.

    Examples
    --------
    >>> prose_text(r"Put $x = e^{\lambda t}$ in; \$5")
    'Put x = e^(lambda t) in; $5'
    >>> prose_text(r"$\ddot{x}$, $\dot{x}$ and $x^{(5)}$")
    "x'', x' and x^(5)"
    """
    return "".join(_plain_math(piece) if is_math else piece for is_math, piece in prose_parts(text))


def _plain_math(latex: str) -> str:
    """Inline LaTeX read aloud in plain text: ``e^{\\lambda t}`` -> ``e^(lambda t)``."""
    text = re.sub(r"\\(?:left|right|,|;|!)", "", latex)
    text = re.sub(
        r"\\(ddot|dot)\{([^{}]*)\}", lambda m: m.group(2) + ("''" if m.group(1) == "ddot" else "'"), text
    )
    text = re.sub(
        r"\\(sqrt|operatorname)\{([^{}]*)\}",
        lambda m: (
            ("sqrt" if m.group(1) == "sqrt" else "") + f"({m.group(2)})"
            if m.group(1) == "sqrt"
            else m.group(2)
        ),
        text,
    )
    text = re.sub(r"\\([A-Za-z]+)", r"\1", text)
    text = re.sub(
        r"\^\{([^{}]*)\}",
        lambda m: "^" + (m.group(1) if len(m.group(1)) == 1 or _bracketed(m.group(1)) else f"({m.group(1)})"),
        text,
    )
    return text.replace("{", "").replace("}", "")


def _bracketed(text: str) -> bool:
    """Whether *text* is one bracket from its first character to its last: ``(5)``, not ``(a)(b)``."""
    if not (text.startswith("(") and text.endswith(")")):
        return False
    depth = 0
    for i, ch in enumerate(text):
        depth += {"(": 1, ")": -1}.get(ch, 0)
        if depth == 0 and i < len(text) - 1:
            return False
    return True


def _strip_namespace(markup: str) -> str:
    """MathML inside HTML5 needs no namespace: drop it, so the page names no address."""
    return markup.replace(' xmlns="http://www.w3.org/1998/Math/MathML"', "")


def table(headers: Sequence[object], rows: Iterable[Sequence[object]], *, cls: str | None = None) -> Html:
    """A table with one header row; cells that are not :class:`Html` are escaped.

    Parameters
    ----------
    headers : sequence
        Column headings.
    rows : iterable of sequences
        One sequence per row, as long as ``headers``.
    cls : str, optional
        CSS class of the ``<table>``, e.g. ``"checks"``.

    Examples
    --------
    >>> table(["Input", "Value"], [["m", "12 kg"]])
    '<table><thead><tr><th>Input</th><th>Value</th></tr></thead><tbody><tr><td>m</td><td>12 kg</td></tr></tbody></table>'
    """
    head = "".join(f"<th>{prose(h)}</th>" for h in headers)
    body = []
    for index, row in enumerate(rows, start=1):
        cells = list(row)
        if len(cells) != len(headers):
            raise SheetError(
                f"row {index} has {len(cells)} cells but there are {len(headers)} headings",
                where="table",
                do="Give every row one cell per heading",
            )
        body.append("<tr>" + "".join(f"<td>{prose(c)}</td>" for c in cells) + "</tr>")
    attr = f' class="{escape(cls)}"' if cls else ""
    return Html(f"<table{attr}><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>")


def section(number: object, title: str, inner_html: str) -> Html:
    """A numbered section: heading ``<h2>`` with its number, then ``inner_html`` as it is.

    Examples
    --------
    >>> section(2, "Damping", Html("<p>c = 40 N s/m</p>"))
    '<section class="section" id="section-2"><h2><span class="number">2</span> Damping</h2><p>c = 40 N s/m</p></section>'
    """
    num = escape(number)
    anchor = "section-" + "-".join(str(number).split("."))
    return Html(
        f'<section class="section" id="{escape(anchor)}">'
        f'<h2><span class="number">{num}</span> {prose(title)}</h2>{inner_html}</section>'
    )


def html_page(
    title: str,
    body_html: str,
    *,
    footer_left: str = "",
    footer_right: str = "",
    header_left: str = "",
    header_right: str = "",
) -> str:
    """The whole page: one HTML file with inline CSS and no script.

    Parameters
    ----------
    title : str
        Text for ``<title>`` (escaped).
    body_html : str
        The sheet's content, already HTML.
    footer_left, footer_right, header_left, header_right : str, optional
        Plain text for the running header and footer. In print they sit in the
        page margins, and "page N of M" sits at the bottom centre.

    Returns
    -------
    str
        The page, starting with ``<!DOCTYPE html>``.

    Examples
    --------
    >>> page = html_page("Fan mount", "<p>x</p>", header_right="Job 118")
    >>> '<meta charset="utf-8">' in page and "Job 118" in page
    True
    """
    boxes = [
        f"  @{box} {{ content: {_css_string(text)}; font-size: 8pt; }}"
        for box, text in (
            ("top-left", header_left),
            ("top-right", header_right),
            ("bottom-left", footer_left),
            ("bottom-right", footer_right),
        )
        if text
    ]
    boxes.append('  @bottom-center { content: "page " counter(page) " of " counter(pages); font-size: 8pt; }')
    margin_css = "@page {\n" + "\n".join(boxes) + "\n}\n"
    header = _running_html("header", header_left, header_right)
    footer = _running_html("footer", footer_left, footer_right)
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"<title>{escape(title)}</title>\n"
        f"<style>\n{SHEET_CSS}{margin_css}</style>\n"
        "</head>\n<body>\n"
        f"{header}<main>\n{body_html}\n</main>\n{footer}"
        "</body>\n</html>\n"
    )


def _running_html(tag: str, left: str, right: str) -> str:
    if not (left or right):
        return ""
    return f'<{tag} class="running"><span>{escape(left)}</span><span>{escape(right)}</span></{tag}>\n'


def _css_string(text: str) -> str:
    """Quote text as a CSS string that cannot end the string or the <style> element."""
    out = []
    for char in str(text):
        if char in '"\\<>' or ord(char) < 0x20 or ord(char) == 0x7F:
            out.append(f"\\{ord(char):x} ")
        else:
            out.append(char)
    return '"' + "".join(out) + '"'
