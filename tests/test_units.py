"""Tests for calckit.core.units: reading quantities, SI conversion, frequencies, formatting."""

from __future__ import annotations

import math
import pickle
import sys
from fractions import Fraction

import pint
import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st

from calckit.core.exact import exact
from calckit.core.units import (
    KINDS,
    Q_,
    SIValue,
    angular_frequency,
    cyclic_frequency,
    fmt,
    fmt_number,
    kind_of,
    quantity,
    to_si,
    ureg,
)
from calckit.errors import CalcError, UnitsError

# Exact definitions (NIST SP 811 (2008 ed.), Appendix B.8 and B.9, from memory):
# 1 lb = 0.45359237 kg, 1 in = 0.0254 m, standard gravity g_n = 9.80665 m/s**2,
# and 1 lbf = 1 lb * g_n.
LB = sp.Rational("0.45359237")
INCH = sp.Rational("0.0254")
G_N = sp.Rational("9.80665")
LBF = LB * G_N


def message(excinfo) -> str:
    return str(excinfo.value)


class TestRegistry:
    def test_one_registry(self):
        """Q_ builds quantities of the shared registry."""
        assert Q_(1, "kg")._REGISTRY is ureg

    def test_pickle_round_trip(self):
        """Quantities survive pickling (process pools in batch runs)."""
        q = Q_(12, "N/mm")
        assert pickle.loads(pickle.dumps(q)) == q

    def test_cpm_defined(self):
        """Cycles per minute is a unit of the registry."""
        assert Q_(60, "cpm").to("rpm").magnitude == pytest.approx(60)


