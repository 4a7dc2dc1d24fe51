"""Quantities with units: one pint registry for the whole kit.

Every quantity in calckit comes from :data:`ureg`, so quantities from different
parts of the kit combine without "cannot operate with different registries".
:func:`quantity` reads what an engineer types (``"1480 rpm"``, ``"12 N/mm"``,
``"45 lbf/in"``, ``0.05``) and, when told what kind of quantity to expect,
checks its dimension and says in plain words what was wrong.

Exactness
---------
The number written in front of the unit is read as the decimal written: an
integer stays an ``int``; a decimal becomes the ``float`` whose shortest repr is
that decimal, so :func:`calckit.core.exact.exact` gives it back exactly (``"2.5 kg"``
-> ``5/2`` kg). This holds for up to 15 significant digits. :func:`to_si`
converts with exact conversion factors (pint's definitions read as fractions,
and ``pi`` kept as a symbol for angles), so ``"45 lbf/in"`` gives the exact
rational number of N/m that the definitions of the pound, the standard gravity
and the inch imply.

Frequencies
-----------
pint counts the radian as dimensionless and the hertz as ``1/s``, so converting
``"1 Hz"`` to ``rad/s`` gives 1 instead of ``2*pi``, and ``"60 rpm"`` to ``Hz``
gives ``2*pi`` instead of 1. Use :func:`angular_frequency` and
:func:`cyclic_frequency`, which know which units count cycles (Hz) and which
count angles (rpm, cpm, rad/s). A bare ``1/s`` is refused there, since it could
mean either.

Examples
--------
>>> q = quantity("12 N/mm", "stiffness", expect="stiffness")
>>> to_si(q, "stiffness")
SIValue(magnitude=12000, unit='N/m')
>>> angular_frequency("60 rpm", "speed", exact=True)
2*pi
"""

from __future__ import annotations

import difflib
import math
import re
import sys
from dataclasses import dataclass
from fractions import Fraction
from functools import cache
from numbers import Number
from typing import Any, NamedTuple

import numpy as np
import pint
import sympy as sp

from calckit.core.characters import lookalike_error
from calckit.core.exact import exact as _exact
from calckit.core.rounding import rounded_decimal
from calckit.core.unit_text import check_quantity_size
from calckit.errors import UnitsError

__all__ = [
    "ureg",
    "Q_",
    "KINDS",
    "SIValue",
    "quantity",
    "kind_of",
    "to_si",
    "angular_frequency",
    "cyclic_frequency",
    "fmt",
    "fmt_number",
]

_EXTRA_DEFINITIONS = ("cycles_per_minute = cycle / minute = cpm",)


def _make_registry(**options: Any) -> pint.UnitRegistry:
    reg = pint.UnitRegistry(on_redefinition="raise", **options)
    for line in _EXTRA_DEFINITIONS:
        reg.define(line)
    return reg


#: The one unit registry of calckit.
ureg: pint.UnitRegistry = _make_registry()
#: Shortcut for ``ureg.Quantity``.
Q_ = ureg.Quantity
# Quantities pickled in one process (batch runs) unpickle into this registry.
pint.set_application_registry(ureg)


@dataclass(frozen=True)
class Kind:
    """A named kind of quantity: its dimension, the SI unit it is shown in,
    typical units for messages and an example value."""

    name: str
    article: str
    reference: str  # a unit string that has the kind's dimension
    si_unit: str
    typical: tuple[str, ...]
    example: str
    angle_power: int | None = None  # radians in the unit: 1 for an angle, 0 for a pure number
    label: str = ""  # how messages name the kind, if not by its name

    @property
    def a_label(self) -> str:
        """``"a mass"``, ``"an angle"``, ``"a dimensionless number"``."""
        return f"{self.article} {self.label or self.name}"

    @property
    def phrase(self) -> str:
        """``"a mass (kg, lb, ...)"``."""
        return f"{self.a_label} ({', '.join(self.typical)}, ...)"


