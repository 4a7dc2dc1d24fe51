"""The one rounding rule for a number carried from one step of a sheet into the next.

A checker redoes each step from the numbers printed on the sheet, so a step takes
an earlier result *as shown* (four significant figures by default), not its
unrounded value. The sheet (:meth:`calckit.Sheet.carried`), the templates and the
what-if explorer all round through :func:`as_shown`, so they agree to the last digit.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

__all__ = ["as_shown", "rounded_decimal"]


def rounded_decimal(x: float, sig: int) -> Decimal:
    """*x* to *sig* significant figures as a Decimal, halves away from zero on the decimal Python prints.

    The float's shortest decimal (``repr``) is what a checker sees and rounds by hand, so
    ``1.2345`` becomes ``1.235`` (rounding the binary value, ``1.23449999...``, would give
    ``1.234``).

    >>> rounded_decimal(1.2345, 4), rounded_decimal(-2.5, 1), rounded_decimal(19.7323, 4)
    (Decimal('1.235'), Decimal('-3'), Decimal('19.73'))
    """
    d = Decimal(repr(float(x)))
    if d == 0:
        return Decimal(0)
    quantum = Decimal(1).scaleb(d.adjusted() - sig + 1)
    out = d.quantize(quantum, rounding=ROUND_HALF_UP)
    if out.adjusted() > d.adjusted():  # 9.9995 -> 10.00: one figure too many
        out = d.quantize(quantum * 10, rounding=ROUND_HALF_UP)
    return out


def as_shown(value: Any, sig: int | None = 4) -> Any:
    """*value* rounded to *sig* significant figures, as a sheet shows it (a quantity keeps its unit).

    ``sig=None`` returns the value unrounded; infinities and NaN are returned as they are.

    Examples
    --------
    >>> as_shown(19.7323)
    19.73
    >>> as_shown(0.000123456, 3)
    0.000123
    """
    if sig is None:
        return value
    units = getattr(value, "units", None)
    magnitude = float(value.magnitude if units is not None else value)
    if math.isfinite(magnitude):
        magnitude = float(rounded_decimal(magnitude, sig))
    return type(value)(magnitude, units) if units is not None else magnitude