class TestQuantity:
    @pytest.mark.parametrize(
        ("text", "magnitude", "units"),
        [
            ("1480 rpm", 1480, "rpm"),
            ("250 kg", 250, "kg"),
            ("12 N/mm", 12, "N/mm"),
            ("45 lbf/in", 45, "lbf/in"),
            ("0.05", 0.05, ""),
            ("2.5kg", 2.5, "kg"),
            ("  -3.5e2 N ", -350.0, "N"),
            ("120 g*mm", 120, "g*mm"),
            ("0.2 m/s^2", 0.2, "m/s**2"),
            ("1/s", 1, "1/s"),
            ("3 1/min", 3, "1/min"),
            ("5 %", 5, "percent"),
        ],
    )
    def test_reads_text(self, text, magnitude, units):
        """Text with a number and a unit becomes that quantity."""
        q = quantity(text, "x")
        assert q.magnitude == magnitude
        assert q.units == ureg.parse_units(units)

    def test_integer_text_stays_int(self):
        """An integer written stays an int, so nothing is rounded."""
        assert type(quantity("1480 rpm", "speed").magnitude) is int

    @pytest.mark.parametrize(
        ("text", "value"), [("2.5 kg", sp.Rational(5, 2)), ("0.1 m", sp.Rational(1, 10))]
    )
    def test_decimal_is_exact(self, text, value):
        """A decimal written comes back exactly through exact()."""
        assert exact(quantity(text, "x").magnitude) == value

    @given(st.decimals(min_value=-1e9, max_value=1e9, places=6, allow_nan=False, allow_infinity=False))
    def test_any_short_decimal_is_exact(self, d):
        """Every decimal of up to 15 significant digits survives reading."""
        q = quantity(f"{d} kg", "mass")
        assert exact(q.magnitude) == sp.Rational(str(d))

    def test_numbers(self):
        """Numbers are dimensionless quantities."""
        assert quantity(3, "n").unitless and quantity(3, "n").magnitude == 3
        assert quantity(0.05, "zeta", expect="dimensionless").magnitude == 0.05
        assert quantity(Fraction(1, 4), "x").magnitude == 0.25
        assert quantity(sp.Integer(7), "x").magnitude == 7

    def test_quantity_passes_through(self):
        """A quantity of our registry is returned as it is."""
        q = Q_(250, "kg")
        assert quantity(q, "mass", expect="mass") is q

    def test_quantity_from_other_registry(self):
        """A quantity of another pint registry is moved into ours."""
        other = pint.UnitRegistry()
        q = quantity(other.Quantity(12, "N/mm"), "k", expect="stiffness")
        assert q._REGISTRY is ureg and q == Q_(12, "N/mm")

    @pytest.mark.parametrize(
        ("text", "kind"),
        [
            ("250 kg", "mass"),
            ("250 lb", "mass"),
            ("12 mm", "length"),
            ("0.5 s", "time"),
            ("1.2 kN", "force"),
            ("45 lbf/in", "stiffness"),
            ("350 N*s/m", "damping coefficient"),
            ("2 lbf*s/in", "damping coefficient"),
            ("1480 rpm", "frequency"),
            ("25 Hz", "frequency"),
            ("155 rad/s", "frequency"),
            ("900 cpm", "frequency"),
            ("4.5 mm/s", "velocity"),
            ("0.2 g_n", "acceleration"),
            ("30 deg", "angle"),
            ("0.05", "dimensionless"),
            ("120 g*mm", "mass*length"),
            ("2 psi", "pressure"),
            ("7.5 kW", "power"),
        ],
    )
    def test_expect_accepts_kind(self, text, kind):
        """Each named kind accepts its usual units."""
        assert kind_of(quantity(text, "x", expect=kind)) == kind

    def test_wrong_dimension_message(self):
        """A wrong dimension names the input, the kind expected and the kind given."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("12 N/mm", "mass", expect="mass")
        assert message(excinfo) == (
            'mass: expected a mass (kg, lb, ...), got 12 N/mm, which is a stiffness. Give a mass, for example "250 kg".'
        )

    def test_wrong_dimension_without_kind_name(self):
        """A dimension with no name of ours is shown in pint's words."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("1 kg/m**3", "k", expect="stiffness")
        assert message(excinfo) == (
            "k: expected a stiffness (N/m, N/mm, lbf/in, ...), got 1 kg/m**3, "
            'which is a quantity of dimension [mass] / [length] ** 3. Give a stiffness, for example "12 N/mm".'
        )

    def test_missing_unit_message(self):
        """A bare number where a unit is needed says to write the unit."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("250", "mass", expect="mass")
        assert message(excinfo) == (
            'mass: expected a mass (kg, lb, ...), got 250, which has no unit. Write the unit after the number, for example "250 kg".'
        )

    def test_angle_needs_unit(self):
        """An angle without a unit is refused: radians or degrees is not guessed."""
        with pytest.raises(UnitsError) as excinfo:
            quantity(30, "phase", expect="angle")
        assert message(excinfo) == (
            'phase: expected an angle (rad, deg, ...), got 30, which has no unit. Write the unit after the number, for example "30 deg".'
        )

    def test_dimensionless_refuses_unit(self):
        """A damping ratio with a unit is refused."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("5 kg", "zeta", expect="dimensionless")
        assert message(excinfo) == (
            "zeta: expected a dimensionless number (0.05, 5 %, ...), got 5 kg, which is a mass. "
            'Give a dimensionless number, for example "0.05".'
        )

    def test_dimensionless_refuses_angle(self):
        """An angle is not taken for a plain number."""
        with pytest.raises(UnitsError, match="which is an angle"):
            quantity("30 deg", "zeta", expect="dimensionless")

    def test_unknown_unit_with_suggestion(self):
        """An unknown unit names the input and the unit text, and suggests a unit."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("250 kgs", "mass", expect="mass")
        assert message(excinfo) == (
            'mass: unknown unit "kgs" in "250 kgs". Did you mean "kg"? '
            "Write a unit such as kg, lb (unit names are case-sensitive)."
        )

    def test_unknown_unit_without_suggestion(self):
        """With nothing close, the message lists usual units of the kind."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("1480 zzzz", "speed", expect="frequency")
        assert message(excinfo) == (
            'speed: unknown unit "zzzz" in "1480 zzzz". '
            "Write a unit such as Hz, rpm, rad/s, cpm (unit names are case-sensitive)."
        )

    def test_unit_text_with_odd_characters(self):
        """Unit text with characters no unit has is refused before pint sees it."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("250 kg; import os", "mass")
        assert message(excinfo) == (
            'mass: unknown unit "kg; import os" in "250 kg; import os". '
            "Write a unit such as kg, N/mm, Hz, rpm (unit names are case-sensitive)."
        )

    def test_scaled_unit_refused(self):
        """A number inside the unit is refused as an unknown unit."""
        with pytest.raises(UnitsError, match=r'unknown unit "N/\(100 mm\)"'):
            quantity("1 N/(100 mm)", "k")

    @pytest.mark.parametrize("text", ["1,480 rpm", "1 480 rpm", "1_480 rpm"])
    def test_thousands_separator(self, text):
        """Thousands separators are refused with advice."""
        with pytest.raises(UnitsError) as excinfo:
            quantity(text, "speed")
        assert message(excinfo) == (
            f'speed: cannot read the number in "{text}". '
            "Write the number without thousands separators or spaces, for example 1480 rpm."
        )

    def test_no_number(self):
        """A unit without a number is refused."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("kg", "mass", expect="mass")
        assert message(excinfo) == (
            'mass: "kg" does not start with a number. Write the number first, then the unit, for example "250 kg".'
        )

    def test_empty(self):
        """Empty text is refused."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("  ", "k", expect="stiffness")
        assert message(excinfo) == 'k: the value is empty. Give a number and a unit, for example "12 N/mm".'

    def test_overflowing_number_named(self):
        """1e400 is beyond the largest float (sys.float_info.max, about 1.797e308; IEEE 754 binary64):
        refused as an overflow, naming the number, not as 'not finite'."""
        assert math.isinf(float("1e400")) and sys.float_info.max < 1e309
        with pytest.raises(UnitsError) as excinfo:
            quantity("1e400 kg", "m")
        assert message(excinfo) == (
            "m: the number 1e400 is larger than a float holds (about 1.8e308): it overflows. Give the value in a "
            "larger unit, or check it for a slip (an exponent typed twice)."
        )

    @pytest.mark.parametrize("text", ["nan kg", "inf N", "-Infinity"])
    def test_not_finite_text(self, text):
        """NaN and infinity in text are refused."""
        with pytest.raises(UnitsError) as excinfo:
            quantity(text, "m")
        assert message(excinfo) == f'm: "{text}" is not a finite number. Give a finite number.'

    @pytest.mark.parametrize("value", [math.nan, math.inf, Q_(math.inf, "kg")])
    def test_not_finite_values(self, value):
        """NaN and infinity as numbers or quantities are refused."""
        with pytest.raises(UnitsError, match=r"^m: .* is not a finite number\. Give a finite number\.$"):
            quantity(value, "m")

    def test_truth_value(self):
        """True is not a number."""
        with pytest.raises(UnitsError) as excinfo:
            quantity(True, "m", expect="mass")
        assert (
            message(excinfo) == 'm: got a truth value True. Give a number and a unit, for example "250 kg".'
        )

    def test_other_type(self):
        """Lists and other objects are refused."""
        with pytest.raises(UnitsError) as excinfo:
            quantity([1], "m")
        assert message(excinfo) == (
            'm: expected text, a number or a pint quantity, got list [1]. Give a number and a unit, for example "250 kg".'
        )

    def test_unknown_kind(self):
        """A kind name we do not have is refused, listing ours."""
        with pytest.raises(UnitsError) as excinfo:
            quantity("1 kg", "m", expect="weight")
        assert (
            message(excinfo) == 'm: unknown kind of quantity "weight". Use one of: ' + ", ".join(KINDS) + "."
        )

    def test_errors_are_calc_errors(self):
        """Units errors are CalcErrors and TypeErrors."""
        with pytest.raises(CalcError):
            quantity("1 kg", "k", expect="stiffness")
        with pytest.raises(TypeError):
            quantity("1 kg", "k", expect="stiffness")


class TestKindOf:
    def test_none_for_unnamed(self):
        """A dimension without a name of ours gives None."""
        assert kind_of(Q_(1, "kg/m**3")) is None

    def test_angle_and_number_differ(self):
        """pint counts radians as dimensionless; we tell them apart."""
        assert kind_of(Q_(1, "rad")) == "angle"
        assert kind_of(Q_(1, "")) == "dimensionless"


class TestToSI:
    def test_us_customary_stiffness(self):
        """1 lbf/in = 175.126835... N/m (NIST SP 811 (2008 ed.), Appendix B.8, from memory)."""
        si = to_si("1 lbf/in", "k")
        assert si == SIValue(LBF / INCH, "N/m")
        assert float(si.magnitude) == pytest.approx(175.126835246, rel=1e-11)

    def test_pound_exact(self):
        """1 lb = 0.45359237 kg exactly, by definition (NIST SP 811 (2008 ed.), Appendix B.8)."""
        assert to_si("1 lb", "m") == SIValue(LB, "kg")

    @pytest.mark.parametrize(
        ("si_text", "us_text", "kind"),
        [
            ("250 kg", f"{250 / 0.45359237!r} lb", "mass"),
            ("12 N/mm", f"{12000 * 0.0254 / (0.45359237 * 9.80665)!r} lbf/in", "stiffness"),
            ("25.4 mm", "1 in", "length"),
            ("4.4482216152605 N", "1 lbf", "force"),
        ],
    )
    def test_si_and_us_agree(self, si_text, us_text, kind):
        """The same quantity in SI and US customary units gives the same SI numbers."""
        a = to_si(quantity(si_text, "a", expect=kind), "a")
        b = to_si(quantity(us_text, "b", expect=kind), "b")
        assert a.unit == b.unit
        assert float(a.magnitude) == pytest.approx(float(b.magnitude), rel=1e-13)

    @pytest.mark.parametrize(
        ("text", "magnitude", "unit"),
        [
            ("2.5 kg", sp.Rational(5, 2), "kg"),
            ("12 N/mm", 12000, "N/m"),
            ("350 N*s/m", 350, "N*s/m"),
            ("120 g*mm", sp.Rational(3, 25000), "kg*m"),
            ("7.5 kW", 7500, "W"),
            ("1.2 kN", 1200, "N"),
            ("0.05", sp.Rational(1, 20), ""),
            ("30 deg", sp.pi / 6, "rad"),
            ("1480 rpm", sp.Rational(148, 3) * sp.pi, "rad/s"),
            ("25 Hz", 25, "1/s"),
            ("3 g_n", 3 * G_N, "m/s**2"),
            ("1 kg/m**3", 1, "kg/m**3"),
        ],
    )
    def test_hand_values(self, text, magnitude, unit):
        """Conversions to SI are exact and match hand values."""
        assert to_si(text, "x") == SIValue(sp.sympify(magnitude), unit)

    def test_array_refused(self):
        """to_si takes one value."""
        with pytest.raises(UnitsError) as excinfo:
            to_si(Q_([1.0, 2.0], "kg"), "m")
        assert message(excinfo) == "m: expected a single value, got an array. Convert one value at a time."


class TestFrequencies:
    @pytest.mark.parametrize(
        ("text", "rad_s"),
        [
            ("1 Hz", 2 * sp.pi),  # hand value: one cycle is 2*pi rad
            ("25 Hz", 50 * sp.pi),
            ("1480 rpm", 1480 * 2 * sp.pi / 60),  # hand value: rev/min * 2*pi / 60
            ("900 cpm", 900 * 2 * sp.pi / 60),
            ("155 rad/s", 155),
            ("0.5 kHz", 1000 * sp.pi),
        ],
    )
    def test_angular(self, text, rad_s):
        """Angular frequency carries the 2*pi for cycles, and no more."""
        assert sp.simplify(angular_frequency(text, "f", exact=True) - rad_s) == 0
        assert angular_frequency(text, "f") == pytest.approx(float(rad_s), rel=1e-15)

    @pytest.mark.parametrize(
        ("text", "hz"),
        [
            ("1 Hz", 1),
            ("1500 rpm", 25),  # hand value: 1500 / 60
            ("900 cpm", 15),
            ("2 rad/s", 1 / sp.pi),
            ("60 rpm", 1),
        ],
    )
    def test_cyclic(self, text, hz):
        """Cyclic frequency divides angles by 2*pi and leaves cycles alone."""
        assert sp.simplify(cyclic_frequency(text, "f", exact=True) - hz) == 0
        assert cyclic_frequency(text, "f") == pytest.approx(float(hz), rel=1e-15)

    def test_pint_alone_gets_it_wrong(self):
        """The trap this module guards against: pint says 1 Hz is 1 rad/s."""
        assert Q_(1, "Hz").to("rad/s").magnitude == pytest.approx(1.0)
        assert angular_frequency("1 Hz", "f") == pytest.approx(2 * math.pi)

    def test_bare_inverse_time_refused(self):
        """1/s could count cycles or radians: refused."""
        with pytest.raises(UnitsError) as excinfo:
            angular_frequency("1/s", "w")
        assert message(excinfo) == (
            "w: 1 1/s does not say whether it counts cycles or radians. "
            "Write Hz or cpm for cycles, rad/s or rpm for turning speed."
        )

    def test_not_a_frequency(self):
        """A speed in m/s is not a frequency."""
        with pytest.raises(
            UnitsError, match=r"^speed: expected a frequency \(Hz, rpm, rad/s, cpm, \.\.\.\), got 3 m/s"
        ):
            angular_frequency("3 m/s", "speed")


class TestFmtNumber:
    @pytest.mark.parametrize(
        ("x", "sig", "text"),
        [
            (7880.70758609144, 4, "7881"),
            (0.05, 4, "0.05"),
            (2.5, 4, "2.5"),
            (123456.7, 4, "123500"),
            (999999.0, 4, "1e6"),
            (1.23456e-5, 4, "1.235e-5"),
            (-2.5e-7, 4, "-2.5e-7"),
            (0.001234, 3, "0.00123"),
            (999.96, 4, "1000"),
            (0.1 + 0.2, 4, "0.3"),
            (0.0, 4, "0"),
            (-0.0, 4, "0"),
            (sp.Rational(1, 3), 3, "0.333"),
            (math.nan, 4, "nan"),
        ],
    )
    def test_values(self, x, sig, text):
        """Significant figures, plain decimals in range, e-notation outside."""
        assert fmt_number(x, sig) == text

    @given(st.floats(min_value=1e-3, max_value=9.99e5, allow_nan=False))
    def test_in_range_has_no_exponent(self, x):
        """Numbers from 0.001 to below a million print without an exponent."""
        assert "e" not in fmt_number(x)

    @given(st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).filter(lambda v: v != 0))
    def test_close_to_value(self, x):
        """The printed number is within half a unit in the last significant place."""
        assert float(fmt_number(x, 4)) == pytest.approx(x, rel=5e-4)


class TestFmt:
    @pytest.mark.parametrize(
        ("q", "text"),
        [
            (Q_(12, "N/mm"), "12 N/mm"),
            (Q_(1480, "rpm"), "1480 rpm"),
            (Q_(0.05), "0.05"),
            (Q_(5, "percent"), "5 %"),
            (Q_(45, "lbf*s/in"), "45 lbf·s/in"),
            (Q_(9.80665, "m/s**2"), "9.807 m/s²"),
            (Q_(12, "N/mm") * Q_(1, "m"), "12000 N"),  # mixed lengths: shown in SI
            (Q_(2, "mm") / Q_(1, "m"), "0.002"),
            (2.5, "2.5"),
        ],
    )
    def test_values(self, q, text):
        """Quantities print in their own units unless those are mixed."""
        assert fmt(q) == text
