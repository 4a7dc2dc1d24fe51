"""Tests of calckit.physics.support: the support's stiffness under a mount, in series with the mount.

References, independent of calckit:
- a finite-element model of the beam and of the portal frame built in tests/beam_elements.py with
  numpy (Euler-Bernoulli elements; exact at the nodes under point loads at nodes), solved with
  numpy.linalg.solve;
- handbook values at midspan and at the tip: ``48 E I / L^3`` (simply supported), ``192 E I / L^3``
  (fixed-fixed), ``3 E I / L^3`` (cantilever), W. C. Young, R. G. Budynas, Roark's Formulas for
  Stress and Strain, 7th ed., Table 8.1 cases 1e, 1d, 1a with a = L/2 (a = L for the cantilever),
  from memory;
- springs in series against a static solve of the two springs (numpy.linalg.solve), and the frequency
  on the flexible support against scipy.linalg.eigh of mount and support with a vanishing support mass;
- the required ratio of about 10: common practice, no source.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy import linalg

import calckit as ck
from calckit.core.units import Q_
from calckit.errors import InputsError, ModelError, UnitsError
from calckit.physics.support import (
    LEAST_SUPPORT_RATIO,
    PORTAL_FORMULAS,
    SERIES_FORMULAS,
    STIFFNESS_FORMULAS,
    SUPPORT_RATIO_BASIS,
    beam_flexibility,
    beam_stiffness,
    portal_sway_stiffness,
    series_stiffness,
    stiffness_formula,
    support_check,
    support_effect,
    support_stiffness,
)
from tests.beam_elements import Beam, portal_sway

# a W-section beam of the Harrow Creek works' filter gallery (invented): E I of 210 GPa x 8360 cm^4
E, I, SPAN = 210e9, 8.36e-5, 3.0
EI = E * I
QE, QI, QL = Q_(210, "GPa"), Q_(8360, "cm**4"), Q_(3, "m")


class TestBeamStiffness:
    """beam_stiffness and STIFFNESS_FORMULAS against a beam's FE static solve and handbook values."""

    @pytest.mark.parametrize("kind", ["simply supported", "fixed-fixed", "cantilever"])
    @pytest.mark.parametrize("fraction", [0.1, 0.3, 0.5, 0.85])
    def test_point_load_anywhere_against_fe(self, kind, fraction):
        """The stiffness under the load, at points along the span, against numpy's FE static solve (60 elements)."""
        a = fraction * SPAN
        got = beam_stiffness(kind, E=QE, I=QI, L=QL, a=Q_(a, "m")).to("N/m").magnitude
        fe = Beam(kind, EI, SPAN, elements=60).stiffness_at(a)  # outside reference: numpy.linalg.solve
        assert got == pytest.approx(fe, rel=1e-8), f"reproduce: beam_stiffness({kind!r}, a={a} m)"

    @pytest.mark.parametrize(
        ("kind", "handbook"),
        [
            ("simply supported", 48 * EI / SPAN**3),  # Roark 7th ed. Table 8.1 case 1e, a = L/2 (from memory)
            ("fixed-fixed", 192 * EI / SPAN**3),  # Roark 7th ed. Table 8.1 case 1d, a = L/2 (from memory)
            ("cantilever", 3 * EI / SPAN**3),  # Roark 7th ed. Table 8.1 case 1a, tip load (from memory)
        ],
    )
    def test_default_position_against_handbook(self, kind, handbook):
        """Without a position the load is at midspan (the cantilever: its tip), as the handbook's cases."""
        got = beam_stiffness(kind, E="210 GPa", I="8360 cm**4", L="3000 mm")
        assert got.to("N/m").magnitude == pytest.approx(handbook, rel=1e-12)

    def test_units_of_the_inputs(self):
        """Inputs in US customary units give the same stiffness as in SI (pint's conversions)."""
        si = beam_stiffness("simply supported", E=QE, I=QI, L=QL, a="1 m")
        us = beam_stiffness(
            "simply supported", E=QE.to("psi"), I=QI.to("in**4"), L=QL.to("ft"), a=Q_(1, "m").to("in")
        )
        assert us.to("lbf/in").magnitude == pytest.approx(si.to("lbf/in").magnitude, rel=1e-12)

    def test_formula_on_a_sheet(self):
        """The formula put through by sheet.calc gives the FE stiffness, shown with its values."""
        sheet = ck.Sheet("support under IC-305's mount", show=False)
        for name, value, kind in (
            ("E", "210 GPa", "pressure"),
            ("I", "8360 cm**4", "second moment of area"),
            ("L", "3 m", "length"),
            ("a", "1.2 m", "length"),
        ):
            sheet.given(name, value, name, name, kind)
        sheet.calc("b", "L - a", unit="m")
        k = sheet.calc("k_s", stiffness_formula("simply supported"), unit="kN/mm")
        fe = Beam("simply supported", EI, SPAN, elements=30).stiffness_at(1.2)  # numpy.linalg.solve
        assert k.to("N/m").magnitude == pytest.approx(fe, rel=1e-3)  # 4 figures shown


