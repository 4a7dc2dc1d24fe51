"""Tests of calckit.physics.isolation, calckit.physics.criteria and the additions to excitation and harmonic.

References, written out here (not taken from calckit):
transmissibility T = sqrt(1 + (2 zeta r)^2) / sqrt((1 - r^2)^2 + (2 zeta r)^2) and the isolation
efficiency 1 - T, S. S. Rao, Mechanical Vibrations, 5th ed., sec. 9.10, from memory;
X = |F0 / (k - m w^2 + i c w)|, ibid. sec. 3.4, from memory; e_per = G / Omega, ISO 21940-11:2016,
from memory; F0 = U Omega^2, Rao sec. 3.7, from memory; static deflection m g / k with standard
gravity 9.80665 m/s^2 (a defined constant, 3rd CGPM, 1901) and omega_n = sqrt(g / delta_st).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp

import calckit as ck
from calckit.errors import InputsError, ModelError
from calckit.physics.criteria import (
    ISOLATION_RATIO_BASIS,
    LEAST_ISOLATION_RATIO,
    SEPARATION_BAND,
    SEPARATION_BASIS,
    separation_basis,
    speed_separation,
)
from calckit.physics.excitation import require_one_harmonic, residual_unbalance, unbalance_force
from calckit.physics.harmonic import forced_amplitude
from calckit.physics.isolation import STANDARD_GRAVITY, isolator_results, static_deflection

RPM = 2 * math.pi / 60
P101 = dict(
    machine_mass=1850.0,
    isolator_stiffness=720e3,
    damping_ratio=0.05,
    rotor_mass=140.0,
    balance_grade=6.3,
    running_speed=1480 * RPM,
)


def transmissibility(r: float, zeta: float) -> float:
    """Rao 5th ed. sec. 9.10, from memory."""
    return math.sqrt(1 + (2 * zeta * r) ** 2) / math.sqrt((1 - r * r) ** 2 + (2 * zeta * r) ** 2)


def sig4(x: float) -> float:
    """Four significant figures, as a checker rounds a printed number."""
    return float(f"{x:.4g}")


class TestIsolatorResultsExact:
    """carry=None: every step unrounded, against the closed forms."""

    @pytest.fixture
    def got(self):
        return isolator_results(**P101, carry=None)

    def test_unbalance(self, got):
        """e_per = G / Omega (G in mm/s), U = m_r e_per, F0 = U Omega^2."""
        w = P101["running_speed"]
        assert got.e_per == pytest.approx(6.3e-3 / w, rel=1e-14)
        assert got.U == pytest.approx(140.0 * 6.3e-3 / w, rel=1e-14)
        assert got.F_0 == pytest.approx(140.0 * 6.3e-3 * w, rel=1e-14)

    def test_isolators(self, got):
        """omega_n = sqrt(k / m) = sqrt(g / delta_st); c = 2 zeta sqrt(k m); r = Omega / omega_n."""
        m, k = P101["machine_mass"], P101["isolator_stiffness"]
        assert got.omega_n == pytest.approx(math.sqrt(k / m), rel=1e-15)
        assert got.delta_st == pytest.approx(m * 9.80665 / k, rel=1e-15)
        assert math.sqrt(9.80665 / got.delta_st) == pytest.approx(got.omega_n, rel=1e-14)
        assert got.f_n == pytest.approx(math.sqrt(k / m) / (2 * math.pi), rel=1e-15)
        assert got.c == pytest.approx(2 * 0.05 * math.sqrt(k * m), rel=1e-15)
        assert got.r == pytest.approx(P101["running_speed"] / math.sqrt(k / m), rel=1e-15)

    def test_transmission(self, got):
        """X, F_T = T F0, eta = 1 - T by Rao's closed forms."""
        m, k, w = P101["machine_mass"], P101["isolator_stiffness"], P101["running_speed"]
        c = 2 * 0.05 * math.sqrt(k * m)
        r = w / math.sqrt(k / m)
        assert got.X == pytest.approx(abs(got.F_0 / (k - m * w * w + 1j * c * w)), rel=1e-12)
        assert got.T == pytest.approx(transmissibility(r, 0.05), rel=1e-12)
        assert got.F_T == pytest.approx(transmissibility(r, 0.05) * got.F_0, rel=1e-12)
        assert got.eta == pytest.approx(1 - transmissibility(r, 0.05), rel=1e-12)

    def test_undamped_at_three(self):
        """r = 3, zeta = 0: T = 1 / (r^2 - 1) = 1/8 and eta = 7/8 (Rao sec. 9.10, from memory)."""
        got = isolator_results(
            machine_mass=1000.0,
            isolator_stiffness=1e5,
            damping_ratio=0.0,
            rotor_mass=10.0,
            balance_grade=2.5,
            running_speed=30.0,
            carry=None,
        )
        assert got.r == pytest.approx(3.0, rel=1e-15)
        assert got.T == pytest.approx(1 / 8, rel=1e-12)
        assert got.eta == pytest.approx(7 / 8, rel=1e-12)