_KIND_LIST = (
    Kind("mass", "a", "kg", "kg", ("kg", "lb"), "250 kg"),
    Kind("length", "a", "m", "m", ("m", "mm", "in"), "12 mm"),
    Kind("time", "a", "s", "s", ("s", "ms", "min"), "0.5 s"),
    Kind("force", "a", "N", "N", ("N", "kN", "lbf"), "1.2 kN"),
    Kind("stiffness", "a", "N/m", "N/m", ("N/m", "N/mm", "lbf/in"), "12 N/mm"),
    Kind("damping coefficient", "a", "N*s/m", "N*s/m", ("N*s/m", "lbf*s/in"), "350 N*s/m"),
    Kind("frequency", "a", "Hz", "Hz", ("Hz", "rpm", "rad/s", "cpm"), "1480 rpm"),
    Kind("velocity", "a", "m/s", "m/s", ("m/s", "mm/s", "in/s"), "4.5 mm/s"),
    Kind("acceleration", "an", "m/s**2", "m/s**2", ("m/s**2", "g_n", "ft/s**2"), "0.2 m/s**2"),
    Kind("angle", "an", "rad", "rad", ("rad", "deg"), "30 deg", angle_power=1),
    Kind("dimensionless", "a", "", "", ("0.05", "5 %"), "0.05", angle_power=0, label="dimensionless number"),
    Kind(
        "mass*length", "a", "kg*m", "kg*m", ("g*mm", "kg*m", "oz*in"), "120 g*mm", label="mass times length"
    ),
    Kind("pressure", "a", "Pa", "Pa", ("Pa", "kPa", "bar", "psi"), "250 kPa"),
    Kind("power", "a", "W", "W", ("W", "kW", "hp"), "7.5 kW"),
    Kind("moment of inertia", "a", "kg*m**2", "kg*m**2", ("kg*m**2", "lb*ft**2"), "620 kg*m**2"),
    Kind("second moment of area", "a", "m**4", "m**4", ("mm**4", "cm**4", "in**4"), "8360 cm**4"),
)
#: Named kinds of quantity, by name: the values ``expect=`` accepts.
KINDS: dict[str, Kind] = {k.name: k for k in _KIND_LIST}

# Units offered as suggestions when a unit is misspelt (symbols people type).
_COMMON_UNITS = (
    "kg g t lb oz m mm cm um in ft s ms min h N kN MN lbf kip N/m N/mm kN/m kN/mm lbf/in "
    "N*s/m N*s/mm lbf*s/in Hz kHz rpm cpm rad/s rad deg m/s mm/s in/s m/s**2 g_n "
    "g*mm kg*m oz*in Pa kPa MPa GPa bar psi W kW hp mm**4 cm**4 in**4"
).split()

_NUMBER = re.compile(r"\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)(.*)", re.DOTALL)
_UNIT_TEXT = re.compile(r"[\w\s*/^().%°µΩ-]*")
_NOT_FINITE = re.compile(r"\s*[+-]?(nan|inf|infinity)\b", re.IGNORECASE)


def _unit_items(units: Any) -> dict[str, float]:
    return dict(Q_(1, units).unit_items())


@cache
def _unit_dims(name: str) -> tuple[int, dict[str, float]]:
    """Radian power and root units (without radian) of one unit name."""
    root = _unit_items(ureg.get_root_units(name)[1])
    angle = int(root.pop("radian", 0))
    return angle, root


def _angle_power(q: pint.Quantity) -> float:
    return sum(_unit_dims(name)[0] * exp for name, exp in q.unit_items())


@cache
def _kind_dimensionality(name: str):
    return ureg.get_dimensionality(KINDS[name].reference)


