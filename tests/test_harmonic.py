"""Tests for calckit.physics.harmonic: SDOF closed forms under harmonic load."""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
import sympy as sp
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, minimize_scalar

import calckit as ck
from calckit.errors import CalcError, ModelError
from calckit.physics.harmonic import (
    HalfPowerPoints,
    forced_amplitude,
    frequency_ratio,
    half_power_bandwidth,
    half_power_points,
    isolation_efficiency,
    log_decrement,
    magnification,
    peak_frequency_ratio,
    peak_magnification,
    phase_angle,
    quality_factor,
    rotating_unbalance_magnification,
    transmissibility,
    transmissibility_phase,
    zeta_from_log_decrement,
)
from tests.reference import harmonic_fit, last_periods, steady_state

#: The refusal of an undamped exact resonance, as the kit words it (pinned here, once).
RESONANCE = (
    "{func}: undamped at exact resonance (r = 1, zeta = 0) the steady amplitude grows without bound: there is "
    "no steady-state amplitude. Add damping (zeta > 0) or move the speed off the natural frequency; "
    "Oscillator.response gives the growing resonant response."
)

r_sym, z_sym = sp.symbols("r zeta", positive=True)


def force_transmitted(m, c, k, F0, w, *, decay=16.0, periods=4):
    """Amplitude and lag of k x + c x' at steady state, by scipy.integrate.solve_ivp."""
    tt, x, v = last_periods(m, c, k, F0, w, decay=decay, periods=periods)
    return harmonic_fit(tt, k * x + c * v, w)


# Invented rig: a 420 kg pump skid on springs, k chosen for omega_n = 20 rad/s.
M_SKID, K_SKID = 420.0, 420.0 * 20.0**2
CASES = [(0.5, 0.1), (1.0, 0.2), (1.0, 0.05), (2.0, 0.3), (3.0, 0.15)]


