"""Exact numbers from what a user types (calckit.core.exact)."""

from __future__ import annotations

from fractions import Fraction

import pytest
import sympy as sp

import calckit as ck
from calckit.core.exact import exact


@pytest.mark.parametrize(
    "value, expected",
    [
        (2.5, sp.Rational(5, 2)),
        (0.1, sp.Rational(1, 10)),
        (1e-7, sp.Rational(1, 10**7)),
        (123456.789, sp.Rational(123456789, 1000)),
        (3, sp.Integer(3)),
        (Fraction(3, 7), sp.Rational(3, 7)),
        (1 / 3, sp.Rational(1, 3)),  # computed, not typed: the simple fraction it rounds from
        (2 / 1.5, sp.Rational(4, 3)),
    ],
)
def test_exact_values(value, expected):
    assert exact(value) == expected


def test_sum_of_typed_floats_is_not_guessed():
    """0.1 + 0.2 is 0.30000000000000004 in binary; no fraction with a small denominator gives
    that float exactly, so it is kept as the decimal it displays."""
    assert exact(0.1 + 0.2) == sp.Rational("0.30000000000000004")


def test_float_inside_expression():
    t = sp.Symbol("t")
    assert exact(sp.pi * t / 1.5) == 2 * sp.pi * t / 3
    assert exact(2.5 * sp.cos(0.5 * t)) == sp.Rational(5, 2) * sp.cos(t / 2)


def test_refusals():
    with pytest.raises(ck.ModelError) as info:
        exact(float("inf"), where="k")
    assert str(info.value) == "k: the value inf is not a finite number. Give a finite number."
    with pytest.raises(ck.ModelError) as info:
        exact(True, where="m")
    assert str(info.value) == "m: got a truth value True. Give a number."