def kind_of(q: pint.Quantity) -> str | None:
    """Name of the kind of *q* (see :data:`KINDS`), or None if it has none.

    Examples
    --------
    >>> kind_of(Q_(12, "N/mm"))
    'stiffness'
    >>> kind_of(Q_(30, "deg"))
    'angle'
    """
    dims = q.dimensionality
    for kind in _KIND_LIST:
        if dims != _kind_dimensionality(kind.name):
            continue
        if kind.angle_power is None or kind.angle_power == _angle_power(q):
            return kind.name
    return None


def _describe(q: pint.Quantity) -> str:
    name = kind_of(q)
    if name is not None:
        return KINDS[name].a_label
    if q.dimensionless:
        return f"an angle to the power {_angle_power(q):g}"
    return f"a quantity of dimension {q.dimensionality}"


def _unknown_unit(where: str, unit_text: str, text: str, kind: Kind | None) -> UnitsError:
    close = difflib.get_close_matches(unit_text, _COMMON_UNITS, n=1, cutoff=0.6)
    hint = f'Did you mean "{close[0]}"? ' if close else ""
    examples = ", ".join(kind.typical) if kind else "kg, N/mm, Hz, rpm"
    if kind is not None and kind.name == "dimensionless":
        examples = "%"
    return UnitsError(
        f'unknown unit "{unit_text}" in "{text}"',
        where=where,
        do=f"{hint}Write a unit such as {examples} (unit names are case-sensitive)",
    )


def _from_text(text: str, where: str, kind: Kind | None) -> pint.Quantity:
    check_quantity_size(text, where)
    if not text.strip():
        raise UnitsError(
            "the value is empty", where=where, do=f'Give a number and a unit, for example "{_example(kind)}"'
        )
    if _NOT_FINITE.match(text):
        raise UnitsError(f'"{text}" is not a finite number', where=where, do="Give a finite number")
    match = _NUMBER.fullmatch(text)
    if match is None:
        raise UnitsError(
            f'"{text}" does not start with a number',
            where=where,
            do=f'Write the number first, then the unit, for example "{_example(kind)}"',
        )
    number_text, unit_text = match.group(1), match.group(2).strip()
    if "e" in number_text.lower() or "." in number_text:
        magnitude: int | float = float(number_text)
        if not math.isfinite(magnitude):  # 1e999999 overflows to inf
            raise UnitsError(_overflow(number_text), where=where, do=_OVERFLOW_DO)
    else:
        magnitude = int(number_text)
    if unit_text.startswith("/"):  # "1/s": the number is the numerator of the unit
        unit_text = "1" + unit_text
    if unit_text.startswith((",", "_")) or re.match(r"\d(?!\s*/)", unit_text):
        raise UnitsError(
            f'cannot read the number in "{text}"',
            where=where,
            do="Write the number without thousands separators or spaces, for example 1480 rpm",
        )
    if not unit_text:
        return Q_(magnitude)
    if not _UNIT_TEXT.fullmatch(unit_text):
        raise _unknown_unit(where, unit_text, text, kind)
    try:
        units = ureg.parse_units(unit_text)
    except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError) as exc:
        raise _unknown_unit(where, unit_text, text, kind) from exc
    return Q_(magnitude, units)


def _example(kind: Kind | None) -> str:
    return kind.example if kind else "250 kg"


#: The largest finite float, about 1.8e308: a number above it overflows.
LARGEST_FLOAT = sys.float_info.max
_OVERFLOW_DO = "Give the value in a larger unit, or check it for a slip (an exponent typed twice)"


def _overflow(number: str) -> str:
    shown = number if len(number) <= 40 else f"{number[:20]}... ({len(number):,} characters)"
    return f"the number {shown} is larger than a float holds (about 1.8e308): it overflows"


def _big_number(value: Any) -> str:
    """How an overflowing number is named without printing all its digits."""
    whole = int(value) if isinstance(value, int | sp.Integer) else None
    if whole is not None:
        return f"of about {int(whole.bit_length() * math.log10(2)) + 1:,} digits"
    return f"given as {type(value).__name__}"