class TestMagnification:
    def test_book_form_exact(self):
        """Exact path equals 1/sqrt((1-r^2)^2 + (2 zeta r)^2) (Rao, Mechanical Vibrations, 5th ed., eq. (3.30), from memory)."""
        book = 1 / sp.sqrt((1 - r_sym**2) ** 2 + (2 * z_sym * r_sym) ** 2)
        assert sp.simplify(magnification(r_sym, z_sym) - book) == 0

    def test_exact_numbers(self):
        """At r = 1 the magnification is 1/(2 zeta); floats beside a sympy value are read exactly."""
        assert magnification(sp.Integer(1), 0.1) == 5
        assert magnification(sp.Rational(1, 2), 0) == sp.Rational(4, 3)

    @pytest.mark.parametrize("r, zeta", CASES)
    def test_against_solve_ivp(self, r, zeta):
        """X k / F0 and the lag match a steady state integrated by scipy.integrate.solve_ivp."""
        wn = math.sqrt(K_SKID / M_SKID)
        c = 2 * zeta * math.sqrt(K_SKID * M_SKID)
        F0 = 1500.0
        X, phi = steady_state(M_SKID, c, K_SKID, F0, r * wn)
        assert X * K_SKID / F0 == pytest.approx(float(magnification(r, zeta)), rel=1e-6)
        assert phi == pytest.approx(float(phase_angle(r, zeta)), abs=1e-6)

    def test_vectorised_and_fast(self):
        """100,000 points come back as an array of the same shape in milliseconds."""
        r = np.linspace(0.0, 5.0, 100_000)
        elapsed = math.inf
        for _ in range(3):  # best of three, so a busy machine does not fail the test
            start = time.perf_counter()
            out = magnification(r, 0.05)
            elapsed = min(elapsed, time.perf_counter() - start)
        assert out.shape == r.shape and out.dtype == np.float64
        assert elapsed < 0.05
        assert out[0] == 1.0

    def test_scalar_in_numpy_float_out(self):
        """Plain numbers give a numpy float, not a 0-d array or a sympy number."""
        out = magnification(0.5, 0.0)
        assert isinstance(out, np.floating)
        assert out == pytest.approx(4 / 3)

    def test_undamped_resonance_numeric_is_inf(self):
        """Numeric path: inf at r = 1, zeta = 0, without a warning."""
        assert magnification(np.array([0.0, 1.0]), 0.0)[1] == np.inf

    def test_undamped_resonance_exact_raises(self):
        """Exact path refuses an infinite amplitude, saying resonance."""
        with pytest.raises(ModelError) as info:
            magnification(sp.Integer(1), 0)
        assert str(info.value) == RESONANCE.format(func="magnification")

    @pytest.mark.parametrize(
        "func, call",
        [
            ("magnification", lambda: magnification(1, 0)),
            ("magnification", lambda: magnification(1.0, 0.0)),
            ("transmissibility", lambda: transmissibility(1, 0)),
            ("peak_magnification", lambda: ck.peak_magnification(0)),
            ("forced_amplitude", lambda: forced_amplitude(900.0, 1000.0, 0.0, 1e7, 100.0)),
        ],
        ids=["magnification ints", "magnification floats", "transmissibility", "peak magnification", "amplitude"],
    )
    def test_undamped_resonance_single_number_says_resonance(self, func, call):
        """A single number at r = 1, zeta = 0 is refused in words, not given as inf. That the amplitude
        is unbounded there: sympy.limit of 1/sqrt((1 - r^2)^2) as r -> 1 is oo (Rao, Mechanical
        Vibrations, 5th ed., eq. (3.30) with zeta = 0, from memory)."""
        r = sp.Symbol("r", positive=True)
        assert sp.limit(1 / sp.sqrt((1 - r**2) ** 2), r, 1) == sp.oo
        with pytest.raises(ModelError) as info:
            call()
        assert str(info.value) == RESONANCE.format(func=func)
        assert "resonance" in info.value.what and "report" not in str(info.value)

    def test_negative_r(self):
        """A negative frequency ratio is named in the message."""
        with pytest.raises(ModelError) as info:
            magnification(-0.5, 0.1)
        assert str(info.value) == "magnification(r): the frequency ratio is negative (-0.5). Give r >= 0."

    def test_negative_zeta_in_array(self):
        """A negative damping ratio inside an array is reported with its index."""
        with pytest.raises(ModelError) as info:
            magnification(1.0, np.array([0.1, -0.2]))
        assert str(info.value) == (
            "magnification(zeta): the damping ratio is negative (-0.2 at index 1). Give zeta >= 0."
        )

    def test_nan(self):
        """NaN is refused, naming the argument."""
        with pytest.raises(ModelError) as info:
            magnification(float("nan"), 0.1)
        assert (
            str(info.value)
            == "magnification(r): the frequency ratio is not a finite number (nan). Give finite numbers."
        )

    def test_negative_exact(self):
        """The exact path refuses a negative number too, and the error is a CalcError and a ValueError."""
        with pytest.raises(CalcError) as info:
            magnification(sp.Rational(1, 2), sp.Rational(-1, 10))
        assert isinstance(info.value, ValueError)
        assert (
            str(info.value) == "magnification(zeta): the damping ratio is negative (-1/10). Give zeta >= 0."
        )

    def test_not_a_number(self):
        """A string is refused with a message, not a numpy traceback."""
        with pytest.raises(ModelError) as info:
            magnification("fast", 0.1)
        assert str(info.value) == (
            "magnification(r): expected a number or an array of numbers, got str. "
            "Give a float, an int or a numpy array, or a sympy expression for an exact result."
        )


