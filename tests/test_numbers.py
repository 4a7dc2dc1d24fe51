"""Tests for calckit.render.numbers: numbers put through a formula."""

from __future__ import annotations

import math
import xml.etree.ElementTree as ET
from decimal import Decimal

import pytest
import sympy as sp

from calckit.core.units import Q_
from calckit.errors import CalcError, InputsError, UnitsError
from calckit.render.numbers import Substitution, number_latex, put_through, round_sig, unit_latex

K, M, C, X = sp.symbols("k m c x")
SI = {"k": "180 kN/m", "m": "250 kg"}


@pytest.fixture(scope="module")
def omega_n() -> Substitution:
    return put_through("omega_n", sp.sqrt(K / M), SI, unit="rad/s")


class TestPutThrough:
    """Formula, substitution, result: exact inside, rounded for display."""

    def test_display_line(self, omega_n):
        """The trade's three moves in one LaTeX line."""
        assert omega_n._repr_latex_() == (
            r"$$\omega_{n} = \sqrt{\frac{k}{m}} = \sqrt{\frac{180\;\mathrm{kN/m}}{250\;\mathrm{kg}}}"
            r" = 26.83\;\mathrm{rad/s}$$"
        )
        assert str(omega_n) == "omega_n = sqrt(k/m) = sqrt((180 kN/m)/(250 kg)) = 26.83 rad/s"

    def test_exact_value_kept(self, omega_n):
        """sqrt(180000 / 250) = sqrt(720) = 12 sqrt(5) rad/s, exactly (by hand)."""
        assert omega_n.value == 12 * sp.sqrt(5)
        assert omega_n.unit == "rad/s"
        assert omega_n.formula == sp.sqrt(K / M)

    @pytest.mark.parametrize("sig", [1, 2, 3, 4, 6, 9])
    def test_shown_is_exact_rounded(self, sig):
        """Outside check: Python's format(x, ".{sig}g") of the exact value (no tie here)."""
        sub = put_through("omega_n", sp.sqrt(K / M), SI, unit="rad/s", sig=sig)
        expected = float(format(float(12 * sp.sqrt(5)), f".{sig}g"))
        assert float(sub.shown) == expected
        assert sub.sig == sig

    def test_us_customary_gives_same_si_result(self):
        """500 lb and 1000 lbf/in: exact against the definitions 1 lb = 0.45359237 kg,
        1 lbf = 4.4482216152605 N, 1 in = 0.0254 m (from memory), and equal to the SI inputs."""
        us = put_through("omega_n", sp.sqrt(K / M), {"k": "1000 lbf/in", "m": "500 lb"}, unit="rad/s")
        k_si = 1000 * sp.Rational("4.4482216152605") / sp.Rational("0.0254")
        m_si = 500 * sp.Rational("0.45359237")
        assert sp.simplify(us.value - sp.sqrt(k_si / m_si)) == 0
        si = put_through(
            "omega_n", sp.sqrt(K / M), {"k": Q_(float(k_si), "N/m"), "m": "226.796185 kg"}, unit="rad/s"
        )
        assert si.shown == us.shown == "27.79"
        assert abs(float(si.value) / float(us.value) - 1) < 1e-12

    def test_unit_conversion(self):
        """A rate in 1/s is read as rad/s: 12 sqrt(5) rad/s = 360 sqrt(5) / pi rpm (by hand)."""
        rpm = put_through("n_c", sp.sqrt(K / M), SI, unit="rpm")
        assert sp.simplify(rpm.value - 360 * sp.sqrt(5) / sp.pi) == 0
        assert rpm.shown == "256.2" and rpm.unit == "rpm"

    def test_default_unit_is_si_of_kind(self):
        """k = m omega^2 with kg and rad/s comes out in N/m, pint working out the unit."""
        w = sp.Symbol("omega")
        sub = put_through("k", M * w**2, {"m": "2 kg", "omega": "10 rad/s"})
        assert (sub.value, sub.unit) == (200, "N/m")

    def test_pure_number(self):
        """The damping ratio has no unit: none is shown."""
        zeta = put_through("zeta", C / (2 * sp.sqrt(K * M)), {"c": "350 N*s/m", **SI})
        assert zeta.unit == "" and zeta.shown == "0.02609"
        assert zeta._repr_latex_().replace(r"\end{aligned}", "").endswith("= 0.02609$$")

    def test_negative_value_in_power(self):
        """A negative value with a unit is bracketed before a power and in a product."""
        sub = put_through("E", K * X**2 / 2, {"k": "12 N/mm", "x": "-3 mm"}, unit="J")
        assert r"\left(-3\;\mathrm{mm}\right)^{2}" in sub.substituted_latex
        assert sub.value == sp.Rational(27, 500)
        assert "(-3 mm)**2" in sub.substituted_text

    def test_symbol_keys_and_extra_values(self):
        """Values may be keyed by Symbol; values the formula does not use are ignored."""
        sub = put_through(sp.Symbol("omega_n"), sp.sqrt(K / M), {K: "180 kN/m", M: "250 kg", "c": "1 N*s/m"})
        assert [s.name for s, _ in sub.inputs] == ["k", "m"]

    def test_plain_numbers(self):
        """Numbers without units are pure numbers."""
        sub = put_through("r", X / 2, {"x": 0.5})
        assert sub.value == sp.Rational(1, 4) and sub.shown == "0.25"

    def test_html_is_mathml_without_script(self, omega_n):
        """Outside check: xml.etree parses the HTML; it holds MathML and no script or address."""
        html = omega_n._repr_html_()
        root = ET.fromstring(html)
        assert root.find(".//math") is not None
        assert "<script" not in html and "http" not in html

    def test_quantity(self, omega_n):
        """The exact value as a pint quantity, not rounded."""
        assert omega_n.quantity.to("rad/s").magnitude == pytest.approx(float(12 * sp.sqrt(5)), rel=1e-15)


