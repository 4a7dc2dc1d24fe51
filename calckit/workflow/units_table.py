"""The ``[units]`` table of an inputs file: the units the built sheet shows its results in.

::

    [units]
    system = "US"          # US customary (lbf, in, s) for every result; "SI" is the default
    x_max = "in"           # a unit for one result, by its name on the sheet (wins over the system)

The table is read with the inputs file (:func:`calckit.workflow.inputs.read_inputs`,
:attr:`InputsFile.units`) and checked lightly there (text values only); the units
themselves are read when the build puts them on the sheet
(:meth:`calckit.Sheet.use_units`, :mod:`calckit.sheet.output_units`), where a unit that
is not one, or is not of its result's kind, or names no result, is refused with the
line of the inputs file. Only the display moves: the record keeps SI values.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from calckit.errors import InputsError

__all__ = ["UnitsTable", "read_units_table"]


@dataclass(frozen=True)
class UnitsTable:
    """The ``[units]`` table as read: the system (None: not given), a unit by result, and where each is."""

    system: str | None = None
    results: Mapping[str, str] = field(default_factory=dict)
    wheres: Mapping[str, str] = field(default_factory=dict)

    @property
    def given(self) -> bool:
        """Whether the table asks for anything."""
        return self.system is not None or bool(self.results)

    def payload(self) -> dict[str, Any]:
        """Plain data for the build's save cell (text, dicts of text)."""
        return {"system": self.system, "results": dict(self.results), "wheres": dict(self.wheres)}


def read_units_table(table: Mapping[str, Any], path: Any, line_of: Callable[[str], int | None]) -> UnitsTable:
    """The ``[units]`` table of the inputs file at *path*; *line_of* gives a key's line.

    Raises
    ------
    InputsError
        A value that is not text (the message gives the line).
    """
    system, results, wheres = None, {}, {}
    for key, value in table.items():
        line = line_of(key)
        where = f"{path}, line {line or '?'}, units.{key}"
        if not isinstance(value, str) or not value.strip():
            raise InputsError(
                f"expected a unit as text, got {value!r}",
                where=where,
                do='Write system = "US" (or "SI"), or a result\'s unit in quotes, for example x_max = "in"',
            )
        wheres[key] = where
        if key == "system":
            system = value.strip()
        else:
            results[key] = value.strip()
    return UnitsTable(system, results, wheres)
