"""A calculation sheet as HTML: the exported page and the notebook view.

The same functions build the file and the notebook display, so what the
engineer sees while working is what the checker reads. Blocks appear in the
order they were added, except that inputs are gathered into one table, and
checks, references and notes into their own sections.

The functions take a :class:`calckit.sheet.sheet.Sheet` (annotated ``Any``: the
sheet module imports this one when it renders, so this one does not import it).
"""

from __future__ import annotations

import re
from typing import Any

import sympy as sp

from calckit._version import __version__
from calckit.render.page import (
    SHEET_CSS,
    Html,
    escape,
    html_page,
    math_block,
    math_inline,
    prose,
    section,
    table,
)
from calckit.sheet.blocks import (
    RELATIONS,
    CalcStep,
    Check,
    DerivationBlock,
    Figure,
    IndependentCheck,
    ResultLine,
    SheetInput,
    TableBlock,
    TextBlock,
)
from calckit.sheet.tolerance_section import TOLERANCE_TITLE, tolerance_section
from calckit.sheet.tolerance_study import study_of
from calckit.sheet.values import shown_text

__all__ = ["sheet_page", "sheet_fragment", "block_html", "show_block", "SHEET_SIG"]

#: significant figures of the numbers in a sheet's numeric derivations (a block may carry its own ``sig``)
SHEET_SIG = 4


def _latex_of(obj: Any) -> str:
    """LaTeX of anything in the display pipeline, without $$ delimiters."""
    if hasattr(obj, "latex") and callable(obj.latex):
        text = obj.latex()
    elif hasattr(obj, "_repr_latex_"):
        text = obj._repr_latex_()
    else:
        text = sp.latex(obj)
    text = text.strip()
    for left, right in (("$$", "$$"), ("$", "$")):
        if text.startswith(left) and text.endswith(right) and len(text) > 2 * len(left):
            return text[len(left) : -len(right)].strip()
    return text


def _input_rows(sheet: Any) -> list[list[Any]]:
    rows = []
    for rec in sheet.inputs.values():
        value = rec.value
        if isinstance(value, sp.Basic) and not value.is_number:
            shown = math_inline(sp.latex(value))
        else:
            shown = escape(rec.shown_value)
        rows.append([math_inline(rec.symbol), rec.description, shown, rec.source or "not given"])
    return rows


def _check_rows(checks: list[Check]) -> list[list[Any]]:
    rows = []
    for check in checks:
        criterion = Html(f"value {escape(check.relation.replace('<=', '≤').replace('>=', '≥'))} limit")
        verdict = Html(
            f'<span class="verdict {"verdict-met" if check.met else "verdict-not-met"}">'
            f"{'met' if check.met else 'NOT MET'}</span>"
        )
        rows.append(
            [
                check.name,
                criterion,
                check.shown_value,
                check.shown_limit,
                check.margin_text,
                check.utilisation_text,
                verdict,
                check.basis or "not given",
            ]
        )
    return rows


def _step_html(
    number: str, title: str, latex: str, reference: str, working: Any = None, extra: str = ""
) -> Html:
    ref = extra + (f'<p class="step-ref">Reference: {prose(reference)}</p>' if reference else "")
    if working is not None:
        ref = f'<p class="step-working"><em>{escape(working.label)}:</em> {prose(working.text)}</p>' + ref
    heading = (
        f'<h3><span class="number">{escape(number)}</span> {prose(title)}</h3>'
        if title
        else (f'<h3><span class="number">{escape(number)}</span></h3>')
    )
    return Html(f'<div class="step">{heading}{math_block(latex)}{ref}</div>')


