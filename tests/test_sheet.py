"""The calculation sheet: record, fingerprint, checks, saving without loss, browser view.

Scenario (invented for the demo): pump P-101 at the Harrow Creek water-treatment works,
250 kg with its inertia base on four spring isolators.
"""

from __future__ import annotations

import json
from pathlib import Path

import matplotlib
import pytest
import sympy as sp

import calckit as ck
from calckit.sheet.blocks import DerivationBlock, Figure
from calckit.sheet.sheet import Sheet
from tests.browser import ARTIFACTS, inspect_page, needs_chromium, pdf_page_count, screenshot

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

GOLDEN = Path(__file__).parent / "golden" / "sheet_small.json"
t = sp.Symbol("t", real=True)


def small_sheet(mass="250 kg", stiffness="180 kN/m", *, date="2026-12-01", figure=True) -> Sheet:
    sheet = Sheet(
        "Pump P-101 on spring isolators",
        project="Harrow Creek water-treatment works (invented)",
        number="HC-VIB-001",
        revision="B",
        author="R. Okafor",
        checker="L. Brandt",
        date=date,
        template="test template v1",
        show=False,
    )
    m = sheet.input(
        "m", mass, description="Pump and inertia base", source="Vendor drawing P-101-GA (invented)"
    )
    k = sheet.input(
        "k", stiffness, description="Four isolators in parallel", source="Isolator data (invented)"
    )
    osc = ck.Oscillator(m, 0, k)
    sheet.result(
        "omega_n",
        osc.natural_frequency,
        title="Natural frequency",
        symbol=r"\omega_n",
        working=("derivation", "omega_n = sqrt(k/m), calckit.Oscillator.natural_frequency"),
    )
    sheet.derivation(osc.particular(400 * sp.cos(155 * t), t=t), "Steady state under unbalance")
    sheet.check(
        "Static deflection", osc.static_deflection, ck.Q_(25, "mm"), basis="Isolator travel (invented)"
    )
    sheet.separation_check("Running speed vs natural frequency", ck.Q_(1480, "rpm"), osc.natural_frequency)
    if figure:
        fig, ax = plt.subplots(figsize=(4, 3))
        ax.plot([0, 1, 2], [0, 1, 0])
        ax.set_xlabel("r")
        sheet.figure(fig, "A figure")
        plt.close(fig)
    sheet.assume("The isolators are linear over the working deflection.")
    sheet.reference("Rao, Mechanical Vibrations, 5th ed., ch. 3 (from memory).")
    return sheet


def test_golden_json_record(tmp_path):
    """The JSON record of a small sheet matches the golden file (regenerate with CALCKIT_REGOLD=1)."""
    import os

    record = small_sheet().record()
    if os.environ.get("CALCKIT_REGOLD"):
        GOLDEN.parent.mkdir(exist_ok=True)
        GOLDEN.write_text(json.dumps(record, indent=2) + "\n")
    golden = json.loads(GOLDEN.read_text())
    # the version moves with releases; everything else must match
    record.pop("calckit"), golden.pop("calckit")
    record.pop("fingerprint"), golden.pop("fingerprint")
    assert record == golden


def test_fingerprint_stable_and_sensitive():
    a, b = small_sheet(), small_sheet()
    assert a.fingerprint == b.fingerprint
    assert small_sheet(mass="260 kg").fingerprint != a.fingerprint
    # the date is not an input of the calculation
    assert small_sheet(date="2027-01-15").fingerprint == a.fingerprint


def test_same_inputs_same_bytes(tmp_path):
    """Building the same inputs twice gives the same HTML and JSON bytes."""
    small_sheet().save(tmp_path / "a.html")
    small_sheet().save(tmp_path / "b.html")
    small_sheet().save(tmp_path / "a.json")
    small_sheet().save(tmp_path / "b.json")
    assert (tmp_path / "a.html").read_bytes() == (tmp_path / "b.html").read_bytes()
    assert (tmp_path / "a.json").read_bytes() == (tmp_path / "b.json").read_bytes()


def test_units_round_trip_si_and_us_customary():
    """SI and US customary inputs give the same record in SI units
    (1 lb = 0.45359237 kg and 1 lbf = 4.4482216152605 N exactly, NIST SP 811 (2008), App. B.8,
    from memory)."""
    si = small_sheet(mass="250 kg", stiffness="180 kN/m", figure=False).record()
    us = small_sheet(mass=f"{250 / 0.45359237!r} lb", stiffness="1027.8 lbf/in", figure=False).record()
    for a, b in zip(si["inputs"], us["inputs"], strict=True):
        assert a["unit"] == b["unit"]
        assert a["value"] == pytest.approx(b["value"], rel=1e-4)
    for a, b in zip(si["results"], us["results"], strict=True):
        assert a["unit"] == b["unit"] and a["value"] == pytest.approx(b["value"], rel=1e-4)


