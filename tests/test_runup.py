"""Tests of calckit.physics.runup: the run-up from rest in steps of constant speed, then the hold.

References, independent of calckit: scipy.integrate.solve_ivp on the same equation,
m x'' + c x' + k x = U (Omega(t)^2 cos(theta(t)) + Omega'(t) sin(theta(t))) with the speed
ramped linearly, Omega(t) = Omega t / t_ru and theta = Omega t^2 / (2 t_ru) (run-up), or
Omega(t) = Omega (1 - t / t_cd), theta = Omega (t - t^2 / (2 t_cd)) (coast-down from the
steady state at Omega); the force is m_r times the second derivative of e cos(theta) with its
sign turned (Newton's second law on the unbalance mass, hand-worked); and on one step of
constant speed from a given state.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from calckit.physics.runup import run_up, run_up_results, run_up_stage, run_up_steps

# A machine of the Harrow Creek kind: 1850 kg on 300 kN/m, 5 % damping, 140 kg rotor at G 6.3, 1480 rpm
M, K, ZETA = 1850.0, 300e3, 0.05
C = 2 * ZETA * math.sqrt(K * M)
W = 1480 * 2 * math.pi / 60
U = 140.0 * 6.3e-3 / W  # kg m, e = G / Omega (ISO 21940-11, from memory)
T_RU = 2.0


def ramp(t, y):
    """The run-up's equation with the speed ramped linearly (the staircase's limit), tangential term included."""
    speed = W * t / T_RU
    theta = W * t * t / (2 * T_RU)
    force = U * (speed**2 * math.cos(theta) + (W / T_RU) * math.sin(theta))
    return [y[1], (force - C * y[1] - K * y[0]) / M]


T_CD = 6.0  # coast-down time, s: slower than the run-up


def coast(t, y):
    """The coast-down's equation: the speed falls linearly from W to 0 over T_CD, Omega' = -W / T_CD."""
    speed = W * (1 - t / T_CD)
    theta = W * (t - t * t / (2 * T_CD))
    force = U * (speed**2 * math.cos(theta) - (W / T_CD) * math.sin(theta))
    return [y[1], (force - C * y[1] - K * y[0]) / M]


@pytest.fixture(scope="module")
def reference():
    """solve_ivp (DOP853, tight tolerances, step limited) on the linear ramp."""
    return solve_ivp(
        ramp, (0, T_RU), [0.0, 0.0], method="DOP853", rtol=1e-10, atol=1e-14, max_step=1e-3, dense_output=True
    )


@pytest.fixture(scope="module")
def coast_reference():
    """solve_ivp on the coast-down from the steady state at W: x = Re(X), v = Re(i W X), X = U W^2 / (k - m W^2
    + i c W) (Rao 5th ed. sec. 3.7, from memory)."""
    steady = U * W**2 / complex(K - M * W**2, C * W)
    return solve_ivp(
        coast,
        (0, T_CD),
        [steady.real, -W * steady.imag],
        method="DOP853",
        rtol=1e-10,
        atol=1e-14,
        max_step=1e-3,
        dense_output=True,
    )


class TestRunUpStage:
    def test_one_step_against_solve_ivp(self):
        """The compiled total response over one step of constant speed, from a given state, against
        solve_ivp on m x'' + c x' + k x = F_c cos(Omega t) + F_s sin(Omega t)."""
        stage = run_up_stage()
        fc, fs, x0, v0, speed = 120.0, -45.0, 2e-4, -3e-3, 31.0

        def rhs(t, y):
            return [y[1], (fc * math.cos(speed * t) + fs * math.sin(speed * t) - C * y[1] - K * y[0]) / M]

        times = np.linspace(0.0, 0.5, 51)
        done = solve_ivp(rhs, (0, 0.5), [x0, v0], t_eval=times, method="DOP853", rtol=1e-11, atol=1e-15)
        args = dict(m=M, c=C, k=K, Omega=speed, F_c=fc, F_s=fs, x_0=x0, v_0=v0)
        np.testing.assert_allclose(stage.x(times, **args), done.y[0], rtol=0, atol=1e-10)
        np.testing.assert_allclose(stage.v(times, **args), done.y[1], rtol=0, atol=1e-9)

    def test_derived_once(self):
        """The stage is derived once and then reused (lru_cache)."""
        assert run_up_stage() is run_up_stage()


