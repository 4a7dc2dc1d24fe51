"""The sheet's section on its inputs' tolerances: worst case beside nominal, sensitivities, tornado chart.

Shown only when some input carries a band. The numbers are those of
:func:`calckit.sheet.tolerance_study.study_of`; this module only lays them out: a
table of each check's nominal and worst-case verdicts with the point that governs, the
checks not evaluated and why, the sensitivities (elasticity, the result at each end of
each band, the input that decides), the tornado chart
(:func:`calckit.render.tolerance_plot.tornado_figure`) and, when asked, the sampled
study's pass fractions.
"""

from __future__ import annotations

import math
from typing import Any

from calckit.core.units import Q_, fmt
from calckit.render.page import Html, escape, prose, table
from calckit.sheet.tolerance_study import BandedCheck, ToleranceStudy
from calckit.sheet.values import shown_text

__all__ = ["TOLERANCE_TITLE", "tolerance_section", "tornado_panels"]

TOLERANCE_TITLE = "Tolerances: worst case and sensitivities"
"""The heading of the section."""


def _shown(value: float, unit: str, sig: int) -> str:
    if not math.isfinite(value):
        return "not defined"
    return shown_text(Q_(value, unit) if unit and unit != "dimensionless" else value, sig)


def _verdict(met: bool) -> Html:
    return Html(
        f'<span class="verdict {"verdict-met" if met else "verdict-not-met"}">{"met" if met else "NOT MET"}</span>'
    )


def _margin(check: BandedCheck) -> str:
    m = check.worst_margin
    text = f"{m:+.1f}" if m == 0 or abs(m) >= 0.05 else f"{m:+.2g}"
    return f"{text} {'points' if check.unit == 'percent' else '%'}"


def _governing(sheet: Any, check: BandedCheck) -> str:
    if not check.inputs:
        return "no input with a band enters it"
    parts = []
    for name, value in check.governing:
        unit = f"{sheet.inputs[name].tolerance.nominal.units}"
        parts.append(f"{name} {fmt(Q_(value, unit), sheet.sig)}")
    return "; ".join(parts) + (" (inside the box)" if check.inside else " (a corner)")


def tornado_panels(study: ToleranceStudy) -> list:
    """The tornado chart's panels, one for each check evaluated whose result an input's band moves."""
    from calckit.render.tolerance_plot import TornadoPanel

    panels = []
    for c in study.checks:
        if not c.evaluated or not any(s.swing > 0 for s in c.sensitivities):
            continue
        unit = "" if c.unit == "dimensionless" else c.unit
        bars = tuple((s.input, s.at_low, s.at_high) for s in c.sensitivities)
        same = c.result.replace("_", " ") == c.name  # "amplitude (amplitude)" says nothing twice
        title = c.name if same else f"{c.name} ({c.result})"
        panels.append(TornadoPanel(title, unit, c.nominal_value, c.worst_limit, bars))
    return panels


def tolerance_section(sheet: Any, study: ToleranceStudy) -> Html:
    """The section's inner HTML.

    Kept on the sheet with the study it shows (:func:`~calckit.sheet.tolerance_study.study_of`
    keeps the study until a block is added, the units or the sampling change): the notebook's
    display and the saved page then draw the tornado chart once, not once each.
    """
    kept = getattr(sheet, "_section_kept", None)
    if kept is not None and kept[0] is study and kept[1] == sheet.sig:
        return kept[2]
    html = _section(sheet, study)
    sheet._section_kept = (study, sheet.sig, html)
    return html


def _section(sheet: Any, study: ToleranceStudy) -> Html:
    sig = sheet.sig
    bands = ", ".join(f"{b.name} {sheet.inputs[b.name].shown_value}" for b in study.bands)
    parts = [
        Html(
            f"<p>Inputs with a tolerance band: {escape(bands)}. Each check whose value comes from the sheet's "
            f"formula steps is composed back to these inputs and evaluated over the box of their bands: "
            f"{escape(study.method)}.</p>"
        )
    ]
    evaluated = [c for c in study.checks if c.evaluated]
    rows = []
    for c in evaluated:
        rows.append([
            c.name, _shown(c.nominal_value, c.unit, sig), _verdict(c.nominal_met), _shown(c.worst_value, c.unit, sig),
            _shown(c.worst_limit, c.unit, sig), _margin(c), _verdict(c.worst_met), _governing(sheet, c),
        ])  # fmt: skip
    if rows:
        headers = ["Check", "Nominal value", "Nominal verdict", "Worst-case value", "Limit", "Worst margin",
                   "Worst-case verdict", "Where it is worst"]  # fmt: skip
        parts.append(table(headers, rows, cls="checks tolerance-checks"))
    skipped = [c for c in study.checks if not c.evaluated]
    if skipped:
        items = "".join(
            f"<li>{escape(c.name)}: not evaluated over the tolerances: {prose(c.reason)}.</li>"
            for c in skipped
        )
        parts.append(Html(f'<ul class="not-evaluated">{items}</ul>'))
    sens_rows = []
    for c in evaluated:
        decider = c.decider
        for s in c.sensitivities:
            band = sheet.inputs[s.input].tolerance
            e = "not defined" if s.elasticity is None else f"{s.elasticity:+.3g}"
            sens_rows.append([
                c.result, s.input, band.text, e, _shown(s.at_low, c.unit, sig), _shown(s.at_high, c.unit, sig),
                "decides" if s.input == decider else "",
            ])  # fmt: skip
    if sens_rows:
        text = (
            "Sensitivities: the elasticity is the percent change of the checked result $R$ for one percent change "
            r"of the input $x$, $(x/R)\,\partial R/\partial x$ at the nominal values, from the symbolic derivative "
            "of the composed result; the result at each end of the input's band has the other inputs at their "
            "values. The input with the widest swing decides."
        )
        parts.append(Html(f'<p class="table-caption">{prose(text)}</p>'))
        headers = ["Result", "Input", "Band", "Elasticity, % per %", "Result at low end", "Result at high end",
                   "Decides"]  # fmt: skip
        parts.append(table(headers, sens_rows, cls="tolerance-sensitivities"))
    panels = tornado_panels(study)
    if panels:
        from calckit.render.tolerance_plot import tornado_figure
        from calckit.sheet.values import figure_svg

        fig = tornado_figure(panels)
        caption = (
            "Tornado chart: each checked result with one input at the low (hatched) and the high (grey) end of its "
            "band, the others at their values; the widest swing at the top of each panel."
        )
        parts.append(
            Html(
                f'<figure class="figure">{figure_svg(fig, caption)}<figcaption>{prose(caption)}</figcaption></figure>'
            )
        )
    if study.sampling is not None:
        s = study.sampling
        rows = [
            [c.name, f"{c.pass_fraction * 100:.2f} %", f"{round(c.pass_fraction * s.n):,} of {s.n:,}"]
            for c in evaluated
            if c.pass_fraction is not None and c.inputs
        ]
        parts.append(
            Html(
                f"<p>Sampled study: {escape(s.stated)}; every check's margin evaluated on the composed "
                "expressions compiled to numpy (no kernel per sample).</p>"
            )
        )
        if rows:
            parts.append(table(["Check", "Samples that pass", "Count"], rows, cls="tolerance-samples"))
    return Html("".join(parts))