def test_checks_margin_and_verdict():
    sheet = small_sheet(figure=False)
    deflection, separation = sheet.checks
    # delta_st = m g / k = 250 * 9.80665 / 180000 m = 13.62 mm (hand arithmetic)
    assert deflection.value == pytest.approx(13.62034722, rel=1e-6)
    assert deflection.unit == "millimeter"
    assert deflection.margin_percent == pytest.approx((25 - 13.62034722) / 25 * 100, rel=1e-6)
    assert deflection.met
    # omega_n = sqrt(180000/250) = 26.833 rad/s, shown 26.83; 1480 rpm = 154.99 rad/s, shown 155.0: the
    # separation from the values as shown is 155.0 / 26.83 - 1 = 477.7 % (hand arithmetic)
    assert separation.value == pytest.approx((155.0 / 26.83 - 1) * 100, rel=1e-12)
    assert sheet.checks_met == 2


def test_failed_check_renders_as_failed(tmp_path):
    sheet = small_sheet(figure=False)
    failed = sheet.check("Amplitude", ck.Q_(0.3, "mm"), ck.Q_(0.1, "mm"), basis="Client limit (invented)")
    assert not failed.met and failed.verdict == "not met" and failed.margin_percent == pytest.approx(-200)
    html = sheet.to_html()
    assert "NOT MET" in html and "2 of 3 met" in html
    assert sheet.record()["summary"] == {"checks": 3, "met": 2}


def test_caution_always_present():
    html = small_sheet(figure=False).to_html()
    assert "do not replace, the judgment of a qualified engineer" in html


def test_overwrite_refused_for_other_inputs(tmp_path):
    target = tmp_path / "sheet.html"
    small_sheet(figure=False).save(target)
    before = target.read_bytes()
    other = small_sheet(mass="300 kg", figure=False)
    with pytest.raises(ck.OverwriteError) as info:
        other.save(target)
    assert str(info.value).startswith(f"{target}: the file already holds a sheet with fingerprint ")
    assert str(info.value).endswith(
        "built from other inputs. Pass overwrite=True to replace it, keep_both=True to write alongside it, "
        "or choose another name."
    )
    assert target.read_bytes() == before
    alongside = other.save(target, keep_both=True)
    assert alongside.name == "sheet-2.html" and target.read_bytes() == before
    assert other.save(target, overwrite=True) == target and target.read_bytes() != before


def test_same_inputs_may_resave(tmp_path):
    target = tmp_path / "sheet.json"
    small_sheet(figure=False).save(target)
    small_sheet(figure=False).save(target)  # same fingerprint: no refusal


def test_unknown_extension():
    with pytest.raises(ck.SheetError) as info:
        small_sheet(figure=False).save("x.docx")
    assert (
        str(info.value) == "x.docx: cannot write a sheet as .docx. Use a name ending in .html, .pdf or .json."
    )


def test_input_wrong_dimension():
    sheet = Sheet("x", show=False)
    with pytest.raises(ck.UnitsError, match=r"^m: expected a mass"):
        sheet.input("m", "12 N/mm", expect="mass")


def test_duplicate_input_and_bad_name():
    sheet = Sheet("x", show=False)
    sheet.input("m", "1 kg")
    with pytest.raises(ck.SheetError) as info:
        sheet.input("m", "2 kg")
    assert str(info.value) == "input m: the input 'm' is already on the sheet. Give each input its own name."
    with pytest.raises(ck.SheetError) as info:
        sheet.input("2m", "2 kg")
    assert str(info.value) == (
        "input name: the name '2m' is not usable. Use letters, digits and underscores, starting with a "
        "letter, e.g. k_iso."
    )


def test_blocks_kept_in_order():
    sheet = small_sheet()
    kinds = [type(b).__name__ for b in sheet.blocks]
    assert kinds.index("DerivationBlock") < kinds.index("Figure")
    assert len(sheet.of_type(DerivationBlock)) == 1 and len(sheet.of_type(Figure)) == 1


def test_html_self_contained():
    html = small_sheet().to_html()
    assert "<script" not in html.lower()
    # namespace names (xmlns="http://www.w3.org/...") are identifiers, not resources
    import re

    without_namespaces = re.sub(r'xmlns(:\w+)?="[^"]*"', "", html)
    assert "http://" not in without_namespaces and "https://" not in without_namespaces