def block_html(block: Any, number: str = "") -> Html:
    """One block as HTML (used both in the page and in the notebook)."""
    if isinstance(block, SheetInput):
        return table(
            ["Symbol", "Description", "Value", "Source"],
            [_input_rows_single(block)],
            cls="inputs",
        )
    if isinstance(block, CalcStep):
        return _step_html(number, block.title or block.name, _latex_of(block.record), block.reference)
    if isinstance(block, ResultLine):
        value = block.value
        latex = f"{block.symbol} = {_value_latex(value)}"
        return _step_html(number, block.title or block.name, latex, block.reference, block.working)
    if isinstance(block, IndependentCheck):
        c = block.comparison
        latex = (
            rf"\max_t |{block.symbol}(t)| = {_shown_latex(block.derived_shown)}\ \text{{(derived)}},\quad "
            rf"{_shown_latex(block.integrated_shown)}\ \text{{(integrated)}}"
        )
        verdict = "agree" if c.agrees else "DISAGREE"
        text = (
            f'<p class="step-working"><em>Procedure:</em> {prose(c.procedure)}. Relative difference '
            f"{c.agreement:.2g}, tolerance {c.tolerance:g}: the two routes "
            f'<span class="verdict {"verdict-met" if c.agrees else "verdict-not-met"}">{verdict}</span>.</p>'
        )
        title = f"Independent check: {block.title or block.name}"
        return _step_html(number, title, latex, "", extra=text)
    if isinstance(block, DerivationBlock):
        from calckit.render.display import derivation_html

        # a numeric derivation is shown in decimals to the sheet's figures; the engine stays exact
        inner = derivation_html(
            block.derivation, level=block.level, sig=getattr(block, "sig", SHEET_SIG), units=block.units
        )
        # the derivation's steps are sub-steps of this sheet step: 3.2.1, 3.2.2, ...
        inner = re.sub(
            r'<span class="number">(\d+)</span>', rf'<span class="number">{number}.\1</span>', inner
        )
        inner = inner.replace("<h3>", "<h4>").replace("</h3>", "</h4>")
        verdict = "verified by substitution" if block.derivation.verified else "NOT verified"
        return Html(
            f'<div class="derivation"><h3><span class="number">{escape(number)}</span> '
            f'{prose(block.title)} <span class="tag">({verdict})</span></h3>{_units_html(block)}{inner}</div>'
        )
    if isinstance(block, Figure):
        return Html(
            f'<figure class="figure">{block.svg}<figcaption>Figure {escape(number)}. '
            f"{prose(block.caption)}</figcaption></figure>"
        )
    if isinstance(block, TableBlock):
        caption = f'<p class="table-caption">Table {escape(number)}. {prose(block.caption)}</p>'
        return Html(f'<div class="table-block">{caption}{table(block.headers, block.rows)}</div>')
    if isinstance(block, Check):
        return table(
            ["Check", "Criterion", "Value", "Limit", "Margin", "Utilisation", "Verdict", "Basis"],
            _check_rows([block]),
            cls="checks",
        )
    if isinstance(block, TextBlock):
        return Html(
            f'<p class="{escape(block.kind)}"><em>{escape(block.kind.capitalize())}:</em> {prose(block.text)}</p>'
        )
    raise TypeError(f"no HTML for {type(block).__name__}")


#: Stands for a block's number in its kept HTML (a private-use character: no text of a sheet holds it).
_NUMBER_MARK = "\ue000"


def _kept_block_html(sheet: Any, block: Any, number: str) -> Html:
    """:func:`block_html` made once per block and kept on the sheet, its number put in at each use.

    A block is shown in the notebook as it is added, then on the sheet's display and on its
    saved page under its section's number; a block is frozen (a sheet that restates its
    units puts new blocks in), so its HTML is made once, with a mark where the number
    goes. The block is kept beside its HTML, so a block that is gone cannot lend its HTML
    to a new one that took its ``id``.
    """
    kept = sheet.__dict__.setdefault("_html_kept", {})
    hit = kept.get(id(block))
    if hit is None or hit[0] is not block:
        hit = (block, block_html(block, _NUMBER_MARK))
        kept[id(block)] = hit
    return Html(hit[1].replace(_NUMBER_MARK, escape(number)))


def _units_html(block: DerivationBlock) -> str:
    """The line under a derivation's title that says what its numbers are in (nothing for a symbolic one)."""
    from calckit.render.step_units import derivation_units_line

    if block.units is None:
        if not block.numeric:
            return ""
        return (
            '<p class="derivation-units"><em>Units: not stated for the numbers of this derivation.</em></p>'
        )
    return f'<p class="derivation-units">{prose(derivation_units_line(block.units, block.derivation))}</p>'


