"""Tolerance bands of inputs: what an inputs file may write beside a value, read and checked once.

An input that is not exact carries a band: a tolerance either side of its value,
relative (``tolerance = "15 %"``) or absolute in the value's own kind of unit
(``tolerance = "50 kN/m"``), or the ends of the band (``min = "1700 kg"``, ``max =
"2000 kg"``). :func:`tolerance_band` reads such a specification against the value
and returns a :class:`Tolerance`, the band in the value's unit; the inputs file's
reader calls it to refuse a bad band at its line, and the sheet calls it again when
the input is put on the sheet, where the input's sign rule is known
(:func:`band_within_sign`: a mass whose band reaches zero is refused).

Examples
--------
>>> from calckit.core.units import Q_
>>> band = tolerance_band("isolator_stiffness", Q_(720, "kN/m"), {"tolerance": "15 %"}, "k")
>>> band.text, band.low, band.high
('± 15 %', <Quantity(612.0, 'kilonewton / meter')>, <Quantity(828.0, 'kilonewton / meter')>)
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from calckit.core.units import Q_, angular_frequency, fmt, fmt_number, kind_of, quantity
from calckit.errors import InputsError, UnitsError

__all__ = ["TOLERANCE_KEYS", "Tolerance", "band_within_sign", "spec_text", "tolerance_band"]

TOLERANCE_KEYS = ("tolerance", "min", "max")
"""The keys of an input's table that give its band (beside ``value`` and ``source``)."""

_EXAMPLE = (
    '{ value = "720 kN/m", tolerance = "15 %" } or { value = "720 kN/m", min = "650 kN/m", max = "800 kN/m" }'
)


@dataclass(frozen=True)
class Tolerance:
    """The band of one input: its low and high ends in the value's unit, and how it was written.

    Attributes
    ----------
    name : str
        The input.
    nominal, low, high : pint.Quantity
        The value and the ends of its band, in the value's unit (``low <= nominal <= high``).
    text : str
        The band as the sheet prints it after the value: ``± 15 %``, ``± 50 kN/m``,
        ``1700 to 2000 kg``.
    spec : dict
        The band as written (``{"tolerance": "15 %"}`` or ``{"min": ..., "max": ...}``), as
        text, for the record and the fingerprint.
    """

    name: str
    nominal: Any
    low: Any
    high: Any
    text: str
    spec: Mapping[str, str]

    def si(self) -> tuple[float, float, float]:
        """``(low, nominal, high)`` as floats in SI base units."""
        return tuple(float(q.to_base_units().magnitude) for q in (self.low, self.nominal, self.high))

    def as_dict(self) -> dict:
        """The band as the record holds it: as written, and its ends shown in the value's unit."""
        return {**dict(self.spec), "low": fmt(self.low, 6), "high": fmt(self.high, 6), "text": self.text}


def spec_text(value: Any) -> str:
    """A band's part as text, as the record and the fingerprint keep it (``"15 %"``, ``0.01`` as ``"0.01"``)."""
    return value if isinstance(value, str) else repr(value)


def tolerance_band(name: str, value: Any, spec: Mapping[str, Any], where: str) -> Tolerance:
    """The band *spec* (``tolerance``, or ``min`` and ``max``) of the input *name* whose value is *value*.

    Raises
    ------
    InputsError
        A band on a value that is not a number with a unit (a text input, a forcing), a
        tolerance with a unit of another dimension than the value, a negative or
        zero tolerance, ``min`` above ``max``, a value outside its own band, a band given
        both ways, or keys other than those of :data:`TOLERANCE_KEYS`.

    Examples
    --------
    >>> tolerance_band("mass", "1850 kg", {"min": "2000 kg", "max": "1700 kg"}, "mass")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: mass: the band's min (2000 kg) is above its max (1700 kg). Write min below max, for example { value = "720 kN/m", tolerance = "15 %" } or { value = "720 kN/m", min = "650 kN/m", max = "800 kN/m" }.
    """
    unknown = [key for key in spec if key not in TOLERANCE_KEYS]
    if unknown:
        raise InputsError(
            f'"{unknown[0]}" is not a key of a tolerance band',
            where=where,
            do=f"Give tolerance, or min and max: {_EXAMPLE}",
        )
    if "tolerance" in spec and ("min" in spec or "max" in spec):
        raise InputsError(
            "the band is given both as a tolerance and as min/max",
            where=where,
            do=f"Give one of the two: {_EXAMPLE}",
        )
    if ("min" in spec) != ("max" in spec):
        given, other = ("min", "max") if "min" in spec else ("max", "min")
        raise InputsError(
            f"the band has a {given} but no {other}",
            where=where,
            do=f"Give both ends, or a tolerance either side: {_EXAMPLE}",
        )
    nominal = _numeric_value(name, value, where)
    unit = nominal.units
    if "tolerance" in spec:
        written = spec["tolerance"]
        half, relative = _tolerance_amount(written, nominal, where)
        if relative:  # a negative value keeps its ends in order; its sign rule refuses it on the sheet
            low, high = sorted((nominal * (1 - half), nominal * (1 + half)), key=lambda q: q.magnitude)
            text = f"± {fmt_number(half * 100, 6)} %"
        else:
            low, high = nominal - half, nominal + half
            text = f"± {fmt(half, 6)}"
        # ends in the value's unit, with no digits of floating point beyond the written ones
        low, high = (Q_(float(f"{q.to(unit).magnitude:.12g}"), unit) for q in (low, high))
        written_spec = {"tolerance": spec_text(written)}
    else:
        ends = []
        for key in ("min", "max"):
            end = _same_kind(spec[key], nominal, where, key)
            ends.append(Q_(float(f"{end.to(unit).magnitude:.12g}"), unit))
        low, high = ends
        if low.magnitude > high.magnitude:
            raise InputsError(
                f"the band's min ({fmt(low, 6)}) is above its max ({fmt(high, 6)})",
                where=where,
                do=f"Write min below max, for example {_EXAMPLE}",
            )
        text = f"(band {fmt_number(low.magnitude, 6)} to {fmt(high, 6)})"
        written_spec = {"min": spec_text(spec["min"]), "max": spec_text(spec["max"])}
    n = float(nominal.magnitude)
    if not low.magnitude <= n <= high.magnitude:
        raise InputsError(
            f"the value {fmt(nominal, 6)} lies outside its band {fmt(low, 6)} to {fmt(high, 6)}",
            where=where,
            do="Give a band that contains the value",
        )
    if low.magnitude == high.magnitude:
        raise InputsError(
            "the band has no width",
            where=where,
            do=f"Give a tolerance above zero, or leave it out: {_EXAMPLE}",
        )
    return Tolerance(name, nominal, low, high, text, written_spec)