@needs_chromium
def test_sheet_in_browser(tmp_path):
    """The built sheet loads with no network request, all math laid out, the figure visible,
    and prints to a PDF of at least one page; a screenshot is written for a person to look at."""
    path = small_sheet().save(tmp_path / "sheet.html")
    report = inspect_page(path)
    assert report.requests == ()
    assert report.math_count > 5 and report.math_zero_size == 0
    ARTIFACTS.mkdir(exist_ok=True)
    screenshot(path, ARTIFACTS / "sheet_small.png")
    assert (ARTIFACTS / "sheet_small.png").stat().st_size > 10_000
    pdf = small_sheet().save(tmp_path / "sheet.pdf")
    assert pdf_page_count(pdf) >= 1


def test_table_block():
    """A table of values is kept in order, rounded for display, and in the record."""
    sheet = small_sheet(figure=False)
    sheet.table(["n", "amplitude"], [[1, ck.Q_(0.123456, "mm")], [3, ck.Q_(0.01, "mm")]], caption="Harmonics")
    assert sheet.record()["tables"] == [
        {
            "caption": "Harmonics",
            "headers": ["n", "amplitude"],
            "rows": [["1", "0.1235 mm"], ["3", "0.01 mm"]],
        }
    ]
    assert "Table 1. Harmonics" in sheet.to_html()
    with pytest.raises(ck.SheetError) as info:
        sheet.table(["a", "b"], [[1]], caption="Bad")
    assert (
        str(info.value)
        == "table Bad: row 1 has 1 cells but there are 2 headings. Give every row one cell per heading."
    )


def test_fingerprint_covers_what_the_user_provided():
    """Revision, checker, a source, a check's basis or an assumption change the fingerprint."""
    base = small_sheet(figure=False).fingerprint
    other_title = small_sheet(figure=False)
    other_title.title = type(other_title.title)(**{**other_title.title.__dict__, "revision": "C"})
    assert other_title.fingerprint != base
    extra_assumption = small_sheet(figure=False)
    extra_assumption.assume("The floor is rigid.")
    assert extra_assumption.fingerprint != base


class TestRefusals:
    """The sheet refuses what it cannot hold, with a message instead of a traceback."""

    @pytest.mark.parametrize("value", [None, 1 + 2j, sp.Symbol("x"), True])
    def test_check_value_not_real(self, value):
        with pytest.raises(ck.SheetError) as info:
            Sheet("x", show=False).check("amplitude", value, 1)
        assert str(info.value) == (
            f"check amplitude: the value {value!r} is not a real number or quantity. Give a number, a "
            'quantity with its unit (e.g. "0.1 mm"), or substitute numbers for symbols first.'
        )

    def test_check_not_finite(self):
        with pytest.raises(ck.SheetError) as info:
            Sheet("x", show=False).check("amplitude", float("nan"), 1)
        assert str(info.value) == (
            "check amplitude: the value is not a finite number. Check the calculation that produced it."
        )

    def test_separation_with_text_and_zero(self):
        sheet = Sheet("x", show=False)
        # 1480 rpm = 154.99 rad/s, shown 155.0; 20 Hz = 125.66 rad/s, shown 125.7: 23.31 % apart from the
        # values as shown (hand arithmetic; 23.33 % unrounded)
        assert sheet.separation_check("speed", "1480 rpm", "20 Hz").value == pytest.approx(
            100 * (155.0 / 125.7 - 1), rel=1e-12
        )
        with pytest.raises(ck.SheetError) as info:
            sheet.separation_check("speed", "1480 rpm", 0)
        assert str(info.value).startswith(
            "check speed: the frequencies must be finite with a natural frequency"
        )

    def test_caution_cannot_be_dropped(self):
        with pytest.raises(ck.SheetError) as info:
            Sheet("x", caution="", show=False)
        assert str(info.value) == (
            "Sheet(caution=...): a calculation sheet must carry a caution. Keep the default "
            "(calckit.DEFAULT_CAUTION) or give your own wording."
        )

    def test_figure_not_a_figure(self):
        with pytest.raises(ck.SheetError, match=r"^figure 'cap': expected a matplotlib figure, got str"):
            Sheet("x", show=False).figure("x", "cap")

    def test_text_formula_never_runs(self, tmp_path):
        marker = tmp_path / "ran"
        sheet = Sheet("x", show=False)
        sheet.input("k", "180 kN/m")
        with pytest.raises(ck.InputsError):
            sheet.calc("z", f"__import__('pathlib').Path({str(marker)!r}).write_text('x')")
        assert not marker.exists()
        assert sheet.calc("w", "sqrt(k/(2*k))") == pytest.approx(2**-0.5)


