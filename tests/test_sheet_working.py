"""Traceability on the sheet: working for every result, substitutions that reproduce, verdicts that match.

Scenario (invented for the demo): pump P-101 at the Harrow Creek water-treatment works,
1850 kg on isolators of 720 kN/m, running at 1480 rpm.
"""

from __future__ import annotations

import math

import pytest
import sympy as sp

import calckit as ck
from calckit.engine.crosscheck import compare_peak
from calckit.sheet.blocks import CalcStep, IndependentCheck
from calckit.sheet.checking import acceptance_check
from calckit.sheet.sheet import Sheet

t = sp.Symbol("t", real=True)


def p101() -> Sheet:
    sheet = Sheet("P-101 on isolators", show=False)
    sheet.given("running_speed", "1480 rpm", r"\Omega", "Running speed", "frequency")
    sheet.given("mass", "1850 kg", "m", "Mass on the isolators", "mass")
    sheet.given("stiffness", "720 kN/m", "k", "Isolator stiffness", "stiffness")
    return sheet


class TestWorking:
    """Every result says how it was obtained; the sheet refuses to save one that does not."""

    def test_result_without_working_refused_on_save(self, tmp_path):
        """A result with no working stops the save with a SheetError naming it and what to give."""
        sheet = Sheet("x", show=False)
        sheet.result("N", 12, title="Steps")
        with pytest.raises(ck.SheetError) as info:
            sheet.save(tmp_path / "x.json")
        assert str(info.value) == (
            "result N: the result 'N' does not say how it was obtained, so the sheet cannot be saved. "
            'Give working=("procedure", "what was run, with its settings"), or ("derivation", ...), '
            '("input", ...), ("table", ...): say how the value was obtained.'
        )
        assert not (tmp_path / "x.json").exists()

    def test_unknown_kind_refused(self):
        with pytest.raises(ck.SheetError, match=r"^result N: 'guess' is not a kind of working"):
            Sheet("x", show=False).result("N", 12, working=("guess", "about twelve"))

    def test_kinds_in_the_record(self):
        """A calc step is a formula with its numbers; a result keeps the kind and text it was given."""
        sheet = p101()
        sheet.calc("omega_n", "sqrt(stiffness/mass)", unit="rad/s")
        sheet.result("N", 12, working=("procedure", "run-up in 12 steps of constant speed"))
        record = sheet.to_record()
        assert record.result("omega_n").working == {
            "kind": "formula",
            "text": "omega_n = sqrt(stiffness/mass) = sqrt((720 kN/m)/(1850 kg)) = 19.73 rad/s",
        }
        assert record.result("N").working["kind"] == "procedure"

    def test_rounding_policy_is_the_first_assumption(self):
        record = Sheet("x", show=False, sig=3).to_record()
        assert record.assumptions[0].startswith("Rounding: every result is shown to 3 significant figures")


class TestReproduce:
    """The values printed in a substitution give the printed result to its last digit."""

    def test_rpm_converted_once_in_its_own_step(self):
        """1480 rpm enters a formula as its own step in rad/s, carried as shown: 155.0 / 19.73 = 7.856.

        Hand arithmetic: 2 pi 1480 / 60 = 154.985 rad/s, shown 155.0; sqrt(720000 / 1850) = 19.728 rad/s,
        shown 19.73; 155.0 / 19.73 = 7.8560 (a calculator), where the unrounded speed gives 7.855.
        """
        sheet = p101()
        sheet.calc("omega_n", "sqrt(stiffness/mass)", unit="rad/s")
        sheet.calc("r", "running_speed / omega_n", {"omega_n": sheet.carried("omega_n")}, unit="")
        sheet.calc("r2", "running_speed / omega_n", {"omega_n": sheet.carried("omega_n")}, unit="")
        steps = [b.name for b in sheet.of_type(CalcStep)]
        assert steps == ["omega_n", "running_speed_rad_s", "r", "r2"]  # converted once
        assert sheet.to_record().result("running_speed_rad_s").shown == "155 rad/s"
        assert sheet.to_record().result("r").shown == f"{155.0 / 19.73:.4g}" == "7.856"

    def test_unrounded_value_refused(self):
        """A value carried unrounded prints as 19.73 but computes as 19.728...: the step is refused."""
        sheet = p101()
        wn = sheet.calc("omega_n", "sqrt(stiffness/mass)", unit="rad/s")
        sheet.input("speed", "155 rad/s")
        with pytest.raises(ck.SheetError) as info:
            # 155 / 19.7279 = 7.8569 (hand arithmetic) prints 7.857; 155 / 19.73 = 7.8560 prints 7.856
            sheet.calc("r", "speed / omega_n", {"omega_n": wn}, unit="")
        assert str(info.value) == (
            "step r: the values as printed give 7.856, but the step prints 7.857 (a value went in with more "
            "digits than it shows). Carry earlier results as printed with sheet.carried(name), so a checker "
            "can redo the step."
        )
        assert "r" not in sheet.results


