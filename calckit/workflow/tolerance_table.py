"""Tolerance bands written in an inputs file: ``{ value = "720 kN/m", tolerance = "15 %" }``.

An input written as an inline table may give its band beside its value (and its
source): ``tolerance`` (relative in percent, or absolute in the value's kind of
unit), or ``min`` and ``max``. :func:`split_band` takes the band's keys out of the
table for :mod:`calckit.workflow.inputs` and checks the band against the value at
once (:func:`calckit.core.tolerances.tolerance_band`), so that a band on a text
input, of another dimension or with ``min`` above ``max`` is refused at its line
before a kernel starts. The build hands the bands to the template as
``input_tolerances`` (input name -> the band as written); the sheet puts each on its
input (:meth:`calckit.Sheet.given`), where the input's sign rule refuses a band that
reaches a value the input may not take.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from calckit.core.tolerances import TOLERANCE_KEYS, tolerance_band

__all__ = ["split_band"]


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
        written = tolerance_band(key, rest["value"], band, place).spec
        return rest, dict(written)
    return rest, None  # no value: the reader says so
