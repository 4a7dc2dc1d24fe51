"""Refusals of loads that switch: each a CalcError naming the piece, with what to do.

Common practice, no source: a load must be split at times in increasing order, each
piece used on some interval, and finitely many switches for a response from rest.
"""

from __future__ import annotations

import pytest
import sympy as sp

from calckit.engine import LinearODE
from calckit.errors import CalcError, ForcingError, ModelError
from calckit.physics import pulses
from calckit.physics.oscillator import Oscillator

T = sp.Symbol("t", real=True)


def test_repeated_without_a_count_is_refused_with_what_to_do():
    load = pulses.repeated(pulses.half_sine(400, sp.Rational(1, 50), t=T), sp.Rational(1, 5), t=T)
    for model in (Oscillator(80, 0, 2_000_000), LinearODE([80, 0, 2_000_000])):
        with pytest.raises(ForcingError) as err:
            model.response(load, [0, 0], t=T)
        text = str(err.value)
        assert "repeats without end" in text and "infinite series" in text
        assert "count=n" in text


def test_repeated_with_a_count_still_solves():
    load = pulses.repeated(pulses.rectangular(1, sp.Rational(1, 10), t=T), sp.Rational(1, 2), count=2, t=T)
    res = Oscillator(1, 0, 100).response(load, 0, 0, t=T)
    assert res.particular.verified
    # the copies switch at 1/10 (off), 1/2 (on), 3/5 (off): the start at 0 is not a switch after 0
    assert res.particular.switched.times == (sp.Rational(1, 10), sp.Rational(1, 2), sp.Rational(3, 5))


@pytest.mark.parametrize(
    "load,piece",
    [
        (sp.Piecewise((0, T < 0), (1, T < 3), (2, T < 1), (0, True)), "(2, t < 1)"),  # unordered ends
        (sp.Piecewise((1, T > 1), (2, T > 3), (0, True)), "(2, t > 3)"),  # overlapping conditions
    ],
)
def test_unordered_or_overlapping_switching_times_name_the_piece(load, piece):
    with pytest.raises(ForcingError) as err:
        Oscillator(1, 0, 100).response(load, 0, 0, t=T)
    assert piece in str(err.value) and "never used" in str(err.value)
    assert "Order the pieces by time" in str(err.value)


def test_overlapping_copies_and_bad_counts_are_refused():
    pulse = pulses.half_sine(1, 2, t=T)
    with pytest.raises(ModelError, match="overlap"):
        pulses.repeated(pulse, 1, count=3, t=T)
    for count in (0, 101, 2.5, True):
        with pytest.raises(CalcError, match="count"):
            pulses.repeated(pulse, 3, count=count, t=T)
