"""The single-degree-of-freedom oscillator: quantities of the trade, regimes, harmonics, units, errors.

Closed forms are those of Rao, *Mechanical Vibrations*, 5th ed., ch. 2 (free
vibration) and ch. 3 (harmonic excitation), from memory; numerical checks use
``scipy.integrate.solve_ivp`` (DOP853, rtol 1e-10). Numbers come from the
invented Harrow Creek water-treatment works: pump P-101 (250 kg on four
isolators of 45 N/mm each, zeta 0.05, running at 1480 rpm).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

from calckit import REGIMES, HarmonicLine, Oscillator
from calckit.core.units import Q_
from calckit.errors import CalcError, ModelError, UnitsError
from calckit.physics.harmonic import magnification, phase_angle
from tests.reference import steady_state

t = sp.Symbol("t", real=True)
m, c, k = sp.symbols("m c k", positive=True)
R = sp.Rational

# Pump P-101: exact inputs so that zeta is exactly 1/20.
PUMP_M = 250  # kg
PUMP_K = 4 * 45_000  # N/m, four isolators of 45 N/mm
PUMP_C = 2 * R(1, 20) * sp.sqrt(PUMP_K * PUMP_M)  # N s/m, zeta = 0.05 (about 670.8)
PUMP_SPEED = R(1480, 60) * 2 * sp.pi  # rad/s, 1480 rpm


def pump(c=PUMP_C):
    return Oscillator(PUMP_M, c, PUMP_K)


def free_decay_peaks(mass, damping, stiffness, x0, t_end):
    """Displacement at each maximum of a free decay from x0, by scipy.integrate.solve_ivp with events."""

    def velocity(_, y):
        return y[1]

    velocity.direction = -1  # velocity going from + to -: a maximum of x
    sol = solve_ivp(
        lambda _, y: [y[1], -(damping * y[1] + stiffness * y[0]) / mass],
        (0.0, t_end),
        [x0, 0.0],
        method="DOP853",
        rtol=1e-11,
        atol=1e-15,
        events=velocity,
    )
    assert sol.success
    return sol.t_events[0], sol.y_events[0][:, 0]


def steady_state_by_ivp(mass, damping, stiffness, force, w, periods=4):
    """Amplitude and lag of x under force cos(w t), by scipy.integrate.solve_ivp from rest
    (tests.reference.steady_state)."""
    return steady_state(mass, damping, stiffness, force, w, periods=periods)


class TestClosedForms:
    """Quantities against the book forms (Rao, Mechanical Vibrations, 5th ed., ch. 2, from memory)."""

    def test_natural_frequency(self):
        """omega_n = sqrt(k/m) and f_n = omega_n / (2 pi) (Rao 5th ed., eq. 2.14, from memory)."""
        osc = Oscillator(m, c, k)
        assert sp.simplify(osc.natural_frequency - sp.sqrt(k / m)) == 0
        assert sp.simplify(osc.natural_frequency_hz - sp.sqrt(k / m) / (2 * sp.pi)) == 0

    def test_damping_ratio_and_critical_damping(self):
        """zeta = c / c_c with c_c = 2 sqrt(k m) (Rao 5th ed., sec. 2.6, from memory)."""
        osc = Oscillator(m, c, k)
        assert sp.simplify(osc.critical_damping - 2 * sp.sqrt(k * m)) == 0
        assert sp.simplify(osc.damping_ratio - c / (2 * sp.sqrt(k * m))) == 0

    def test_damped_frequency(self):
        """omega_d = omega_n sqrt(1 - zeta^2) (Rao 5th ed., sec. 2.6, from memory)."""
        osc = Oscillator(m, c, k, regime="underdamped")
        wn, z = sp.sqrt(k / m), c / (2 * sp.sqrt(k * m))
        assert sp.simplify(osc.damped_frequency - wn * sp.sqrt(1 - z**2)) == 0

    def test_log_decrement_and_quality_factor(self):
        """delta = 2 pi zeta / sqrt(1 - zeta^2), Q = 1 / (2 zeta) (Rao 5th ed., sec. 2.6 and 3.4, from memory)."""
        osc = Oscillator(m, c, k, regime="underdamped")
        z = c / (2 * sp.sqrt(k * m))
        assert sp.simplify(osc.log_decrement - 2 * sp.pi * z / sp.sqrt(1 - z**2)) == 0
        assert sp.simplify(osc.quality_factor - 1 / (2 * z)) == 0

    def test_static_deflection(self):
        """delta_st = m g / k with standard gravity 9.80665 m/s^2 (a defined constant, 3rd CGPM, 1901)."""
        assert pump().static_deflection == R(250) * R("9.80665") / 180_000

    def test_pump_numbers(self):
        """Pump P-101: every quantity from its exact inputs equals the float formula."""
        osc = pump()
        wn = math.sqrt(180_000 / 250)
        zeta = 0.05
        assert osc.damping_ratio == R(1, 20)  # exact
        assert osc.regime == "underdamped"
        assert float(osc.natural_frequency) == pytest.approx(wn, rel=1e-15)
        assert float(osc.natural_frequency_hz) == pytest.approx(wn / (2 * math.pi), rel=1e-15)
        assert float(osc.damped_frequency) == pytest.approx(wn * math.sqrt(1 - zeta**2), rel=1e-15)
        assert float(osc.critical_damping) == pytest.approx(2 * math.sqrt(180_000 * 250), rel=1e-15)
        assert float(osc.log_decrement) == pytest.approx(
            2 * math.pi * zeta / math.sqrt(1 - zeta**2), rel=1e-15
        )
        assert osc.quality_factor == 10

    def test_log_decrement_from_free_decay(self):
        """ln(x_i / x_{i+1}) of successive peaks of a free decay (scipy.integrate.solve_ivp) equals delta."""
        osc = pump()
        peaks_t, peaks_x = free_decay_peaks(250.0, float(PUMP_C), 180_000.0, 0.002, 1.8)
        assert len(peaks_x) >= 6
        ratios = np.log(peaks_x[:-1] / peaks_x[1:])
        np.testing.assert_allclose(ratios, float(osc.log_decrement), rtol=1e-8)
        # and the peaks are one damped period apart
        np.testing.assert_allclose(np.diff(peaks_t), 2 * math.pi / float(osc.damped_frequency), rtol=1e-8)

    def test_log_decrement_heavier_damping(self):
        """The same check at zeta = 0.3, where delta differs clearly from 2 pi zeta."""
        cc = 2 * math.sqrt(180_000 * 250)
        osc = Oscillator(250, R(3, 10) * 2 * sp.sqrt(180_000 * 250), 180_000)
        _, peaks_x = free_decay_peaks(250.0, 0.3 * cc, 180_000.0, 0.002, 0.6)
        delta = math.log(peaks_x[0] / peaks_x[1])
        assert delta == pytest.approx(float(osc.log_decrement), rel=1e-8)
        assert abs(delta - 2 * math.pi * 0.3) > 0.05  # the small-damping form would be wrong here

    def test_transient_basis_book_forms(self):
        """The free-motion basis in each regime (Rao 5th ed., sec. 2.6, eqs. for the three cases, from memory)."""
        wn = 4
        # undamped: cos, sin of omega_n t
        assert Oscillator(1, 0, 16).transient_basis(t) == (sp.cos(4 * t), sp.sin(4 * t))
        # underdamped: e^{-zeta wn t} (cos, sin)(omega_d t); zeta = 1/4
        z = R(1, 4)
        wd = wn * sp.sqrt(1 - z**2)
        basis = Oscillator(1, 2, 16).transient_basis(t)
        expected = (sp.exp(-z * wn * t) * sp.cos(wd * t), sp.exp(-z * wn * t) * sp.sin(wd * t))
        assert all(sp.simplify(b - e) == 0 for b, e in zip(basis, expected, strict=True))
        # critically damped: (1, t) e^{-wn t}
        assert Oscillator(1, 8, 16).transient_basis(t) == (sp.exp(-4 * t), t * sp.exp(-4 * t))
        # overdamped: e^{(-zeta +/- sqrt(zeta^2 - 1)) wn t}; zeta = 5/4 -> roots -2 and -8
        assert set(Oscillator(1, 10, 16).transient_basis(t)) == {sp.exp(-2 * t), sp.exp(-8 * t)}


class TestRegime:
    @pytest.mark.parametrize(
        "mck, regime",
        [
            ((250, 0, 180_000), "undamped"),
            ((250, 670, 180_000), "underdamped"),
            ((250, 14_000, 180_000), "overdamped"),
            ((2.5, 5, 2.5), "critically damped"),  # c^2 = 25 = 4 m k
            ((1, 2.5, 1.5625), "critically damped"),  # 6.25 = 4 * 1.5625
            (
                (0.1, 0.6, 0.9),
                "critically damped",
            ),  # in floats 0.6**2 = 0.36 < 4*0.1*0.9 = 0.36000000000000004
            ((2.5, 5.000001, 2.5), "overdamped"),
            ((2.5, 4.999999, 2.5), "underdamped"),
        ],
    )
    def test_numeric(self, mck, regime):
        """The sign of c^2 - 4 m k decides, exactly, with floats taken as the decimals shown."""
        assert Oscillator(*mck).regime == regime
        assert regime in REGIMES

    def test_float_boundary_needs_exactness(self):
        """The case above that floats get wrong: exact arithmetic is what decides it."""
        assert 0.6**2 - 4 * 0.1 * 0.9 != 0  # float arithmetic misses the boundary
        osc = Oscillator(0.1, 0.6, 0.9)
        assert osc.damping_ratio == 1
        with pytest.raises(ModelError):
            _ = osc.damped_frequency

    def test_symbolic_decidable(self):
        """With positive symbols the regime follows when c is written in terms of m and k."""
        assert Oscillator(m, 0, k).regime == "undamped"
        assert Oscillator(m, 2 * sp.sqrt(m * k), k).regime == "critically damped"
        assert Oscillator(m, 3 * sp.sqrt(m * k), k).regime == "overdamped"
        assert Oscillator(m, sp.sqrt(m * k), k).regime == "underdamped"

    def test_symbolic_hint(self):
        """An undecidable symbolic regime may be assumed; the assumption is used."""
        assert Oscillator(m, c, k, regime="underdamped").regime == "underdamped"

    def test_symbolic_undecidable(self):
        """Without a hint the message says which sign is unknown and what to do."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(m, c, k).regime
        assert str(info.value) == (
            "Oscillator(m=m, c=c, k=k): the regime depends on the sign of c**2 - 4*m*k = c**2 - 4*k*m, "
            'which the symbols do not decide. Pass regime="underdamped" (or another) to Oscillator, or give numbers.'
        )

    def test_unknown_hint(self):
        """A misspelt regime is refused with the list of regimes."""
        with pytest.raises(ModelError) as info:
            Oscillator(m, c, k, regime="light")
        assert str(info.value) == (
            "regime: unknown regime 'light'. Use one of undamped, underdamped, critically damped, overdamped."
        )