def _value_latex(value: Any) -> str:
    """LaTeX of a result: rounded number and upright unit (``5.191\\;\\mathrm{mm}``)."""
    from calckit.render.numbers import number_latex, unit_latex

    if hasattr(value, "units") or isinstance(value, (int, float)):
        number, _, unit = shown_text(value).partition(" ")
        return number_latex(number) + (r"\;" + unit_latex(unit) if unit else "")
    return sp.latex(value)


def _shown_latex(text: str) -> str:
    """LaTeX of a value as shown (``"1.234 mm"``): the number, and the unit upright."""
    from calckit.render.numbers import number_latex, unit_latex

    number, _, unit = text.partition(" ")
    return number_latex(number) + (r"\;" + unit_latex(unit) if unit else "")


def _input_rows_single(rec: SheetInput) -> list[Any]:
    class _One:
        inputs = {rec.name: rec}

    return _input_rows(_One)[0]  # type: ignore[arg-type]


def _title_block(sheet: Any) -> Html:
    tb = sheet.title
    cells = [
        ("Project", tb.project),
        ("Calculation no.", tb.number),
        ("Revision", tb.revision),
        ("Subject", tb.subject),
        ("Prepared by", tb.author),
        ("Checked by", tb.checker or "(not yet checked)"),
        ("Date", tb.date),
    ]
    rows = "".join(f"<tr><th>{escape(k)}</th><td>{escape(v)}</td></tr>" for k, v in cells)
    return Html(f'<table class="title-block"><tbody>{rows}</tbody></table>')


def _summary(sheet: Any) -> Html:
    n, met = len(sheet.checks), sheet.checks_met
    if not n:
        text = "No acceptance checks on this sheet."
    elif met == n:
        text = (
            "Acceptance check: met."
            if n == 1
            else f"Acceptance checks: {'both' if n == 2 else f'all {n}'} met."
        )
    else:
        text = f"Acceptance checks: {met} of {n} met; {n - met} NOT MET (see section on checks)."
    study = study_of(sheet)
    if study is not None and n:  # the worst case over the inputs' bands, beside the nominal verdicts
        done = [c for c in study.checks if c.evaluated]
        worst = sum(c.worst_met for c in done)
        text += (
            f" Over the inputs' tolerance bands: {worst} of {len(done)} evaluated met at the worst case"
            + (f", {len(done) - worst} NOT MET" if worst < len(done) else "")
            + (f"; {n - len(done)} not evaluated" if n > len(done) else "")
            + " (see the section on tolerances)."
        )
    return Html(f'<p class="summary">{escape(text)}</p>')


def _caution(sheet: Any) -> Html:
    if not sheet.caution:
        return Html("")
    return Html(f'<div class="caution">{prose(sheet.caution)}</div>')


def _signoff(sheet: Any) -> Html:
    tb = sheet.title
    rows = [
        ["Prepared", tb.author, "", tb.date],
        ["Checked", tb.checker, "", ""],
        ["Approved", tb.approver, "", ""],
    ]
    return Html(
        '<div class="signoff"><h2>Sign-off</h2>'
        + table(["Role", "Name", "Signature", "Date"], rows, cls="signoff")
        + "</div>"
    )


