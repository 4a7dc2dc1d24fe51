r"""The units a sheet shows its results in, and one system of units in every substitution.

A sheet shows each result in the unit its step asks for (SI unless a template asks
otherwise). It can be asked for US customary units for all of them (``system="US"``)
or for a chosen unit for any result (``x_max="in"``): an inputs file's ``[units]``
table, read by :func:`calckit.workflow.inputs.read_inputs`, or
:meth:`calckit.Sheet.use_units` in a notebook. Only the display moves: the record
keeps every value in SI, with the text the sheet shows beside it and the units asked
for (``"output_units"``).

One system a line
-----------------
A checker redoes a substitution with a calculator, so every value put through one
formula is shown in one consistent system, the system of the result's unit:

- SI: kg, m, s, N (with their prefixes; kN/m and mm are SI).
- US customary, as engineers use it with forces: lbf, in, s. A mass in it is
  ``lbf s^2/in`` (a weight in lbf over g = 386.1 in/s^2), never ``lb``: ``k/m`` with
  k in lbf/in and m in lb is not a frequency without the factor g_c, and a sheet that
  hides that factor cannot be checked by hand.

A value given in the other system (``45 lbf/in`` on an SI sheet, ``250 kg`` on a US
one, ``550 lb`` anywhere on a US sheet) is converted before it is put through, so
lb and lbf, or N and lbf, never meet in one line. Angles, frequencies in rad/s, times
and pure numbers belong to both systems and are left as they are.

Conversions are pint's, from the exact definitions of the units (1 in = 0.0254 m,
1 lb = 0.45359237 kg, standard gravity 9.80665 m/s^2, hence 1 lbf = 4.4482216152605 N;
NIST SP 811 (2008), Appendix B).

Examples
--------
>>> from calckit.core.units import Q_
>>> units = OutputUnits.of(system="US")
>>> fmt_shown = lambda q: f"{q.magnitude:.6g} {q.units:~}"
>>> fmt_shown(units.in_system(Q_(250, "kg"), "US"))
'1.42754 lbf * s ** 2 / in'
>>> fmt_shown(units.in_system(Q_(180, "kN/m"), "US"))
'1027.83 lbf / in'
>>> fmt_shown(units.shown_value("x_max", Q_(0.5, "mm")))
'0.019685 in'
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import pint

from calckit.core.unit_text import check_unit_text
from calckit.core.units import Q_, ureg
from calckit.errors import UnitsError

__all__ = ["SYSTEMS", "OutputUnits", "system_of"]

#: The systems a sheet can be asked for: ``"SI"`` (the default) and ``"US"`` (customary, lbf-in-s).
SYSTEMS = ("SI", "US")

# pint's names of US customary (and imperial) units; every other mass or length is metric
_US_NAME = re.compile(
    r"pound|inch|foot|yard|(?<!nautical_)mile|ounce|kip|slug|slinch|hundredweight|dram|grain|gallon"
    r"|^circular_mil$|thou|fathom|furlong|^rod$|^chain$|acre|stone|quart|pint|^cup$|barrel|bushel"
    r"|league|(?<!metric)(^|_)ton($|_)"
)
# the names of the force-based US system itself (lb, a mass, is not one of them)
_US_COHERENT = frozenset(
    {"force_pound", "inch", "second", "radian", "kip", "pound_force_per_square_inch", "kip_per_square_inch"}
)

_DO = 'Give the system as "SI" or "US", and a unit of the result\'s own kind for a result (x_max = "in")'


def _names(units: Any) -> set[str]:
    return {name for name, _ in Q_(1, units).unit_items()}


def system_of(units: Any) -> str | None:
    """``"US"`` for a unit with a US customary part, ``"SI"`` for one with a metric mass or length,
    ``None`` for one both systems share (rad/s, s, Hz, a pure number).

    >>> system_of("lbf/in"), system_of("kN/m"), system_of("rad/s")
    ('US', 'SI', None)
    """
    q = Q_(1, units)
    if any(_US_NAME.search(name) for name in _names(q.units)):
        return "US"
    dims = q.dimensionality
    if dims.get("[mass]", 0) or dims.get("[length]", 0):
        return "SI"
    return None


def _us_units(q: pint.Quantity) -> Any:
    """The lbf-in-s unit of *q*'s dimension: M^a L^b T^c is lbf^a s^(2a+c) in^(b-a)."""
    dims = q.dimensionality
    a, b, c = dims.get("[mass]", 0), dims.get("[length]", 0), dims.get("[time]", 0)
    powers = {"force_pound": a, "second": 2 * a + c, "inch": b - a}
    if "radian" in _names(q.units):  # keep what says the rate counts radians
        powers["radian"] = dict(q.unit_items())["radian"]
    text = " * ".join(f"{name} ** {power:g}" for name, power in powers.items() if power)
    return ureg.parse_units(text) if text else ureg.dimensionless