class TestPhaseAngle:
    def test_book_form(self):
        """phi = atan2(2 zeta r, 1 - r^2) (Rao, Mechanical Vibrations, 5th ed., eq. (3.31), from memory)."""
        assert phase_angle(r_sym, z_sym) == sp.atan2(2 * z_sym * r_sym, 1 - r_sym**2)

    def test_undamped_zero_below_pi_above(self):
        """With zeta = 0 the response is in phase below resonance and in anti-phase above (Rao 5th ed., sec. 3.3, from memory)."""
        r = np.array([0.0, 0.3, 0.99, 1.01, 2.0, 10.0])
        assert np.array_equal(phase_angle(r, 0.0), [0, 0, 0, np.pi, np.pi, np.pi])
        assert phase_angle(sp.Rational(1, 2), 0) == 0
        assert phase_angle(sp.Integer(2), 0) == sp.pi

    def test_resonance_is_quarter_turn(self):
        """At r = 1 the lag is pi/2 for every damping, including the undamped limit."""
        assert np.allclose(phase_angle(1.0, np.array([0.0, 0.01, 0.5, 2.0])), np.pi / 2)
        assert phase_angle(sp.Integer(1), 0) == sp.pi / 2

    @settings(max_examples=200, deadline=None)
    @given(st.floats(0, 50), st.floats(0, 5))
    def test_range(self, r, zeta):
        """The lag stays in [0, pi]."""
        assert 0.0 <= phase_angle(r, zeta) <= math.pi


class TestTransmissibility:
    def test_book_form(self):
        """T = sqrt(1 + (2 zeta r)^2) / sqrt((1-r^2)^2 + (2 zeta r)^2) (Rao, Mechanical Vibrations, 5th ed., sec. 9.10, from memory)."""
        book = sp.sqrt(1 + (2 * z_sym * r_sym) ** 2) / sp.sqrt((1 - r_sym**2) ** 2 + (2 * z_sym * r_sym) ** 2)
        assert sp.simplify(transmissibility(r_sym, z_sym) - book) == 0

    @settings(max_examples=200, deadline=None)
    @given(st.floats(0, 20))
    def test_unity_at_root_two(self, zeta):
        """T = 1 at r = sqrt(2) for any damping (Thomson & Dahleh, Theory of Vibration with Applications, 5th ed., sec. 3.5, from memory)."""
        assert transmissibility(math.sqrt(2), zeta) == pytest.approx(1.0, rel=1e-12)

    @given(st.fractions(0, 20, max_denominator=1000))
    @settings(max_examples=50, deadline=None)
    def test_unity_at_root_two_exact(self, zeta):
        """Exactly 1 on the exact path."""
        assert (
            sp.simplify(transmissibility(sp.sqrt(2), sp.Rational(zeta.numerator, zeta.denominator)) - 1) == 0
        )

    @settings(max_examples=200, deadline=None)
    @given(st.floats(1.5, 20), st.floats(0, 2), st.floats(0.01, 2))
    def test_damping_hurts_isolation(self, r, zeta, extra):
        """Beyond r = sqrt(2) more damping raises T (common practice, Rao 5th ed., sec. 9.10, from memory)."""
        assert transmissibility(r, zeta) < transmissibility(r, zeta + extra)

    @settings(max_examples=100, deadline=None)
    @given(st.floats(0, 1.4), st.floats(0, 2), st.floats(0.01, 2))
    def test_damping_helps_below_root_two(self, r, zeta, extra):
        """Below r = sqrt(2) more damping lowers T (or leaves it at 1 at r = 0); undamped at r = 1 there
        is no steady state to compare (refused as resonance: test_undamped_resonance_single_number_says_resonance)."""
        assume(not (r == 1.0 and zeta == 0.0))
        assert transmissibility(r, zeta + extra) <= transmissibility(r, zeta)

    @pytest.mark.parametrize("r, zeta", [(0.5, 0.1), (2.0, 0.3), (3.0, 0.15)])
    def test_force_against_solve_ivp(self, r, zeta):
        """|k x + c x'| / F0 at steady state (scipy.integrate.solve_ivp) equals T, and its lag the transmissibility phase."""
        wn = math.sqrt(K_SKID / M_SKID)
        c = 2 * zeta * math.sqrt(K_SKID * M_SKID)
        F0 = 1500.0
        FT, psi = force_transmitted(M_SKID, c, K_SKID, F0, r * wn)
        assert FT / F0 == pytest.approx(float(transmissibility(r, zeta)), rel=1e-6)
        assert psi == pytest.approx(float(transmissibility_phase(r, zeta)), abs=1e-6)

    def test_phase_book_form(self):
        """psi = atan2(2 zeta r^3, 1 - r^2 + 4 zeta^2 r^2) (Rao, Mechanical Vibrations, 5th ed., sec. 3.6, from memory)."""
        assert transmissibility_phase(r_sym, z_sym) == sp.atan2(
            2 * z_sym * r_sym**3, 1 - r_sym**2 + 4 * z_sym**2 * r_sym**2
        )

    def test_phase_undamped(self):
        """Undamped: transmitted force in phase below resonance, anti-phase above, pi/2 at r = 1."""
        assert np.allclose(transmissibility_phase(np.array([0.5, 1.0, 3.0]), 0.0), [0, np.pi / 2, np.pi])