def _check_finite(q: pint.Quantity, where: str, shown: str) -> None:
    try:
        ok = bool(np.all(np.isfinite(np.asarray(q.magnitude, dtype=float))))
    except OverflowError as exc:  # a whole number beyond the largest float
        raise UnitsError(_overflow(str(shown)), where=where, do=_OVERFLOW_DO) from exc
    except (TypeError, ValueError) as exc:
        raise UnitsError(
            f"cannot read the magnitude of {shown} as a number", where=where, do="Give a number"
        ) from exc
    if not ok:
        raise UnitsError(f"{shown} is not a finite number", where=where, do="Give a finite number")


def quantity(value: Any, where: str, *, expect: str | None = None) -> pint.Quantity:
    """Read *value* as a quantity of :data:`ureg`, optionally of a named kind.

    Parameters
    ----------
    value : str, int, float, or pint.Quantity
        ``"1480 rpm"``, ``"250 kg"``, ``"12 N/mm"``, ``"45 lbf/in"``, ``"0.05"``, a
        number (dimensionless) or a quantity (from any pint registry).
    where : str
        The input's name, used in error messages.
    expect : str, optional
        One of the names in :data:`KINDS`; the dimension is checked against it.

    Returns
    -------
    pint.Quantity
        Magnitude as written (``int`` or ``float``; see the module notes).

    Raises
    ------
    UnitsError
        Unknown unit, wrong dimension, no number, not finite.

    Examples
    --------
    >>> quantity("250 kg", "mass", expect="mass")
    <Quantity(250, 'kilogram')>
    >>> quantity("12 N/mm", "mass", expect="mass")
    Traceback (most recent call last):
    ...
    calckit.errors.UnitsError: mass: expected a mass (kg, lb, ...), got 12 N/mm, which is a stiffness. Give a mass, for example "250 kg".
    """
    kind = None
    if expect is not None:
        if expect not in KINDS:
            raise UnitsError(
                f'unknown kind of quantity "{expect}"', where=where, do=f"Use one of: {', '.join(KINDS)}"
            )
        kind = KINDS[expect]
    if isinstance(value, bool):
        raise UnitsError(
            f"got a truth value {value!r}",
            where=where,
            do=f'Give a number and a unit, for example "{_example(kind)}"',
        )
    if isinstance(value, str):
        shown = value.strip()
        try:
            q = _from_text(value, where, kind)
        except UnitsError as exc:  # a character drawn like a Latin one is likely the cause: say which
            better = lookalike_error(value.strip(), UnitsError, where=where)
            if better is None:
                raise
            raise better from exc
    elif isinstance(value, pint.Quantity):
        q = value if value._REGISTRY is ureg else Q_(value.magnitude, str(value.units))
        shown = fmt(q) if np.ndim(q.magnitude) == 0 else str(q)
    elif isinstance(value, int):
        if abs(value) > LARGEST_FLOAT:  # before str(): its digits may pass Python's int-string limit
            raise UnitsError(_overflow(_big_number(value)), where=where, do=_OVERFLOW_DO)
        q, shown = Q_(value), str(value)
    elif isinstance(value, float | Fraction) or (isinstance(value, sp.Basic) and value.is_number):
        try:
            number = float(value)
        except OverflowError as exc:
            raise UnitsError(_overflow(_big_number(value)), where=where, do=_OVERFLOW_DO) from exc
        if math.isinf(number) and not (isinstance(value, float) or value in (sp.oo, -sp.oo, sp.zoo)):
            raise UnitsError(_overflow(_big_number(value)), where=where, do=_OVERFLOW_DO)
        q, shown = Q_(int(number) if isinstance(value, sp.Integer) else number), str(value)
    elif isinstance(value, Number):
        q, shown = Q_(float(value)), str(value)
    else:
        raise UnitsError(
            f"expected text, a number or a pint quantity, got {type(value).__name__} {value!r}",
            where=where,
            do=f'Give a number and a unit, for example "{_example(kind)}"',
        )
    _check_finite(q, where, shown)
    if kind is not None:
        _check_kind(q, kind, where, shown)
    return q