class TestIsolatorResultsCarried:
    def test_each_step_takes_the_shown_numbers(self):
        """carry=4: each step takes the earlier results at four significant figures in the units a sheet
        shows them (um, g mm, N, rad/s, N s/m), the chain written out here step by step."""
        got = isolator_results(**P101)
        m, k = P101["machine_mass"], P101["isolator_stiffness"]
        w = sig4(P101["running_speed"])  # the speed converted to rad/s in its own step, carried as shown
        e_um = 6.3 / w * 1000  # mm/s / (rad/s) = mm; in um
        u_gmm = 140.0 * sig4(e_um)
        f0 = sig4(u_gmm) * 1e-6 * w * w
        wn = math.sqrt(k / m)
        c = 2 * 0.05 * math.sqrt(k * m)
        x = sig4(f0) / math.hypot(k - m * w * w, sig4(c) * w)
        f_t = x * math.hypot(k, sig4(c) * w)
        t_ratio = sig4(f_t) / sig4(f0)
        assert got.e_per == pytest.approx(e_um * 1e-6, rel=1e-12)
        assert got.U == pytest.approx(u_gmm * 1e-6, rel=1e-12)
        assert got.F_0 == pytest.approx(f0, rel=1e-12)
        assert got.f_n == pytest.approx(sig4(wn) / (2 * math.pi), rel=1e-12)
        assert got.r == pytest.approx(w / sig4(wn), rel=1e-12)
        assert got.X == pytest.approx(x, rel=1e-12)
        assert got.F_T == pytest.approx(f_t, rel=1e-12)
        assert got.T == pytest.approx(t_ratio, rel=1e-12)
        assert got.eta == pytest.approx(1 - sig4(t_ratio), rel=1e-12)

    def test_as_dict_names(self):
        """The results by the names the machine-on-isolators sheet records them under."""
        assert list(isolator_results(**P101).as_dict()) == [
            "e_per",
            "U",
            "F_0",
            "omega_n",
            "f_n",
            "delta_st",
            "c",
            "r",
            "X",
            "F_T",
            "T",
            "eta",
        ]


class TestSmallForms:
    def test_static_deflection(self):
        """m g / k with standard gravity 9.80665 m/s^2."""
        assert STANDARD_GRAVITY == 9.80665
        assert static_deflection(1850.0, 720e3) == pytest.approx(1850 * 9.80665 / 720e3, rel=1e-15)
        assert static_deflection(1.0, 1.0, g=9.81) == 9.81

    def test_forced_amplitude(self):
        """|F0 / (k - m w^2 + i c w)|, written with complex numbers; undamped resonance is unbounded."""
        assert float(forced_amplitude(900.0, 1850.0, 3650.0, 720e3, 155.0)) == pytest.approx(
            abs(900.0 / (720e3 - 1850.0 * 155.0**2 + 1j * 3650.0 * 155.0)), rel=1e-14
        )
        with pytest.raises(ModelError, match="undamped at exact resonance"):  # a single value: said in words
            forced_amplitude(1.0, 1.0, 0.0, 4.0, 2.0)
        assert forced_amplitude(1.0, 1.0, 0.0, 4.0, np.array([1.0, 2.0]))[1] == math.inf  # a curve: inf

    def test_unbalance_force(self):
        """U Omega^2 equals m_u e omega^2 with U = m_u e (Rao sec. 3.7, from memory), exactly."""
        u = residual_unbalance(sp.Integer(140), sp.Rational(63, 10**6))
        assert u == sp.Rational(140 * 63, 10**6)
        assert unbalance_force(u, sp.Integer(155)) == sp.Rational(140 * 63, 10**6) * 155**2
        assert float(unbalance_force(0.001, 100.0)) == pytest.approx(10.0, rel=1e-15)


