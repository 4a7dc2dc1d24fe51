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
