"""The independent check of a sampled record's response (calckit.engine.crosscheck), against closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calckit.engine.crosscheck import LARGEST_RECORD, compare_sampled_peak, integrate_sampled
from calckit.errors import ModelError


def _ramp_and_hold(t, wn, rise):
    """Undamped oscillator from rest under a load rising linearly to 1 over *rise*, then held:
    z = (t/rise - sin(wn t)/(wn rise))/wn^2 while rising, then
    z = (1 - (sin(wn t) - sin(wn (t - rise)))/(wn rise))/wn^2.
    A. K. Chopra, Dynamics of Structures, 4th ed., sec. 4.5 (step force with finite rise time), from memory."""
    rising = (t - np.sin(wn * t) / wn) / rise
    held = 1 - (np.sin(wn * t) - np.sin(wn * (t - rise))) / (wn * rise)
    return np.where(t < rise, rising, held) / wn**2


class TestIntegrateSampled:
    def test_ramp_and_hold_closed_form(self):
        """A ramp that lasts 25 samples then holds is straight between samples, so the interval-by-interval
        integration must meet the closed form to the solver's tolerance."""
        wn, rise = 40.0, 0.025
        t = np.linspace(0.0, 1.0, 1001)
        p = np.minimum(t / rise, 1.0)
        z = integrate_sampled(t, p, wn, 0.0)
        exact = _ramp_and_hold(t, wn, rise)
        assert np.max(np.abs(z - exact)) <= 1e-8 * np.max(np.abs(exact))

    def test_damped_step_settles_at_static(self):
        """With damping the response to a held load settles at p / omega_n^2 (statics)."""
        t = np.linspace(0.0, 5.0, 5001)
        z = integrate_sampled(t, np.where(t > 0, 2.0, 0.0), 20.0, 0.2)
        assert z[-1] == pytest.approx(2.0 / 400.0, rel=1e-6)


class TestCompareSampledPeak:
    def test_agrees_and_disagrees(self):
        """The closed form agrees; the same response 0.1 % high is caught (the check can fail)."""
        wn, rise = 40.0, 0.025
        t = np.linspace(0.0, 1.0, 1001)
        p = np.minimum(t / rise, 1.0)
        exact = _ramp_and_hold(t, wn, rise)
        good = compare_sampled_peak(exact, t, p, wn, 0.0)
        assert good.agrees and good.agreement < 1e-8
        assert "one interval between samples at a time" in good.procedure
        assert not compare_sampled_peak(exact * 1.001, t, p, wn, 0.0).agrees

    def test_refusals(self):
        """Bad records are refused with a ModelError that says what to do."""
        t = np.linspace(0.0, 1.0, 11)
        with pytest.raises(ModelError) as caught:
            compare_sampled_peak(np.zeros(10), t, np.zeros(11), 10.0, 0.0)
        assert str(caught.value) == (
            "independent check of a record: the derived response has 10 values for 11 sample times. "
            "Give the derived response at every sample time."
        )
        with pytest.raises(ModelError) as caught:
            integrate_sampled(t[::-1], np.zeros(11), 10.0, 0.0)
        assert "do not increase" in str(caught.value)
        long = np.linspace(0.0, 1.0, LARGEST_RECORD + 1)
        with pytest.raises(ModelError) as caught:
            integrate_sampled(long, np.zeros(long.size), 10.0, 0.0)
        assert "Check a part of the record that holds its peak" in str(caught.value)
        with pytest.raises(ModelError):
            integrate_sampled(t, np.zeros(11), -1.0, 0.0)
        assert math.isfinite(compare_sampled_peak(np.zeros(11), t, np.zeros(11), 10.0, 0.0).agreement)


class TestIntegrateMotion:
    """integrate_motion (scipy.integrate.odeint, piece by piece between the forcing's switching times)."""

    @pytest.mark.parametrize("on_a_sample", [True, False])
    def test_rectangular_pulse_closed_form(self, on_a_sample):
        """Undamped oscillator from rest under a force F0 held for td, then removed:
        x = (F0/k)(1 - cos wn t) while it acts, then x = (F0/k)(cos wn (t - td) - cos wn t).
        S. S. Rao, Mechanical Vibrations, 5th ed., sec. 4.6 (response to a rectangular pulse), from memory.
        Every sample after the switch must come from the second piece (a piece lost there reads as zeros),
        with the switch on a sample time and between two."""
        import sympy as sp

        from calckit.engine.crosscheck import integrate_motion

        t = sp.Symbol("t", real=True)
        m, k, f0 = 2.0, 800.0, 5.0
        td = 0.25 if on_a_sample else 0.2537
        wn = math.sqrt(k / m)
        force = sp.Piecewise((f0, t < td), (0, True))
        times = np.linspace(0.0, 1.5, 601)
        x = integrate_motion(m, 0.0, k, force, t, 0.0, 0.0, times, breaks=[td])[0]
        exact = np.where(
            times < td, 1 - np.cos(wn * times), np.cos(wn * (times - td)) - np.cos(wn * times)
        ) * (f0 / k)
        assert np.max(np.abs(x - exact)) <= 1e-7 * np.max(np.abs(exact))

    def test_two_coordinates_against_modes(self):
        """Two masses, k between them and to ground, from a displaced start, no force: the motion is the
        sum of the two normal modes of scipy.linalg.eigh(K, M) (modal superposition, textbook closed form)."""
        import sympy as sp
        from scipy.linalg import eigh

        from calckit.engine.crosscheck import integrate_motion

        t = sp.Symbol("t", real=True)
        M = np.diag([1.0, 2.0])
        K = np.array([[300.0, -100.0], [-100.0, 100.0]])
        x0 = np.array([0.01, -0.02])
        w2, phi = eigh(K, M)
        q0 = phi.T @ M @ x0  # modal coordinates of the start (phi is M-orthonormal)
        times = np.linspace(0.0, 2.0, 401)
        exact = phi @ (q0[:, None] * np.cos(np.sqrt(w2)[:, None] * times))
        x = integrate_motion(M, np.zeros((2, 2)), K, [sp.Integer(0), sp.Integer(0)], t, x0, [0.0, 0.0], times)
        assert np.max(np.abs(x - exact)) <= 1e-7 * np.max(np.abs(exact))
