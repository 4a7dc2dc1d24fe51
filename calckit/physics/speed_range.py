"""A machine's running speeds and its excitation orders: :class:`SpeedRange`.

A machine excites its supports at whole (or fractional) multiples of its running speed:
the unbalance at once per revolution (order 1, "1x"), misalignment and a bent shaft at
twice (2x), an impeller or fan at the number of its vanes or blades times the speed (vane
or blade passing). A machine on a variable-speed drive runs anywhere between a least and a
greatest speed; one on a fixed-speed motor at one speed. :class:`SpeedRange` holds both:
the two speeds as given (text with a unit, a pint quantity, or a number in rad/s) and the
orders, each with a label. How the orders sweep past the natural frequencies is
:mod:`calckit.physics.interference`.

Orders are numbers (``(1, 2, 6)``), a mapping label -> order (``{"1x": 1, "vane passing":
6}``), or text as an inputs file gives it: ``"1, 2, 6 vane passing"`` (each item a positive
number, optionally followed by words that name it).

Examples
--------
>>> speeds = SpeedRange("900 rpm", "1480 rpm", orders="1, 2, 6 vane passing")
>>> speeds.orders, speeds.labels
((1, 2, 6), ('1x', '2x', '6x vane passing'))
>>> round(speeds.low, 3), round(speeds.high, 3), speeds.fixed
(94.248, 154.985, False)
>>> SpeedRange("25 Hz").fixed
True
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from typing import Any

from calckit.core.units import Q_, angular_frequency, fmt, quantity
from calckit.errors import InputsError

__all__ = ["MAX_ORDERS", "SpeedRange", "read_orders"]

#: The most excitation orders one machine may list (a Fourier series of a periodic load is the longest list).
MAX_ORDERS = 500

_ORDERS_DO = 'Give positive numbers, e.g. "1, 2, 6 vane passing" or (1, 2, 6)'


def _order_number(value: Any, where: str, item: str) -> int | float:
    """One order as a positive finite number (an int when whole)."""
    if isinstance(value, bool) or not isinstance(value, int | float | Decimal):
        raise InputsError(f"the order {item} is not a number", where=where, do=_ORDERS_DO)
    number = float(value)
    if not math.isfinite(number) or number <= 0:
        raise InputsError(
            f"the order {item} is not a positive number: an order is how many times per revolution the "
            "machine excites its supports",
            where=where,
            do=_ORDERS_DO,
        )
    return int(number) if number == int(number) and number < 2**53 else number


def _label(order: int | float, words: str = "") -> str:
    text = f"{order:g}x"
    return f"{text} {words}" if words else text


def read_orders(orders: Any, where: str = "orders") -> tuple[tuple[int | float, ...], tuple[str, ...]]:
    """The orders and their labels from numbers, a mapping label -> order, or text.

    Raises
    ------
    InputsError
        No order, an order that is not a positive number, an order given twice, or more than
        :data:`MAX_ORDERS`.

    Examples
    --------
    >>> read_orders("1, 2, 6 vane passing")
    ((1, 2, 6), ('1x', '2x', '6x vane passing'))
    >>> read_orders({"unbalance": 1, "blade passing": 9})
    ((1, 9), ('unbalance', 'blade passing'))
    >>> read_orders([0.5, 1])
    ((0.5, 1), ('0.5x', '1x'))
    """
    numbers: list[int | float] = []
    labels: list[str] = []
    if isinstance(orders, str):
        if len(orders) > 20 * MAX_ORDERS:
            raise InputsError(f"the orders are {len(orders)} characters long", where=where, do=_ORDERS_DO)
        for part in (p.strip() for p in orders.split(",")):
            found = re.fullmatch(r"([+-]?[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*[xX]?\s*(.*)", part)
            try:
                number = Decimal(found.group(1)) if found else None
            except InvalidOperation:  # pragma: no cover - the pattern admits only decimals
                number = None
            if number is None:
                raise InputsError(
                    f"the order {part!r} does not start with a number", where=where, do=_ORDERS_DO
                )
            numbers.append(_order_number(number, where, found.group(1)))
            labels.append(_label(numbers[-1], found.group(2).strip()))
    elif isinstance(orders, Mapping):
        for label, value in orders.items():
            numbers.append(_order_number(value, where, repr(value)))
            labels.append(str(label))
    elif isinstance(orders, Sequence):
        for value in orders:
            numbers.append(_order_number(value, where, repr(value)))
            labels.append(_label(numbers[-1]))
    else:
        numbers.append(_order_number(orders, where, repr(orders)))
        labels.append(_label(numbers[-1]))
    if not numbers:
        raise InputsError("no excitation order is given", where=where, do=_ORDERS_DO)
    if len(numbers) > MAX_ORDERS:
        raise InputsError(
            f"{len(numbers)} orders are given, more than {MAX_ORDERS}", where=where, do="Give fewer orders"
        )
    twice = sorted({n for n in numbers if numbers.count(n) > 1})
    if twice:
        raise InputsError(
            f"the order {twice[0]:g} is given twice", where=where, do="Give each order once, with one label"
        )
    return tuple(numbers), tuple(labels)


def _speed(value: Any, where: str):
    """A running speed as a quantity (the given object when it is one) and in rad/s."""
    if isinstance(value, bool):
        raise InputsError(f"got a truth value {value!r}", where=where, do='Give a speed, e.g. "1480 rpm"')
    if isinstance(value, int | float) and not hasattr(value, "units"):
        q = Q_(float(value), "rad/s")  # a bare number is in rad/s, as elsewhere in calckit
    else:
        q = value if hasattr(value, "units") else quantity(value, where, expect="frequency")
    omega = angular_frequency(q, where)  # refuses what is not a speed or frequency
    if not math.isfinite(omega) or omega <= 0:
        raise InputsError(
            f"a running speed of {fmt(q)} is not above zero",
            where=where,
            do='Give a speed above zero, e.g. "1480 rpm"; the run-up from rest is a check of its own',
        )
    return q, omega


@dataclass(frozen=True, init=False)
class SpeedRange:
    """The speeds a machine runs at, from ``minimum`` to ``maximum`` (one speed when fixed), and its orders.

    Parameters
    ----------
    minimum : str, pint.Quantity or float
        The least running speed (``"900 rpm"``, ``"15 Hz"``; a bare number is in rad/s).
    maximum : optional
        The greatest running speed; left out (or None), the machine runs at ``minimum`` only.
    orders : optional
        The excitation orders (see :func:`read_orders`); by default once per revolution, ``(1,)``.
    names : (str, str, str), optional
        What to call the minimum, the maximum and the orders in an error (an inputs file's names).

    Attributes
    ----------
    minimum, maximum : pint.Quantity
        The speeds as given (the very objects, when they were quantities).
    low, high : float
        The same in rad/s.
    orders : tuple of numbers
    labels : tuple of str
        One label per order (``"1x"``, ``"6x vane passing"``).

    Raises
    ------
    InputsError
        A speed not above zero, a minimum above the maximum, or orders :func:`read_orders` refuses.
    UnitsError
        A speed in a unit that is not a speed or a frequency.
    """

    minimum: Any
    maximum: Any
    low: float
    high: float
    orders: tuple
    labels: tuple

    def __init__(
        self, minimum: Any, maximum: Any = None, orders: Any = (1,), *, names: Sequence[str] | None = None
    ):
        low_name, high_name, orders_name = (
            tuple(names) if names else ("minimum speed", "maximum speed", "orders")
        )
        q_low, low = _speed(minimum, low_name)
        q_high, high = (q_low, low) if maximum is None else _speed(maximum, high_name)
        if low > high:
            raise InputsError(
                f"the speed range runs from {fmt(q_low)} down to {fmt(q_high)}: its minimum is above its maximum",
                where=low_name,
                do=f"Give the lower speed as the minimum and the higher as the maximum ({high_name})",
            )
        numbers, labels = read_orders(orders, orders_name)
        for name, value in zip(("minimum", "maximum", "low", "high", "orders", "labels"),
                               (q_low, q_high, low, high, numbers, labels), strict=True):  # fmt: skip
            object.__setattr__(self, name, value)

    @property
    def fixed(self) -> bool:
        """Whether the machine runs at one speed only."""
        return self.low == self.high

    @property
    def unit(self) -> str:
        """The unit the speeds were given in (``"rpm"``, ``"Hz"``, ``"rad/s"``), for tables and plots."""
        return f"{self.minimum.units:~P}" or "rad/s"

    def require(self, speed: Any, where: str, *, names: Sequence[str] = ("minimum", "maximum")) -> float:
        """*speed* in rad/s when it lies in the range; else an :class:`InputsError` at *where*.

        A machine's rated running speed, at which its unbalance and isolation are worked, is
        one of the speeds it runs at.

        Examples
        --------
        >>> round(SpeedRange("900 rpm", "1480 rpm").require("1200 rpm", "running_speed"), 3)
        125.664
        """
        q, omega = _speed(speed, where)
        if not self.low <= omega <= self.high:
            raise InputsError(
                f"the running speed {fmt(q)} lies outside the speed range {self.text()}",
                where=where,
                do=f"Give a running speed between {names[0]} and {names[1]}, or widen the range",
            )
        return omega

    def text(self) -> str:
        """The range as a reader sees it: ``"900 rpm to 1480 rpm"``, or ``"1480 rpm"`` when fixed."""
        return fmt(self.minimum) if self.fixed else f"{fmt(self.minimum)} to {fmt(self.maximum)}"

    def __repr__(self) -> str:
        return f"SpeedRange({self.text()!r}, orders={', '.join(self.labels)})"