def _check_kind(q: pint.Quantity, kind: Kind, where: str, shown: str) -> None:
    if kind_of(q) == kind.name:
        return
    if q.unitless and kind.name != "dimensionless":
        raise UnitsError(
            f"expected {kind.phrase}, got {shown}, which has no unit",
            where=where,
            do=f'Write the unit after the number, for example "{kind.example}"',
        )
    raise UnitsError(
        f"expected {kind.phrase}, got {shown}, which is {_describe(q)}",
        where=where,
        do=f'Give {kind.a_label}, for example "{kind.example}"',
    )


class SIValue(NamedTuple):
    """A magnitude in SI units (exact sympy number) and the SI unit's text."""

    magnitude: sp.Expr
    unit: str


@cache
def _exact_registry() -> pint.UnitRegistry:
    return _make_registry(non_int_type=Fraction)


@cache
def _pi_fraction() -> Fraction:
    return _exact_registry().Quantity(Fraction(1), "pi").to("").magnitude


@cache
def _exact_factor(units: str) -> sp.Expr:
    """Exact factor from *units* to base units."""
    base = _exact_registry().Quantity(Fraction(1), units).to_base_units()
    factor = Fraction(base.magnitude)
    pi = _pi_fraction()
    for power in range(4):  # angle units carry pi (deg = pi/180 rad): keep it symbolic
        ratio = factor / pi**power
        if ratio.denominator < 10**15 and ratio.numerator < 10**30:
            return sp.Rational(ratio.numerator, ratio.denominator) * sp.pi**power
    return sp.Rational(factor.numerator, factor.denominator)  # pragma: no cover


def _si_unit_text(q: pint.Quantity) -> str:
    name = kind_of(q)
    if name == "frequency":
        return "rad/s" if _angle_power(q) == 1 else "1/s"
    if name is not None:
        return KINDS[name].si_unit
    return f"{q.to_base_units().units:~C}"


def to_si(q: Any, where: str) -> SIValue:
    """Magnitude of *q* in SI base units, exactly, with the SI unit's text.

    Named kinds get their usual SI unit (N/m for a stiffness, not kg/s**2); a
    frequency in rpm or cpm is given in rad/s and one in Hz in 1/s (use
    :func:`angular_frequency` to put both in rad/s).

    Examples
    --------
    >>> to_si("45 lbf/in", "k")
    SIValue(magnitude=80067989074689/10160000000, unit='N/m')
    >>> to_si("2.5 kg", "m").magnitude
    5/2
    """
    q = quantity(q, where)
    if np.ndim(q.magnitude) != 0:
        raise UnitsError(
            "expected a single value, got an array", where=where, do="Convert one value at a time"
        )
    magnitude = _exact(q.magnitude, where)
    if Q_(0, q.units).to_base_units().magnitude != 0:  # offset unit (degC): convert in floats
        return SIValue(_exact(q.to_base_units().magnitude, where), _si_unit_text(q))
    factor = _exact_factor(str(q.units))
    return SIValue(magnitude * factor, _si_unit_text(q))


def _frequency_parts(q: Any, where: str) -> tuple[pint.Quantity, str]:
    """The frequency and how it counts: ``"angle"`` or ``"cycles"``."""
    q = quantity(q, where, expect="frequency")
    if _angle_power(q) == 1:
        return q, "angle"
    if any(_unit_dims(name) == (0, {"second": -1}) for name, _ in q.unit_items()):
        return q, "cycles"
    raise UnitsError(
        f"{fmt(q)} does not say whether it counts cycles or radians",
        where=where,
        do="Write Hz or cpm for cycles, rad/s or rpm for turning speed",
    )