@dataclass(frozen=True)
class OutputUnits:
    """The units asked for a sheet's results: a system, and a unit for chosen results.

    Attributes
    ----------
    system : str
        ``"SI"`` (each result in the unit its step asks for) or ``"US"`` (customary, lbf-in-s).
    results : tuple of (str, str)
        A unit for a result by its name, e.g. ``(("x_max", "in"),)``; it wins over the system.
    wheres : tuple of (str, str)
        Where each was asked (an inputs file's line), for messages.
    """

    system: str = "SI"
    results: tuple[tuple[str, str], ...] = ()
    wheres: tuple[tuple[str, str], ...] = ()

    @classmethod
    def of(
        cls,
        system: str | None = None,
        results: Mapping[str, str] | None = None,
        wheres: Mapping[str, str] | None = None,
    ) -> OutputUnits:
        """Checked output units: a known system and units pint reads.

        Raises
        ------
        UnitsError
            An unknown system, or a unit that is not one.
        """
        wheres = dict(wheres or {})
        system = "SI" if system is None else system
        if not isinstance(system, str) or system.strip().upper() not in SYSTEMS:
            raise UnitsError(
                f"unknown system of units {system!r}", where=wheres.get("system", "units.system"), do=_DO
            )
        checked = []
        for name, unit in (results or {}).items():
            where = wheres.get(name, f"units.{name}")
            if isinstance(unit, str):
                check_unit_text(unit, where)  # bounded before pint parses it
            try:
                if not isinstance(unit, str) or not unit.strip():
                    raise ValueError
                Q_(1, unit.strip())
            except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError):
                raise UnitsError(f"{unit!r} is not a unit", where=where, do=_DO) from None
            checked.append((str(name), unit.strip()))
        return cls(system.strip().upper(), tuple(checked), tuple(wheres.items()))

    @property
    def asked(self) -> bool:
        """Whether anything but the default (SI, each result as its step asks) was asked."""
        return self.system != "SI" or bool(self.results)

    def record(self) -> dict:
        """What the JSON record holds: ``{"system": "US", "results": {"x_max": "in"}}``."""
        return {"system": self.system, "results": dict(self.results)}

    def where(self, name: str) -> str:
        return dict(self.wheres).get(name, f"units.{name}")

    def target(self, name: str, q: pint.Quantity) -> Any:
        """The unit to show result *name* (the quantity *q*) in: the one asked for it, else the system's."""
        asked = dict(self.results).get(name)
        if asked is not None:
            target = ureg.parse_units(asked)
            if Q_(1, target).dimensionality != q.dimensionality:
                raise UnitsError(
                    f"the result {name} is {q.dimensionality}, which cannot be shown in {asked}",
                    where=self.where(name),
                    do=f"Ask for a unit of the same kind as {q.units:~}",
                )
            return target
        if self.system == "US" and system_of(q.units) != "US" and system_of(q.units) is not None:
            return _us_units(q)
        return q.units

    def shown_value(self, name: str, value: Any) -> Any:
        """*value* (result *name*) in the unit the sheet shows it in; anything without a unit as it is."""
        if not isinstance(value, pint.Quantity):
            return value
        target = self.target(name, value)
        return value if target == value.units else value.to(target)

    def step_system(self, name: str, q: pint.Quantity) -> str:
        """The system a step's values are shown in: that of the unit its result is shown in."""
        return system_of(self.target(name, q)) or self.system

    def in_system(self, q: Any, system: str) -> Any:
        """*q* in *system* when it is in the other one (or in lb on a US sheet); else as it is."""
        if not isinstance(q, pint.Quantity):
            return q
        own = system_of(q.units)
        if own is None:
            return q
        if system == "US":
            if own == "US" and _names(q.units) <= _US_COHERENT:
                return q
            return q.to(_us_units(q))
        if own == "SI":
            return q
        from calckit.core.units import to_si

        si = to_si(q, "value")
        return Q_(float(si.magnitude), si.unit)

    def restated(self, name: str, step: Any) -> Any:
        """A step's substitution (:class:`calckit.render.numbers.Substitution`) in one system.

        Its result in the unit asked for it, every value put through in that unit's system;
        the step itself when nothing moves.
        """
        from calckit.render.numbers import put_through

        result = Q_(1, step.unit or "")
        system = self.step_system(name, result)
        values = {symbol.name: self.in_system(q, system) for symbol, q in step.inputs}
        target = self.target(name, result)
        moved = any(values[s.name] is not q for s, q in step.inputs)
        if not moved and target == result.units:
            return step
        unit = f"{target:~C}" if target != ureg.dimensionless else ""
        return put_through(step.symbol, step.formula, values, unit=unit, sig=step.sig)


def apply_units(sheet: Any, units: OutputUnits) -> OutputUnits:
    """Put *units* on *sheet* and show its steps and results in them again; return them.

    Raises
    ------
    InputsError
        A unit asked for a result the sheet does not have (the message lists its results).
    UnitsError
        A unit of another kind than its result's.
    """
    from dataclasses import replace

    from calckit.errors import InputsError
    from calckit.sheet.blocks import CalcStep, ResultLine

    for name, unit in units.results:
        if name not in sheet.results:
            raise InputsError(
                f"the sheet has no result {name} to show in {unit}",
                where=units.where(name),
                do=f"Name one of the sheet's results: {', '.join(sheet.results) or 'none yet'}",
            )
        value = sheet.results[name]
        if not isinstance(value, pint.Quantity):
            value = Q_(float(value), "") if isinstance(value, int | float) else None
        if value is None:
            raise UnitsError(
                f"the result {name} has no number to show in {unit}",
                where=units.where(name),
                do="Ask units only for results with a value",
            )
        units.target(name, value)  # refuses a unit of another kind
    sheet.units = units
    for index, block in enumerate(sheet.blocks):
        if isinstance(block, CalcStep):
            sheet.blocks[index] = replace(block, record=units.restated(block.name, block.record))
        elif isinstance(block, ResultLine) and block.name in sheet.results:
            sheet.blocks[index] = replace(
                block, value=units.shown_value(block.name, sheet.results[block.name])
            )
    return units
