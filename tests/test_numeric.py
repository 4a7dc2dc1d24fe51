"""calckit.engine.numeric: compiled expressions, time histories and frequency response curves.

Reference values come from numpy formulas written out here, from sympy's own
``evalf`` of the derived expression, and from the closed forms of
:mod:`calckit.physics.harmonic`.
"""

from __future__ import annotations

import functools
import math
from dataclasses import FrozenInstanceError

import numpy as np
import pytest
import sympy as sp

from calckit import LinearODE, Oscillator
from calckit.core.units import Q_
from calckit.engine.numeric import Compiled, FrequencyResponse, compile_expr, frequency_response, time_history
from calckit.errors import CalcError, ModelError, UnitsError
from calckit.physics.harmonic import magnification, phase_angle

t = sp.Symbol("t", real=True)
m, c, k, w = sp.symbols("m c k omega", positive=True)

# Harrow Creek pump P-101 on its inertia base: 250 kg on 4 isolators of 45 N/mm, zeta 0.05.
PUMP_M, PUMP_K = 250.0, 4 * 45_000.0
PUMP_C = 0.05 * 2 * math.sqrt(PUMP_K * PUMP_M)


class TestCompileExpr:
    def test_matches_numpy_formula(self):
        """A decaying cosine with two parameters equals the same formula written in numpy."""
        f = compile_expr(sp.exp(-c * t) * sp.cos(w * t), t, parameters=(c, w))
        tt = np.linspace(0.0, 3.0, 1001)
        np.testing.assert_allclose(f(tt, c=0.7, omega=5.0), np.exp(-0.7 * tt) * np.cos(5.0 * tt), rtol=1e-14)

    def test_parameters_by_name(self):
        """Parameters may be named by string; the symbol's assumptions do not matter to the caller."""
        f = compile_expr(k * t**2, t, parameters=["k"])
        assert f.parameter_names == ("k",)
        np.testing.assert_array_equal(f(np.array([1.0, 2.0]), k=3.0), [3.0, 12.0])

    def test_result_is_frozen_and_keeps_its_expression(self):
        """Compiled is a frozen record of what was compiled."""
        f = compile_expr(sp.sin(t), t)
        assert isinstance(f, Compiled)
        assert f.expr == sp.sin(t) and f.t == t and f.parameters == ()
        with pytest.raises(FrozenInstanceError):
            f.expr = sp.cos(t)

    def test_constant_broadcasts_to_times(self):
        """A constant (or an expression free of t) has the shape of the times."""
        tt = np.zeros((3, 4))
        out = compile_expr(sp.Rational(5, 2), t)(tt)
        assert out.shape == (3, 4) and out.dtype == float
        assert np.all(out == 2.5)
        out = compile_expr(k / 2, t, parameters=[k])(np.arange(7.0), k=3.0)
        assert out.shape == (7,) and np.all(out == 1.5)

    def test_floats_read_exactly(self):
        """A float coefficient is compiled as the decimal it shows."""
        f = compile_expr(0.1 * t, t)
        assert f.expr == sp.Rational(1, 10) * t

    def test_array_parameter_broadcasts(self):
        """An array of parameter values broadcasts against the times (a sweep)."""
        f = compile_expr(sp.exp(-c * t), t, parameters=[c])
        out = f(np.array([0.0, 1.0]), c=np.array([[0.0], [1.0]]))
        np.testing.assert_allclose(out, [[1.0, 1.0], [1.0, math.exp(-1.0)]], rtol=1e-15)

    def test_scalar_time(self):
        """A single time gives a 0-d array."""
        out = compile_expr(sp.cos(t), t)(0.0)
        assert out.shape == () and float(out) == 1.0

    def test_real_up_to_rounding_is_real(self):
        """The overdamped basis written with sqrt(c^2 - 4mk) evaluated for underdamped values.

        The sum of the two exponentials is real; it must come back real and equal
        2 e^{-c t / 2m} cos(omega_d t) (the underdamped form), not nan.
        """
        root = sp.sqrt(c**2 - 4 * m * k)
        expr = sp.exp((-c + root) / (2 * m) * t) + sp.exp((-c - root) / (2 * m) * t)
        f = compile_expr(expr, t, parameters=(m, c, k))
        tt = np.linspace(0.0, 2.0, 501)
        out = f(tt, m=1.0, c=0.4, k=4.0)
        assert out.dtype == float
        wd = math.sqrt(4.0 - 0.04)
        np.testing.assert_allclose(out, 2 * np.exp(-0.2 * tt) * np.cos(wd * tt), rtol=1e-12, atol=1e-14)

    def test_truly_complex_stays_complex(self):
        """sqrt(t - 1) before t = 1 is imaginary and is returned as complex."""
        out = compile_expr(sp.sqrt(t - 1), t)(np.array([0.0, 5.0]))
        assert out.dtype.kind == "c"
        np.testing.assert_allclose(out, [1j, 2.0])

    def test_division_by_zero_is_quiet_inf(self):
        """1/t at t = 0 gives inf without a warning (pytest turns warnings into errors)."""
        out = compile_expr(1 / t, t)(np.array([0.0, 2.0]))
        assert np.isinf(out[0]) and out[1] == 0.5

    def test_times_with_units(self):
        """Times given as a pint quantity in ms are taken in seconds."""
        out = compile_expr(t, t)(Q_(np.array([0.0, 250.0]), "ms"))
        np.testing.assert_allclose(out, [0.0, 0.25])

    def test_free_symbol_not_listed(self):
        """A symbol that is neither t nor a parameter is named at compile time."""
        with pytest.raises(ModelError) as info:
            compile_expr(k * sp.cos(w * t), t, parameters=[k])
        assert str(info.value) == (
            "compile_expr(k*cos(omega*t)): the expression has the free symbol(s) omega, which are "
            "neither t nor parameters. List them in parameters=(...) and pass their values at each "
            "call, or substitute numbers."
        )
        assert isinstance(info.value, CalcError)

    def test_value_not_given(self):
        """A parameter without a value at the call is named."""
        f = compile_expr(k * sp.cos(w * t), t, parameters=[k, w])
        with pytest.raises(ModelError) as info:
            f([0.0, 1.0], k=2.0)
        assert str(info.value) == (
            "evaluating k*cos(omega*t): no value given for omega. "
            "Pass every parameter by name, e.g. f(times, omega=...)."
        )

    def test_unknown_value(self):
        """A value for a name that is not a parameter is refused (a typo would otherwise pass)."""
        f = compile_expr(k * t, t, parameters=[k])
        with pytest.raises(ModelError) as info:
            f([0.0], k=1.0, kk=2.0)
        assert (
            str(info.value)
            == "evaluating k*t: kk is not a parameter of the expression. Pass only its parameters (k)."
        )

    def test_symbolic_value(self):
        """A value that is still a symbol is refused."""
        f = compile_expr(k * t, t, parameters=[k])
        with pytest.raises(ModelError) as info:
            f([0.0], k=2 * m)
        assert str(info.value) == "k: the value 2*m still has the symbol(s) m. Give a number."

    def test_value_with_units(self):
        """Parameter values are plain SI numbers; a quantity is refused with the reason."""
        f = compile_expr(k * t, t, parameters=[k])
        with pytest.raises(UnitsError) as info:
            f([0.0], k=Q_(45, "N/mm"))
        assert str(info.value) == (
            "k: got a quantity with units (newton / millimeter) for a compiled expression. "
            "Give the value as a plain number in SI units (the expression is in SI)."
        )

    def test_times_wrong_dimension(self):
        """Times in metres are refused."""
        with pytest.raises(UnitsError) as info:
            compile_expr(t, t)(Q_(1.0, "m"))
        assert (
            str(info.value)
            == "t: expected times, got a quantity in meter. Give times in s, ms or min, or plain numbers in seconds."
        )

    def test_text_times(self):
        """Text is not a number."""
        with pytest.raises(ModelError) as info:
            compile_expr(t, t)("soon")
        assert str(info.value) == "t: cannot read 'soon' as numbers. Give a number or an array of numbers."

    def test_undefined_function(self):
        """An undefined function of t cannot give numbers."""
        g = sp.Function("g")
        with pytest.raises(ModelError) as info:
            compile_expr(g(t) + 1, t)
        assert str(info.value) == (
            "compile_expr(g(t) + 1): cannot compute numbers from g(t). "
            "Give an explicit expression (solve the derivation first)."
        )

    def test_same_name_two_symbols(self):
        """Two symbols named k with different assumptions would be confused by name."""
        with pytest.raises(ModelError) as info:
            compile_expr(k * t + sp.Symbol("k") * t**2, t, parameters=["k"])
        assert str(info.value).endswith(
            "two different symbols are named k (with different assumptions). "
            "Make the symbols with the same assumptions, or give them different names."
        )

    def test_variable_as_parameter(self):
        """The variable itself cannot be a parameter."""
        with pytest.raises(ModelError) as info:
            compile_expr(t, t, parameters=[t])
        assert (
            str(info.value)
            == "compile_expr(parameters=...): t is the variable of the expression, not a parameter. Leave it out of the parameters."
        )

    def test_not_a_symbol(self):
        """The variable must be a sympy Symbol."""
        with pytest.raises(ModelError) as info:
            compile_expr(t, "t")
        assert str(info.value) == (
            "compile_expr(t=...): expected a sympy Symbol for the variable, got str 't'. "
            'Pass the symbol itself, e.g. t = sympy.Symbol("t", real=True).'
        )