class TestIsolationEfficiency:
    def test_is_one_minus_t(self):
        """eta = 1 - T; at r = 3 undamped T = 1/8 (Rao 5th ed., sec. 9.10, from memory)."""
        assert isolation_efficiency(sp.Integer(3), 0) == sp.Rational(7, 8)
        r = np.linspace(0, 6, 50)
        assert np.allclose(isolation_efficiency(r, 0.1), 1 - transmissibility(r, 0.1))

    def test_negative_means_amplification(self):
        """Below r = sqrt(2) the efficiency is negative."""
        assert isolation_efficiency(1.2, 0.1) < 0


class TestRotatingUnbalance:
    def test_book_form(self):
        """m X / (m_u e) = r^2 / sqrt((1-r^2)^2 + (2 zeta r)^2) (Rao, Mechanical Vibrations, 5th ed., sec. 3.7, from memory)."""
        book = r_sym**2 / sp.sqrt((1 - r_sym**2) ** 2 + (2 * z_sym * r_sym) ** 2)
        assert sp.simplify(rotating_unbalance_magnification(r_sym, z_sym) - book) == 0

    def test_tends_to_one(self):
        """Far above resonance the mass moves with amplitude m_u e / m."""
        assert rotating_unbalance_magnification(1e4, 0.2) == pytest.approx(1.0, rel=1e-6)

    @pytest.mark.parametrize("r, zeta", [(0.7, 0.1), (2.5, 0.2)])
    def test_against_solve_ivp(self, r, zeta):
        """A force m_u e w^2 cos(w t) integrated by scipy.integrate.solve_ivp gives m X/(m_u e) = r^2 M."""
        wn = math.sqrt(K_SKID / M_SKID)
        c = 2 * zeta * math.sqrt(K_SKID * M_SKID)
        mu_e = 0.012  # kg m, invented
        w = r * wn
        X, _ = steady_state(M_SKID, c, K_SKID, mu_e * w**2, w)
        assert M_SKID * X / mu_e == pytest.approx(float(rotating_unbalance_magnification(r, zeta)), rel=1e-6)