class TestHarmonics:
    def test_undamped_in_phase_below_resonance(self):
        """No damping, below resonance: the displacement follows a cosine force in phase (common practice, no source)."""
        osc = Oscillator(PUMP_M, 0, PUMP_K)  # omega_n = 26.8 rad/s
        (line,) = osc.harmonics(120 * sp.cos(20 * t), t=t)
        assert line.phase_lag == 0
        steady = osc.particular(120 * sp.cos(20 * t), t=t).solution
        assert steady.coeff(sp.cos(20 * t)) > 0

    def test_undamped_antiphase_above_resonance(self):
        """No damping, above resonance (the pump at 1480 rpm): the displacement opposes the force."""
        osc = Oscillator(PUMP_M, 0, PUMP_K)
        (line,) = osc.harmonics(120 * sp.cos(PUMP_SPEED * t), t=t)
        assert line.phase_lag == sp.pi
        steady = osc.particular(120 * sp.cos(PUMP_SPEED * t), t=t).solution
        assert steady.coeff(sp.cos(PUMP_SPEED * t)) < 0

    @pytest.mark.parametrize("w", [10, 20, PUMP_SPEED])
    def test_damping_creates_lag(self, w):
        """With damping the lag lies strictly between 0 and pi."""
        (line,) = pump().harmonics(120 * sp.cos(w * t), t=t)
        assert 0 < float(line.phase_lag) < math.pi

    def test_quarter_turn_at_resonance(self):
        """At omega = omega_n the lag is pi/2 for any damping (Rao 5th ed., sec. 3.4, from memory)."""
        (line,) = pump().harmonics(120 * sp.cos(sp.sqrt(720) * t), t=t)
        assert line.phase_lag == sp.pi / 2
        assert line.magnification == 10  # 1 / (2 zeta)

    @pytest.mark.parametrize("w", [R(10), R(20), sp.sqrt(720), R(40), PUMP_SPEED])
    def test_against_harmonic_closed_forms(self, w):
        """Amplitude k / F0 and lag equal calckit.physics.harmonic.magnification and phase_angle, exactly."""
        osc = pump()
        (line,) = osc.harmonics(120 * sp.cos(w * t), t=t)
        assert isinstance(line, HarmonicLine)
        r = w / osc.natural_frequency
        assert sp.simplify(line.magnification - magnification(r, R(1, 20))) == 0
        assert sp.simplify(line.amplitude - 120 * magnification(r, R(1, 20)) / PUMP_K) == 0
        assert float(line.phase_lag) == pytest.approx(float(phase_angle(r, R(1, 20))), rel=1e-14)

    @pytest.mark.parametrize("w", [20.0, float(PUMP_SPEED)], ids=["below resonance", "1480 rpm"])
    def test_against_solve_ivp(self, w):
        """Amplitude and lag equal the steady state of scipy.integrate.solve_ivp started from rest."""
        (line,) = pump().harmonics(120 * sp.cos(sp.nsimplify(w) * t), t=t)
        amplitude, lag = steady_state_by_ivp(250.0, float(PUMP_C), 180_000.0, 120.0, w)
        assert amplitude == pytest.approx(float(line.amplitude), rel=1e-7)
        assert lag == pytest.approx(float(line.phase_lag), rel=1e-7)

    def test_force_with_phase(self):
        """300 cos + 400 sin is one harmonic of amplitude 500, force phase atan(4/3)."""
        osc = Oscillator(1, 0, 4)
        (line,) = osc.harmonics(300 * sp.cos(3 * t) + 400 * sp.sin(3 * t), t=t)
        assert (line.force_amplitude, line.force_phase) == (500, sp.atan(R(4, 3)))
        assert line.amplitude == 100 and line.phase_lag == sp.pi  # 500 / |4 - 9|, above resonance

    def test_only_pure_harmonics(self):
        """Polynomial, exponential and growing terms are not harmonics; each frequency is one line."""
        lines = pump().harmonics(
            120 * sp.cos(20 * t) + 5 * t + sp.exp(-t) + t * sp.sin(3 * t) + sp.sin(40 * t), t=t
        )
        assert sorted(line.frequency for line in lines) == [20, 40]

    def test_undamped_resonance_refused(self):
        """A harmonic exactly at an undamped resonance has no steady amplitude."""
        with pytest.raises(ModelError) as info:
            Oscillator(1, 0, 4).harmonics(sp.cos(2 * t), t=t)
        assert str(info.value) == (
            "harmonics: the harmonic at 2 rad/s is at an undamped resonance: the amplitude grows without bound. "
            "Add damping, or move the forcing frequency away from the natural frequency."
        )


