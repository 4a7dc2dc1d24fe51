"""Total responses (transient + steady state from an initial state) against numerical integration.

Every total response is compared at many times with ``scipy.integrate.solve_ivp``
(method DOP853, rtol 1e-10, atol 1e-12) applied to the same equation written as
a first-order system; the initial values are checked exactly with sympy, the
transient is checked to solve the homogeneous equation and the steady state the
forced one (sympy.diff + sympy.simplify, independent of the engine's own check).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

from calckit import LinearODE, Oscillator
from calckit.engine.response import total_response
from calckit.errors import ModelError

t = sp.Symbol("t", real=True)
R = sp.Rational


def integrate(coeffs, f, y0, times):
    """x(times) for sum coeffs[i] x^(n-i) = f(t), x^(j)(0) = y0[j], by scipy.integrate.solve_ivp."""
    a = [float(v) for v in coeffs]
    n = len(a) - 1
    force = sp.lambdify(t, f, "math")

    def rhs(s, y):
        top = (force(s) - sum(a[n - j] * y[j] for j in range(n))) / a[0]
        return [*y[1:], top]

    sol = solve_ivp(
        rhs,
        (0.0, float(times[-1])),
        [float(v) for v in y0],
        method="DOP853",
        rtol=1e-10,
        atol=1e-12,
        t_eval=times,
    )
    assert sol.success, sol.message
    return sol.y[0]


def assert_matches_ivp(res, coeffs, f, y0, t_end, points=400, rtol=1e-8):
    """The response at *points* times equals solve_ivp's to rtol of the largest |x| seen."""
    times = np.linspace(0.0, t_end, points)
    x = sp.lambdify(t, res.solution, "numpy")(times) * np.ones_like(times)
    ref = integrate(coeffs, f, y0, times)
    scale = np.max(np.abs(ref))
    assert scale > 0
    np.testing.assert_allclose(x, ref, rtol=0, atol=rtol * scale)


def assert_initial_values_exact(res, values):
    """x^(j)(0) of the closed form equals the j-th initial value exactly (sympy, no floats)."""
    current = res.solution
    for j, value in enumerate(values):
        at_zero = sp.simplify(current.subs(t, 0))
        assert at_zero.free_symbols == set()
        assert sp.simplify(at_zero - value) == 0, f"x^({j})(0) = {at_zero}, wanted {value}"
        current = sp.diff(current, t)


def assert_parts_solve_their_equations(res, coeffs, f):
    """L[transient] = 0, L[steady state] = f and their sum is the solution (sympy.simplify)."""
    n = len(coeffs) - 1

    def op(x):
        return sum(cf * sp.diff(x, t, n - i) for i, cf in enumerate(coeffs))

    assert sp.simplify(op(res.transient)) == 0
    assert sp.simplify(op(res.steady_state) - f) == 0
    assert sp.simplify(res.transient + res.steady_state - res.solution) == 0
    assert res.steady_state == res.particular.solution
    assert res.transient.has(*(sym for sym, _ in res.constants)) is False


# Forcings that mix harmonic, polynomial and exponential terms (N, with t in s).
MIXED = 3 * sp.cos(R(5, 2) * t) + R(1, 2) * t**2 - 1 + 2 * sp.exp(-R(2, 5) * t)
MIXED_PRODUCT = sp.exp(-t / 2) * t * sp.sin(3 * t) + 4 * sp.sin(t) + R(3, 10) * t

# (name, (m, c, k), x0, v0, t_end). Plain SI numbers of a small test rig; floats
# are taken as the decimals they show.
REGIMES = [
    ("undamped", (2, 0, 50), 0.01, -0.5, 12.0),
    ("underdamped", (2, 1.2, 50), 0.01, -0.5, 12.0),
    ("critically damped", (2.5, 50, 250), -0.02, 1.5, 6.0),
    ("overdamped", (2.5, 80, 250), 0.03, 0, 6.0),
    ("no spring, k = 0", (2, 3, 0), 0.01, 0.2, 6.0),
    ("no damper, no spring, c = k = 0", (2, 0, 0), 0.01, 0.2, 4.0),
]


@pytest.mark.parametrize("f", [MIXED, MIXED_PRODUCT], ids=["mixed", "mixed product"])
@pytest.mark.parametrize("name, mck, x0, v0, t_end", REGIMES, ids=[case[0] for case in REGIMES])
def test_oscillator_total_response_against_solve_ivp(name, mck, x0, v0, t_end, f):
    """Oscillator.response in each regime equals scipy.integrate.solve_ivp at 400 times."""
    osc = Oscillator(*mck)
    if name in ("undamped", "underdamped", "critically damped", "overdamped"):
        assert osc.regime == name
    res = osc.response(f, x0, v0, t=t)
    assert res.verified
    assert_matches_ivp(res, osc.coefficients, f, [x0, v0], t_end)
    assert_initial_values_exact(res, [sp.Rational(repr(x0)), sp.Rational(repr(v0))])
    assert_parts_solve_their_equations(res, osc.coefficients, f)


