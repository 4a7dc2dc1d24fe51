"""The one rounding rule for a number carried from one step of a sheet into the next.

A checker redoes each step from the numbers printed on the sheet, so a step takes
an earlier result *as shown* (four significant figures by default), not its
unrounded value. The sheet (:meth:`calckit.Sheet.carried`), the templates and the
what-if explorer all round through :func:`as_shown`, so they agree to the last digit.
"""

from __future__ import annotations

import math
from typing import Any

__all__ = ["as_shown"]


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
        magnitude = float(f"{magnitude:.{sig}g}")
    return type(value)(magnitude, units) if units is not None else magnitude
