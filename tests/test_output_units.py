"""Output units (calckit/sheet/output_units.py): US customary or chosen units for a sheet's results,
and one system of units in every substitution.

Outside references: the conversion factors of NIST Special Publication 811 (2008 edition),
Appendix B (1 in = 0.0254 m exactly, 1 lbf = 4.448222 N, 1 lb = 0.4535924 kg), and pint's
own definitions (checked against those factors first); hand arithmetic from the printed values.
"""

from __future__ import annotations

import math
import re

import pytest

import calckit as ck
from calckit.core.units import Q_
from calckit.errors import InputsError, UnitsError
from calckit.sheet import OutputUnits, read_record
from calckit.sheet.blocks import CalcStep, ResultLine
from calckit.sheet.output_units import system_of

# NIST SP 811 (2008), Appendix B.8 and B.9: factors for units listed alphabetically
NIST_IN_M = 0.0254  # exactly
NIST_LBF_N = 4.448222
NIST_LB_KG = 0.4535924


class TestFactors:
    """pint's conversions, which the sheet uses, agree with NIST SP 811's published factors."""

    def test_length_force_mass(self):
        us = OutputUnits.of("US")
        assert us.shown_value("x", Q_(NIST_IN_M, "m")).to("in").magnitude == pytest.approx(1, rel=1e-15)
        assert str(us.shown_value("x", Q_(NIST_IN_M, "m")).units) == "inch"
        force = us.shown_value("F", Q_(NIST_LBF_N, "N"))
        assert (str(force.units), force.magnitude) == ("force_pound", pytest.approx(1, rel=1e-6))
        # stiffness 1 lbf/in = 4.448222 / 0.0254 N/m = 175.1268 N/m
        k = us.shown_value("k", Q_(NIST_LBF_N / NIST_IN_M, "N/m"))
        assert (f"{k.units:~}", k.magnitude) == ("lbf / in", pytest.approx(1, rel=1e-6))
        # a mass in the force-based system: 1 lbf s^2/in = 4.448222 / 0.0254 kg = 175.1268 kg
        m = us.in_system(Q_(NIST_LBF_N / NIST_IN_M, "kg"), "US")
        assert (f"{m.units:~}", m.magnitude) == ("lbf * s ** 2 / in", pytest.approx(1, rel=1e-6))
        # 1 lb of mass is 0.4535924 kg, in that system 0.4535924 / 175.1268 lbf s^2/in
        lb = us.in_system(Q_(1, "lb"), "US")
        assert lb.magnitude == pytest.approx(NIST_LB_KG / (NIST_LBF_N / NIST_IN_M), rel=1e-6)

    def test_si_from_us(self):
        """On an SI sheet a value given in lbf/in is put through in N/m (NIST factors)."""
        si = OutputUnits.of("SI").in_system(Q_(1, "lbf/in"), "SI")
        assert (f"{si.units:~}", si.magnitude) == ("N / m", pytest.approx(NIST_LBF_N / NIST_IN_M, rel=1e-6))

    def test_systems_of_units(self):
        """Which system a unit belongs to (rates in rad/s, Hz, rpm, times and pure numbers to both)."""
        got = {
            u: system_of(u)
            for u in ("lbf/in", "lb", "psi", "ft", "kN/m", "mm", "t", "rad/s", "Hz", "rpm", "s")
        }
        assert got == {
            "lbf/in": "US", "lb": "US", "psi": "US", "ft": "US", "kN/m": "SI", "mm": "SI", "t": "SI",
            "rad/s": None, "Hz": None, "rpm": None, "s": None,
        }  # fmt: skip


def _pump_sheet(**units) -> ck.Sheet:
    """Pump P-101 at Harrow Creek (invented): inputs in mixed units, as a vendor sheet may give them."""
    sheet = ck.Sheet("Pump P-101", number="HCW-VIB-001", show=False)
    sheet.input("W_m", "4078 lb", description="Pump and base, weighed")
    sheet.input("k", "4111 lbf/in", description="Isolators together")
    sheet.input("F_0", "0.9 kN", description="Out-of-balance force")
    sheet.input("zeta", 0.05)
    sheet.calc("omega_n", "sqrt(k/W_m)", unit="rad/s", title="Natural frequency")
    sheet.calc("X_st", "F_0/k", unit="mm", title="Static deflection under F0")
    sheet.calc("c", "2*zeta*sqrt(k*W_m)", title="Damping coefficient")
    sheet.result("delta", Q_(2.5, "mm"), title="Measured settlement", working=("input", "measured on site"))
    if units:
        sheet.use_units(**units)
    return sheet


_US_TOKENS = re.compile(r"\b(lbf|lb|in|ft|psi)\b")
_SI_TOKENS = re.compile(r"\b(N|kN|kg|m|mm|MN)\b")


def _steps(sheet):
    return [b.record for b in sheet.of_type(CalcStep)]