class TestErrors:
    """Bad input raises a CalcError whose text names the symbol."""

    def test_wrong_result_unit(self):
        """A unit of the wrong dimension is a UnitsError naming the symbol."""
        with pytest.raises(UnitsError) as info:
            put_through("omega_n", sp.sqrt(K / M), SI, unit="kg")
        assert str(info.value) == (
            "put_through omega_n: the result has the unit 1/s, which cannot be given in kg. "
            "Ask omega_n for a unit of the same dimension as 1/s."
        )

    def test_hertz_is_ambiguous(self):
        """A bare 1/s in Hz would lose 2 pi without a word: refused."""
        with pytest.raises(UnitsError) as info:
            put_through("omega_n", sp.sqrt(K / M), SI, unit="Hz")
        assert str(info.value) == (
            "put_through omega_n: the result is a rate in 1/s, which does not say whether it counts radians "
            "or cycles, so it cannot be given in Hz. Ask omega_n in rad/s or rpm (a rate in 1/s is read as "
            "radians per second); for cycles per second, divide the formula by 2*pi and ask in 1/s."
        )

    def test_unknown_result_unit(self):
        """A unit pint does not know."""
        with pytest.raises(UnitsError) as info:
            put_through("omega_n", sp.sqrt(K / M), SI, unit="radz/s")
        assert str(info.value) == (
            'put_through omega_n: unknown unit "radz/s" for the result. '
            "Write a unit such as rad/s, N/m, mm or kN (unit names are case-sensitive)."
        )

    def test_units_do_not_combine(self):
        """Adding a stiffness to a mass."""
        with pytest.raises(UnitsError) as info:
            put_through("q", K + M, SI)
        assert str(info.value) == (
            "put_through q: the units do not combine in the formula: kg/s**2 meets kg. "
            "Check the units of the values: terms that are added must have the same dimension, "
            "and functions such as exp, sin and log need a pure number."
        )

    def test_missing_value(self):
        """Every symbol needs a value."""
        with pytest.raises(InputsError) as info:
            put_through("zeta", C / (2 * sp.sqrt(K * M)), SI)
        assert str(info.value) == 'put_through zeta: no value for c. Add "c" to the values, with its unit.'

    def test_bad_input_unit(self):
        """A value with an unknown unit: the message names the symbol and the input."""
        with pytest.raises(UnitsError) as info:
            put_through("omega_n", sp.sqrt(K / M), {"k": "180 kN/mm2", "m": "250 kg"})
        assert str(info.value).startswith('put_through omega_n: value of k: unknown unit "kN/mm2"')

    def test_no_finite_value(self):
        """A zero denominator."""
        with pytest.raises(InputsError) as info:
            put_through("q", 1 / K, {"k": "0 N/m"})
        assert str(info.value) == (
            "put_through q: the formula gives no finite real number with these values (zoo). "
            "Check the values for a zero in a denominator or a root of a negative number."
        )

    @pytest.mark.parametrize("sig", [0, 16, 2.5, True])
    def test_bad_sig(self, sig):
        """Significant figures from 1 to 15."""
        with pytest.raises(InputsError) as info:
            put_through("omega_n", sp.sqrt(K / M), SI, sig=sig)
        assert str(info.value) == (
            f"put_through omega_n: cannot show {sig!r} significant figures. Give a whole number from 1 to 15."
        )

    def test_formula_not_sympy(self):
        """A string formula is refused (it would be parsed with eval)."""
        with pytest.raises(CalcError) as info:
            put_through("omega_n", "sqrt(k/m)", SI)
        assert str(info.value) == (
            "put_through omega_n: expected a sympy expression as the formula, got str. "
            "Build the formula from sympy symbols, e.g. sympy.sqrt(k / m)."
        )


