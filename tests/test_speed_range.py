"""Tests of calckit.physics.speed_range: a machine's speeds and its excitation orders, and what it refuses.

References, written out here (not taken from calckit): 1 rpm = 2 pi / 60 rad/s and 1 Hz = 2 pi rad/s
(a revolution or cycle is 2 pi rad, a minute 60 s: definitions). The orders of the trade (1x
unbalance, 2x misalignment, vanes x speed for vane passing) are common practice, no source.
Every refusal's message is pinned in full.
"""

from __future__ import annotations

import math

import pytest

from calckit.core.units import Q_
from calckit.errors import InputsError, UnitsError
from calckit.physics.speed_range import MAX_ORDERS, SpeedRange, read_orders

NAMES = ("minimum_running_speed", "maximum_running_speed", "excitation_orders")
DO_ORDERS = 'Give positive numbers, e.g. "1, 2, 6 vane passing" or (1, 2, 6).'


class TestSpeedRange:
    def test_a_range_in_rpm(self):
        """The two speeds in rad/s by the definition of the rpm, the given quantities kept as given."""
        low, high = Q_(900, "rpm"), Q_(1480, "rpm")
        speeds = SpeedRange(low, high, orders=(1, 2))
        assert speeds.minimum is low and speeds.maximum is high
        assert speeds.low == pytest.approx(900 * 2 * math.pi / 60, rel=1e-15)
        assert speeds.high == pytest.approx(1480 * 2 * math.pi / 60, rel=1e-15)
        assert not speeds.fixed and speeds.unit == "rpm"
        assert speeds.text() == "900 rpm to 1480 rpm"

    def test_a_fixed_speed_in_hz_and_a_bare_number_in_rad_s(self):
        """One speed is a range of that speed; 25 Hz is 50 pi rad/s; a bare number is in rad/s."""
        hz = SpeedRange("25 Hz")
        assert hz.fixed and hz.low == hz.high == pytest.approx(50 * math.pi, rel=1e-15)
        assert hz.orders == (1,) and hz.labels == ("1x",) and hz.unit == "Hz"
        bare = SpeedRange(155.0, orders=2)
        assert bare.low == 155.0 and bare.unit == "rad/s" and bare.orders == (2,)

    def test_the_same_speed_in_three_units(self):
        """1500 rpm, 25 Hz and 50 pi rad/s are one speed."""
        ranges = [SpeedRange("1500 rpm"), SpeedRange("25 Hz"), SpeedRange(50 * math.pi)]
        assert [r.low for r in ranges] == pytest.approx([50 * math.pi] * 3, rel=1e-15)

    def test_min_above_max_refused(self):
        """A speed range whose minimum is above its maximum says so, at the minimum's name."""
        with pytest.raises(InputsError) as info:
            SpeedRange("1480 rpm", "900 rpm", names=NAMES)
        assert str(info.value) == (
            "minimum_running_speed: the speed range runs from 1480 rpm down to 900 rpm: its minimum is above its "
            "maximum. Give the lower speed as the minimum and the higher as the maximum (maximum_running_speed)."
        )

    def test_a_range_in_a_unit_that_is_not_a_speed(self):
        """A mass or a velocity given as a speed is refused by the units reader, with the kind it is."""
        with pytest.raises(UnitsError) as info:
            SpeedRange("900 kg", "1480 rpm", names=NAMES)
        assert str(info.value) == (
            "minimum_running_speed: expected a frequency (Hz, rpm, rad/s, cpm, ...), got 900 kg, which is a mass. "
            'Give a frequency, for example "1480 rpm".'
        )
        with pytest.raises(UnitsError) as info:
            SpeedRange("900 rpm", "3 m/s")
        assert str(info.value) == (
            "maximum speed: expected a frequency (Hz, rpm, rad/s, cpm, ...), got 3 m/s, which is a velocity. "
            'Give a frequency, for example "1480 rpm".'
        )

    def test_a_speed_of_zero_refused(self):
        """A running speed must be above zero (the run-up from rest is checked apart)."""
        with pytest.raises(InputsError) as info:
            SpeedRange("0 rpm", "1480 rpm")
        assert str(info.value) == (
            "minimum speed: a running speed of 0 rpm is not above zero. Give a speed above zero, e.g. "
            '"1480 rpm"; the run-up from rest is a check of its own.'
        )

    def test_the_running_speed_lies_in_the_range(self):
        """The rated speed is one the machine runs at: 1200 rpm lies in 900 to 1480 rpm (40 pi rad/s), 1500 does not."""
        speeds = SpeedRange("900 rpm", "1480 rpm")
        assert speeds.require("1200 rpm", "running_speed") == pytest.approx(40 * math.pi, rel=1e-15)
        assert speeds.require("1480 rpm", "running_speed") == speeds.high  # the ends belong to the range
        with pytest.raises(InputsError) as info:
            speeds.require("1500 rpm", "running_speed", names=NAMES[:2])
        assert str(info.value) == (
            "running_speed: the running speed 1500 rpm lies outside the speed range 900 rpm to 1480 rpm. Give a "
            "running speed between minimum_running_speed and maximum_running_speed, or widen the range."
        )


