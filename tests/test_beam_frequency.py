"""Tests of calckit.physics.beam_frequency: equipment on a beam with mass, by Rayleigh and Dunkerley.

References, independent of calckit:
- a finite-element model of the beam built in tests/beam_elements.py with numpy (Euler-Bernoulli
  elements, consistent mass, 60 elements, the equipment as point masses at nodes), its fundamental
  by scipy.linalg.eigh: Rayleigh's quotient is an upper estimate of it, Dunkerley's a lower one;
- the effective mass fractions 17/35 (simply supported, midspan), 13/35 (fixed-fixed, midspan) and
  33/140 (cantilever, tip): W. T. Thomson, Theory of Vibration with Applications, 5th ed., ch. 2,
  from memory; off midspan, the same quotient from the FE model's static deflection and its consistent
  mass matrix (u^T M u is the exact integral of m' y^2 for the cubic shape the elements reproduce);
- the beam alone: (beta L)^2 = pi^2, 22.373, 3.5160 (R. D. Blevins, Formulas for Natural Frequency
  and Mode Shape, Table 8-1, from memory) and the FE model.
"""

from __future__ import annotations

import math

import pytest

import calckit as ck
from calckit.core.units import Q_
from calckit.errors import InputsError
from calckit.physics.beam_frequency import (
    BEAM_FREQUENCY_FORMULAS,
    MOST_MASSES,
    beam_alone_frequency,
    beam_with_mass_frequency,
    dunkerley_estimate,
    dunkerley_formula,
    effective_mass_fraction,
    rayleigh_frequency,
)
from tests.beam_elements import Beam

# a beam of the Harrow Creek works' dosing platform (invented): 210 GPa, 8360 cm^4, 3 m, 127 kg
E, I, SPAN, BEAM_MASS = 210e9, 8.36e-5, 3.0, 127.0
BEAM = {"E": "210 GPa", "I": "8360 cm**4", "L": "3 m", "beam_mass": "127 kg"}
KINDS = ["simply supported", "fixed-fixed", "cantilever"]


def _fe(kind: str, masses=()) -> float:
    """The FE fundamental, rad/s (scipy.linalg.eigh), masses as (kg, m) pairs at nodes."""
    return Beam(kind, E * I, SPAN, BEAM_MASS / SPAN, elements=60).fundamental(list(masses))


class TestEffectiveMass:
    """effective_mass_fraction against the textbook fractions and the FE model's quotient."""

    @pytest.mark.parametrize(
        ("kind", "fraction"),
        [
            ("simply supported", 17 / 35),  # Thomson 5th ed. ch. 2, from memory
            ("fixed-fixed", 13 / 35),  # from memory
            ("cantilever", 33 / 140),  # Thomson 5th ed. ch. 2, from memory
        ],
    )
    def test_textbook_fractions(self, kind, fraction):
        """At midspan (the cantilever: its tip)."""
        assert effective_mass_fraction(kind, L="3 m") == pytest.approx(fraction, rel=1e-12)

    @pytest.mark.parametrize("kind", KINDS)
    @pytest.mark.parametrize("fraction", [0.2, 0.35, 0.7])
    def test_off_midspan_against_fe(self, kind, fraction):
        """u^T M u / (m_b u_a^2) of the FE static deflection under a load at a (numpy.linalg.solve)."""
        a = fraction * SPAN
        beam = Beam(kind, E * I, SPAN, BEAM_MASS / SPAN, elements=60)
        u = beam.deflection([(1.0, a)])
        fe = float(u @ beam.M @ u) / (BEAM_MASS * u[2 * beam.node(a)] ** 2)
        assert effective_mass_fraction(kind, L=Q_(SPAN, "m"), a=Q_(a, "m")) == pytest.approx(fe, rel=1e-9)