class TestVerdicts:
    """A verdict agrees with the figures printed beside it."""

    def test_separation_at_the_band_is_met(self):
        """|120/100 - 1| = 20 % exactly (hand arithmetic): 20 % >= 20 % is met, though floats give 19.999..."""
        assert abs(120 / 100 - 1) * 100 < 20  # the float arithmetic the verdict must not follow
        check = Sheet("x", show=False).separation_check("speed", 120, 100)
        assert check.met and check.shown_value == "20 %" and check.margin_text == "+0.0 points"

    def test_deciding_digits_printed(self):
        """0.050004 mm against 0.05 mm: not met, and printed with the digit that decides."""
        check = acceptance_check("deflection", ck.Q_(0.050004, "mm"), "0.05 mm")
        assert not check.met
        assert (check.shown_value, check.shown_limit) == ("0.050004 mm", "0.05 mm")
        assert check.margin_text == "-0.008 %"  # (0.05 - 0.050004) / 0.05 = -0.008 % (hand arithmetic)
        assert check.utilisation_text == "1.0001"  # 0.050004 / 0.05 = 1.00008 (hand arithmetic), not "1.000"

    def test_utilisation(self):
        """value / limit for an upper limit, limit / value for a least value (demand over capacity)."""
        upper = acceptance_check("amplitude", ck.Q_(0.08, "mm"), "0.1 mm")
        lower = acceptance_check("isolation", 97.5, 95, relation=">=", unit="percent")
        assert upper.utilisation_text == "0.800" and lower.utilisation_text == f"{95 / 97.5:.3f}" == "0.974"


class TestIndependentCheck:
    """The derived response beside a numerical integration of the same equation, on the sheet."""

    def test_agreeing_and_disagreeing_routes(self):
        """x'' + 4 x = 1 from rest: x = (1 - cos 2t)/4 peaks at 0.5 m = 2 F/k (undamped step response, the
        dynamic load factor of 2: W. T. Thomson, Theory of Vibration with Applications, 5th ed., sec. 4.2,
        from memory). A wrong 'derived' response (amplitude 1/3) is a failed check, shown as such."""
        sheet = Sheet("x", show=False)
        good = compare_peak((1 - sp.cos(2 * t)) / 4, 1, 0, 4, sp.Integer(1), t, duration=4.0)
        check = sheet.independent_check("x", good, title="peak of x", unit="mm")
        # sampled at 4001 times the peak is met within (2 * 2 pi / 4000)^2 / 8 of it, below 1e-6 relative
        assert good.closed_form_peak == pytest.approx(0.5, rel=1e-6) and check.met
        bad = compare_peak((1 - sp.cos(2 * t)) / 3, 1, 0, 4, sp.Integer(1), t, duration=4.0)
        failed = sheet.independent_check("x_wrong", bad, title="peak of a wrong x", unit="mm")
        assert not failed.met and failed.name == "independent check: peak of a wrong x"
        blocks = sheet.of_type(IndependentCheck)
        assert [b.derived_shown for b in blocks] == ["500 mm", "666.7 mm"]
        assert (
            "DISAGREE" in blocks[1].line
            and "scipy.integrate.odeint" in sheet.to_record().result("x_integrated").working["text"]
        )
        assert math.isclose(sheet.results["x_wrong_integrated"].magnitude, 500, rel_tol=1e-6)