@pytest.mark.parametrize("f", [MIXED, MIXED_PRODUCT], ids=["mixed", "mixed product"])
def test_massless_first_order_against_solve_ivp(f):
    """m = 0: c x' + k x = f(t) is first order; x(0) alone fixes the response (scipy.integrate.solve_ivp)."""
    osc = Oscillator(0, 4, 10)
    assert osc.order == 1
    res = osc.response(f, 0.05, t=t)
    assert_matches_ivp(res, [4, 10], f, [0.05], 5.0)
    assert_initial_values_exact(res, [R(1, 20)])
    assert_parts_solve_their_equations(res, [4, 10], f)
    # the transient is the single decaying exponential e^{-k t / c}
    assert sp.simplify(res.transient / sp.exp(-R(5, 2) * t)).free_symbols == set()


def test_transient_dies_out_with_damping():
    """With damping the transient tends to 0 and the total response tends to the steady state."""
    res = Oscillator(2, R(6, 5), 50).response(3 * sp.cos(R(5, 2) * t), R(1, 100), -R(1, 2), t=t)
    assert sp.limit(res.transient, t, sp.oo) == 0
    assert sp.limit(res.solution - res.steady_state, t, sp.oo) == 0


def test_zero_initial_state_gives_nonzero_transient():
    """Starting from rest the transient is not zero: it cancels the steady state's initial values."""
    f = 3 * sp.cos(R(5, 2) * t)
    res = Oscillator(2, R(6, 5), 50).response(f, 0, 0, t=t)
    assert res.transient != 0
    assert sp.simplify(res.transient.subs(t, 0) + res.steady_state.subs(t, 0)) == 0
    assert_matches_ivp(res, [2, R(6, 5), 50], f, [0, 0], 10.0)


class TestResonance:
    """Undamped forcing at the natural frequency: the amplitude grows linearly in time."""

    M, K, F0 = 250, 180_000, 120  # Harrow Creek pump P-101 on its isolators, with no damping

    def test_against_solve_ivp(self):
        """The resonant response equals scipy.integrate.solve_ivp over 8 s (about 34 cycles)."""
        osc = Oscillator(self.M, 0, self.K)
        wn = osc.natural_frequency
        f = self.F0 * sp.cos(wn * t)
        res = osc.response(f, 0, 0, t=t)
        assert_matches_ivp(res, [self.M, 0, self.K], f, [0, 0], 8.0, points=2000)

    def test_book_closed_form(self):
        """From rest, x = F0 t sin(omega_n t) / (2 m omega_n).

        Rao, Mechanical Vibrations, 5th ed., sec. 3.3 (response at resonance), from memory.
        """
        osc = Oscillator(self.M, 0, self.K)
        wn = osc.natural_frequency
        res = osc.response(self.F0 * sp.cos(wn * t), 0, 0, t=t)
        assert sp.simplify(res.solution - self.F0 * t * sp.sin(wn * t) / (2 * self.M * wn)) == 0

    def test_envelope_grows_linearly(self):
        """The peaks of solve_ivp's resonant response lie on the line F0 t / (2 m omega_n)."""
        wn = math.sqrt(self.K / self.M)
        times = np.linspace(0.0, 8.0, 40_001)
        x = integrate([self.M, 0, self.K], self.F0 * sp.cos(sp.sqrt(R(self.K, self.M)) * t), [0, 0], times)
        period = 2 * math.pi / wn
        windows = np.arange(2, int(8.0 / period)) * period
        slope = self.F0 / (2 * self.M * wn)
        for start in windows[::5]:
            inside = (times >= start) & (times < start + period)
            peak = np.max(np.abs(x[inside]))
            middle = start + period / 2
            assert peak == pytest.approx(slope * middle, rel=period / middle)
        # and the growth is linear: peaks one and five seconds in differ by slope * 4 s
        first = np.max(np.abs(x[(times > 1.0) & (times < 1.0 + period)]))
        later = np.max(np.abs(x[(times > 5.0) & (times < 5.0 + period)]))
        assert later - first == pytest.approx(4.0 * slope, rel=0.05)

    def test_damped_resonance_stays_bounded(self):
        """With a little damping the same forcing gives a bounded response (no t factor)."""
        osc = Oscillator(self.M, 670, self.K)
        wn = sp.sqrt(R(self.K, self.M))
        res = osc.response(self.F0 * sp.cos(wn * t), 0, 0, t=t)
        assert not res.steady_state.has(t * sp.sin(wn * t)) and not res.steady_state.has(t * sp.cos(wn * t))
        assert_matches_ivp(res, [self.M, 670, self.K], self.F0 * sp.cos(wn * t), [0, 0], 8.0, points=2000)


