"""Switching forcing solved interval by interval (engine/piecewise.py), checked against solve_ivp."""

import numpy as np
import sympy as sp
from scipy.integrate import solve_ivp

import calckit as ck
from calckit.physics.pulses import half_sine, rectangular

t = sp.Symbol("t", real=True)


def _ivp(m, c, k, f, end):
    """Reference: scipy.integrate.solve_ivp, tight tolerances, step below the pulse length."""
    load = sp.lambdify(t, f, "numpy")
    sol = solve_ivp(lambda s, y: [y[1], (float(load(s)) - c * y[1] - k * y[0]) / m], (0, end), [0, 0],
                    rtol=1e-10, atol=1e-13, max_step=1e-3, dense_output=True)
    return sol.sol


def test_half_sine_response_matches_solve_ivp():
    """Half-sine on a damped oscillator: the Piecewise against scipy.integrate.solve_ivp."""
    f = half_sine(100, sp.Rational(1, 10), t=t)
    res = ck.Oscillator(1, 2, 400).response(f, 0, 0, t=t)
    assert res.verified
    times = np.linspace(0, 0.5, 51)
    np.testing.assert_allclose(res.evaluate(times), _ivp(1, 2.0, 400.0, f, 0.5)(times)[0], atol=1e-8)


def test_long_rectangular_pulse_peak_is_twice_static():
    """Undamped, pulse much longer than the period: peak 2 F/k (step load, textbook closed form 1 - cos)."""
    f = rectangular(50, 10, t=t)
    res = ck.Oscillator(1, 0, 100).response(f, 0, 0, t=t)
    times = np.linspace(0, 10, 20001)
    assert abs(np.max(res.evaluate(times)) - 2 * 50 / 100) < 1e-6
