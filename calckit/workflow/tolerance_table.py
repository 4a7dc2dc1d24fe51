"""Tolerance bands written in an inputs file: ``{ value = "720 kN/m", tolerance = "15 %" }``.

An input written as an inline table may give its band beside its value (and its
source): ``tolerance`` (relative in percent, or absolute in the value's kind of
unit), or ``min`` and ``max``. The bands may instead stand in a table of their own,
which leaves the values' lines as they are (:func:`table_bands`)::

    [tolerances]
    stiffness = "15 %"
    forcing_frequency = { min = "1300 rpm", max = "1500 rpm" }
 :func:`split_band` takes the band's keys out of the
table for :mod:`calckit.workflow.inputs` and checks the band against the value at
once (:func:`calckit.core.tolerances.tolerance_band`), so that a band on a text
input, of another dimension or with ``min`` above ``max`` is refused at its line
before a kernel starts. The build hands the bands to the template as
``input_tolerances`` (input name -> the band as written); the sheet puts each on its
input (:meth:`calckit.Sheet.given`), where the input's sign rule refuses a band that
reaches a value the input may not take.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from calckit.core.tolerances import TOLERANCE_KEYS, tolerance_band
from calckit.errors import InputsError

__all__ = ["band_line", "check_band_names", "split_band", "table_bands"]


def split_band(
    key: str, table: Mapping[str, Any], place: str
) -> tuple[dict[str, Any], dict[str, str] | None]:
    """``(table without the band's keys, the band as written)``; the band is None when the table gives none.

    Raises
    ------
    InputsError
        The band does not fit the value (see :func:`calckit.core.tolerances.tolerance_band`).
    """
    band = {k: v for k, v in table.items() if k in TOLERANCE_KEYS}
    rest = {k: v for k, v in table.items() if k not in TOLERANCE_KEYS}
    if not band:
        return rest, None
    if "value" in rest:
        return rest, _checked(key, rest["value"], band, place)
    return rest, None  # no value: the reader says so


def _checked(name: str, value: Any, band: Mapping[str, Any], place: str) -> dict[str, str]:
    """The band as written, checked against the value when the value can be read here.

    A value whose unit is misspelt, or a zero or negative value, is left for the template
    to refuse in its own words at the value's line; the band is checked again on the sheet.
    """
    from calckit.core.tolerances import spec_text
    from calckit.core.units import quantity
    from calckit.errors import UnitsError

    looks_numeric = isinstance(value, int | float) or (
        isinstance(value, str) and value.strip()[:1] in set("0123456789.+-")
    )
    try:
        nominal = quantity(value, place) if looks_numeric else None
    except UnitsError:
        return {key: spec_text(v) for key, v in band.items()}
    if nominal is not None and not float(nominal.magnitude) > 0:
        return {key: spec_text(v) for key, v in band.items()}
    return dict(tolerance_band(name, value, band, place).spec)


def table_bands(
    table: Mapping[str, Any],
    values: Mapping[str, Any],
    inline: Mapping[str, Any],
    path: Path,
    line_of: Callable[[str], int | None],
) -> dict[str, dict[str, str]]:
    """The bands of a ``[tolerances]`` table, by input name, each checked against its input's value.

    A band is text (``"15 %"``, ``"50 kN/m"``), a number for a dimensionless input, or an
    inline table of ``tolerance`` or ``min`` and ``max``.

    Raises
    ------
    InputsError
        A band for a name the file gives no input for, a band given both here and beside
        the value, or a band that does not fit its value.
    """
    bands = {}
    for name, spec in table.items():
        place = f"{path}, line {line_of(name) or '?'}, tolerances.{name}"
        spec = spec if isinstance(spec, dict) else {"tolerance": spec}
        if name not in values:  # refused by check_band_names once the file's inputs are checked
            from calckit.core.tolerances import spec_text

            bands[name] = {key: spec_text(v) for key, v in spec.items()}
            continue
        if name in inline:
            raise InputsError(
                f'the input "{name}" has a band beside its value too',
                where=place,
                do="Give its band once: in the [tolerances] table or beside the value",
            )
        bands[name] = _checked(name, values[name], spec, place)
    return bands


def check_band_names(file: Any) -> None:
    """Refuse a band of an inputs file (:class:`calckit.workflow.inputs.InputsFile`) for a name it gives no value.

    Called after the file's inputs are checked against the template's, so that a missing or
    misspelt input is named as such first.

    Raises
    ------
    InputsError
        A band in the ``[tolerances]`` table for an input the file does not give.
    """
    for name in file.tolerances:
        if name not in file.values:
            raise InputsError(
                f'the band "{name}" is for no input of this file',
                where=f"{file.path}, line {band_line(file.text, name) or '?'}, tolerances.{name}",
                do="Name an input the file gives a value for, or remove the band",
            )


def band_line(text: str, name: str) -> int | None:
    """The line (from 1) of *name*'s band in the ``[tolerances]`` table of an inputs file's *text*; None if none."""
    import re

    header = re.compile(r"\s*\[\s*([^\[\]]*?)\s*\]\s*(#.*)?$")
    key = re.compile(
        r"\s*(?:" + re.escape(name) + r"|\"" + re.escape(name) + r"\"|'" + re.escape(name) + r"')\s*="
    )
    table = ""
    for number, line in enumerate(text.splitlines(), start=1):
        found = header.match(line)
        if found:
            table = found.group(1).strip().strip("\"'")
        elif table == "tolerances" and key.match(line):
            return number
    return None