class TestGiven:
    """Sheet.given: a template's input with its source and sign checked."""

    def test_source_defaults_to_inputs_file(self):
        sheet = Sheet("x", show=False, inputs_file="p101.toml", sources={"k": "Isolator data sheet"})
        m = sheet.given("mass", "250 kg", "m", "Pump and base", "mass")
        assert m == ck.Q_(250, "kg") and sheet.inputs["mass"].source == "p101.toml"
        assert sheet.inputs["mass"].symbol == "m" and sheet.inputs["mass"].description == "Pump and base"
        sheet.given("limit", "0.1 mm", "X_{lim}", "Largest amplitude", "length", "Client specification")
        assert sheet.inputs["limit"].source == "Client specification"
        sheet.given("k", "180 kN/m", "k", "Stiffness", "stiffness", "Catalogue")
        assert sheet.inputs["k"].source == "Isolator data sheet"  # the inputs file's word wins

    def test_sign_checked(self):
        sheet = Sheet("x", show=False)
        with pytest.raises(ck.InputsError, match=r"^mass: "):
            sheet.given("mass", "0 kg", "m", "Mass", "mass")
        assert sheet.given("zeta", 0, r"\zeta", "Damping ratio", "dimensionless", sign=ck.non_negative) == 0
        with pytest.raises(ck.InputsError, match=r"^zeta2: "):
            sheet.given("zeta2", -0.1, r"\zeta", "Damping ratio", "dimensionless", sign=ck.non_negative)
        assert sheet.given("x0", "-2 mm", "x_0", "Start", "length", sign=ck.finite) == ck.Q_(-2, "mm")
        with pytest.raises(ck.UnitsError, match=r"^w: expected a frequency"):
            sheet.given("w", "3 kg", r"\omega", "Frequency", "frequency")

    def test_sign_must_be_a_check(self):
        with pytest.raises(ck.SheetError) as info:
            Sheet("x", show=False).given("m", "1 kg", "m", "Mass", "mass", sign="positive")
        assert str(info.value) == (
            "input m: sign='positive' is not a check. Pass calckit.positive, calckit.non_negative or calckit.finite."
        )


class TestCarried:
    """Sheet.carried: an earlier result as shown, carried into the next step."""

    def test_rounded_as_shown(self):
        sheet = Sheet("x", show=False)
        sheet.result("omega_n", ck.Q_(26.832815729997478, "rad/s"), working=("input", "test value"))
        sheet.result("r", 5.776413, working=("input", "test value"))
        # 26.832815... to 4 significant figures is 26.83; 5.776413 is 5.776 (hand rounding)
        assert sheet.carried("omega_n") == ck.Q_(26.83, "rad/s")
        assert str(sheet.carried("omega_n").units) == "radian / second"
        assert sheet.carried("r") == 5.776 and isinstance(sheet.carried("r"), float)
        assert sheet.carried("r", sig=2) == 5.8
        assert sheet.carried("omega_n", sig=6) == ck.Q_(26.8328, "rad/s")

    def test_step_result_carried(self):
        """A result of calc() is carried as the sheet shows it."""
        sheet = Sheet("x", show=False)
        sheet.input("k", "180 kN/m")
        sheet.input("m", "250 kg")
        sheet.calc("omega_n", "sqrt(k/m)", unit="rad/s")
        # sqrt(180000 / 250) = 26.8328 rad/s (hand arithmetic)
        assert sheet.carried("omega_n").magnitude == 26.83
        assert sheet.carried("omega_n").to("rad/s").magnitude == 26.83

    def test_unknown_result_and_bad_sig(self):
        sheet = Sheet("x", show=False)
        with pytest.raises(ck.SheetError) as info:
            sheet.carried("omega_n")
        assert str(info.value) == (
            "carried omega_n: there is no result named 'omega_n' on the sheet (results: none yet). "
            "Carry a result computed earlier with calc() or result(), by its name."
        )
        sheet.result("r", 1.5, working=("input", "test value"))
        with pytest.raises(ck.SheetError, match=r"results: r\)"):
            sheet.carried("x")
        for sig in (0, 2.5, True):
            with pytest.raises(
                ck.SheetError, match=r"^carried r: sig=.* is not a number of significant figures"
            ):
                sheet.carried("r", sig=sig)


def test_folder_exports():
    """The sheet folder exports what other folders use; in_kernel is public and false outside a kernel."""
    import calckit.sheet as folder

    for name in (
        "Sheet", "Check", "check_margin", "DEFAULT_CAUTION", "in_kernel", "existing_fingerprint",
        "SheetRecord", "read_record", "RECORD_VERSION",
    ):  # fmt: skip
        assert name in folder.__all__ and hasattr(folder, name), name
    assert folder.in_kernel() is False
    assert ck.SheetRecord is folder.SheetRecord and ck.read_record is folder.read_record