class TestFlexibility:
    """beam_flexibility: mounts sharing a beam, against the FE model's deflections under unit loads."""

    @pytest.mark.parametrize("kind", ["simply supported", "fixed-fixed", "cantilever"])
    def test_against_fe(self, kind):
        """Column j is the FE deflection at the mounts under a unit force at mount j (numpy.linalg.solve)."""
        xs = [0.45, 1.2, 2.4, 3.0] if kind == "cantilever" else [0.45, 1.2, 2.4]
        got = beam_flexibility(kind, E=QE, I=QI, L=QL, positions=[Q_(x, "m") for x in xs]).to("m/N").magnitude
        beam = Beam(kind, EI, SPAN, elements=60)
        fe = np.array([[beam.deflection([(1.0, xj)])[2 * beam.node(xi)] for xj in xs] for xi in xs])
        np.testing.assert_allclose(got, fe, rtol=1e-8)

    def test_refusals(self):
        """No positions, and a mount off the beam named by its place in the list."""
        with pytest.raises(InputsError) as excinfo:
            beam_flexibility("fixed-fixed", E=QE, I=QI, L=QL, positions=[])
        assert _message(excinfo) == (
            "positions: expected a list of the mounts' positions along the beam, got []. Give each mount's "
            'distance from the left support (the cantilever\'s fixed end), e.g. ["0.8 m", "2.2 m"].'
        )
        with pytest.raises(InputsError) as excinfo:
            beam_flexibility("fixed-fixed", E=QE, I=QI, L=QL, positions=["1 m", "3 m"])
        assert _message(excinfo) == (
            "positions[2]: the load at 3 m is outside the fixed-fixed beam's span of 3 m. Give the load's "
            "distance from the left support, more than 0 and less than the span 3 m (a load at a support does "
            "not bend the beam)."
        )