class TestUnits:
    def test_pump_in_si_and_us_customary(self):
        """The same pump in kg and N/mm, and in lb and lbf/in, has the same natural frequency."""
        si = Oscillator(Q_(250, "kg"), Q_(0, "N*s/m"), Q_(4 * 45, "N/mm"))
        mass_lb = Q_(250, "kg").to("lb").magnitude
        stiffness_lbf_in = Q_(4 * 45, "N/mm").to("lbf/in").magnitude
        us = Oscillator(Q_(mass_lb, "lb"), Q_(0, "lbf*s/in"), Q_(stiffness_lbf_in, "lbf/in"))
        assert us.natural_frequency.to("rad/s").magnitude == pytest.approx(
            si.natural_frequency.to("rad/s").magnitude, rel=1e-13
        )
        assert si.natural_frequency.to("rad/s").magnitude == pytest.approx(math.sqrt(720), rel=1e-15)

    def test_us_customary_against_weight_form(self):
        """551.2 lb on 1000 lbf/in: omega_n = sqrt(k g / W) with g = 386.0886 in/s^2 (common practice, from memory)."""
        osc = Oscillator(Q_(551.2, "lb"), Q_(0, "N*s/m"), Q_(1000, "lbf/in"))
        expected = math.sqrt(1000 * 386.08858267716535 / 551.2)  # g_n = 9.80665 m/s^2 / 0.0254 m/in
        assert osc.natural_frequency.to("rad/s").magnitude == pytest.approx(expected, rel=1e-14)
        assert osc.regime == "undamped"

    def test_results_carry_units(self):
        """With quantity inputs, frequencies, damping and deflection come back with units."""
        osc = Oscillator(Q_(250, "kg"), Q_(670, "N*s/m"), Q_(180, "N/mm"))
        assert osc.natural_frequency.check("1/[time]")
        assert str(osc.natural_frequency.units) == "radian / second"
        assert osc.natural_frequency_hz.to("Hz").magnitude == pytest.approx(math.sqrt(720) / (2 * math.pi))
        assert osc.damped_frequency.to("rad/s").magnitude == pytest.approx(
            math.sqrt(720 - (670 / 500) ** 2), rel=1e-14
        )
        assert osc.critical_damping.to("N*s/m").magnitude == pytest.approx(2 * math.sqrt(45e6))
        assert osc.static_deflection.to("mm").magnitude == pytest.approx(250 * 9.80665 / 180)
        assert osc.damping_ratio == R(670, 2) / sp.sqrt(45_000_000)  # dimensionless: a plain number

    def test_plain_numbers_give_plain_results(self):
        """Without quantities the results are exact sympy numbers in SI."""
        osc = Oscillator(250, 670, 180_000)
        assert osc.natural_frequency == sp.sqrt(720)
        assert not hasattr(osc.natural_frequency, "units")

    def test_quantities_converted_exactly(self):
        """45 lbf/in is taken as the exact rational number of N/m the unit definitions imply."""
        osc = Oscillator(Q_(1, "kg"), Q_(0, "N*s/m"), Q_(45, "lbf/in"))
        # lbf = 0.45359237 kg * 9.80665 m/s^2, in = 0.0254 m (exact definitions)
        assert osc.k == 45 * R("0.45359237") * R("9.80665") / R("0.0254")

    def test_response_with_quantity_initial_state(self):
        """x0 in mm and v0 in mm/s are converted to SI exactly before the constants are found."""
        osc = Oscillator(Q_(250, "kg"), Q_(0, "N*s/m"), Q_(180, "N/mm"))
        res = osc.response(0, Q_(2, "mm"), Q_(0, "mm/s"), t=t)
        assert sp.simplify(res.solution - R(2, 1000) * sp.cos(sp.sqrt(720) * t)) == 0

    def test_forcing_as_quantity_expression(self):
        """A force written as Q_(120, "N") * cos(omega t) is taken in newtons."""
        osc = Oscillator(Q_(250, "kg"), Q_(670, "N*s/m"), Q_(180, "N/mm"))
        res = osc.response(Q_(120, "N") * sp.cos(20 * t), 0, 0, t=t)
        assert res.steady_state == osc.particular(120 * sp.cos(20 * t), t=t).solution

    def test_stiffness_given_in_kg(self):
        """A stiffness in kg is refused, naming k."""
        with pytest.raises(UnitsError) as info:
            Oscillator(Q_(250, "kg"), Q_(0, "N*s/m"), Q_(180, "kg"))
        assert str(info.value) == (
            "k: expected a stiffness (N/m, N/mm, lbf/in, ...), got 180 kg, which is a mass. "
            'Give a stiffness, for example "12 N/mm".'
        )
        assert isinstance(info.value, CalcError) and isinstance(info.value, TypeError)

    def test_mass_given_as_weight(self):
        """A mass in newtons (a weight) is refused, naming m."""
        with pytest.raises(UnitsError) as info:
            Oscillator(Q_(2450, "N"), 0, Q_(180, "N/mm"))
        assert str(info.value) == (
            'm: expected a mass (kg, lb, ...), got 2450 N, which is a force. Give a mass, for example "250 kg".'
        )

    def test_damping_given_as_stiffness(self):
        """A damping coefficient in N/m is refused, naming c."""
        with pytest.raises(UnitsError) as info:
            Oscillator(Q_(250, "kg"), Q_(670, "N/m"), Q_(180, "N/mm"))
        assert str(info.value) == (
            "c: expected a damping coefficient (N*s/m, lbf*s/in, ...), got 670 N/m, which is a stiffness. "
            'Give a damping coefficient, for example "350 N*s/m".'
        )