def _numeric_value(name: str, value: Any, where: str):
    """The input's value as a quantity; a text that is not a number with a unit (a forcing, a choice) is refused."""
    if isinstance(value, bool) or value is None:
        raise InputsError(
            f"the input {name} is {value!r}, not a number, so it cannot have a tolerance",
            where=where,
            do=f"Give a tolerance only to a number with its unit: {_EXAMPLE}",
        )
    try:
        q = quantity(value, where)
    except UnitsError:
        raise InputsError(
            f'the input {name} is the text "{value}", not a number with a unit, so it cannot have a tolerance',
            where=where,
            do=f"Give a tolerance only to a number with its unit, or leave it out: {_EXAMPLE}",
        ) from None
    if not math.isfinite(float(q.magnitude)):
        raise InputsError("the value is not a finite number", where=where, do="Give a finite number")
    return q


def _same_kind(given: Any, nominal: Any, where: str, key: str):
    """*given* (text with a unit, or a bare number for a dimensionless value) as a quantity of *nominal*'s kind."""
    if isinstance(given, bool) or not isinstance(given, str | int | float):
        raise InputsError(
            f"the band's {key} is {given!r}, not a number with a unit",
            where=where,
            do=f"Write it as text with the value's unit: {_EXAMPLE}",
        )
    try:
        q = quantity(given, f"{where} {key}")
    except UnitsError as exc:
        raise InputsError(
            f'the band\'s {key} "{given}" is not a number with a unit ({exc.what})',
            where=where,
            do=f"Write it as text with the value's unit: {_EXAMPLE}",
        ) from None
    if q.dimensionality != nominal.dimensionality:
        raise InputsError(
            f'the band\'s {key} "{given}" is not of the kind of the value {fmt(nominal, 6)}: the dimensions differ',
            where=where,
            do=f"Give the {key} in a unit of the value's kind, or a tolerance in percent: {_EXAMPLE}",
        )
    if kind_of(q) == "frequency" and kind_of(nominal) == "frequency":
        # a cycle is a turn: 25 Hz is 1500 rpm (pint alone would take Hz as 1/s and rpm as 2 pi rad/min)
        per_unit = angular_frequency(Q_(1.0, nominal.units), where)
        return Q_(angular_frequency(q, where) / per_unit, nominal.units)
    return q


def _tolerance_amount(written: Any, nominal: Any, where: str) -> tuple[Any, bool]:
    """``(half width, relative)``: a fraction for ``"15 %"``, a quantity of the value's kind otherwise."""
    text = written.strip() if isinstance(written, str) else written
    if isinstance(text, str) and text.startswith(("+-", "±")):
        text = text.lstrip("+-±").strip()
    if isinstance(text, str) and text.endswith("%"):
        try:
            fraction = float(text[:-1].strip()) / 100
        except ValueError:
            raise InputsError(
                f'the tolerance "{written}" is not a percentage',
                where=where,
                do=f'Write it like "15 %": {_EXAMPLE}',
            ) from None
        if not math.isfinite(fraction) or fraction <= 0:
            raise InputsError(
                f'the tolerance "{written}" is not above zero',
                where=where,
                do=f"Give a tolerance above zero, or leave it out: {_EXAMPLE}",
            )
        return fraction, True
    dimensionless = nominal.dimensionless
    if isinstance(text, int | float) and not isinstance(text, bool) and not dimensionless:
        raise InputsError(
            f"the tolerance {written!r} has no unit",
            where=where,
            do=f'Give it in percent ("15 %") or with the value\'s unit ("50 kN/m"): {_EXAMPLE}',
        )
    half = _same_kind(text, nominal, where, "tolerance")
    if not float(half.magnitude) > 0:
        raise InputsError(
            f'the tolerance "{written}" is not above zero',
            where=where,
            do=f"Give a tolerance above zero, or leave it out: {_EXAMPLE}",
        )
    return half, False


def band_within_sign(band: Tolerance, sign: Any, where: str) -> Tolerance:
    """*band* when its low end still meets the input's sign rule (``positive``, ``non_negative``), else refuse.

    *sign* is the check the sheet applies to the value (:func:`calckit.core.checks.positive`...);
    it is applied to the band's low end, so a mass of 1850 kg ± 120 % is refused: at the low end
    of its band it is below zero.

    Raises
    ------
    InputsError
        The band reaches a value the input may not take.
    """
    try:
        sign(band.low, where)
    except InputsError:
        rule = getattr(sign, "__name__", "its sign rule").replace("_", "-")
        raise InputsError(
            f"the band {band.text} of {fmt(band.nominal, 6)} reaches {fmt(band.low, 6)}, which the input may "
            f"not take (it must be {rule})",
            where=where,
            do="Give a tolerance narrower than the value, or min and max within the values the input may take",
        ) from None
    return band
