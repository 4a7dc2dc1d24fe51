"""Issue 16, item 3: a derivation with numbers states its units, once under its title and on each
step whose numbers carry one.

Outside references: the SI units of mass, viscous damping coefficient and stiffness (kg, N s/m,
N/m; S. S. Rao, Mechanical Vibrations, 5th ed., ch. 1, from memory); unit conversions by
``pint`` (``Quantity.to``); the particular solution of ``m x'' + c x' + k x = F1 t`` by
``sympy.dsolve`` (its coefficient of ``t`` is ``F1 / k``, a velocity).
"""

from __future__ import annotations

import re

import pint
import pytest
import sympy as sp

import calckit as ck
from calckit.errors import CalcError, SheetError
from calckit.render.display import derivation_text
from calckit.render.step_units import MotionUnits
from calckit.sheet.html import sheet_page

t = sp.Symbol("t", real=True)
UREG = pint.UnitRegistry()
M, C, K = 1850, 2400, 44_000_000  # Harrow Creek raw-water pump P-101 on its base, SI
FORCE = 200 * t + 3300 * sp.cos(155 * t)


def _plain(html: str) -> str:
    """The page's text: tags dropped, no-break spaces as spaces."""
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", "", html).replace("\u00a0", " "))


def test_coefficient_units_are_those_of_mass_damping_stiffness():
    u = MotionUnits("m", "s", "N")
    assert (u.coefficient(2), u.coefficient(1), u.coefficient(0)) == ("kg", "N·s/m", "N/m")


@pytest.mark.parametrize(
    ("x", "tu", "f"),
    [("mm", "ms", "kN"), ("m", "s", "kN"), ("in", "s", "lbf")],
)
def test_a_coefficient_unit_is_what_pint_makes_of_force_time_power_over_length(x, tu, f):
    u = MotionUnits(x, tu, f)
    for j in range(3):
        shown = u.coefficient(j).replace("·", "*").replace("²", "**2").replace("³", "**3")
        expected = UREG.Quantity(1, f"{f} * {tu}**{j} / {x}")
        assert UREG.Quantity(1, shown).to(expected.units).magnitude == pytest.approx(1, rel=1e-12)


def test_steps_say_the_units_of_their_numbers():
    der = ck.Oscillator(M, C, K).particular(FORCE, t=t)
    text = derivation_text(der, sig=4, units="SI")
    # the coefficient of t in x_p is F1 / k (sympy.dsolve below): a velocity, so in m/s
    m, c, k, f1 = sp.symbols("m c k F_1", positive=True)
    x = sp.Function("x")
    xp = sp.dsolve(m * x(t).diff(t, 2) + c * x(t).diff(t) + k * x(t) - f1 * t, x(t)).rhs
    steady = xp.subs({s: 0 for s in xp.free_symbols if s.name.startswith("C")})
    assert sp.simplify(sp.expand(steady).coeff(t) - f1 / k) == 0
    assert "A_1,0 in m; A_1,1 in m/s" in " ".join(text.split())
    assert "A_2, B_2 in m" in text
    assert "coefficient of x'' in kg; coefficient of x' in N·s/m; coefficient of x in N/m" in " ".join(
        text.split()
    )
    assert "lambda in 1/s, p(lambda) in N/m" in " ".join(text.split())
    assert "x in m, t in s" in " ".join(text.split())


def test_without_units_the_steps_say_none():
    text = derivation_text(ck.Oscillator(M, C, K).particular(FORCE, t=t), sig=4)
    assert "Units:" not in text


def test_the_sheet_states_units_under_the_title_or_says_they_are_not_stated():
    sheet = ck.Sheet("Harrow Creek P-101 base", show=False)
    sheet.derivation(ck.Oscillator(M, C, K).particular(FORCE, t=t), "With units", units={"x": "m", "f": "N"})
    sheet.derivation(ck.Oscillator(M, C, K).particular(FORCE, t=t), "Without units")
    m, c, k = sp.symbols("m c k", positive=True)
    sheet.derivation(ck.Oscillator(m, c, k).particular(sp.cos(t), t=t), "Symbolic")
    page = _plain(sheet_page(sheet))
    # MathML text: the dots of x'' and x' come out as accents after the x
    assert "Units: x in m, t in s, f in N, λ in 1/s; coefficients of x¨, x˙, x in kg, N·s/m, N/m." in page
    assert page.count("Units: not stated for the numbers of this derivation.") == 1
    symbolic = page.split("Symbolic", 1)[1]
    assert "Units:" not in symbolic


@pytest.mark.parametrize(
    "units",
    [
        "US",
        {"x": "m"},
        {"x": "m", "f": "N", "y": "m"},
        {"x": "m", "t": "m", "f": "N"},
        {"x": "furlongz", "f": "N"},
        3,
    ],
)
def test_bad_units_are_refused_with_what_where_do(units):
    sheet = ck.Sheet("Harrow Creek P-101 base", show=False)
    with pytest.raises(SheetError) as caught:
        sheet.derivation(ck.Oscillator(M, C, K).particular(FORCE, t=t), "Steady state", units=units)
    assert isinstance(caught.value, CalcError)
    assert caught.value.where and caught.value.do


def test_a_two_mass_determinant_is_in_stiffness_squared():
    """det Z(lambda) of a 2 x 2 matrix whose entries are in N/m is in (N/m)^2 (a determinant is a
    sum of products of n entries, one from each row)."""
    mm = ck.MultiMass([[100, 0], [0, 10]], [[0, 0], [0, 0]], [[2000, -500], [-500, 500]])
    text = " ".join(derivation_text(mm.particular([50 * sp.cos(5 * t), 0], t=t), sig=4, units="SI").split())
    assert "lambda in 1/s, p(lambda) in (N/m)²" in text
    assert "mass matrix in kg, damping in N·s/m, stiffness in N/m, forces in N" in text