# Higher-order operators: (name, coefficients, forcing, initial values, t_end).
HIGHER = [
    # (lambda + 1)(lambda^2 + 4): forcing at both roots, -1 and 2i
    ("third order, resonant", [1, 1, 4, 4], sp.exp(-t) + sp.sin(2 * t), [1, 0, -1], 8.0),
    # (2 lambda + 1)(lambda^2 + 2 lambda + 5): a real root and a damped complex pair
    ("third order, mixed", [2, 5, 12, 5], MIXED, [R(1, 10), -1, 2], 8.0),
    # (lambda^2 + 1)^2: a double complex root, forcing at it (t^2 growth)
    ("fourth order, double resonance", [1, 0, 2, 0, 1], sp.cos(t), [0, 1, 0, -1], 10.0),
    # (lambda + 1)^2 (lambda^2 + 4): double real root and a complex pair, forced at both
    (
        "fourth order, forced at both",
        [1, 2, 5, 8, 4],
        t * sp.exp(-t) + sp.cos(2 * t),
        [1, -1, R(1, 2), 0],
        8.0,
    ),
]


@pytest.mark.parametrize("name, coeffs, f, values, t_end", HIGHER, ids=[case[0] for case in HIGHER])
def test_higher_order_against_solve_ivp(name, coeffs, f, values, t_end):
    """total_response of a LinearODE equals scipy.integrate.solve_ivp, with every initial value met exactly."""
    res = total_response(LinearODE(coeffs), f, values, t=t)
    assert len(res.constants) == len(coeffs) - 1
    assert_matches_ivp(res, coeffs, f, values, t_end)
    assert_initial_values_exact(res, values)
    assert_parts_solve_their_equations(res, coeffs, f)


def test_constants_reported():
    """The constants are named C_1.. and reproduce the transient from the general form."""
    res = Oscillator(1, 0, 4).response(0, 3, 4, t=t)
    names = [sym.name for sym, _ in res.constants]
    assert names == ["C_1", "C_2"]
    # x = 3 cos 2t + 2 sin 2t (x0 = 3, v0 = 4 = 2 * C_2), worked by hand
    assert sp.simplify(res.solution - (3 * sp.cos(2 * t) + 2 * sp.sin(2 * t))) == 0
    assert {value for _, value in res.constants} == {3, 2}


def test_steps_end_with_homogeneous_initial_and_total():
    """The last three steps are the homogeneous solution, the initial-value equations and the total."""
    res = Oscillator(2, R(6, 5), 50).response(MIXED, 0, 0, t=t)
    kinds = [step.kind for step in res.steps[-3:]]
    assert kinds[-1] != kinds[0] and len(set(kinds)) == 3
    assert res.steps[: len(res.particular.steps)] == res.particular.steps
    ic = res.steps[-2]
    assert len(ic.equations) == 2


def test_wrong_number_of_initial_values():
    """A third-order equation needs three initial values; the message says how many."""
    with pytest.raises(ModelError) as info:
        total_response(LinearODE([1, 1, 4, 4]), sp.cos(t), [0, 1], t=t)
    assert str(info.value) == (
        "initial values: got 2 initial value(s) for an equation of order 3. "
        "Give x(0) and the first 2 derivative(s) at t = 0, 3 values in all."
    )


def test_velocity_for_massless_model():
    """m = 0 is first order: an initial velocity cannot be chosen."""
    with pytest.raises(ModelError) as info:
        Oscillator(0, 4, 10).response(sp.cos(t), 0.05, 1, t=t)
    assert str(info.value) == (
        "v0: a massless model is first order, so its initial velocity cannot be chosen. Leave v0 out; only x0 is used."
    )


def test_linear_ode_response_takes_n_initial_values():
    """LinearODE.response meets x(0)..x'''(0) for a fourth-order equation, and its total
    satisfies the equation (checked with sympy.diff and sympy.simplify)."""
    t = sp.Symbol("t", real=True)
    ode = LinearODE([1, 0, 2, 0, 1])  # (D^2 + 1)^2: a double complex root pair
    res = ode.response(sp.cos(2 * t), [0, 1, 0, 0], t=t)
    assert [sp.simplify(sp.diff(res.solution, t, j).subs(t, 0)) for j in range(4)] == [0, 1, 0, 0]
    lhs = sum(c * sp.diff(res.solution, t, 4 - i) for i, c in enumerate([1, 0, 2, 0, 1]))
    assert sp.simplify(lhs - sp.cos(2 * t)) == 0