class TestPortalSway:
    """portal_sway_stiffness and PORTAL_FORMULAS against a plane-frame FE solve."""

    EIC, H = 210e9 * 2.77e-5, 2.5  # columns of 2770 cm^4, 2.5 m high (invented)

    @pytest.mark.parametrize("bases", ["fixed", "pinned"])
    def test_rigid_beam_against_fe(self, bases):
        """24 E I_c / h^3 (fixed bases) and 6 E I_c / h^3 (pinned) against the frame with its joints held."""
        got = portal_sway_stiffness(bases, E="210 GPa", I_c="2770 cm**4", h="2.5 m").magnitude
        fe = portal_sway(self.EIC, self.H, self.EIC, 4.0, bases, rigid_beam=True)  # numpy.linalg.solve
        assert got == pytest.approx(fe, rel=1e-6)

    @pytest.mark.parametrize("bases", ["fixed", "pinned"])
    @pytest.mark.parametrize("beam_inertia", ["2770 cm**4", "8360 cm**4", "0.1 m**4"])
    def test_flexible_beam_against_fe(self, bases, beam_inertia):
        """The stiffness-ratio form, beams from as flexible as a column to nearly rigid, against the frame FE."""
        ib = Q_(beam_inertia).to("m**4").magnitude
        got = portal_sway_stiffness(
            bases, E="210 GPa", I_c="2770 cm**4", h="2.5 m", I_b=beam_inertia, L="4 m"
        )
        fe = portal_sway(self.EIC, self.H, 210e9 * ib, 4.0, bases)  # numpy.linalg.solve
        assert got.magnitude == pytest.approx(fe, rel=2e-6)

    def test_limits_of_the_ratio_form(self):
        """rho -> oo gives the rigid-beam forms; rho -> 0 gives 6 E I_c / h^3 (fixed) and 0 (pinned): sympy.limit."""
        rho = sp.Symbol("rho", positive=True)
        for bases, kind in (("fixed", "portal, fixed bases"), ("pinned", "portal, pinned bases")):
            assert sp.simplify(sp.limit(PORTAL_FORMULAS[bases], rho, sp.oo) - STIFFNESS_FORMULAS[kind]) == 0
        e, ic, h = sp.symbols("E I_c h", positive=True)
        assert sp.simplify(sp.limit(PORTAL_FORMULAS["fixed"], rho, 0) - 6 * e * ic / h**3) == 0
        assert sp.limit(PORTAL_FORMULAS["pinned"], rho, 0) == 0


class TestAnyKind:
    """support_stiffness: any kind by its name in an inputs file, against the FE models."""

    def test_beam_and_portal_by_name(self):
        """A fixed-fixed beam at 0.3 L and a pinned portal with a flexible beam (numpy.linalg.solve)."""
        beam = support_stiffness("fixed-fixed", E="210 GPa", I="8360 cm**4", L="3 m", a="0.9 m")
        assert beam.magnitude == pytest.approx(
            Beam("fixed-fixed", EI, SPAN, elements=30).stiffness_at(0.9), rel=1e-8
        )
        portal = support_stiffness(
            "portal, pinned bases", E="210 GPa", I_c="2770 cm**4", h="2.5 m", I_b="8360 cm**4", L="4 m"
        )
        fe = portal_sway(210e9 * 2.77e-5, 2.5, EI, 4.0, "pinned")  # numpy.linalg.solve
        assert portal.magnitude == pytest.approx(fe, rel=2e-6)

    def test_missing_values(self):
        """A beam without its I, a portal without its columns' height."""
        with pytest.raises(InputsError) as excinfo:
            support_stiffness("cantilever", E="210 GPa", L="1 m", names={"I": "bracket_inertia"})
        assert _message(excinfo) == (
            "bracket_inertia: a cantilever beam's stiffness needs I. Give the beam's modulus E, second moment "
            "of area I, span L and the load's position a."
        )
        with pytest.raises(InputsError) as excinfo:
            support_stiffness("portal, fixed bases", E="210 GPa", I_c="2770 cm**4")
        assert _message(excinfo) == (
            "h: a portal's sway stiffness needs h. Give the columns' second moment of area I_c and height h "
            "(and the beam's I_b and span L)."
        )


class TestSeries:
    """series_stiffness and support_effect against a static solve and scipy.linalg.eigh."""

    def test_two_springs_against_a_static_solve(self):
        """Ground - support - mount - load: the force over the top's deflection (numpy.linalg.solve)."""
        ks, km = 9.4e6, 1.15e6
        k = np.array([[ks + km, -km], [-km, km]])
        top = np.linalg.solve(k, [0.0, 1.0])[1]
        assert series_stiffness(Q_(ks, "N/m"), Q_(km, "N/m")).magnitude == pytest.approx(1 / top, rel=1e-12)

    def test_frequency_on_the_flexible_support_against_eigh(self):
        """A 450 kg share on its mount and a support of vanishing mass: the lowest frequency (scipy.linalg.eigh)."""
        m, km, ks = 450.0, 0.9e6, 9.0e6
        mass = np.diag([1e-9 * m, m])
        stiff = np.array([[ks + km, -km], [-km, km]])
        lowest = math.sqrt(linalg.eigh(stiff, mass, eigvals_only=True)[0])
        got = support_effect("450 kg", "0.9 kN/mm", "9 kN/mm")
        assert got.omega_flexible.to("rad/s").magnitude == pytest.approx(lowest, rel=1e-7)
        assert got.omega_rigid.to("rad/s").magnitude == pytest.approx(math.sqrt(km / m), rel=1e-12)
        assert got.drop == pytest.approx(1 - lowest / math.sqrt(km / m), rel=1e-6)
        assert got.ratio == pytest.approx(10.0)

    def test_series_formula_kept_as_written(self):
        """The sheet shows the sum of reciprocals, not sympy's folded fraction."""
        assert str(SERIES_FORMULAS["k_e"]) == "1/(1/k_s + 1/k_m)"


