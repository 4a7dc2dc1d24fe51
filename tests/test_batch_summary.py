"""Issue 16, item 8: the batch summary uses the sheets' labels and display units, SI columns follow,
and its HTML fits an A4 or Letter page in print however many cases the batch has.

The summary is written from the cases' records; here the records come from sheets built in this
process (no kernel), for the invented Harrow Creek raw-water pumps. Outside references: the
unit conversions are checked with ``pint`` (``Quantity.to``), the CSV is read back with Python's
``csv`` module, the print layout is measured by Chromium in print media at the printable width of
each paper (tests/browser.py, ``print_layout``; A4 210 mm and Letter 8.5 in wide, ISO 216 and
ANSI/ASME Y14.1, from memory) and the printed text read back from the PDF (``pdftotext`` would
serve as well; tests/browser.py reads the PDF's own text).
"""

from __future__ import annotations

import csv
import io
import re

import pint
import pytest
import sympy as sp

import calckit as ck
from calckit.sheet.record import record_of
from calckit.workflow.batch import CASES_PER_TABLE, CaseResult, _summary_page, _summary_rows
from calckit.workflow.templates import load_template
from tests.browser import ARTIFACTS, PAPERS, needs_chromium, print_layout

UREG = pint.UnitRegistry()
LONG = (
    "Steady-state amplitude of the pump frame at the running speed, measured at the inboard bearing "
    "housing of the raw-water pump"
)


def _case(name: str, mass_kg: float, stiffness: str, fail: bool = False) -> CaseResult:
    if fail:
        return CaseResult(name, False, f"out/{name}", "mass: must be greater than zero, got -1 kg.")
    sheet = ck.Sheet(f"Harrow Creek P-101 base, case {name}", show=False)
    m = sheet.given("mass", f"{mass_kg} kg", "m", "Moving mass", "mass")
    k = sheet.given("stiffness", stiffness, "k", "Support stiffness", "stiffness")
    M_, K_, F_ = sp.symbols("m k F_0")
    sheet.calc("natural_frequency", sp.sqrt(K_ / M_), {"m": m, "k": k}, symbol="omega_n", unit="rad/s",
               title="Natural frequency in rad/s")  # fmt: skip
    F = sheet.given("force", "3.3 kN", "F_0", "Force amplitude", "force")
    sheet.calc("static_deflection", F_ / K_, {"F_0": F, "k": k}, symbol="X_st", unit="mm", title=LONG)
    sheet.check("deflection", sheet.carried("static_deflection"), ck.Q_(0.5, "mm"), relation="<=",
                basis="common practice, no source")  # fmt: skip
    return CaseResult(name, True, f"out/{name}", "", record_of(sheet).to_dict())


@pytest.fixture(scope="module")
def cases():
    out = [_case(f"stiffness-{i}", 1850, f"{1200 + 400 * i} kN/m") for i in range(9)]
    out.insert(3, _case("negative-mass", 0, "", fail=True))
    return out


def _csv(cases) -> list[dict]:
    header, rows = _summary_rows(cases)
    buffer = io.StringIO()
    csv.writer(buffer).writerows([header, *rows])
    return list(csv.DictReader(io.StringIO(buffer.getvalue())))


def test_csv_uses_labels_and_shown_units_then_si(cases):
    rows = _csv(cases)
    first = rows[0]
    record = cases[0].record
    results = {r["name"]: r for r in record["results"]}
    assert first[f"{LONG} (static_deflection) [mm]"] == results["static_deflection"]["shown"].split()[0]
    assert (
        first["Natural frequency in rad/s (natural_frequency) [rad/s]"]
        == results["natural_frequency"]["shown"].split()[0]
    )
    # the SI column follows, at full precision, and agrees with the shown column by pint's conversion
    si = float(first["static_deflection [m]"])
    shown = float(first[f"{LONG} (static_deflection) [mm]"])
    assert UREG.Quantity(si, "m").to("mm").magnitude == pytest.approx(shown, rel=5e-4)
    assert si == results["static_deflection"]["value"]
    header = list(first)
    assert header.index(f"{LONG} (static_deflection) [mm]") < header.index("natural_frequency [rad/s]")
    assert rows[3]["status"] == "failed" and rows[3]["message"].startswith("mass: must be")


def test_html_shows_every_case_a_few_a_table(cases):
    page = _summary_page(load_template("single_mass_harmonic"), cases)
    built = [c for c in cases if c.ok]
    tables = page.count('class="summary-wide"')
    per_kind = -(-len(built) // CASES_PER_TABLE)
    assert tables == 2 * per_kind  # a checks table and a results table for each group of cases
    for table in re.findall(r'<table class="summary-wide">.*?</table>', page, flags=re.S):
        head = table.split("</thead>", 1)[0]
        assert head.count("<th>") <= CASES_PER_TABLE + 2
    for case in built:
        shown = {r["name"]: r["shown"] for r in case.record["results"]}["static_deflection"]
        assert f">{shown.split()[0]}<" in page
    assert LONG in page and "<script" not in page
    assert "<strong>failed</strong>" in page


@needs_chromium
@pytest.mark.parametrize("paper", sorted(PAPERS))
def test_html_fits_the_printed_page(cases, tmp_path, paper):
    page = tmp_path / "summary.html"
    page.write_text(_summary_page(load_template("single_mass_harmonic"), cases), encoding="utf-8")
    layout = print_layout(page, paper)
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / f"batch_summary_{paper}.pdf").write_bytes(layout.pdf)
    assert layout.tables, "no table was measured"
    for table in layout.tables:
        assert table["left"] >= -0.5 and table["right"] <= layout.printable_px + 0.5, (
            table,
            layout.printable_px,
        )
    for case in cases:
        assert case.name in layout.text
