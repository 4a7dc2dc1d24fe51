"""Bounds on the text of a quantity or a unit, checked before pint parses it.

pint's parser has no limits of its own: ``"1850 kg*10**10**10"`` or a megabyte of unit
text takes minutes or gigabytes. Every quantity text (:func:`calckit.core.units.quantity`)
and every unit asked for results (``[units]``, ``Sheet.use_units``) goes through
:func:`check_quantity_size` first; :func:`check_unit_text` adds the look-alike check
(a Cyrillic ``с`` for a Latin ``c`` is named).
"""

from __future__ import annotations

import re

from calckit.core.characters import lookalike_error
from calckit.errors import UnitsError

__all__ = ["LARGEST_UNIT_POWER", "LONGEST_QUANTITY_TEXT", "MOST_DIGITS", "check_quantity_size", "check_unit_text"]


#: Longest text read as a quantity ("1850 kg", "3.5 N*s/mm"): bounded before any parsing.
LONGEST_QUANTITY_TEXT = 200
#: Most digits in the number of a quantity.
MOST_DIGITS = 40
#: Largest power of a unit ("m**2", "s^-2").
LARGEST_UNIT_POWER = 12
_UNIT_POWER = re.compile(r"(\*\*|\^)\s*\(?\s*([+-]?\d+(?:\.\d*)?)")
_POWER_OF_POWER = re.compile(r"(\*\*|\^)\s*[^*^/\s]+\s*(\*\*|\^)")


def check_quantity_size(text: str, where: str) -> None:
    """Refuse text whose parsing alone would take long or much memory (powers of powers, huge numbers)."""
    if len(text) > LONGEST_QUANTITY_TEXT:
        raise UnitsError(
            f"the text is {len(text):,} characters long, more than a quantity needs ({LONGEST_QUANTITY_TEXT} at most)",
            where=where,
            do='Give a number and a unit, for example "250 kg"',
        )
    if _POWER_OF_POWER.search(text):
        raise UnitsError(
            f'"{text}" raises a power to a power',
            where=where,
            do="Write the unit with one power, as m**2 or s**-1",
        )
    for match in _UNIT_POWER.finditer(text):
        if abs(float(match.group(2))) > LARGEST_UNIT_POWER:
            raise UnitsError(
                f'"{text}" has the power {match.group(2)}, more than a unit takes',
                where=where,
                do=f"Use powers of units between -{LARGEST_UNIT_POWER} and {LARGEST_UNIT_POWER}",
            )
    digits = max((len(run) for run in re.findall(r"\d+", text)), default=0)
    if digits > MOST_DIGITS:
        raise UnitsError(
            f"a number in the text has {digits:,} digits, more than {MOST_DIGITS}",
            where=where,
            do="Write the number with an exponent, as 1.5e9",
        )


def check_unit_text(text: str, where: str) -> None:
    """Refuse a unit's text (``"in"``, ``"N*s/m"``) that pint should not be given: the bounds of
    :func:`quantity`'s text (length, a power of a power, large powers, long numbers), and a
    look-alike character (the micro, ohm and degree signs are not).

    Raises
    ------
    UnitsError
        Naming the limit, or the character.

    Examples
    --------
    >>> check_unit_text("in**10**10", "units.x_max")
    Traceback (most recent call last):
    ...
    calckit.errors.UnitsError: units.x_max: "in**10**10" raises a power to a power. Write the unit with one power, as m**2 or s**-1.
    """
    check_quantity_size(text, where)
    better = lookalike_error(text.strip(), UnitsError, where=where)  # no unit pint knows is spelt with one
    if better is not None:
        raise better
