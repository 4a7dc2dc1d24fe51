"""One input of the explorer: its role, parameter name, unit, starting and current value, and its text.

Also the small number helpers the explorer's modules share: the digits a starting
value shows, the shortest text of a float, a quantity as an inputs file writes it.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

from calckit.core.checks import non_negative, positive
from calckit.core.files import toml_value
from calckit.core.units import Q_, angular_frequency, quantity, to_si
from calckit.errors import CalcError


@dataclass(frozen=True)
class Role:
    """One input of the model: its keyword, kind of quantity and the parameter names it goes by."""

    key: str
    kind: str | None  # units kind (calckit.core.units.KINDS); None for text
    names: tuple[str, ...]
    label: str
    sign: str = "positive"  # "positive", "non-negative" or "" (text)
    scale: str = "linear"  # slider scale: "linear", "log" or "" (no slider)
    choices: tuple[float, ...] = ()  # a slider over these values only (in choice_unit)
    choice_unit: str = ""


#: Significant figures a slider move keeps (at least as many as the starting value shows).
SIGNIFICANT = 4


def _round_sig(x: float, sig: int) -> float:
    if x == 0 or not math.isfinite(x):
        return float(x)
    return float(f"{x:.{sig - 1}e}")


def _digits(number: float) -> int:
    """Significant digits a starting value shows (``1850`` -> 4, ``0.05`` -> 1, ``1234.56`` -> 6)."""
    mantissa = repr(abs(float(number))).split("e")[0]
    if mantissa.endswith(".0"):
        mantissa = mantissa[:-2]
    return max(len(mantissa.replace(".", "").lstrip("0")), 1)


def _number_text(x: float) -> str:
    """The shortest text of a float, without a trailing ``.0`` (``1923.0`` -> ``"1923"``)."""
    text = repr(float(x))
    return text[:-2] if text.endswith(".0") else text


def _unit_text(q) -> str:
    return f"{q.units:~P}"


_NUMBER_AT_START = re.compile(r"\s*[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*(.*)$", re.DOTALL)


def _written_unit(raw: Any, q) -> str:
    """The unit as the user wrote it (``"720 kN/m"`` -> ``"kN/m"``), for writing values back."""
    if isinstance(raw, str):
        found = _NUMBER_AT_START.match(raw)
        if found:
            return found.group(1).strip()
    return f"{q.units:~}" if not q.unitless else ""


def _si_factor(role: Role, unit: str, where: str) -> float:
    """SI value of one display unit (rad/s for frequencies)."""
    one = Q_(1, unit)
    if role.kind == "frequency":
        return angular_frequency(one, where)
    return float(to_si(one, where).magnitude)


def _written(q) -> str:
    """A quantity as an inputs file writes it: ``"2000 kg"``, not ``"2000.0 kg"``."""
    return f"{_number_text(q.magnitude)} {q.units:~P}".strip()


@dataclass
class _Input:
    """An input on a slider: its parameter name, starting value and current value (display unit)."""

    role: Role
    name: str  # the template's parameter name
    raw: Any  # the starting value as given (text, number)
    unit: str  # display unit ("kg", "kN/m", "rpm", "" for a pure number)
    written_unit: str  # the unit as written in the inputs
    factor: float  # SI value of one display unit
    start: float  # starting value in the display unit
    value: float  # current value in the display unit
    sig: int  # significant figures kept on a move
    from_text: bool  # the starting value was text ("1850 kg"), not a bare number
    where: str  # where to point an error about it

    @property
    def si(self) -> float:
        return self.value * self.factor

    @property
    def label(self) -> str:
        shown = self.name.replace("_", " ")
        return f"{shown} ({self.unit})" if self.unit else shown

    def text(self, value: float | None = None) -> str:
        """The value as an inputs file holds it: ``"1923 kg"`` (text) or ``0.065`` (a number)."""
        v = self.value if value is None else value
        if self.from_text:
            return f"{_number_text(v)} {self.written_unit}".strip()
        return _number_text(v)

    def toml(self) -> str:
        """The value as TOML text: a quoted string with its unit, or a bare number."""
        return toml_value(self.text()) if self.from_text else _number_text(self.value)

    @property
    def changed(self) -> bool:
        return self.value != self.start


def _as_display(item: _Input, raw: Any) -> float | None:
    if raw is None:
        return None
    q = quantity(raw, item.name, expect=item.role.kind)
    return float(q.to(item.unit).magnitude) if item.unit else float(q.to("").magnitude)


def _checked(role: Role, raw: Any, where: str):
    """The starting value as a quantity of the role's kind, finite and of the right sign."""
    try:
        q = quantity(raw, role.key, expect=role.kind)
        q = positive(q, role.key) if role.sign == "positive" else non_negative(q, role.key)
    except CalcError as exc:
        raise type(exc)(exc.what, where=where if where != role.key else exc.where, do=exc.do) from None
    return q


def _input(role: Role, name: str, raw: Any, where: str) -> _Input:
    q = _checked(role, raw, where)
    unit = _unit_text(q)  # "" for a bare number; "%" for a percentage
    start = float(q.magnitude)
    factor = _si_factor(role, unit, where) if unit else 1.0
    return _Input(
        role=role,
        name=name,
        raw=raw,
        unit=unit,
        written_unit=_written_unit(raw, q),
        factor=factor,
        start=start,
        value=start,
        sig=max(SIGNIFICANT, _digits(start)),
        from_text=isinstance(raw, str),
        where=where,
    )
