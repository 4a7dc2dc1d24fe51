"""Tests for calckit.physics.excitation: rotating unbalance, balance grades, base motion."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

from calckit.errors import ModelError
from calckit.physics.excitation import (
    BALANCE_QUALITY_GRADES,
    BaseExcitation,
    base_excitation,
    eccentricity_from_grade,
    permissible_unbalance,
    permissible_unbalance_gmm,
    transmitted_force_amplitude,
    unbalance_force_amplitude,
)
from calckit.physics.harmonic import magnification, transmissibility

r_sym, z_sym = sp.symbols("r zeta", positive=True)


class TestUnbalanceForce:
    def test_exact_and_numeric(self):
        """F0 = m_u e omega^2 (Rao, Mechanical Vibrations, 5th ed., sec. 3.7, from memory)."""
        m, e, w = sp.symbols("m_u e omega", positive=True)
        assert unbalance_force_amplitude(m, e, w) == m * e * w**2
        # 20 g at 50 mm, 100 rad/s: 0.02 * 0.05 * 100^2 = 10 N
        assert unbalance_force_amplitude(sp.Rational(2, 100), 0.05, 100) == 10
        assert np.allclose(unbalance_force_amplitude(0.02, 0.05, np.array([0.0, 100.0, 200.0])), [0, 10, 40])

    def test_negative_mass(self):
        """A negative unbalanced mass is refused, naming it."""
        with pytest.raises(ModelError) as info:
            unbalance_force_amplitude(-0.02, 0.05, 100.0)
        assert str(info.value) == (
            "unbalance_force_amplitude(m_u): the unbalanced mass is negative (-0.02). Give m_u >= 0."
        )


class TestBalanceGrade:
    def test_grades_step_by_two_and_a_half(self):
        """Grades run G 0.4 ... G 4000 in steps of about 2.5 (ISO 21940-11:2016, Table 1, from memory)."""
        g = np.array(BALANCE_QUALITY_GRADES)
        assert g[0] == 0.4 and g[-1] == 4000.0 and 6.3 in BALANCE_QUALITY_GRADES
        assert np.allclose(g[1:] / g[:-1], 2.5, rtol=0.04)

    def test_worked_number(self):
        """Harrow Creek pump P-101 (invented): G 6.3, 1480 rpm, 350 kg rotor.

        By hand (ISO 21940-11:2016, e_per * Omega = G and U_per = e_per * m, from memory):
          Omega = 1480 * 2 pi / 60 = 148 pi / 3 = 154.985 rad/s
          e_per = 6.3 mm/s / 154.985 rad/s = 0.040649 mm = 40.649 um
          U_per = 350 kg * 40.649 um = 14227 kg um = 14227 g mm = 0.014227 kg m
        """
        omega = 1480 * 2 * math.pi / 60
        assert eccentricity_from_grade(6.3, omega) == pytest.approx(40.649e-6, rel=1e-4)
        assert permissible_unbalance(6.3, 350.0, omega) == pytest.approx(0.014227, rel=1e-4)
        assert permissible_unbalance_gmm(6.3, 350.0, omega) == pytest.approx(14227.0, rel=1e-4)

    def test_worked_number_exact(self):
        """The same with exact inputs: U = 350 * (63/10000) / (148 pi/3) = 1323/(29600 pi) kg m."""
        omega = sp.Rational(1480) * 2 * sp.pi / 60
        assert eccentricity_from_grade(sp.Rational(63, 10), omega) == sp.Rational(189, 1480000) / sp.pi
        assert permissible_unbalance(sp.Rational(63, 10), 350, omega) == sp.Rational(1323, 29600) / sp.pi
        assert (
            permissible_unbalance_gmm(6.3, sp.Integer(350), omega) == sp.Rational(1323000000, 29600) / sp.pi
        )

    def test_zero_speed(self):
        """A rotor that does not turn has no permissible eccentricity from a grade."""
        with pytest.raises(ModelError) as info:
            eccentricity_from_grade(6.3, 0.0)
        assert (
            str(info.value)
            == "eccentricity_from_grade(omega): the forcing frequency is zero. Give omega > 0."
        )

    def test_negative_grade(self):
        """A negative grade is refused."""
        with pytest.raises(ModelError) as info:
            permissible_unbalance(-6.3, 350.0, 150.0)
        assert (
            str(info.value)
            == "permissible_unbalance(G): the balance quality grade is negative (-6.3). Give G >= 0."
        )

    def test_vectorised(self):
        """Arrays of speeds give arrays of eccentricity, inversely proportional."""
        w = np.array([100.0, 200.0, 400.0])
        e = eccentricity_from_grade(2.5, w)
        assert np.allclose(e * w, 2.5e-3)


def base_motion_steady_state(m, c, k, Y, w, *, decay=16.0, periods=4):
    """Steady state of m x'' + c (x' - y') + k (x - y) = 0, y = Y sin(w t), by scipy.integrate.solve_ivp.

    Returns (X, psi, Z, phi, FT): x = X sin(w t - psi), z = x - y = Z sin(w t - phi), and the
    amplitude FT of k z + c z'. Amplitudes and lags come from a least-squares fit over the
    last *periods* periods after the transient has decayed by exp(-decay).
    """
    wn = math.sqrt(k / m)
    zeta = c / (2 * math.sqrt(k * m))
    T = 2 * math.pi / w
    t_end = math.ceil(decay / (zeta * wn) / T) * T + periods * T

    def rhs(t, s):
        x, v = s
        y, yd = Y * math.sin(w * t), Y * w * math.cos(w * t)
        return [v, (-c * (v - yd) - k * (x - y)) / m]

    sol = solve_ivp(rhs, (0.0, t_end), [0.0, 0.0], method="DOP853", rtol=1e-10, atol=1e-14, dense_output=True)
    tt = np.linspace(t_end - periods * T, t_end, 400 * periods)
    x, v = sol.sol(tt)
    y, yd = Y * np.sin(w * tt), Y * w * np.cos(w * tt)
    basis = np.column_stack([np.sin(w * tt), np.cos(w * tt)])

    def fit(sig):
        (p, q), *_ = np.linalg.lstsq(basis, sig, rcond=None)
        return math.hypot(p, q), math.atan2(-q, p)  # A sin(wt - a) = A cos a sin wt - A sin a cos wt

    X, psi = fit(x)
    Z, phi = fit(x - y)
    FT, _ = fit(k * (x - y) + c * (v - yd))
    return X, psi, Z, phi, FT


# Invented: blower B-201 at Harrow Creek on a floor that shakes; 180 kg, omega_n = 30 rad/s.
M_B, K_B = 180.0, 180.0 * 30.0**2


class TestBaseExcitation:
    def test_book_forms(self):
        """Z/Y = r^2/sqrt(...), X/Y = T, phases (Rao, Mechanical Vibrations, 5th ed., sec. 3.6, from memory)."""
        b = base_excitation(r_sym, z_sym)
        assert isinstance(b, BaseExcitation)
        den = sp.sqrt((1 - r_sym**2) ** 2 + (2 * z_sym * r_sym) ** 2)
        assert sp.simplify(b.relative_ratio - r_sym**2 / den) == 0
        assert sp.simplify(b.absolute_ratio - sp.sqrt(1 + (2 * z_sym * r_sym) ** 2) / den) == 0
        assert b.relative_phase == sp.atan2(2 * z_sym * r_sym, 1 - r_sym**2)
        assert b.absolute_phase == sp.atan2(2 * z_sym * r_sym**3, 1 - r_sym**2 + 4 * z_sym**2 * r_sym**2)

    @pytest.mark.parametrize("r, zeta", [(0.6, 0.1), (1.0, 0.2), (2.5, 0.25)])
    def test_against_solve_ivp(self, r, zeta):
        """Ratios and lags match a steady state integrated by scipy.integrate.solve_ivp."""
        c = 2 * zeta * math.sqrt(K_B * M_B)
        Y, w = 0.8e-3, r * math.sqrt(K_B / M_B)
        X, psi, Z, phi, FT = base_motion_steady_state(M_B, c, K_B, Y, w)
        b = base_excitation(r, zeta)
        assert X / Y == pytest.approx(float(b.absolute_ratio), rel=1e-6)
        assert Z / Y == pytest.approx(float(b.relative_ratio), rel=1e-6)
        assert psi == pytest.approx(float(b.absolute_phase), abs=1e-6)
        assert phi == pytest.approx(float(b.relative_phase), abs=1e-6)
        assert FT == pytest.approx(float(transmitted_force_amplitude(K_B, c, Z, w)), rel=1e-6)

    def test_numeric_arrays(self):
        """Arrays broadcast; fields are numpy arrays of the same shape."""
        r = np.linspace(0, 4, 9)
        b = base_excitation(r, 0.1)
        assert b.relative_ratio.shape == r.shape and b.absolute_phase.shape == r.shape
        assert np.allclose(b.absolute_ratio, transmissibility(r, 0.1))

    def test_bad_ratio(self):
        """Negative r is refused, naming the function."""
        with pytest.raises(ModelError) as info:
            base_excitation(-1.0, 0.1)
        assert str(info.value) == "base_excitation(r): the frequency ratio is negative (-1.0). Give r >= 0."


class TestTransmittedForce:
    def test_book_form(self):
        """F_T = X sqrt(k^2 + (c omega)^2) (Rao, Mechanical Vibrations, 5th ed., sec. 9.10, from memory)."""
        k, c, X, w = sp.symbols("k c X omega", positive=True)
        assert transmitted_force_amplitude(k, c, X, w) == X * sp.sqrt(k**2 + c**2 * w**2)
        assert transmitted_force_amplitude(sp.Integer(3000), 40, 0.001, 100) == 5

    def test_force_transmissibility_identity(self):
        """With X = F0 M / k under a force, F_T / F0 is the transmissibility, exactly."""
        m, k, F0 = sp.symbols("m k F_0", positive=True)
        wn = sp.sqrt(k / m)
        c = 2 * z_sym * sp.sqrt(k * m)
        X = F0 * magnification(r_sym, z_sym) / k
        ratio = transmitted_force_amplitude(k, c, X, r_sym * wn) / F0
        assert sp.simplify(ratio - transmissibility(r_sym, z_sym)) == 0

    def test_numeric(self):
        """Numeric path uses hypot and broadcasts."""
        out = transmitted_force_amplitude(3000.0, 40.0, np.array([0.001, 0.002]), 100.0)
        assert np.allclose(out, [5.0, 10.0])
