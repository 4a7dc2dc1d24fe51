"""Hysteretic (structural) damping, and the isolator chain's maximum service speed and damping model.

Outside references, written out here (not taken from calckit):
* the complex-stiffness equation m x'' + k (1 + i eta) x = F0 e^{i w t}, solved for X with numpy
  (numpy.linalg.solve of the 1 x 1 complex system, and of a 2 x 2 real system for the cos/sin parts);
* the closed forms X k / F0 = 1 / sqrt((1 - r^2)^2 + eta^2), phase atan(eta / (1 - r^2)), and
  T = sqrt(1 + eta^2) / sqrt((1 - r^2)^2 + eta^2): S. S. Rao, Mechanical Vibrations, 5th ed.,
  sec. 2.7 and 3.9 (hysteretic damping), from memory; Harris' Shock and Vibration Handbook, 5th ed.,
  ch. 30 (isolators with structural damping), from memory;
* the viscous transmissibility sqrt(1 + (2 zeta r)^2) / sqrt((1 - r^2)^2 + (2 zeta r)^2), Rao sec. 9.10,
  from memory;
* e_per = G / Omega_max, ISO 21940-11:2016 (the grade is referred to the maximum service speed), from memory.
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest
import sympy as sp

import calckit as ck
from calckit.errors import CalcError, InputsError, ModelError
from calckit.physics.hysteretic import (
    damping_model,
    equivalent_damping_ratio,
    equivalent_viscous_damping,
    hysteretic_magnification,
    hysteretic_phase,
    hysteretic_transmissibility,
    hysteretic_transmissibility_phase,
)
from calckit.physics.isolation import isolator_refusal, isolator_results, isolator_run_up

M, K = 1850.0, 720e3  # the P-101 machine on its mounts (Harrow Creek)
WN = math.sqrt(K / M)
RATIOS = np.array([0.0, 0.3, 0.9, 1.0, 1.1, 2.0, 4.0, 7.5, 20.0])


def complex_solve(w: float, eta: float, F0: float = 1.0) -> complex:
    """X of m x'' + k (1 + i eta) x = F0 e^{iwt} by numpy.linalg.solve (1 x 1 complex system)."""
    return complex(np.linalg.solve(np.array([[K * (1 + 1j * eta) - M * w * w]]), np.array([F0 + 0j]))[0])


class TestClosedForms:
    @pytest.mark.parametrize("eta", [0.02, 0.1, 0.25])
    def test_against_complex_solve(self, eta):
        """|X| k / F0, the lag of x behind f, |k (1 + i eta) X| / F0 and its lag, from numpy."""
        for r in RATIOS:
            X = complex_solve(r * WN, eta)
            FT = K * (1 + 1j * eta) * X
            assert float(hysteretic_magnification(r, eta)) == pytest.approx(abs(X) * K, rel=1e-12)
            assert float(hysteretic_phase(r, eta)) == pytest.approx(-cmath.phase(X), rel=1e-12, abs=1e-15)
            assert float(hysteretic_transmissibility(r, eta)) == pytest.approx(abs(FT), rel=1e-12)
            assert float(hysteretic_transmissibility_phase(r, eta)) == pytest.approx(
                -cmath.phase(FT), rel=1e-12, abs=1e-15
            )

    def test_textbook_forms(self):
        """Rao sec. 3.9 (from memory): peak 1/eta at r = 1; static 1/sqrt(1 + eta^2)."""
        eta = 0.1
        assert float(hysteretic_magnification(1.0, eta)) == pytest.approx(1 / eta, rel=1e-14)
        assert float(hysteretic_magnification(0.0, eta)) == pytest.approx(
            1 / math.sqrt(1 + eta**2), rel=1e-14
        )
        assert float(hysteretic_phase(0.0, eta)) == pytest.approx(math.atan(eta), rel=1e-14)
        assert float(hysteretic_transmissibility(math.sqrt(2), eta)) == pytest.approx(1.0, rel=1e-14)

    def test_high_ratio_differs_from_viscous(self):
        """Far above resonance T_h ~ sqrt(1 + eta^2) / r^2 against the viscous 2 zeta / r with zeta = eta/2
        (the same resonant peak): at r = 20 and eta = 0.1 the viscous model transmits about 2x more."""
        eta, r = 0.1, 20.0
        zeta = eta / 2
        t_h = float(hysteretic_transmissibility(r, eta))
        t_v = math.sqrt(1 + (2 * zeta * r) ** 2) / math.sqrt((1 - r * r) ** 2 + (2 * zeta * r) ** 2)
        assert t_h == pytest.approx(math.sqrt(1 + eta**2) / r**2, rel=5e-3)
        assert t_v == pytest.approx(math.sqrt(1 + (2 * zeta * r) ** 2) / r**2, rel=5e-3)
        assert t_v / t_h == pytest.approx(math.sqrt(1 + (eta * r) ** 2) / math.sqrt(1 + eta**2), rel=5e-3)
        assert t_v / t_h > 2

    def test_exact_path(self):
        eta = sp.Rational(1, 10)
        assert hysteretic_magnification(sp.Integer(1), eta) == 10
        assert hysteretic_transmissibility(sp.Integer(3), sp.Integer(0)) == sp.Rational(1, 8)
        r = sp.Symbol("r", positive=True)
        got = hysteretic_transmissibility(r, eta)
        assert sp.simplify(got**2 - (1 + eta**2) / ((1 - r**2) ** 2 + eta**2)) == 0

    def test_equivalent_viscous(self):
        """At one frequency w the complex stiffness equals k + i c w with c = eta k / w (Rao sec. 2.7, from
        memory): the viscous amplitude with that c, by numpy.linalg.solve of the cos/sin system, is the same."""
        eta, w, F0 = 0.12, 1.7 * WN, 2500.0
        c = float(equivalent_viscous_damping(eta, K, w))
        # x = A cos wt + B sin wt in m x'' + c x' + k x = F0 cos wt
        A, B = np.linalg.solve(
            np.array([[K - M * w * w, c * w], [-c * w, K - M * w * w]]), np.array([F0, 0.0])
        )
        assert math.hypot(A, B) == pytest.approx(abs(complex_solve(w, eta, F0)), rel=1e-12)
        assert equivalent_damping_ratio(0.1) == pytest.approx(0.05)

    def test_refusals(self):
        with pytest.raises(ModelError) as info:
            hysteretic_transmissibility(2.0, -0.1)
        assert "loss factor is negative" in str(info.value)
        with pytest.raises(ModelError):
            hysteretic_magnification(1.0, 0 * sp.Integer(1))  # exact resonance without loss
        with pytest.raises(ModelError) as info:
            damping_model("coulomb")
        assert '"hysteretic"' in info.value.do
        assert damping_model(" Viscous") == "viscous"


P101 = dict(
    machine_mass=M,
    isolator_stiffness=K,
    damping_ratio=0.01,
    rotor_mass=140.0,
    balance_grade=6.3,
    running_speed=1480 * 2 * math.pi / 60,
)


class TestIsolatorChain:
    def test_hysteretic_at_running_speed(self):
        """X and F_T of the chain with damping_model='hysteretic' against the complex solve."""
        eta = 0.1
        got = isolator_results(**P101, damping_model="hysteretic", loss_factor=eta, carry=None)
        w = P101["running_speed"]
        F0 = 140.0 * 6.3e-3 / w * w * w  # U Omega^2, U = m_r G / Omega (ISO 21940-11, from memory)
        X = complex_solve(w, eta, F0)
        assert got.X == pytest.approx(abs(X), rel=1e-12)
        assert got.F_T == pytest.approx(abs(K * (1 + 1j * eta) * X), rel=1e-12)
        assert got.T == pytest.approx(
            math.sqrt(1 + eta**2) / math.sqrt((1 - got.r**2) ** 2 + eta**2), rel=1e-12
        )
        assert got.c == pytest.approx(eta * K / w, rel=1e-14)

    def test_hysteretic_needs_loss_factor(self):
        with pytest.raises(InputsError) as info:
            isolator_results(**P101, damping_model="hysteretic")
        assert info.value.where == "loss_factor"

    def test_maximum_service_speed(self):
        """e_per = G / Omega_max; the force stays U Omega^2 at running speed."""
        w, w_max = P101["running_speed"], 1600 * 2 * math.pi / 60
        got = isolator_results(**P101, maximum_service_speed=w_max, carry=None)
        assert got.e_per == pytest.approx(6.3e-3 / w_max, rel=1e-14)
        assert got.F_0 == pytest.approx(140.0 * 6.3e-3 / w_max * w * w, rel=1e-14)
        same = isolator_results(**P101, carry=None)
        assert same.e_per == pytest.approx(6.3e-3 / w, rel=1e-14)
        run = isolator_run_up(**P101, run_up_time=4.0, maximum_service_speed=w_max)
        run_at_w = isolator_run_up(**P101, run_up_time=4.0)
        assert run.peak == pytest.approx(run_at_w.peak * w / w_max, rel=1e-9)  # linear in U

    def test_maximum_below_running_refused(self):
        error = isolator_refusal(
            machine_mass=M,
            rotor_mass=140.0,
            damping_ratio=0.01,
            required_isolation=0.9,
            shown=("", ""),
            running_speed=155.0,
            maximum_service_speed=150.0,
        )
        assert isinstance(error, CalcError)
        assert error.where == "maximum_service_speed"


class TestExplorerTakesOnlyWhatItComputes:
    """The explorer's isolator plan moves a viscous model with the grade at running speed: another case is
    refused, not shown with numbers its sheet would compute otherwise."""

    @pytest.mark.parametrize(
        "line",
        [
            'damping_model = "hysteretic"',
            'maximum_service_speed = "1600 rpm"',
            'minimum_running_speed = "740 rpm"',  # a speed range: the sheet checks it, the sliders do not
            'excitation_orders = "1, 2"',
        ],
    )
    def test_refused(self, tmp_path, line):
        from pathlib import Path

        example = Path(__file__).parent.parent / "examples" / "harrow_creek_p101_isolators.toml"
        text = example.read_text(encoding="utf-8").replace("[acceptance]", line + "\n\n[acceptance]")
        inputs = tmp_path / "case.toml"
        inputs.write_text(text, encoding="utf-8")
        with pytest.raises(InputsError) as info:
            ck.explore(inputs, "machine_on_isolators")
        name = line.split()[0]
        assert info.value.where == name
        assert "calckit build machine_on_isolators" in info.value.do


def test_loss_factor_beyond_any_mount_refused():
    error = isolator_refusal(
        machine_mass=M,
        rotor_mass=140.0,
        damping_ratio=1.5,
        required_isolation=0.9,
        shown=("", ""),
        loss_factor=3.0,
    )
    assert error.where == "loss_factor" and "loss factor of 3" in error.what
    assert (
        isolator_refusal(
            machine_mass=M,
            rotor_mass=140.0,
            damping_ratio=0.05,
            required_isolation=0.9,
            shown=("", ""),
            loss_factor=0.1,
        )
        is None
    )
