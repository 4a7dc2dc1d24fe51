"""Acceptance checks: a value against its limit, with margin and verdict.

:func:`acceptance_check` makes the :class:`~calckit.sheet.blocks.Check` record a
sheet adds (``Sheet.check``): it refuses what cannot be compared
(:func:`require_real`), brings value and limit to one unit (:func:`same_unit`),
and measures the margin by :func:`~calckit.sheet.blocks.check_margin`, the one
rule for it. :func:`separation_percent` is how far an operating frequency lies
from a natural frequency (``Sheet.separation_check``).
"""

from __future__ import annotations

import math
from typing import Any

import sympy as sp

from calckit.core.rounding import as_shown
from calckit.core.units import Q_, angular_frequency, fmt, quantity
from calckit.errors import SheetError, UnitsError
from calckit.physics.criteria import DEFAULT_SEPARATION_REFERENCE, speed_separation
from calckit.sheet.blocks import RELATIONS, Check, check_margin
from calckit.sheet.values import shown_text

__all__ = ["acceptance_check", "deciding_figures", "holds", "require_real", "same_unit", "separation_percent"]


def acceptance_check(
    name: str,
    value: Any,
    limit: Any,
    *,
    relation: str = "<=",
    basis: str = "",
    unit: str | None = None,
    sig: int = 4,
    convention: str | None = None,
) -> Check:
    """The check ``value relation limit`` as a record, with its margin and verdict.

    Value and limit may be numbers, quantities or text with a unit ("0.1 mm");
    ``unit`` is the unit they are compared in (by default the limit's). ``convention``
    (peak, peak-to-peak or rms) says how both amplitudes are stated; the check shows it
    beside each number (``4.5 mm/s rms``); see :mod:`calckit.sheet.amplitudes`.

    The verdict agrees with the figures printed: value and limit equal to within the
    rounding of floating point (``math.isclose``, relative ``1e-12``) are equal, so
    ``20 % >= 20 %`` is met; and when value and limit shown to ``sig`` figures would
    read the other way (``0.05 mm <= 0.05 mm`` for 0.050004 mm, not met), both are
    shown with the digits that decide (:func:`deciding_figures`).

    Raises
    ------
    SheetError
        No name, an unknown relation, a value or limit that is not a finite real
        number, or a limit of zero (a margin in percent of it is undefined).
    UnitsError
        Value and limit have different dimensions.

    Examples
    --------
    >>> acceptance_check("amplitude", Q_(0.08, "mm"), "0.1 mm").margin_text
    '+20.0 %'
    """
    if not isinstance(name, str) or not name.strip():
        raise SheetError("a check needs a name", where="check", do='Name what is checked, e.g. "amplitude"')
    if relation not in RELATIONS:
        raise SheetError(
            f"unknown relation {relation!r}", where=f"check {name}", do="Use one of <=, >=, <, >"
        )
    for label, given in (("value", value), ("limit", limit)):
        require_real(given, f"check {name}", label)
    v, lim, unit_text = same_unit(value, limit, unit, name)
    if not (math.isfinite(v) and math.isfinite(lim)):
        raise SheetError(
            f"the {'value' if not math.isfinite(v) else 'limit'} is not a finite number",
            where=f"check {name}",
            do="Check the calculation that produced it",
        )
    if lim == 0:
        raise SheetError(
            "the limit is zero, so a margin in percent is undefined",
            where=f"check {name}",
            do="Give a non-zero limit",
        )
    met = holds(v, lim, relation)
    margin = 0.0 if _same(v, lim) else check_margin(v, lim, relation, unit_text)
    digits = deciding_figures(v, lim, relation, sig)
    shown_v = shown_text(Q_(v, unit_text) if unit_text else v, digits)
    shown_l = shown_text(Q_(lim, unit_text) if unit_text else lim, digits)
    if convention is not None:
        from calckit.physics.amplitude import amplitude_convention, convention_text

        word = convention_text(amplitude_convention(convention, where=f"check {name} convention"))
        shown_v, shown_l = f"{shown_v} {word}", f"{shown_l} {word}"
    return Check(name, v, lim, relation, unit_text, margin, bool(met), basis, shown_v, shown_l)


def _same(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=1e-12, abs_tol=0.0)


def holds(value: float, limit: float, relation: str) -> bool:
    """Whether ``value relation limit`` holds, with values equal to the rounding of floating point taken as equal.

    >>> holds(0.19999999999999996 * 100, 20.0, ">=")    # |120/100 - 1| in percent
    True
    >>> holds(0.050004, 0.05, "<=")
    False
    """
    if _same(value, limit):
        return relation in ("<=", ">=")
    if relation in ("<=", "<"):
        return value < limit
    return value > limit