class TestCriteria:
    def test_separation(self):
        """|f_op / f_n - 1|: 15 % above, 20 % below (hand-worked)."""
        assert speed_separation(1.15, 1.0) == pytest.approx(0.15, rel=1e-12)
        assert speed_separation(80.0, 100.0) == pytest.approx(0.20, rel=1e-12)

    def test_separation_relative_to_the_operating_speed(self):
        """|f_n / f_op - 1|: a mode at 100 with the speed at 80 is 25 % away measured against the speed,
        20 % against the mode (hand-worked); the choice is printed in the basis; an unknown one refused."""
        assert speed_separation(80.0, 100.0, relative_to="operating speed") == pytest.approx(0.25, rel=1e-12)
        assert separation_basis("operating speed").endswith(
            r"separation measured relative to the operating speed, $|\omega_n / \Omega - 1|$"
        )
        with pytest.raises(InputsError) as err:
            speed_separation(80.0, 100.0, relative_to="speed")
        assert str(err.value) == (
            "relative_to: a separation relative to 'speed' is not defined. "
            "Give one of 'natural frequency', 'operating speed'."
        )

    def test_sheet_check_prints_the_reference(self):
        """Sheet.separation_check measures as asked and says which way in its basis."""
        from calckit.sheet import Sheet

        sheet = Sheet("x", show=False)
        default = sheet.separation_check("a", 80.0, 100.0)
        against_speed = sheet.separation_check("b", 80.0, 100.0, relative_to="operating speed")
        assert default.value == pytest.approx(20.0) and "relative to the natural frequency" in default.basis
        assert against_speed.value == pytest.approx(25.0) and "relative to the operating speed" in against_speed.basis

    def test_constants(self):
        """+/-20 % and r >= 3 (common practice, no source), with their bases in words."""
        assert SEPARATION_BAND == 0.20 and LEAST_ISOLATION_RATIO == 3.0
        assert SEPARATION_BASIS == (
            r"common practice, no source: keep the operating frequency outside about $\pm 20$ % of a natural "
            r"frequency; separation measured relative to the natural frequency, $|\Omega / \omega_n - 1|$"
        )
        assert (
            ISOLATION_RATIO_BASIS == r"common practice, no source: isolation needs $r > \sqrt{2}$, usually $r \ge 3$"
        )


class TestOneHarmonic:
    t = sp.Symbol("t", real=True)
    w, F0 = sp.symbols("w F0", positive=True)

    @pytest.mark.parametrize("text", ["F0*cos(w*t)", "F0*sin(w*t)", "3*F0*cos(w*t) + F0*sin(w*t)"])
    def test_taken(self, text):
        """One harmonic at w, in any phase, is taken."""
        f = sp.sympify(text, locals={"F0": self.F0, "w": self.w, "t": self.t})
        assert require_one_harmonic(f, self.t, self.w, text=text, where="forcing") is None

    @pytest.mark.parametrize(
        "text", ["F0*cos(2*w*t)", "F0*cos(w*t) + F0*cos(2*w*t)", "F0*exp(-t)*cos(w*t)", "F0 + F0*cos(w*t)"]
    )
    def test_refused(self, text):
        """Another frequency, two frequencies, a decaying force or a constant part are refused, naming who
        takes the force."""
        f = sp.sympify(text, locals={"F0": self.F0, "w": self.w, "t": self.t})
        with pytest.raises(InputsError) as caught:
            require_one_harmonic(f, self.t, self.w, text=text, where="forcing", taker="The explorer")
        assert str(caught.value) == (
            f'forcing: "{text}" is not one harmonic at the forcing frequency. The explorer takes a force at '
            "one frequency, for example F0*cos(w*t) or F0*sin(w*t)."
        )


class TestIsolatorRefusal:
    """The refusals the template raises and the explorer shows come from one function."""

    def test_takes_plain_values(self):
        """A machine heavier than its rotor, lightly damped, asked for 95 % isolation: no refusal."""
        assert (
            ck.isolator_refusal(
                machine_mass=1850, rotor_mass=140, damping_ratio=0.05, required_isolation=0.95, shown=("", "")
            )
            is None
        )

    def test_rotor_heavier_than_machine(self):
        """The message names both masses as written and the inputs by the caller's names."""
        error = ck.isolator_refusal(
            machine_mass=100,
            rotor_mass=200,
            damping_ratio=0.05,
            required_isolation=0.9,
            shown=("200 kg", "100 kg"),
            names={"rotor_mass": "rotor", "machine_mass": "machine"},
        )
        assert isinstance(error, ck.InputsError)
        assert str(error) == (
            "rotor: the rotor (200 kg) is heavier than everything on the isolators (100 kg). "
            "Give the rotating parts only in rotor and the whole machine in machine."
        )

    def test_not_underdamped(self):
        """A damping ratio of 1 is refused."""
        error = ck.isolator_refusal(
            machine_mass=100, rotor_mass=10, damping_ratio=1.0, required_isolation=0.9, shown=("", "")
        )
        assert str(error) == (
            "damping_ratio: a damping ratio of 1 is not underdamped. Isolators are lightly damped; give a "
            "damping ratio below 1 (bare steel coil springs about 0.005 to 0.01, elastomer mounts about 0.05)."
        )

    def test_isolation_that_cannot_be_reached(self):
        """100 % isolation is refused."""
        error = ck.isolator_refusal(
            machine_mass=100, rotor_mass=10, damping_ratio=0.05, required_isolation=1.0, shown=("", "")
        )
        assert str(error) == (
            "required_isolation: an isolation efficiency of 100% cannot be reached. Give an efficiency below "
            "100 %, e.g. 90 %."
        )