class TestCheck:
    """support_check: the ratio against the inputs file's ratio or the default with its basis."""

    def test_default_ratio_and_basis(self):
        """The default is about 10, common practice, no source, and says so."""
        got = support_check("9.9 kN/mm", "1 kN/mm")
        assert (got.required, got.met) == (LEAST_SUPPORT_RATIO, False)
        assert got.basis == SUPPORT_RATIO_BASIS and got.basis.startswith("common practice, no source")

    def test_ratio_from_an_inputs_file(self):
        """A ratio and basis given by a specification replace the default; the check flips with it."""
        got = support_check("9.9 kN/mm", "1 kN/mm", 5, basis="HC-SPEC-07 cl. 4.2 (invented)")
        assert (round(got.ratio, 12), got.met, got.basis) == (9.9, True, "HC-SPEC-07 cl. 4.2 (invented)")


def _message(excinfo) -> str:
    return str(excinfo.value)


class TestRefusals:
    """Bad input: each message pinned in full."""

    @pytest.mark.parametrize(
        ("changes", "message"),
        [
            (
                {"E": "0 GPa"},
                "E: must be greater than zero, got 0 GPa. Check the value and its sign in the inputs.",
            ),
            (
                {"I": "-8360 cm**4"},
                "I: must be greater than zero, got -8360 cm⁴. Check the value and its sign in the inputs.",
            ),
            (
                {"L": "0 m"},
                "L: must be greater than zero, got 0 m. Check the value and its sign in the inputs.",
            ),
            (
                {"a": "3.2 m"},
                "a: the load at 3.2 m is outside the simply supported beam's span of 3 m. Give the load's "
                "distance from the left support, more than 0 and less than the span 3 m (a load at a support "
                "does not bend the beam).",
            ),
            (
                {"a": "0 m"},
                "a: the load at 0 m is outside the simply supported beam's span of 3 m. Give the load's "
                "distance from the left support, more than 0 and less than the span 3 m (a load at a support "
                "does not bend the beam).",
            ),
        ],
    )
    def test_bad_beam_values(self, changes, message):
        """Non-positive E, I, L and a load off the span are InputsErrors naming the input."""
        values = {"E": "210 GPa", "I": "8360 cm**4", "L": "3 m", "a": "1 m", **changes}
        with pytest.raises(InputsError) as excinfo:
            beam_stiffness("simply supported", **values)
        assert _message(excinfo) == message

    def test_cantilever_load_beyond_the_tip(self):
        """A cantilever takes a load up to its tip, not beyond."""
        with pytest.raises(InputsError) as excinfo:
            beam_stiffness(
                "cantilever", E="210 GPa", I="8360 cm**4", L="1.2 m", a="1.5 m", names={"a": "mount_offset"}
            )
        assert _message(excinfo) == (
            "mount_offset: the load at 1.5 m is outside the cantilever beam's span of 1.2 m. Give the load's "
            "distance from the fixed end, more than 0 and at most the length 1.2 m."
        )

    def test_unknown_kind(self):
        """A kind misspelt is named with the one it is close to and the list."""
        with pytest.raises(InputsError) as excinfo:
            beam_stiffness(
                "simply-supported", E="210 GPa", I="8360 cm**4", L="3 m", names={"kind": "support_kind"}
            )
        assert _message(excinfo) == (
            "support_kind: 'simply-supported' is not a beam kind calckit knows. Did you mean \"simply supported\"? "
            "Give one of 'simply supported', 'fixed-fixed', 'cantilever'."
        )
        with pytest.raises(InputsError) as excinfo:
            stiffness_formula("truss")
        assert _message(excinfo) == (
            "support kind: 'truss' is not a support kind calckit knows. Give one of 'simply supported', "
            "'fixed-fixed', 'cantilever', 'portal, fixed bases', 'portal, pinned bases'."
        )

    def test_second_moment_in_the_wrong_unit(self):
        """A length given for I is a UnitsError that says what I is."""
        with pytest.raises(UnitsError) as excinfo:
            beam_stiffness("fixed-fixed", E="210 GPa", I="8360 mm", L="3 m")
        assert _message(excinfo) == (
            "I: expected a second moment of area (mm**4, cm**4, in**4, ...), got 8360 mm, which is a length. "
            'Give a second moment of area, for example "8360 cm**4".'
        )

    def test_portal_refusals(self):
        """Unknown bases, and a beam's I_b without its span."""
        with pytest.raises(InputsError) as excinfo:
            portal_sway_stiffness("hinged", E="210 GPa", I_c="2770 cm**4", h="2.5 m")
        assert _message(excinfo) == (
            "bases: 'hinged' is not a kind of portal base calckit knows. Did you mean \"pinned\"? Give one of "
            "'fixed', 'pinned'."
        )
        with pytest.raises(InputsError) as excinfo:
            portal_sway_stiffness("fixed", E="210 GPa", I_c="2770 cm**4", h="2.5 m", I_b="8360 cm**4")
        assert _message(excinfo) == (
            "L: a portal's beam stiffness needs the beam's span. Give the span L with the beam's second moment "
            "of area I_b, or leave I_b out for a rigid beam."
        )

    def test_series_and_check_refusals(self):
        """No springs is a ModelError; a required ratio below 1 or a stiffness of 0 an InputsError."""
        with pytest.raises(ModelError) as excinfo:
            series_stiffness()
        assert _message(excinfo) == "series_stiffness: no springs were given. Give at least one stiffness."
        with pytest.raises(InputsError) as excinfo:
            support_check("9 kN/mm", "1 kN/mm", 0.5, names={"required_ratio": "support_ratio"})
        assert _message(excinfo) == (
            "support_ratio: a required stiffness ratio of 0.5 lets the support be softer than the mount. Give "
            "the least ratio k_s / k_m the support must reach, at least 1 (common practice about 10)."
        )
        with pytest.raises(InputsError) as excinfo:
            support_effect("450 kg", "0 kN/mm", "9 kN/mm")
        assert _message(excinfo) == (
            "k_mount: must be greater than zero, got 0 kN/mm. Check the value and its sign in the inputs."
        )

    def test_values_beyond_a_float(self):
        """Inputs whose result overflows or underflows a float are refused, naming the inputs, never inf or 0."""
        with pytest.raises(InputsError) as excinfo:
            beam_stiffness("simply supported", E="1e300 GPa", I="1e10 m**4", L="1e-100 m")
        assert _message(excinfo) == (
            "E, I, L, a: the simply supported beam's stiffness comes out as inf N/m with these inputs, beyond "
            "what a float holds (about 1e-308 to 1.8e308). Check the inputs' units and exponents for a slip (a "
            "modulus typed in Pa for GPa, an exponent typed twice)."
        )
        with pytest.raises(InputsError) as excinfo:
            support_check("1e300 N/m", "1e-300 N/m", names={"k_support": "k_beam", "k_mount": "k_iso"})
        assert _message(excinfo).startswith(
            "k_beam, k_iso: the ratio k_s / k_m comes out as inf with these inputs"
        )


def test_examples_in_the_docstrings():
    """The module's docstring examples hold (doctest), so the examples a template copies stay true."""
    import doctest

    import calckit.physics.support as module

    assert doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE).failed == 0