def _body(sheet: Any) -> Html:
    parts = [_title_block(sheet), _summary(sheet), _caution(sheet)]
    n = 0

    def next_section(title: str, inner: str) -> None:
        nonlocal n
        n += 1
        parts.append(section(n, title, inner))

    if sheet.inputs:
        next_section(
            "Inputs",
            table(["Symbol", "Description", "Value", "Source"], _input_rows(sheet), cls="inputs"),
        )
    assumptions = [b for b in sheet.of_type(TextBlock) if b.kind == "assumption"]
    if assumptions:
        next_section(
            "Assumptions", "<ol>" + "".join(f"<li>{prose(b.text)}</li>" for b in assumptions) + "</ol>"
        )
    calc_blocks = [
        b
        for b in sheet.blocks
        if isinstance(b, (CalcStep, ResultLine, DerivationBlock, IndependentCheck, Figure, TableBlock))
    ]
    if calc_blocks:
        section_number = n + 1
        inner, step_no, fig_no, table_no = [], 0, 0, 0
        for block in calc_blocks:
            if isinstance(block, Figure):
                fig_no += 1
                inner.append(_kept_block_html(sheet, block, str(fig_no)))
            elif isinstance(block, TableBlock):
                table_no += 1
                inner.append(_kept_block_html(sheet, block, str(table_no)))
            else:
                step_no += 1
                inner.append(_kept_block_html(sheet, block, f"{section_number}.{step_no}"))
        next_section("Calculation", "".join(inner))
    if sheet.checks:
        next_section(
            "Acceptance checks",
            table(
                ["Check", "Criterion", "Value", "Limit", "Margin", "Utilisation", "Verdict", "Basis"],
                _check_rows(sheet.checks),
                cls="checks",
            )
            + Html(
                '<p class="note">Margin: the distance from the value to the limit, in percent of the '
                "limit (in percentage points where the value is itself a percentage); positive when "
                "the criterion is met. Utilisation: demand over capacity, the value over the limit for "
                "an upper limit and the limit over the value for a least value; at most 1 when met.</p>"
            ),
        )
    study = study_of(sheet)
    if study is not None:  # only when some input has a tolerance band
        next_section(TOLERANCE_TITLE, tolerance_section(sheet, study))
    references = [b for b in sheet.of_type(TextBlock) if b.kind == "reference"]
    if references:
        next_section(
            "References", "<ol>" + "".join(f"<li>{prose(b.text)}</li>" for b in references) + "</ol>"
        )
    notes = [b for b in sheet.of_type(TextBlock) if b.kind == "note"]
    if notes:
        next_section("Notes", "".join(f"<p>{prose(b.text)}</p>" for b in notes))
    parts.append(_signoff(sheet))
    parts.append(
        Html(
            f'<p class="fingerprint">Built with calckit {escape(__version__)}. '
            f"Fingerprint (SHA-256 of inputs, kit version and template): <code>{sheet.fingerprint}</code></p>"
        )
    )
    return Html(f'<div class="sheet" data-fingerprint="{sheet.fingerprint}">' + "".join(parts) + "</div>")


def sheet_page(sheet: Any) -> str:
    """The whole sheet as one self-contained HTML page."""
    tb = sheet.title
    ident = " ".join(x for x in (tb.number, f"rev. {tb.revision}" if tb.revision else "") if x)
    return html_page(
        f"{tb.number} {tb.subject}".strip(),
        _body(sheet),
        header_left=tb.project,
        header_right=ident,
        footer_left=ident or tb.subject[:60],
        footer_right=f"fingerprint {sheet.fingerprint[:12]}",
    )


def sheet_fragment(sheet: Any) -> str:
    """The sheet for a notebook: the page body with its style, scoped to the sheet."""
    return f"<style>{_scoped_css()}</style>{_body(sheet)}"


def _scoped_css() -> str:
    # keep the notebook's own styles intact: only the sheet's classes, no @page rules
    keep = []
    for chunk in SHEET_CSS.split("}"):
        head = chunk.split("{")[0]
        if any(sel in head for sel in ("html", "body", ":root", "@page", "@media")):
            continue
        if chunk.strip():
            keep.append(".sheet " + chunk.strip().replace(",\n", ", .sheet ") + "}")
    return "\n".join(keep)


def show_block(sheet: Any, block: Any) -> None:
    """Display a block just added, in a running IPython kernel."""
    from IPython.display import HTML, display

    number = ""
    numbered = (CalcStep, ResultLine, DerivationBlock, IndependentCheck)
    if isinstance(block, numbered):
        number = str(sum(isinstance(b, numbered) for b in sheet.blocks))
    elif isinstance(block, Figure):
        number = str(len(sheet.of_type(Figure)))
    elif isinstance(block, TableBlock):
        number = str(len(sheet.of_type(TableBlock)))
    display(HTML(f'<div class="sheet">{_kept_block_html(sheet, block, number)}</div>'))


_ = RELATIONS  # relation symbols are shown by _check_rows