class TestPeak:
    def test_book_forms(self):
        """r_peak = sqrt(1 - 2 zeta^2), M_max = 1/(2 zeta sqrt(1 - zeta^2)) (Rao 5th ed., sec. 3.4, from memory)."""
        assert peak_frequency_ratio(z_sym) == sp.sqrt(1 - 2 * z_sym**2)
        assert sp.simplify(peak_magnification(z_sym) - 1 / (2 * z_sym * sp.sqrt(1 - z_sym**2))) == 0

    @pytest.mark.parametrize("zeta", [0.02, 0.1, 0.3, 0.5, 0.7])
    def test_against_numeric_maximum(self, zeta):
        """Peak place and height match a bounded maximisation by scipy.optimize.minimize_scalar."""
        res = minimize_scalar(
            lambda r: -magnification(r, zeta), bounds=(0.0, 1.5), method="bounded", options={"xatol": 1e-12}
        )
        assert res.x == pytest.approx(float(peak_frequency_ratio(zeta)), abs=1e-5)
        assert -res.fun == pytest.approx(float(peak_magnification(zeta)), rel=1e-10)

    def test_dense_grid(self):
        """A dense grid's largest value agrees with the closed form to grid resolution."""
        r = np.linspace(0.5, 1.2, 700_001)
        m = magnification(r, 0.08)
        assert r[np.argmax(m)] == pytest.approx(float(peak_frequency_ratio(0.08)), abs=2e-6)
        assert m.max() == pytest.approx(float(peak_magnification(0.08)), rel=1e-9)

    def test_no_peak(self):
        """zeta >= 1/sqrt(2): no resonant peak, said plainly."""
        with pytest.raises(ModelError) as info:
            peak_frequency_ratio(0.75)
        assert str(info.value) == (
            "peak_frequency_ratio(zeta): no resonant peak: zeta = 0.75 is at least 1/sqrt(2). "
            "The magnification falls steadily from 1 at r = 0 when zeta >= 1/sqrt(2) (about 0.7071)."
        )

    def test_no_peak_exact_boundary(self):
        """Exactly 1/sqrt(2) has no peak either, on both functions."""
        with pytest.raises(ModelError, match=r"peak_magnification\(zeta\): no resonant peak"):
            peak_magnification(1 / sp.sqrt(2))
        with pytest.raises(ModelError, match="no resonant peak: zeta = 0.8 is"):
            peak_frequency_ratio(np.array([0.1, 0.8]))

    def test_exact_values(self):
        """zeta = 1/2: r_peak = 1/sqrt(2), M_max = 2/sqrt(3)."""
        assert peak_frequency_ratio(sp.Rational(1, 2)) == sp.sqrt(2) / 2
        assert sp.simplify(peak_magnification(sp.Rational(1, 2)) - 2 / sp.sqrt(3)) == 0


class TestHalfPower:
    @pytest.mark.parametrize("zeta", [0.01, 0.05, 0.2, 0.38])
    def test_against_root_finding(self, zeta):
        """r1, r2 solve M(r) = M_max / sqrt(2), found by scipy.optimize.brentq."""
        target = float(peak_magnification(zeta)) / math.sqrt(2)
        rp = float(peak_frequency_ratio(zeta))
        r1 = brentq(lambda r: magnification(r, zeta) - target, 0.0, rp, xtol=1e-14)
        r2 = brentq(lambda r: magnification(r, zeta) - target, rp, 3.0, xtol=1e-14)
        hp = half_power_points(zeta)
        assert isinstance(hp, HalfPowerPoints)
        assert hp.r_lower == pytest.approx(r1, abs=1e-9)
        assert hp.r_upper == pytest.approx(r2, abs=1e-9)
        assert half_power_bandwidth(zeta) == pytest.approx(r2 - r1, abs=1e-9)

    @pytest.mark.parametrize("zeta", [0.001, 0.01, 0.03])
    def test_small_damping_is_two_zeta(self, zeta):
        """For light damping r2 - r1 ~ 2 zeta (Rao 5th ed., sec. 3.4, from memory), to O(zeta^3)."""
        hp = half_power_points(zeta)
        assert hp.small_damping_bandwidth == 2 * zeta
        assert abs(hp.bandwidth - 2 * zeta) < 3 * zeta**3

    def test_exact(self):
        """Exact path keeps radicals; zero damping gives zero width."""
        hp = half_power_points(sp.Rational(1, 10))
        assert float(hp.bandwidth) == pytest.approx(float(half_power_bandwidth(0.1)), rel=1e-14)
        assert half_power_bandwidth(sp.Integer(0)) == 0

    def test_too_much_damping(self):
        """Above sin(pi/8) the lower half-power point does not exist."""
        with pytest.raises(ModelError) as info:
            half_power_bandwidth(0.4)
        assert str(info.value) == (
            "half_power_points(zeta): no lower half-power point: zeta = 0.4 exceeds sin(pi/8) (about 0.3827). "
            "Use the half-power method only for light damping; measure zeta another way."
        )
        with pytest.raises(ModelError, match="no lower half-power point"):
            half_power_points(sp.Rational(2, 5))


