"""The exact periodic steady state (calckit.engine.periodic) against scipy.integrate.solve_ivp.

Each case integrates the equation with scipy.integrate.solve_ivp (DOP853), piece by piece between
the load's switching times, over enough periods that the start-up transient has decayed below the
tolerance, and compares the last period with the periodic solution. The heavy cases run in a
subprocess with a time limit, so a hang fails the test instead of stopping the suite.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import textwrap

import numpy as np
import pytest
import sympy as sp

import calckit as ck
from calckit.engine.operator import LinearODE
from calckit.errors import CalcError, ForcingError, ModelError

R = sp.Rational
t = sp.Symbol("t", real=True)


def _integrate_periods(coefficients, pieces, T, periods, samples):
    """x over the last period of `periods` from rest: solve_ivp (DOP853) interval by interval.

    `pieces` is [(start, end, g)] covering [0, T) with g a float function of the time in the period.
    """
    from scipy.integrate import solve_ivp

    a = [float(c) for c in coefficients]  # highest derivative first
    n = len(a) - 1
    state = np.zeros(n)
    times = np.linspace(0.0, T, samples, endpoint=False)
    out = np.empty(samples)
    for p in range(periods):
        for lo, hi, g in pieces:

            def rhs(s, y, g=g):
                top = (g(s) - sum(a[n - i] * y[i] for i in range(n))) / a[0]
                return [*y[1:], top]

            sol = solve_ivp(rhs, (lo, hi), state, method="DOP853", rtol=1e-11, atol=1e-14, dense_output=True)
            assert sol.success
            if p == periods - 1:
                inside = (times >= lo) & (times < hi)
                out[inside] = sol.sol(times[inside])[0]
            state = sol.y[:, -1]
    return times, out


def test_first_order_square_wave_closed_form():
    """x' + x = 1 on [0, 1), 0 on [1, 2): the period map gives x(0) = 1/(1 + e) (by hand, textbook
    first-order linear equation)."""
    ode = LinearODE([1, 1])
    per = ode.periodic_steady_state(sp.Piecewise((1, t < 1), (0, True)), 2, t=t)
    assert float(per.initial_state[0]) == pytest.approx(1 / (1 + math.e), rel=1e-15)
    assert per.verified
    x = per.evaluate([0.5, 2.5])  # the period repeats
    assert x[0] == pytest.approx(x[1], rel=1e-14)
    assert x[0] == pytest.approx(1 - (1 - 1 / (1 + math.e)) * math.exp(-0.5), rel=1e-13)


def test_oscillator_trapezoid_against_solve_ivp():
    """m x'' + c x' + k x = a repeated trapezoid; solve_ivp over 40 periods (zeta omega_n T = 1.3 per
    period, so the transient is below e^-50 of the start) against the periodic x on the last period."""
    m, k, zeta, T = 2, 800, R(1, 20), R(1, 2)
    c = 2 * zeta * sp.sqrt(k * m)
    P, t1, t2, t3 = 100, R(1, 10), R(1, 10), R(1, 20)
    load = sp.Piecewise(
        (P * t / t1, t < t1), (P, t < t1 + t2), (P * (t1 + t2 + t3 - t) / t3, t < t1 + t2 + t3), (0, True)
    )
    osc = ck.Oscillator(m, c, k)
    per = osc.periodic_steady_state(load, T, t=t)
    assert per.verified and per.residual < 1e-25
    f1, f2, f3 = float(t1), float(t1 + t2), float(t1 + t2 + t3)
    pieces = [
        (0.0, f1, lambda s: P * s / f1),
        (f1, f2, lambda s: P),
        (f2, f3, lambda s: P * (f3 - s) / float(t3)),
        (f3, float(T), lambda s: 0.0),
    ]
    times, ref = _integrate_periods([m, float(c), k], pieces, float(T), 40, 2001)
    x = per.evaluate(times)
    assert np.max(np.abs(x - ref)) <= 1e-8 * np.max(np.abs(ref))
    # the state at t = 0 of the periodic solution is where the integration ends each period
    assert float(per.initial_state[0]) == pytest.approx(ref[0], rel=1e-8)


def test_third_order_against_solve_ivp():
    """x''' + 3 x'' + 3 x' + x = rectangular pulse (roots -1, -1, -1: repeated), period 3; 60 periods."""
    ode = LinearODE([1, 3, 3, 1])
    per = ode.periodic_steady_state(sp.Piecewise((2, t < 1), (0, True)), 3, t=t)
    assert per.verified
    times, ref = _integrate_periods(
        [1, 3, 3, 1], [(0.0, 1.0, lambda s: 2.0), (1.0, 3.0, lambda s: 0.0)], 3.0, 60, 901
    )
    assert np.max(np.abs(per.evaluate(times) - ref)) <= 1e-8 * np.max(np.abs(ref))


def test_undamped_resonance_refused():
    """Undamped with omega_n T = 2 pi: the free motion itself has the period, no single periodic response."""
    osc = ck.Oscillator(1, 0, 4 * sp.pi**2)
    with pytest.raises(ModelError, match="repeats with the period"):
        osc.periodic_steady_state(sp.Piecewise((1, t < R(1, 2)), (0, True)), 1, t=t)


def test_refusals():
    osc = ck.Oscillator(1, R(1, 5), 4)
    a = sp.Symbol("a", positive=True)
    with pytest.raises(ModelError, match="still holds a"):
        osc.periodic_steady_state(sp.Piecewise((a, t < R(1, 2)), (0, True)), 1, t=t)
    with pytest.raises(ForcingError, match="after the period"):
        osc.periodic_steady_state(sp.Piecewise((1, t < 2), (0, True)), 1, t=t)
    with pytest.raises(CalcError, match="not positive"):
        osc.periodic_steady_state(sp.Piecewise((1, t < R(1, 2)), (0, True)), -1, t=t)


def test_sp601_stroke_in_a_subprocess_with_time_limit():
    """The SP-601 press stroke (the demo's numbers) must finish well inside 120 s (a previous attempt
    hung on simplification); its peak against solve_ivp over 30 strokes (zeta omega_n T = 2.5 a stroke)."""
    code = textwrap.dedent(
        """
        import json, sympy as sp, numpy as np, calckit as ck
        R = sp.Rational
        t = sp.Symbol("t", real=True)
        P, T, t1, t2, t3 = 45000, R(3, 2), R(3, 10), R(2, 5), R(1, 10)
        load = sp.Piecewise((P*t/t1, t < t1), (P, t < t1+t2), (P*(t1+t2+t3-t)/t3, t < t1+t2+t3), (0, True))
        osc = ck.Oscillator(3200, 2*R(3, 100)*sp.sqrt(9500000*3200), 9500000)
        per = osc.periodic_steady_state(load, T, t=t)
        times = np.linspace(0, 1.5, 3000, endpoint=False)
        print(json.dumps({"x": per.evaluate(times).tolist(), "verified": per.verified}))
        """
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr[-2000:]
    got = json.loads(done.stdout.strip().splitlines()[-1])
    assert got["verified"]
    c = 2 * 0.03 * math.sqrt(9500000 * 3200)
    pieces = [
        (0.0, 0.3, lambda s: 45000 * s / 0.3),
        (0.3, 0.7, lambda s: 45000.0),
        (0.7, 0.8, lambda s: 45000 * (0.8 - s) / 0.1),
        (0.8, 1.5, lambda s: 0.0),
    ]
    times, ref = _integrate_periods([3200, c, 9500000], pieces, 1.5, 30, 3000)
    assert np.max(np.abs(np.array(got["x"]) - ref)) <= 1e-7 * np.max(np.abs(ref))