def _evalf(expr, times, subs=None):
    """Reference values by sympy's own arbitrary-precision evalf, point by point."""
    subs = subs or {}
    return np.array([float(expr.evalf(30, subs={t: sp.Float(x, 30), **subs})) for x in times])


@functools.cache
def _symbolic_response():
    return Oscillator(m, c, k, regime="overdamped").response(sp.cos(3 * t) + t, 1, 0, t=t)


class TestTimeHistory:
    def test_pump_start_up_against_evalf(self):
        """Pump P-101 from a 2 mm offset under its 1480 rpm out-of-balance force (sympy evalf as reference)."""
        osc = Oscillator(250, sp.Rational(6708, 10), 180_000)
        w_run = sp.Rational(1480, 60) * 2 * sp.pi
        res = osc.response(120 * sp.cos(w_run * t), sp.Rational(2, 1000), 0, t=t)
        tt = np.linspace(0.0, 1.5, 37)
        np.testing.assert_allclose(time_history(res, tt), _evalf(res.solution, tt), rtol=1e-12, atol=1e-15)

    def test_parts(self):
        """The transient and steady-state parts add up to the solution, point by point."""
        res = Oscillator(1, sp.Rational(1, 2), 4).response(sp.cos(3 * t) + t, 1, 0, t=t)
        tt = np.linspace(0.0, 8.0, 401)
        total = time_history(res, tt)
        parts = time_history(res, tt, part="transient") + time_history(res, tt, part="steady_state")
        np.testing.assert_allclose(parts, total, rtol=1e-13, atol=1e-13)
        np.testing.assert_allclose(
            time_history(res, tt, part="steady_state"), _evalf(res.steady_state, tt), rtol=1e-12, atol=1e-14
        )

    def test_derivation(self):
        """A Derivation's particular solution evaluates like its expression."""
        der = LinearODE([1, 1, 4, 4]).particular(sp.exp(-t) + sp.sin(2 * t), t=t)
        tt = np.linspace(0.0, 4.0, 9)
        np.testing.assert_allclose(time_history(der, tt), _evalf(der.solution, tt), rtol=1e-12, atol=1e-14)

    @pytest.mark.parametrize(
        "values, regime",
        [
            ((1.0, 0.5, 4.0), "underdamped"),
            ((1.0, 5.0, 4.0), "overdamped"),
            ((1.0, 4.0, 4.0), "critically damped"),
        ],
    )
    def test_symbolic_response_with_values(self, values, regime):
        """A symbolic response, compiled once, matches the numeric response for each set of values.

        The symbolic model is written in the overdamped form; values in another
        regime go through complex arithmetic and must come back real (the
        critically damped values hit 0/0 and give nan, which is refused below).
        """
        sym = _symbolic_response()
        mv, cv, kv = values
        num = Oscillator(sp.nsimplify(mv), sp.nsimplify(cv), sp.nsimplify(kv)).response(
            sp.cos(3 * t) + t, 1, 0, t=t
        )
        assert num.transient.free_symbols == {t} and sym.transient.free_symbols == {m, c, k, t}
        tt = np.linspace(0.0, 5.0, 201)
        x = time_history(sym, tt, m=mv, c=cv, k=kv)
        if regime == "critically damped":  # the overdamped form divides by sqrt(c^2 - 4 m k) = 0
            assert np.isnan(x).all()
            return
        assert x.dtype == float
        np.testing.assert_allclose(x, time_history(num, tt), rtol=1e-10, atol=1e-12)

    def test_missing_value(self):
        """A symbolic response needs every parameter's value."""
        res = Oscillator(m, 0, k).response(sp.cos(2 * t), 0, 0, t=t)
        with pytest.raises(ModelError) as info:
            time_history(res, [0.0, 1.0], m=1.0)
        assert str(info.value).endswith(
            "no value given for k. Pass every parameter by name, e.g. f(times, k=...)."
        )

    def test_not_a_response(self):
        """Only a Response or Derivation has a time history."""
        with pytest.raises(ModelError) as info:
            time_history(sp.cos(t), [0.0])
        assert str(info.value) == (
            "time_history: expected a Response or a Derivation, got cos. "
            "Pass the result of Oscillator.response, total_response or particular."
        )

    def test_derivation_has_no_transient(self):
        """Asking a Derivation for its transient says where to get one."""
        der = LinearODE([1, 0, 4]).particular(sp.cos(t), t=t)
        with pytest.raises(ModelError) as info:
            time_history(der, [0.0], part="transient")
        assert str(info.value) == (
            "time_history(part=...): a Derivation has no transient. "
            "Ask a total response (Oscillator.response) for its transient and steady state."
        )

    def test_unknown_part(self):
        """A misspelt part is named."""
        res = Oscillator(1, 0, 4).response(0, 1, 0, t=t)
        with pytest.raises(ModelError) as info:
            time_history(res, [0.0], part="steady")
        assert str(info.value) == (
            'time_history(part=...): unknown part \'steady\'. Use "solution", "transient" or "steady_state".'
        )

    def test_many_points(self):
        """100,000 points of a total response (timing checked by hand, not asserted)."""
        res = Oscillator(250, sp.Rational(6708, 10), 180_000).response(
            120 * sp.cos(155 * t) + 30 * t, 0, 0, t=t
        )
        tt = np.linspace(0.0, 10.0, 100_000)
        x = time_history(res, tt)
        assert x.shape == (100_000,) and np.isfinite(x).all()
        np.testing.assert_allclose(x[::20_000], _evalf(res.solution, tt[::20_000]), rtol=1e-10, atol=1e-15)