class TestQualityFactor:
    def test_value(self):
        """Q = 1/(2 zeta) = M(r = 1) (Rao 5th ed., sec. 3.4, from memory)."""
        assert quality_factor(sp.Rational(1, 40)) == 20
        assert quality_factor(0.05) == pytest.approx(float(magnification(1.0, 0.05)))

    def test_zero_damping(self):
        """Q needs damping: zero is refused."""
        with pytest.raises(ModelError) as info:
            quality_factor(0.0)
        assert str(info.value) == "quality_factor(zeta): the damping ratio is zero. Give zeta > 0."


class TestLogDecrement:
    def test_book_form_and_inverse(self):
        """delta = 2 pi zeta / sqrt(1 - zeta^2) and its inverse (Rao 5th ed., sec. 2.6, from memory)."""
        assert log_decrement(z_sym) == 2 * sp.pi * z_sym / sp.sqrt(1 - z_sym**2)
        assert zeta_from_log_decrement(log_decrement(sp.Rational(3, 10))) == sp.Rational(3, 10)
        z = np.linspace(0, 0.99, 100)
        assert np.allclose(zeta_from_log_decrement(log_decrement(z)), z, rtol=1e-12, atol=0)

    @pytest.mark.parametrize("zeta", [0.02, 0.15])
    def test_against_free_decay(self, zeta):
        """ln of successive peaks of a free decay integrated by scipy.integrate.solve_ivp."""
        c = 2 * zeta * math.sqrt(K_SKID * M_SKID)

        def peak(t, y):
            return y[1]

        peak.direction = -1.0  # velocity crossing zero downwards: a maximum of x
        sol = solve_ivp(
            lambda t, y: [y[1], (-c * y[1] - K_SKID * y[0]) / M_SKID],
            (0.0, 2.0),
            [0.01, 0.0],
            method="DOP853",
            rtol=1e-12,
            atol=1e-15,
            events=peak,
        )
        xs = sol.y_events[0][:, 0]
        xs = xs[xs > 0]
        assert math.log(xs[1] / xs[2]) == pytest.approx(float(log_decrement(zeta)), rel=1e-6)
        assert zeta_from_log_decrement(math.log(xs[1] / xs[2])) == pytest.approx(zeta, rel=1e-6)

    def test_overdamped(self):
        """zeta >= 1 does not oscillate, so there is no decrement."""
        with pytest.raises(ModelError) as info:
            log_decrement(1.0)
        assert str(info.value) == (
            "log_decrement(zeta): zeta = 1.0 is not below 1: critically damped and overdamped motion "
            "does not oscillate. Give 0 <= zeta < 1."
        )

    def test_negative_decrement(self):
        """A growing record (negative decrement) is refused."""
        with pytest.raises(
            ModelError, match=r"zeta_from_log_decrement\(delta\): the logarithmic decrement is negative"
        ):
            zeta_from_log_decrement(-0.1)


class TestFrequencyRatio:
    def test_values(self):
        """r = omega / omega_n, exact and numeric."""
        assert frequency_ratio(sp.Integer(150), 100) == sp.Rational(3, 2)
        assert np.allclose(frequency_ratio(np.array([0.0, 50.0]), 100.0), [0.0, 0.5])

    def test_zero_natural_frequency(self):
        """omega_n = 0 is refused, naming it."""
        with pytest.raises(ModelError) as info:
            frequency_ratio(10.0, 0.0)
        assert str(info.value) == "frequency_ratio(omega_n): the natural frequency is zero. Give omega_n > 0."