class TestOrders:
    def test_text_numbers_and_mapping(self):
        """Text as an inputs file gives it, numbers, a mapping label -> order; whole numbers stay ints."""
        assert read_orders("1, 2, 6 vane passing") == ((1, 2, 6), ("1x", "2x", "6x vane passing"))
        assert read_orders("1x, 2X, 0.5 half-speed whirl") == (
            (1, 2, 0.5),
            ("1x", "2x", "0.5x half-speed whirl"),
        )
        assert read_orders((1, 2.0, 9)) == ((1, 2, 9), ("1x", "2x", "9x"))
        assert read_orders({"unbalance": 1, "blade passing": 9}) == ((1, 9), ("unbalance", "blade passing"))
        assert read_orders(3) == ((3,), ("3x",))

    @pytest.mark.parametrize(
        ("orders", "what"),
        [
            ("1, 0, 2", "the order 0 is not a positive number"),
            ("1, -2", "the order -2 is not a positive number"),
            ((1, float("nan")), "the order nan is not a positive number"),
            ((1, float("inf")), "the order inf is not a positive number"),
        ],
    )
    def test_an_order_that_is_not_positive(self, orders, what):
        """Zero, negative and non-finite orders are refused at the orders' name, saying what an order is."""
        with pytest.raises(InputsError) as info:
            SpeedRange("900 rpm", "1480 rpm", orders=orders, names=NAMES)
        assert str(info.value) == (
            f"excitation_orders: {what}: an order is how many times per revolution the machine excites its "
            f"supports. {DO_ORDERS}"
        )

    @pytest.mark.parametrize(
        ("orders", "what"),
        [
            ("1, two", "the order 'two' does not start with a number"),
            ((1, "2"), "the order '2' is not a number"),
            ((1, True), "the order True is not a number"),
            ((1, None), "the order None is not a number"),
        ],
    )
    def test_an_order_that_is_not_a_number(self, orders, what):
        """Words, text inside a list, truth values and None are not orders."""
        with pytest.raises(InputsError) as info:
            read_orders(orders, "excitation_orders")
        assert str(info.value) == f"excitation_orders: {what}. {DO_ORDERS}"

    def test_none_twice_or_too_many(self):
        """No order, an order given twice, and more than MAX_ORDERS are refused."""
        with pytest.raises(InputsError) as info:
            read_orders(())
        assert str(info.value) == f"orders: no excitation order is given. {DO_ORDERS}"
        with pytest.raises(InputsError) as info:
            read_orders("1, 2, 1.0")
        assert str(info.value) == "orders: the order 1 is given twice. Give each order once, with one label."
        with pytest.raises(InputsError) as info:
            read_orders(range(1, MAX_ORDERS + 2))
        assert (
            str(info.value)
            == f"orders: {MAX_ORDERS + 1} orders are given, more than {MAX_ORDERS}. Give fewer orders."
        )
        with pytest.raises(InputsError) as info:
            read_orders("1," * 20 * MAX_ORDERS)
        assert str(info.value) == f"orders: the orders are {40 * MAX_ORDERS} characters long. {DO_ORDERS}"