def angular_frequency(q: Any, where: str, *, exact: bool = False) -> float | sp.Expr:
    """Angular frequency of *q* in rad/s, with the ``2*pi`` for Hz and cycles.

    Parameters
    ----------
    q : str or pint.Quantity
        A frequency: ``"25 Hz"``, ``"1480 rpm"``, ``"900 cpm"``, ``"155 rad/s"``.
    where : str
        The input's name, used in error messages.
    exact : bool
        Return an exact sympy number (with ``pi``) instead of a float.

    Examples
    --------
    >>> angular_frequency("1 Hz", "f", exact=True)
    2*pi
    >>> round(angular_frequency("1480 rpm", "speed"), 3)
    154.985
    """
    q, counts = _frequency_parts(q, where)
    if counts == "angle":
        value = to_si(q, where).magnitude
    else:
        value = 2 * sp.pi * to_si(q, where).magnitude
    return value if exact else float(value)


def cyclic_frequency(q: Any, where: str, *, exact: bool = False) -> float | sp.Expr:
    """Frequency of *q* in Hz (cycles per second); rpm and rad/s divided by ``2*pi``.

    Examples
    --------
    >>> cyclic_frequency("1500 rpm", "speed")
    25.0
    >>> cyclic_frequency("2 rad/s", "w", exact=True)
    1/pi
    """
    q, counts = _frequency_parts(q, where)
    if counts == "angle":
        value = to_si(q, where).magnitude / (2 * sp.pi)
    else:
        value = to_si(q, where).magnitude
    return value if exact else float(value)


def fmt_number(x: Any, sig: int = 4) -> str:
    """Format a number to *sig* significant figures, the way a sheet shows it.

    Plain decimals from 0.001 to below a million, without trailing zeros;
    ``1.235e-5`` style outside that range.

    Examples
    --------
    >>> fmt_number(7880.70758609144)
    '7881'
    >>> fmt_number(0.05)
    '0.05'
    >>> fmt_number(123456.7)
    '123500'
    >>> fmt_number(1.23456e-5)
    '1.235e-5'
    """
    x = float(x)
    if not math.isfinite(x):
        return str(x)
    if x == 0:
        return "0"
    rounded = rounded_decimal(x, sig)  # halves away from zero, as the sheet's policy states
    mantissa, _, exponent_text = f"{rounded:.{sig - 1}e}".partition("e")
    exponent = int(exponent_text)
    if -3 <= exponent < 6:
        text = f"{rounded:.{max(sig - 1 - exponent, 0)}f}"
        return text.rstrip("0").rstrip(".") if "." in text else text
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return f"{mantissa}e{exponent}"


def _display_quantity(q: pint.Quantity) -> pint.Quantity:
    """*q* in the units it has, unless two of them measure the same thing (N*m/mm)."""
    dims = [str(ureg.get_dimensionality(name)) for name, _ in q.unit_items()]
    if len(set(dims)) == len(dims):
        return q
    name = kind_of(q)
    if name == "dimensionless":
        return q.to("")
    if name is not None and name != "frequency":
        return q.to(KINDS[name].si_unit)
    return q.to_base_units()


def fmt(q: Any, sig: int = 4) -> str:
    """Format a quantity for a sheet: ``"12 N/mm"``, ``"1480 rpm"``, ``"0.05"``.

    Parameters
    ----------
    q : pint.Quantity or number
    sig : int
        Significant figures.

    Examples
    --------
    >>> fmt(Q_(7880.70758609144, "N/m"))
    '7881 N/m'
    >>> fmt(Q_(12, "N/mm") * Q_(1, "m"))
    '12000 N'
    """
    if not isinstance(q, pint.Quantity):
        return fmt_number(q, sig)
    q = _display_quantity(q)
    unit = f"{q.units:~P}"
    number = fmt_number(q.magnitude, sig)
    return f"{number} {unit}" if unit else number