class TestHelpers:
    """Rounding and number/unit spelling."""

    @pytest.mark.parametrize(
        ("value", "sig", "expected"),
        [
            (sp.Rational(26825, 1000), 4, "26.83"),  # a decimal half rounds away from zero
            (sp.Rational(-26825, 1000), 4, "-26.83"),
            (sp.Rational(99995, 10000), 4, "10.00"),
            (sp.Rational(1, 3), 2, "0.33"),
            (sp.Integer(0), 4, "0"),
        ],
    )
    def test_round_sig(self, value, sig, expected):
        """Half away from zero (common practice, no source), checked against the decimal module."""
        assert round_sig(value, sig) == Decimal(expected)

    def test_number_latex(self):
        """Exponent form becomes a power of ten."""
        assert number_latex("1.235e-5") == r"1.235 \cdot 10^{-5}"

    def test_unit_latex(self):
        """Products and powers inside one upright group."""
        assert unit_latex("N*s/m") == r"\mathrm{N \cdot s/m}"
        assert unit_latex("m/s**2") == r"\mathrm{m/s^{2}}"
        assert unit_latex("%") == r"\mathrm{\%}"


class TestLongLines:
    """A substitution too long for one printed line is split at its equals signs."""

    def test_long_substitution_on_rows_of_its_own(self):
        m, c, k, w, f0 = sp.symbols("m c k omega F_0")
        values = {"F_0": "900 N", "k": "720 kN/m", "m": "1850 kg", "c": "3650 N*s/m", "omega": "1480 rpm"}
        long = put_through("X", f0 / sp.sqrt((k - m * w**2) ** 2 + (c * w) ** 2), values, unit="mm")
        rows = long.display_rows()
        assert len(rows) == 3 and rows[1].lhs == () and rows[2].rhs[-1].text == "0.02058 mm"
        short = put_through("w", sp.sqrt(k / m), {"k": "720 kN/m", "m": "1850 kg"})
        assert len(short.display_rows()) == 1


class TestCycleUnits:
    """A frequency in Hz or cycles per minute enters a formula as an angular frequency."""

    def test_hz_is_converted_to_rad_per_s(self):
        """e = G / Omega with Omega = 24.6667 Hz equals the value at 1480 rpm (1480/60 Hz):
        1 Hz = 2 pi rad/s and 1 rpm = 2 pi/60 rad/s (definitions, hand arithmetic)."""
        G, W = sp.symbols("G Omega")
        in_hz = put_through("e", G / W, {"G": "6.3 mm/s", "Omega": f"{1480 / 60!r} Hz"}, unit="um")
        in_rpm = put_through("e", G / W, {"G": "6.3 mm/s", "Omega": "1480 rpm"}, unit="um")
        assert float(in_hz.value) == pytest.approx(float(in_rpm.value), rel=1e-12)
        assert float(in_rpm.value) == pytest.approx(6.3e-3 / (1480 * 2 * math.pi / 60) * 1e6, rel=1e-12)
        assert "rad/s" in in_hz.substituted_text

    def test_cpm_is_converted(self):
        W = sp.Symbol("Omega")
        assert float(put_through("w", W, {"Omega": "60 cpm"}, unit="rad/s").value) == pytest.approx(
            2 * math.pi
        )
