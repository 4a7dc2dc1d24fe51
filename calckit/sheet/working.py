"""How each result on a sheet was obtained, and the rules that keep it traceable.

Every numbered result on a sheet carries its :class:`Working`: a ``formula`` with the
values and units put through it (every :meth:`~calckit.Sheet.calc` step), a
``derivation`` (a result read from a derived expression), an ``input`` (a value taken
as given), a ``table`` (a value read from a table on the sheet or a standard), or a
named numerical ``procedure`` with its settings (step size, tolerance, number of
harmonics). The record saves it beside the value, and the sheet refuses to save a
result without it (:func:`require_working`).

Two rules keep a substitution redoable by hand from the printed numbers:

* **one rounding policy per sheet** (:func:`rounding_policy`, stated among the
  sheet's assumptions): results are shown to the sheet's significant figures and a
  later step takes them as shown (:func:`calckit.core.rounding.as_shown`);
* **the shown values reproduce the shown result**: :func:`reproduced` redoes each
  substitution from the values as printed and the sheet refuses a step whose printed
  values give another last digit (for example ``155 rad/s / 19.73 rad/s`` printed
  with the result of the unrounded speed, 7.855, where a calculator gives 7.856).

A speed in rpm or a frequency in Hz that enters a formula is first converted to rad/s
in a step of its own (:func:`conversion_formula`), once per sheet, and carried as shown.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy as sp

from calckit.core.units import Q_
from calckit.errors import SheetError

__all__ = [
    "WORKING_KINDS",
    "Working",
    "conversion_formula",
    "reproduced",
    "require_working",
    "rounding_policy",
    "working_of",
]

WORKING_KINDS = ("formula", "derivation", "input", "table", "procedure")
"""How a result may be obtained; every result on a sheet names one."""

_DO = (
    'Give working=("procedure", "what was run, with its settings"), or ("derivation", ...), ("input", ...), '
    '("table", ...): say how the value was obtained'
)


@dataclass(frozen=True)
class Working:
    """How a result was obtained: ``kind`` (one of :data:`WORKING_KINDS`) and its ``text``.

    >>> Working("procedure", "bisection to 1e-9 rad/s").as_dict()
    {'kind': 'procedure', 'text': 'bisection to 1e-9 rad/s'}
    """

    kind: str
    text: str

    def as_dict(self) -> dict:
        """The working as the record holds it."""
        return {"kind": self.kind, "text": self.text}

    @property
    def label(self) -> str:
        """The kind as the sheet prints it before the text: ``"Procedure"``."""
        return self.kind.capitalize()


def working_of(given: Any, where: str) -> Working | None:
    """*given* as a :class:`Working`: a Working, a ``(kind, text)`` pair, a ``{"kind", "text"}`` mapping or None.

    Raises
    ------
    SheetError
        An unknown kind, or no text.
    """
    if given is None or isinstance(given, Working):
        working = given
    elif isinstance(given, dict) and set(given) == {"kind", "text"}:
        working = Working(given["kind"], given["text"])
    elif isinstance(given, (tuple, list)) and len(given) == 2:
        working = Working(*given)
    else:
        raise SheetError(f"working={given!r} is not a kind and a text", where=where, do=_DO)
    if working is not None:
        if working.kind not in WORKING_KINDS:
            raise SheetError(
                f"{working.kind!r} is not a kind of working (kinds: {', '.join(WORKING_KINDS)})",
                where=where,
                do=_DO,
            )
        if not isinstance(working.text, str) or not working.text.strip():
            raise SheetError(f"the {working.kind} working has no text", where=where, do=_DO)
    return working


def require_working(name: str, working: Working | None) -> Working:
    """The working of the result *name*; a :class:`SheetError` naming it and what to give when there is none."""
    if working is None:
        raise SheetError(
            f"the result {name!r} does not say how it was obtained, so the sheet cannot be saved",
            where=f"result {name}",
            do=_DO,
        )
    return working


def rounding_policy(sig: int) -> str:
    """The sheet's one rounding policy, as its assumptions state it."""
    return (
        f"Rounding: every result is shown to {sig} significant figures (halves away from zero; trailing "
        "zeros are not printed, so 3.14 stands for 3.140) and a "
        "later step takes it as shown, so each substitution can be redone by hand from the printed "
        "values to the last digit shown; speeds and frequencies are converted to rad/s in a step of "
        "their own before they enter a formula."
    )


_CYCLE_UNITS = {
    "revolutions_per_minute": ("n", "rpm", "1/min"),
    "cycles_per_minute": ("n", "cpm", "1/min"),
    "hertz": ("f", "Hz", "1/s"),
    "kilohertz": ("f", "Hz", "1/s"),
    "megahertz": ("f", "Hz", "1/s"),
}


def conversion_formula(value: Any):
    """For a speed or frequency counted in turns or cycles, ``(formula, values, note)`` of its step to rad/s.

    ``formula`` is ``2 pi n`` (rpm, as turns per minute) or ``2 pi f`` (Hz); None for
    anything else (a value already in rad/s, a length, a number).

    >>> formula, values, note = conversion_formula(Q_(1480, "rpm"))
    >>> formula, values["n"], note
    (2*pi*n, <Quantity(1480, '1 / minute')>, '1 rpm = $2\\\\pi$ rad/min')
    """
    units = getattr(value, "units", None)
    if units is None:
        return None
    names = [name for name, _ in value.unit_items()]
    if len(names) != 1 or names[0] not in _CYCLE_UNITS:
        return None
    letter, shown, per = _CYCLE_UNITS[names[0]]
    magnitude = value.to(shown).magnitude
    note = (
        r"1 rpm = $2\pi$ rad/min"
        if shown == "rpm"
        else (r"1 cpm = $2\pi$ rad/min" if shown == "cpm" else r"1 Hz = $2\pi$ rad/s")
    )
    return 2 * sp.pi * sp.Symbol(letter), {letter: Q_(magnitude, per)}, note


def reproduced(record: Any) -> str | None:
    """Redo a substitution from its values as printed; the result by hand when it differs from the one shown.

    *record* is a :class:`calckit.render.numbers.Substitution`. Returns None when the
    printed values give the printed result to its last digit.
    """
    from calckit.render.numbers import put_through, shown_magnitude

    if not record.inputs:
        return None
    digits = getattr(record, "value_sig", {}) or {}
    values = {s.name: Q_(shown_magnitude(q, digits.get(s.name, record.sig)), q.units) for s, q in record.inputs}
    try:
        again = put_through(record.symbol, record.formula, values, unit=record.unit, sig=record.sig)
    except Exception:  # noqa: BLE001 - a printed value that cannot be put through (a 0 shown) is a mismatch
        return "no finite number"
    return None if again.shown == record.shown else f"{again.shown} {record.unit}".strip()