class TestRunUpSteps:
    def test_quarter_of_the_half_power_bandwidth(self):
        """N = ceil(Omega / (0.5 zeta omega_n)): the speed moves by Omega / N <= (2 zeta omega_n) / 4
        in one step (hand-worked: 155 / (0.5 * 0.05 * 19.73) = 314.2 -> 315)."""
        assert run_up_steps(155.0, 19.73, 0.05) == 315
        assert 155.0 / 315 <= 2 * 0.05 * 19.73 / 4

    def test_bounds(self):
        """At least 100 steps, at most 2000; no damping is taken as zeta = 0.005."""
        assert run_up_steps(10.0, 100.0, 0.5) == 100
        assert run_up_steps(1e4, 1.0, 0.01) == 2000
        assert run_up_steps(10.0, 10.0, 0.0) == run_up_steps(10.0, 10.0, 0.005) == 400


class TestRunUp:
    def test_history_against_solve_ivp(self, reference):
        """The staircase's x(t) during the run-up stays within 2 % of the largest motion of solve_ivp on
        the linear ramp, at every point."""
        steps = run_up_steps(W, math.sqrt(K / M), ZETA)
        run = run_up(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=ZETA, steps=steps)
        during = run.times <= T_RU
        exact = reference.sol(run.times[during])[0]
        peak = float(np.max(np.abs(exact)))
        assert float(np.max(np.abs(run.x[during] - exact))) < 0.02 * peak

    def test_speed_and_times(self):
        """Step j runs at (j + 1/2) Omega / N for t_ru / N; then the hold runs at Omega for six time
        constants 1 / (zeta omega_n), at most 60 s."""
        run = run_up(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=ZETA, steps=100, points=4)
        assert run.steps == 100 and run.end == T_RU
        assert run.speed[0] == pytest.approx(0.5 * W / 100) and run.speed[-1] == W
        assert run.times[4] == pytest.approx(T_RU / 100)
        hold = 6 / (ZETA * math.sqrt(K / M))
        assert run.times[-1] == pytest.approx(T_RU + min(hold, 60.0))
        assert np.all(np.diff(run.times) >= 0)

    def test_envelope(self):
        """The envelope is the steady amplitude at the speed held, |U s^2 / (k - m s^2 + i c s)| (Rao 5th
        ed. sec. 3.7, from memory), written here with complex numbers."""
        run = run_up(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=ZETA, steps=100)
        s = run.speed
        np.testing.assert_allclose(run.envelope, np.abs(U * s**2 / (K - M * s**2 + 1j * C * s)), rtol=1e-12)

    def test_hold_settles_to_the_steady_amplitude(self):
        """Six time constants after the run-up the motion has settled to the steady amplitude at running
        speed (transient down to e^-6 of its size)."""
        run = run_up(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=ZETA, steps=200)
        steady = abs(U * W**2 / (K - M * W**2 + 1j * C * W))
        last = run.x[-400:]  # the end of the hold: several periods at running speed
        assert float(np.max(np.abs(last))) == pytest.approx(steady, rel=0.01)


class TestCoastDown:
    def test_history_against_solve_ivp(self, coast_reference):
        """The coast-down's x(t) within 2 % of the largest motion of solve_ivp, at every point; its largest
        motion and force within 1 %."""
        got = run_up_results(
            m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_CD, zeta=ZETA, direction="down"
        )
        during = got.run.times <= T_CD
        exact = coast_reference.sol(got.run.times[during])[0]
        peak = float(np.max(np.abs(exact)))
        assert float(np.max(np.abs(got.run.x[during] - exact))) < 0.02 * peak
        times = np.linspace(0.0, T_CD, 300001)
        x, v = coast_reference.sol(times)
        assert got.peak == pytest.approx(float(np.max(np.abs(x))), rel=0.01)
        assert got.peak_force == pytest.approx(float(np.max(np.abs(K * x + C * v))), rel=0.01)
        assert got.peak_half_step == pytest.approx(got.peak, rel=0.01)

    def test_speed_falls_and_the_hold_is_at_rest(self):
        """Step j runs at Omega - (j + 1/2) Omega / N; after the coast-down the machine decays freely at rest
        (six time constants: the motion falls to about e^-6 = 0.25 % of its size)."""
        run = run_up(
            m=M,
            c=C,
            k=K,
            omega=W,
            unbalance=U,
            run_up_time=T_CD,
            zeta=ZETA,
            steps=100,
            points=4,
            direction="down",
        )
        assert run.speed[0] == pytest.approx(W - 0.5 * W / 100) and run.speed[-1] == 0.0
        assert float(np.max(np.abs(run.x[-400:]))) < 0.01 * float(np.max(np.abs(run.x)))  # e^-6 of a decay

    def test_unknown_direction(self):
        """A ramp other than up or down is refused, naming it."""
        from calckit.errors import InputsError

        with pytest.raises(InputsError) as err:
            run_up(
                m=M,
                c=C,
                k=K,
                omega=W,
                unbalance=U,
                run_up_time=T_CD,
                zeta=ZETA,
                steps=100,
                direction="sideways",
            )
        assert str(err.value) == (
            "direction: a speed ramp 'sideways' is not one of 'up', 'down'. "
            'Give "up" for a run-up from rest or "down" for a coast-down from running speed.'
        )