def deciding_figures(value: float, limit: float, relation: str, sig: int = 4) -> int:
    """The significant figures at which value and limit, as printed, read with the verdict (at least *sig*).

    >>> deciding_figures(0.08, 0.1, "<="), deciding_figures(0.050004, 0.05, "<=")
    (4, 5)
    """
    met = holds(value, limit, relation)
    for digits in range(sig, 16):
        if holds(as_shown(value, digits), as_shown(limit, digits), relation) == met:
            return digits
    return 15


def separation_percent(
    name: str, operating: Any, natural: Any, *, relative_to: str = DEFAULT_SEPARATION_REFERENCE
) -> float:
    """``|omega_op / omega_n - 1|`` in percent (``|omega_n / omega_op - 1|`` relative to the operating speed,
    :func:`calckit.physics.criteria.speed_separation`), for the check *name*; frequencies in any unit or rad/s.

    Raises
    ------
    SheetError
        A frequency is not a real number, or the natural frequency is not above zero.

    Examples
    --------
    >>> round(separation_percent("speed", "1480 rpm", "20 Hz"), 2)
    23.33
    """

    def rad_per_s(given, label):
        require_real(given, f"check {name}", label)
        if isinstance(given, str) or hasattr(given, "units"):
            where = f"check {name} {label}"
            return float(angular_frequency(quantity(given, where), where))
        return float(given)

    w_op = rad_per_s(operating, "operating frequency")
    w_n = rad_per_s(natural, "natural frequency")
    least = 0 if relative_to == DEFAULT_SEPARATION_REFERENCE else math.ulp(0)
    if not w_n > 0 or not math.isfinite(w_op) or w_op < least:
        raise SheetError(
            f"the frequencies must be finite with a natural frequency above zero (got {w_op:g} and "
            f"{w_n:g} rad/s)",
            where=f"check {name}",
            do="Check the natural frequency: a model with no spring has none to separate from",
        )
    return speed_separation(w_op, w_n, relative_to=relative_to) * 100


def require_real(value: Any, where: str, label: str) -> None:
    """Refuse what a check cannot compare: None, truth values, complex numbers, symbols.

    Raises
    ------
    SheetError
        *value* is not a real number, a quantity or text of one.
    """
    if isinstance(value, str) or hasattr(value, "units"):
        return
    if value is None or isinstance(value, (bool, complex)):
        ok = False
    elif isinstance(value, sp.Basic):
        ok = bool(value.is_number and value.is_real)
    else:
        try:
            float(value)  # numbers of any kind, numpy scalars included
            ok = True
        except (TypeError, ValueError):
            ok = False
    if not ok:
        raise SheetError(
            f"the {label} {value!r} is not a real number or quantity",
            where=where,
            do='Give a number, a quantity with its unit (e.g. "0.1 mm"), or substitute numbers for symbols first',
        )


def same_unit(value: Any, limit: Any, unit: str | None, name: str) -> tuple[float, float, str]:
    """Bring value and limit of the check *name* to one unit (``unit`` or the limit's); return magnitudes.

    Raises
    ------
    SheetError
        Only one of the two has a unit and ``unit`` does not say what the bare one is in.
    UnitsError
        The two have different dimensions.
    """
    has_v, has_l = hasattr(value, "units"), hasattr(limit, "units")
    if isinstance(limit, str):
        limit, has_l = quantity(limit, f"check {name} limit"), True
    if isinstance(value, str):
        value, has_v = quantity(value, f"check {name} value"), True
    if has_v or has_l:
        if not (has_v and has_l):
            if unit and unit != "percent":
                value = value if has_v else Q_(float(value), unit)
                limit = limit if has_l else Q_(float(limit), unit)
            else:
                raise SheetError(
                    "one of value and limit has a unit and the other has none",
                    where=f"check {name}",
                    do="Give both with units, or pass unit=... for the bare number",
                )
        target = unit or f"{limit.units}"
        try:
            return float(value.to(target).magnitude), float(limit.to(target).magnitude), target
        except Exception as exc:  # pint DimensionalityError
            raise UnitsError(
                f"cannot compare {fmt(value)} with {fmt(limit)}: the dimensions differ",
                where=f"check {name}",
                do="Give the value and the limit in compatible units",
            ) from exc
    return float(value), float(limit), unit or ""