class TestOneMass:
    """beam_with_mass_frequency (Rayleigh, one mass) against the FE fundamental."""

    # (kind, equipment kg, position / span, how far above the FE fundamental the estimate may be):
    # close for equipment as heavy as the beam or more at midspan (the cantilever's tip); far off for a
    # light mass off midspan, where the beam's own mass moves in a shape the point load does not give
    # (measured against the FE model; the bounds are the measured errors rounded up)
    ONE_MASS = [
        ("simply supported", 900.0, 0.5, 1e-4),
        ("simply supported", 127.0, 0.5, 1e-3),
        ("simply supported", 2500.0, 0.85, 1e-3),
        ("simply supported", 30.0, 0.2, 0.07),
        ("fixed-fixed", 900.0, 0.5, 1e-4),
        ("fixed-fixed", 127.0, 0.5, 2e-3),
        ("fixed-fixed", 450.0, 0.3, 3e-3),
        ("fixed-fixed", 30.0, 0.2, 0.21),
        ("cantilever", 127.0, 1.0, 1e-3),
        ("cantilever", 900.0, 0.5, 3e-3),
        ("cantilever", 450.0, 0.3, 0.11),
        ("cantilever", 30.0, 0.2, 0.41),
    ]

    @pytest.mark.parametrize(("kind", "mass", "fraction", "within"), ONE_MASS)
    def test_upper_estimate_against_fe(self, kind, mass, fraction, within):
        """The effective-mass form is at or above the FE fundamental (Rayleigh's bound), by at most *within*."""
        a = fraction * SPAN
        got = beam_with_mass_frequency(kind, **BEAM, mass=Q_(mass, "kg"), a=Q_(a, "m")).omega_n.magnitude
        fe = _fe(kind, [(mass, a)])
        assert fe * (1 - 1e-8) <= got <= fe * (1 + within), (
            f"reproduce: beam_with_mass_frequency({kind!r}, {mass}, {a})"
        )

    @pytest.mark.parametrize(("kind", "mass", "fraction", "within"), ONE_MASS)
    def test_shape_under_every_weight_against_fe(self, kind, mass, fraction, within):
        """rayleigh_frequency, whose shape carries the beam's own weight too, stays within 3 % above the FE
        fundamental in every one of those cases."""
        a = fraction * SPAN
        got = rayleigh_frequency(kind, **BEAM, masses=[(Q_(mass, "kg"), Q_(a, "m"))]).magnitude
        fe = _fe(kind, [(mass, a)])
        assert fe * (1 - 1e-8) <= got <= fe * 1.03, f"reproduce: rayleigh_frequency({kind!r}, {mass}, {a})"

    def test_heavy_equipment_nearly_exact(self):
        """Equipment 20 times the beam's mass at midspan: Rayleigh within 0.05 % of the FE fundamental."""
        got = beam_with_mass_frequency("simply supported", **BEAM, mass="2540 kg").omega_n.magnitude
        assert got == pytest.approx(_fe("simply supported", [(2540.0, 1.5)]), rel=5e-4)

    def test_formulas_on_a_sheet(self):
        """m_e = M + mu m_b and omega_n = sqrt(k / m_e) put through by sheet.calc give the function's numbers."""
        got = beam_with_mass_frequency("simply supported", **BEAM, mass="900 kg")
        sheet = ck.Sheet("IC-307 on its platform beam", show=False)
        sheet.given("M", "900 kg", "M", "equipment", "mass")
        sheet.given("m_b", "127 kg", "m_b", "beam", "mass")
        sheet.result("mu", round(got.mu, 4), working=("derivation", "Rayleigh's quotient, static shape"))
        sheet.result(
            "k", Q_(round(got.k.to("kN/mm").magnitude, 2), "kN/mm"), working=("formula", "48 E I/L^3")
        )
        sheet.calc("m_e", BEAM_FREQUENCY_FORMULAS["m_e"], unit="kg")
        omega = sheet.calc(
            "omega_n", BEAM_FREQUENCY_FORMULAS["omega_n"], values={"m_e": sheet.carried("m_e")}, unit="rad/s"
        )
        assert omega.to("rad/s").magnitude == pytest.approx(got.omega_n.magnitude, rel=1e-3)


class TestSeveralMasses:
    """rayleigh_frequency (shape under every weight) and dunkerley_estimate bracket the FE fundamental."""

    CASES = {
        "simply supported": [(900.0, 0.6), (250.0, 2.1), (400.0, 2.55)],
        "fixed-fixed": [(300.0, 0.75), (300.0, 2.25)],
        "cantilever": [(150.0, 0.6), (90.0, 3.0)],
    }

    @pytest.mark.parametrize("kind", KINDS)
    def test_bracket_the_fe_fundamental(self, kind):
        """Dunkerley <= FE <= Rayleigh, Rayleigh within 1 % and Dunkerley within 15 % (measured: 12 % low for
        two masses as light as the beam on a fixed-fixed one)."""
        masses = self.CASES[kind]
        pairs = [(Q_(m, "kg"), Q_(x, "m")) for m, x in masses]
        high = rayleigh_frequency(kind, **BEAM, masses=pairs).to("rad/s").magnitude
        low = dunkerley_estimate(kind, **BEAM, masses=pairs).omega.to("rad/s").magnitude
        fe = _fe(kind, masses)
        assert fe * 0.85 <= low <= fe <= high * (1 + 1e-8) and high <= fe * 1.01, (low, fe, high)

    @pytest.mark.parametrize("kind", KINDS)
    def test_beam_alone(self, kind):
        """No masses: Rayleigh with the shape under the beam's own weight is within 0.5 % above the FE
        fundamental, and the closed form beam_alone_frequency equals it to 1e-6 (Blevins Table 8-1)."""
        fe = _fe(kind)
        assert fe * (1 - 1e-8) <= rayleigh_frequency(kind, **BEAM, masses=[]).magnitude <= fe * 1.005
        assert beam_alone_frequency(kind, **BEAM).magnitude == pytest.approx(fe, rel=1e-6)

    @pytest.mark.parametrize(
        ("kind", "beta_l_squared"),
        [("simply supported", math.pi**2), ("fixed-fixed", 22.3733), ("cantilever", 3.5160)],
    )
    def test_beam_alone_handbook(self, kind, beta_l_squared):
        """(beta L)^2 of the fundamental: Blevins, Formulas for Natural Frequency and Mode Shape, Table 8-1
        (from memory, to the figures given)."""
        got = beam_alone_frequency(kind, **BEAM).magnitude
        assert got / math.sqrt(E * I / (BEAM_MASS / SPAN * SPAN**4)) == pytest.approx(
            beta_l_squared, abs=1e-4
        )

    def test_dunkerley_formula(self):
        """The formula for a sheet: 1 / omega^2 is the sum of the parts' 1 / omega_i^2 (sympy)."""
        w = dunkerley_formula(2)
        parts = sorted(w.free_symbols, key=str)
        assert [s.name for s in parts] == ["omega_0", "omega_1", "omega_2"]
        assert (1 / w**2 - sum(s**-2 for s in parts)).simplify() == 0


