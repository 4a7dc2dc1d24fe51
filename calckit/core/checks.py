"""Checks of a value's sign and finiteness, shared by templates, the sheet and the explorer.

Each returns the value it was given, so that a template can write
``k = positive(sheet.input(...), "stiffness")``; each refuses with an
:class:`~calckit.errors.InputsError` that names the input.
"""

from __future__ import annotations

import math
from numbers import Number
from typing import Any

import pint
import sympy as sp

from calckit.core.units import fmt
from calckit.errors import InputsError

__all__ = ["finite", "non_negative", "positive"]


def _magnitude(q: Any, where: str) -> tuple[float | sp.Expr, str]:
    """A comparable magnitude of *q* and how to show it."""
    if isinstance(q, bool):
        raise InputsError(f"got a truth value {q!r}", where=where, do="Give a number")
    if isinstance(q, pint.Quantity):
        return q.magnitude, fmt(q)
    if isinstance(q, sp.Basic):
        if not q.is_number:
            raise InputsError(f"{q} is not a number", where=where, do="Give a number")
        return q, str(q)
    if isinstance(q, Number):
        return q, str(q)
    raise InputsError(
        f"expected a number or a quantity, got {type(q).__name__} {q!r}", where=where, do="Give a number"
    )


def finite(q: Any, where: str) -> Any:
    """Return *q* if it is a finite number or quantity, else raise InputsError.

    Examples
    --------
    >>> finite(float("nan"), "mass")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: mass: nan is not a finite number. Give a finite number.
    """
    value, shown = _magnitude(q, where)
    is_finite = value.is_finite if isinstance(value, sp.Basic) else math.isfinite(value)
    if not is_finite:
        raise InputsError(f"{shown} is not a finite number", where=where, do="Give a finite number")
    return q


def _sign_check(q: Any, where: str, *, allow_zero: bool) -> Any:
    finite(q, where)
    value, shown = _magnitude(q, where)
    if isinstance(value, sp.Basic) and value.is_extended_real is not True:
        raise InputsError(f"{shown} is not a real number", where=where, do="Give a real number")
    if value < 0 or (value == 0 and not allow_zero):
        bound = "zero or more" if allow_zero else "greater than zero"
        raise InputsError(
            f"must be {bound}, got {shown}",
            where=where,
            do="Check the value and its sign in the inputs",
        )
    return q


def positive(q: Any, where: str) -> Any:
    """Return *q* if it is finite and greater than zero (a mass, a stiffness).

    Examples
    --------
    >>> from calckit.core.units import Q_
    >>> positive(Q_(0, "kg"), "mass")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: mass: must be greater than zero, got 0 kg. Check the value and its sign in the inputs.
    """
    return _sign_check(q, where, allow_zero=False)


def non_negative(q: Any, where: str) -> Any:
    """Return *q* if it is finite and zero or more (a damping ratio, a damping coefficient).

    Examples
    --------
    >>> non_negative(0, "zeta")
    0
    """
    return _sign_check(q, where, allow_zero=True)