class TestFrequencyResponse:
    def test_pump_against_harmonic_closed_forms(self):
        """k |H| and the lag equal magnification(r, zeta) and phase_angle(r, zeta) of calckit.physics.harmonic."""
        osc = Oscillator(PUMP_M, PUMP_C, PUMP_K)
        wn, zeta = math.sqrt(PUMP_K / PUMP_M), 0.05
        omegas = np.linspace(0.0, 200.0, 2001)
        fr = frequency_response(osc, omegas)
        assert isinstance(fr, FrequencyResponse)
        r = omegas / wn
        np.testing.assert_allclose(fr.magnification, magnification(r, zeta), rtol=1e-12)
        np.testing.assert_allclose(fr.phase_lag, phase_angle(r, zeta), rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(fr.amplitude, magnification(r, zeta) / PUMP_K, rtol=1e-12)
        assert fr.phase_lag[0] == 0.0 and not np.signbit(fr.phase_lag[0])

    def test_same_as_oscillator_method(self):
        """The receptance agrees with Oscillator.frequency_response."""
        osc = Oscillator(250, 670, 180_000)
        omegas = np.linspace(1.0, 100.0, 50)
        np.testing.assert_allclose(
            frequency_response(osc, omegas).receptance, osc.frequency_response(omegas), rtol=1e-14
        )

    def test_symbolic_with_values(self):
        """A symbolic model, compiled once, gives the numeric model's curve for the same values."""
        omegas = np.linspace(0.0, 60.0, 301)
        sym = frequency_response(Oscillator(m, c, k), omegas, m=250.0, c=670.0, k=180_000.0)
        num = frequency_response(Oscillator(250, 670, 180_000), omegas)
        np.testing.assert_allclose(sym.receptance, num.receptance, rtol=1e-13)
        np.testing.assert_allclose(sym.magnification, num.magnification, rtol=1e-13)

    def test_undamped_resonance_is_inf_quietly(self):
        """At the undamped natural frequency the amplitude is inf, with no warning."""
        fr = frequency_response(Oscillator(1, 0, 4), np.array([0.0, 2.0, 4.0]))
        assert np.isinf(fr.amplitude[1])
        np.testing.assert_allclose(fr.magnification[[0, 2]], [1.0, 1.0 / 3.0])
        assert list(fr.phase_lag) == [0.0, math.pi / 2, math.pi]  # pi/2: the limit, as in phase_angle

    def test_higher_order(self):
        """A third-order operator: H = 1 / p(i omega) by numpy.polyval of the coefficients."""
        coeffs = [1, 2, 5, 4]
        omegas = np.linspace(0.0, 5.0, 41)
        fr = frequency_response(LinearODE(coeffs), omegas)
        np.testing.assert_allclose(fr.receptance, 1.0 / np.polyval(coeffs, 1j * omegas), rtol=1e-14)

    def test_no_spring_has_no_magnification(self):
        """k = 0: the amplitude exists, the magnification does not."""
        fr = frequency_response(Oscillator(2, 3, 0), np.array([1.0, 2.0]))
        np.testing.assert_allclose(
            fr.amplitude, 1.0 / np.abs(-2 * np.array([1.0, 4.0]) + 3j * np.array([1.0, 2.0]))
        )
        with pytest.raises(ModelError) as info:
            _ = fr.magnification
        assert str(info.value) == (
            "FrequencyResponse.magnification: with no spring (k = 0) there is no static deflection "
            "to compare with. Use the amplitude |H| (m/N) instead."
        )

    def test_speeds_in_rpm(self):
        """Running speeds in rpm are turned into rad/s."""
        osc = Oscillator(PUMP_M, PUMP_C, PUMP_K)
        fr = frequency_response(osc, Q_(np.array([1480.0]), "rpm"))
        np.testing.assert_allclose(fr.omega, [1480.0 * 2 * math.pi / 60], rtol=1e-15)

    def test_hertz_refused(self):
        """Hz count cycles; taking them as rad/s would be 2 pi out, so they are refused."""
        with pytest.raises(UnitsError) as info:
            frequency_response(Oscillator(1, 0, 4), Q_(np.array([1.0]), "Hz"))
        assert (
            str(info.value)
            == "omega: frequencies in hertz count cycles, not radians. Give rad/s or rpm, or multiply Hz by 2 pi."
        )

    def test_not_a_model(self):
        """Only a model has a frequency response."""
        with pytest.raises(ModelError) as info:
            frequency_response("P-101", [1.0])
        assert str(info.value) == (
            "frequency_response: expected an Oscillator or LinearODE, got str. Pass the model, e.g. Oscillator(m, c, k)."
        )


class TestOverflow:
    """A forcing that grows past the float range is named as an overflow, never blamed on calckit."""

    RATE = 10**6  # exp(1e6 t) over 10 s

    def test_float_range_outside(self):
        """The bound the message quotes: ln(sys.float_info.max) = 709.78... (IEEE 754 binary64), and
        numpy's exp overflows past it."""
        import sys

        assert math.log(sys.float_info.max) == pytest.approx(709.782712893384)
        with np.errstate(over="ignore"):
            assert np.isinf(np.exp(710.0))

    def test_evaluate_names_the_overflow(self):
        res = Oscillator(1, sp.Rational(1, 10), 4).response(sp.exp(self.RATE * t), 0, 0, t=t)
        with pytest.raises(ModelError) as caught:
            res.evaluate(np.linspace(0.0, 10.0, 11))
        onset = math.log(1.7976931348623157e308) / self.RATE  # from the float range above
        assert str(caught.value) == (
            "evaluating the response x(t): the response x(t) overflows: it passes the largest float (about "
            f"1.8e308) by t = 1 s; exp(1000000*t) passes it once t > {onset:.3g} s. Shorten the time evaluated to "
            "before it overflows, or check the forcing's growth rate (a motion that large is no vibration)."
        )
        assert "report" not in str(caught.value)

    def test_finite_before_the_onset(self):
        """Before ln(max float)/a the same response evaluates: the refusal is the overflow, not the forcing."""
        res = Oscillator(1, sp.Rational(1, 10), 4).response(sp.exp(self.RATE * t), 0, 0, t=t)
        assert np.all(np.isfinite(res.evaluate(np.linspace(0.0, 5e-4, 6))))

    def test_independent_check_names_the_overflow(self):
        """compare_peak refuses before scipy.integrate.solve_ivp fails on it."""
        from calckit.engine.crosscheck import compare_peak

        res = Oscillator(1, sp.Rational(1, 10), 4).response(sp.exp(self.RATE * t), 0, 0, t=t)
        with pytest.raises(ModelError, match=r"^evaluating the derived response: the derived response overflows"):
            compare_peak(res.solution, 1.0, 0.1, 4.0, sp.exp(self.RATE * t), t, duration=10.0, samples=101)

    def test_receptance_at_resonance_still_quiet(self):
        """The frequency response keeps its inf at an undamped resonance (1/(k - m w^2) at w^2 = k/m)."""
        response = frequency_response(Oscillator(1, 0, 4), [2.0])
        assert np.isinf(np.abs(response.receptance[0]))

    def test_compiled_forcing_names_the_overflow(self):
        """compile_expr of the forcing itself: the exponential past the float range is named."""
        with pytest.raises(ModelError, match=r"^evaluating the expression exp\(1000000\*t\): the expression "):
            compile_expr(sp.exp(self.RATE * t), t)(np.linspace(0.0, 10.0, 11))

    def test_compiled_division_by_zero_stays_quiet(self):
        """1/(4 - w^2) at w = 2 is inf, as the module says (no exponential grows): given, not refused."""
        w = sp.Symbol("w", positive=True)
        assert np.isinf(compile_expr(1 / (4 - w**2), w)([2.0]))[0]