class TestRefusals:
    """Bad input: each message pinned in full."""

    def test_masses_not_pairs(self):
        """A bare mass, or a mass without its position."""
        with pytest.raises(InputsError) as excinfo:
            rayleigh_frequency("simply supported", **BEAM, masses="900 kg")
        assert str(excinfo.value) == (
            "masses: expected a list of (mass, position) pairs, got str. Give the masses as pairs, e.g. "
            '[("900 kg", "1.2 m"), ("250 kg", "2.1 m")].'
        )
        with pytest.raises(InputsError) as excinfo:
            dunkerley_estimate("simply supported", **BEAM, masses=[("900 kg", "1 m"), ("250 kg",)])
        assert str(excinfo.value) == (
            "masses: item 2 is not a (mass, position) pair: ('250 kg',). Give each mass with its position, "
            'e.g. ("900 kg", "1.2 m").'
        )

    def test_mass_off_the_span(self):
        """A mass beyond the span is named by its place in the list."""
        with pytest.raises(InputsError) as excinfo:
            rayleigh_frequency("fixed-fixed", **BEAM, masses=[("900 kg", "1 m"), ("250 kg", "3.5 m")])
        assert str(excinfo.value) == (
            "masses[2] position: the load at 3.5 m is outside the fixed-fixed beam's span of 3 m. Give the "
            "load's distance from the left support, more than 0 and less than the span 3 m (a load at a "
            "support does not bend the beam)."
        )

    def test_non_positive_mass(self):
        """A mass of 0 kg on the beam, or a beam of no mass."""
        with pytest.raises(InputsError) as excinfo:
            beam_with_mass_frequency("cantilever", **BEAM, mass="0 kg")
        assert (
            str(excinfo.value)
            == "mass: must be greater than zero, got 0 kg. Check the value and its sign in the inputs."
        )
        with pytest.raises(InputsError) as excinfo:
            beam_alone_frequency(
                "cantilever", **{**BEAM, "beam_mass": "-1 kg"}, names={"beam_mass": "beam_mass_total"}
            )
        assert str(excinfo.value) == (
            "beam_mass_total: must be greater than zero, got -1 kg. Check the value and its sign in the inputs."
        )

    def test_too_many_masses(self):
        """More point masses than MOST_MASSES are refused before any work (bounded time)."""
        with pytest.raises(InputsError) as excinfo:
            rayleigh_frequency("cantilever", **BEAM, masses=[("1 kg", "1 m")] * (MOST_MASSES + 1))
        assert str(excinfo.value) == (
            "masses: 101 point masses are more than the 100 a beam takes here. Model the equipment as fewer "
            "masses (each at its centre of gravity), or spread the small ones into the beam's mass."
        )
        with pytest.raises(InputsError) as excinfo:
            dunkerley_formula(10**6)
        assert str(excinfo.value) == (
            "dunkerley_formula: expected a number of masses from 0 to 100, got 1000000. Give how many masses "
            "the beam carries, besides its own."
        )

    def test_values_beyond_a_float(self):
        """A span so long the frequency underflows to 0 is refused, not returned as 0 rad/s."""
        with pytest.raises(InputsError) as excinfo:
            beam_alone_frequency("fixed-fixed", **{**BEAM, "L": "1e100 m"})
        assert str(excinfo.value).startswith("E, I, L, beam_mass: the beam's own fundamental comes out as")


def test_examples_in_the_docstrings():
    """The module's docstring examples hold (doctest), so the examples a template copies stay true."""
    import doctest

    import calckit.physics.beam_frequency as module

    assert doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE).failed == 0