def test_tangential_term_matters():
    """Without the tangential term U Omega' sin(theta) the solve_ivp reference moves away from the run-up by
    more than the tolerance the tests above accept at a short run-up (0.5 s), so those tests can fail."""
    t_ru = 0.5

    def rhs(t, y, tangential):
        speed, theta = W * t / t_ru, W * t * t / (2 * t_ru)
        force = U * (speed**2 * math.cos(theta) + tangential * (W / t_ru) * math.sin(theta))
        return [y[1], (force - C * y[1] - K * y[0]) / M]

    kw = dict(method="DOP853", rtol=1e-10, atol=1e-14, max_step=1e-3)
    with_term = solve_ivp(rhs, (0, t_ru), [0.0, 0.0], args=(1.0,), **kw)
    without = solve_ivp(rhs, (0, t_ru), [0.0, 0.0], args=(0.0,), **kw)
    got = run_up_results(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=t_ru, zeta=ZETA)
    exact = float(np.max(np.abs(with_term.y[0])))
    assert got.peak == pytest.approx(exact, rel=0.01)
    assert abs(float(np.max(np.abs(without.y[0]))) / exact - 1) > 0.01


class TestRunUpResults:
    def test_peaks_against_solve_ivp(self, reference):
        """The largest motion and force during the run-up within 1 % of solve_ivp on the linear ramp;
        halving the step moves the largest motion by less than 1 %."""
        got = run_up_results(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=ZETA)
        times = np.linspace(0.0, T_RU, 200001)
        x, v = reference.sol(times)
        assert got.peak == pytest.approx(float(np.max(np.abs(x))), rel=0.01)
        assert got.peak_force == pytest.approx(float(np.max(np.abs(K * x + C * v))), rel=0.01)
        assert got.peak_half_step == pytest.approx(got.peak, rel=0.01)
        assert got.steps == run_up_steps(W, math.sqrt(K / M), ZETA)

    def test_half_step_covers_the_whole_run_up(self, reference):
        """With the resonance passed late in the run-up (running speed 1.3 omega_n), the half-step peak
        still agrees: it is taken over the whole run-up, not over its first half."""
        wn = math.sqrt(K / M)
        w = 1.3 * wn
        u = 140.0 * 6.3e-3 / w
        got = run_up_results(m=M, c=C, k=K, omega=w, unbalance=u, run_up_time=T_RU, zeta=ZETA)

        def rhs(t, y):
            theta = w * t * t / (2 * T_RU)
            force = u * ((w * t / T_RU) ** 2 * math.cos(theta) + (w / T_RU) * math.sin(theta))
            return [y[1], (force - C * y[1] - K * y[0]) / M]

        done = solve_ivp(rhs, (0, T_RU), [0.0, 0.0], method="DOP853", rtol=1e-10, atol=1e-14, max_step=1e-3)
        exact = float(np.max(np.abs(done.y[0])))
        assert got.peak == pytest.approx(exact, rel=0.01)
        assert got.peak_half_step == pytest.approx(exact, rel=0.01)

    def test_resonance_amplitude(self):
        """U omega_n^2 / (c omega_n): the steady amplitude at r = 1 (Rao 5th ed. sec. 3.7, from memory);
        unbounded without damping."""
        wn = math.sqrt(K / M)
        got = run_up_results(m=M, c=C, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=ZETA)
        assert got.resonance_amplitude == pytest.approx(abs(U * wn**2 / (1j * C * wn)), rel=1e-12)
        undamped = run_up_results(m=M, c=0.0, k=K, omega=W, unbalance=U, run_up_time=T_RU, zeta=0.0)
        assert undamped.resonance_amplitude == math.inf