class TestOneSystemALine:
    @pytest.mark.parametrize(
        "units", [{}, {"system": "US"}, {"X_st": "in"}], ids=["SI", "US", "one-in-inches"]
    )
    def test_never_lb_with_lbf_nor_n_with_lbf(self, units):
        """Every substitution shows all its values in one system: no lb beside lbf, no N beside lbf."""
        for step in _steps(_pump_sheet(**units)):
            text = step.substituted_text
            us, si = set(_US_TOKENS.findall(text)), set(_SI_TOKENS.findall(text))
            assert not (us and si), text
            assert not ({"lb", "lbf"} <= us), text

    def test_us_steps_reproduce_by_hand(self):
        """The US step omega_n = sqrt(k/m), redone from its printed values, gives its printed result
        (hand arithmetic; m = W/g with g = 386.1 in/s^2, the usual force-based US practice, from memory)."""
        sheet = _pump_sheet(system="US")
        omega = _steps(sheet)[0]
        assert re.fullmatch(r"sqrt\(\([\d.]+ lbf/in\)/\([\d.]+ lbf\*s\*\*2/in\)\)", omega.substituted_text)
        k, m = (float(n) for n in re.findall(r"\(([\d.]+) ", omega.substituted_text))
        assert f"{math.sqrt(k / m):.4g}" == omega.shown
        # and the same pump by the textbook weight form sqrt(k g / W), g = 386.0886 in/s^2 (NIST SP 811 B.8)
        assert math.sqrt(4111 * 386.0886 / 4078) == pytest.approx(float(omega.value), rel=1e-6)

    def test_si_sheet_puts_us_inputs_through_in_si(self):
        """An SI sheet given lb and lbf/in puts them through in kg and N/m (NIST SP 811 factors)."""
        omega = _steps(_pump_sheet())[0]
        k_si, m_si = 4111 * NIST_LBF_N / NIST_IN_M, 4078 * NIST_LB_KG
        shown = re.fullmatch(r"sqrt\(\(([\d.]+) N/m\)/\(([\d.]+) kg\)\)", omega.substituted_text)
        assert shown, omega.substituted_text
        assert [float(n) for n in shown.groups()] == [float(f"{k_si:.4g}"), float(f"{m_si:.4g}")]
        assert float(omega.value) == pytest.approx(math.sqrt(k_si / m_si), rel=1e-6)


class TestRecord:
    def test_shown_in_us_kept_in_si(self):
        """The record shows results in the units asked and keeps SI values; it records what was asked."""
        record = _pump_sheet(system="US", delta="thou").record()
        shown = {r["name"]: r["shown"] for r in record["results"]}
        values = {r["name"]: (r["value"], r["unit"]) for r in record["results"]}
        assert shown["X_st"].endswith(" in") and shown["omega_n"].endswith(" rad/s")
        assert shown["c"].endswith(" lbf·s/in")
        # 2.5 mm = 2.5 / 0.0254 thou = 98.43 thou (NIST: 1 in = 0.0254 m exactly)
        assert shown["delta"] == f"{2.5 / 0.0254:.4g} th"
        assert values["delta"] == (pytest.approx(0.0025), "m")
        assert record["output_units"] == {"system": "US", "results": {"delta": "thou"}}
        assert read_record(ck.Sheet.to_json(_pump_sheet(system="US"))).output_units["system"] == "US"

    def test_default_records_nothing(self):
        """A sheet left in SI has no output_units in its record (records built before stay as they were)."""
        assert "output_units" not in _pump_sheet().record()

    def test_result_line_shown_in_units(self):
        sheet = _pump_sheet(delta="in")
        line = next(b for b in sheet.of_type(ResultLine) if b.name == "delta")
        assert f"{line.value.units:~}" == "in" and line.value.magnitude == pytest.approx(2.5 / 25.4)
        assert sheet.results["delta"] == Q_(2.5, "mm")  # what a later step carries is unchanged

    def test_edited_output_units_refused(self):
        text = _pump_sheet(system="US").to_json().replace('"system": "US"', '"system": 3')
        with pytest.raises(ck.CalcError, match="output_units"):
            read_record(text)


class TestRefusals:
    def test_unknown_system(self):
        with pytest.raises(UnitsError) as caught:
            OutputUnits.of("imperial", wheres={"system": "p101.toml, line 9, units.system"})
        assert str(caught.value) == (
            "p101.toml, line 9, units.system: unknown system of units 'imperial'. Give the system as \"SI\" "
            'or "US", and a unit of the result\'s own kind for a result (x_max = "in").'
        )

    def test_unit_of_another_kind(self):
        with pytest.raises(UnitsError) as caught:
            _pump_sheet(X_st="lbf")
        assert str(caught.value) == (
            "units.X_st: the result X_st is [length], which cannot be shown in lbf. "
            "Ask for a unit of the same kind as mm."
        )

    def test_unknown_result(self):
        with pytest.raises(InputsError) as caught:
            _pump_sheet(x_max="in")
        assert str(caught.value) == (
            "units.x_max: the sheet has no result x_max to show in in. "
            "Name one of the sheet's results: omega_n, X_st, c, delta."
        )

    def test_not_a_unit(self):
        with pytest.raises(UnitsError, match="'bananas' is not a unit"):
            OutputUnits.of(results={"x": "bananas"})


class TestInputsFile:
    def test_units_table_read(self, tmp_path):
        """[units] is read as the sheet's output units, not as a group of inputs; a non-text value is refused."""
        from calckit.workflow import read_inputs

        path = tmp_path / "p101.toml"
        path.write_text('mass = "1850 kg"\n\n[units]\nsystem = "US"\namplitude = "in"\n', encoding="utf-8")
        read = read_inputs(path)
        assert dict(read.values) == {"mass": "1850 kg"}
        assert (read.units.system, dict(read.units.results)) == ("US", {"amplitude": "in"})
        assert read.units.wheres["amplitude"] == f"{path}, line 5, units.amplitude"
        path.write_text('mass = "1850 kg"\n[units]\nsystem = 1\n', encoding="utf-8")
        with pytest.raises(InputsError) as caught:
            read_inputs(path)
        assert str(caught.value).startswith(f"{path}, line 3, units.system: expected a unit as text, got 1.")