class TestModelErrors:
    def test_negative_mass(self):
        """A negative mass is named."""
        with pytest.raises(ModelError) as info:
            Oscillator(-250, 670, 180_000)
        assert (
            str(info.value)
            == "m: the value -250 is negative. Give a mass, damping and stiffness of zero or more."
        )

    def test_no_mass_no_damper(self):
        """m = c = 0 leaves no differential equation."""
        with pytest.raises(ModelError) as info:
            Oscillator(0, 0, 180_000)
        assert str(info.value) == (
            "Oscillator(m, c, k): with m = 0 and c = 0 the equation k x = f(t) has no derivative left. "
            "The response is simply x = f(t)/k; give a mass or a damper for a dynamic model."
        )

    def test_damped_frequency_of_overdamped(self):
        """An overdamped system does not oscillate."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(250, 14_000, 180_000).damped_frequency
        assert str(info.value) == (
            "damped_frequency: an overdamped system does not oscillate, so it has no damped frequency. "
            "Use the roots of the characteristic polynomial (characteristic_roots)."
        )

    def test_damped_frequency_of_critically_damped(self):
        """Nor does a critically damped one."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(1, 8, 16).damped_frequency
        assert str(info.value).startswith("damped_frequency: a critically damped system does not oscillate")

    def test_log_decrement_of_undamped(self):
        """The logarithmic decrement is for underdamped systems only."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(250, 0, 180_000).log_decrement
        assert str(info.value) == (
            "log_decrement: an undamped system has no logarithmic decrement. "
            "It is defined for underdamped systems only (0 < zeta < 1)."
        )

    def test_velocity_for_massless_model(self):
        """v0 cannot be given for m = 0 (first order)."""
        with pytest.raises(ModelError) as info:
            Oscillator(0, 670, 180_000).response(120 * sp.cos(20 * t), 0.002, 0.1, t=t)
        assert str(info.value) == (
            "v0: a massless model is first order, so its initial velocity cannot be chosen. Leave v0 out; only x0 is used."
        )

    def test_damping_ratio_without_spring(self):
        """zeta needs m and k."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(250, 670, 0).damping_ratio
        assert str(info.value) == (
            "damping_ratio: the damping ratio c/(2 sqrt(k m)) needs both a mass and a spring. "
            "Give m > 0 and k > 0, or use the roots of the characteristic polynomial."
        )

    def test_natural_frequency_without_mass(self):
        """A massless model has no natural frequency."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(0, 670, 180_000).natural_frequency
        assert str(info.value) == "natural_frequency: a massless model has no natural frequency. Give a mass."

    def test_quality_factor_undamped(self):
        """Q is unbounded without damping."""
        with pytest.raises(ModelError) as info:
            _ = Oscillator(250, 0, 180_000).quality_factor
        assert str(info.value) == "quality_factor: an undamped system has an unbounded quality factor."

    def test_not_a_number(self):
        """Text where a number belongs is refused (quantities in text go through calckit.core.units)."""
        with pytest.raises(ModelError) as info:
            Oscillator("250 kg", 0, 180_000)
        assert str(info.value) == (
            "m: expected a number or sympy expression, got str '250 kg'. Give an int, float, Fraction or sympy expression."
        )

    def test_infinite(self):
        """An infinite stiffness is refused."""
        with pytest.raises(ModelError) as info:
            Oscillator(250, 0, float("inf"))
        assert str(info.value) == "k: the value inf is not a finite number. Give a finite number."


def test_frequency_response_matches_closed_form():
    """Oscillator.frequency_response: k |H| = magnification(r, zeta) of calckit.physics.harmonic."""
    osc = pump()
    w = np.linspace(0.0, 150.0, 301)
    h = osc.frequency_response(w)
    np.testing.assert_allclose(180_000 * np.abs(h), magnification(w / math.sqrt(720), 0.05), rtol=1e-12)


def test_frequency_response_at_undamped_resonance():
    """At an undamped resonance the receptance is infinite, quietly (as in calckit.physics.harmonic)."""
    h = Oscillator(1, 0, 4).frequency_response([2.0])
    assert np.isinf(np.abs(h[0]))


class TestInitialValuesList:
    """Oscillator.response also takes the base class's initial_values list."""

    def test_list_in_place_of_x0(self):
        """[x0, v0] gives the same response as x0, v0."""
        osc = Oscillator(2, 4, 50)
        f = sp.cos(3 * t)
        by_list = osc.response(f, [1, sp.Rational(1, 2)], t=t).solution
        by_keyword = osc.response(f, initial_values=(1, sp.Rational(1, 2)), t=t).solution
        by_pair = osc.response(f, 1, sp.Rational(1, 2), t=t).solution
        assert sp.simplify(by_list - by_pair) == 0 and sp.simplify(by_keyword - by_pair) == 0
        # x(0) = 1, x'(0) = 1/2 checked here with sympy alone
        assert sp.simplify(by_list.subs(t, 0)) == 1
        assert sp.simplify(sp.diff(by_list, t).subs(t, 0)) == sp.Rational(1, 2)

    def test_wrong_length(self):
        """A list of the wrong length is refused, naming the order."""
        with pytest.raises(ModelError) as info:
            Oscillator(2, 4, 50).response(sp.cos(3 * t), [1, 0, 0], t=t)
        assert (
            str(info.value)
            == "initial values: got 3 initial value(s) for an equation of order 2. Give [x0, v0]."
        )

    def test_given_twice(self):
        """initial_values and v0 together are refused."""
        with pytest.raises(ModelError) as info:
            Oscillator(2, 4, 50).response(sp.cos(3 * t), [1, 0], 2, t=t)
        assert str(info.value) == (
            "initial values: the initial state is given twice, as initial_values and as x0 or v0. "
            "Give either initial_values = [x0, v0] or x0 and v0."
        )

    def test_frequency_response_type(self):
        """The method returns the engine's FrequencyResponse, the same as calckit.frequency_response."""
        from calckit.engine.numeric import FrequencyResponse, frequency_response

        osc = pump()
        w = np.linspace(1.0, 60.0, 7)
        h = osc.frequency_response(w)
        assert isinstance(h, FrequencyResponse)
        np.testing.assert_array_equal(h.receptance, frequency_response(osc, w).receptance)
