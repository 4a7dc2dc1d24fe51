"""How ``calckit diff`` names the sheets it compares and shows their values.

A sheet is named by its calculation number, revision and fingerprint
(:func:`sheet_name`); a result by the title of its step on the sheet, with its name
(:func:`result_label`); a value as the sheet shows it (the record's ``shown`` text,
in the sheet's own units and at its own precision), else in the unit a sheet would
use (:func:`shown_pair`).
"""

from __future__ import annotations

import math
from typing import Any

from calckit.core.units import Q_, fmt, fmt_number

__all__ = [
    "limit_text",
    "number",
    "result_label",
    "sampled_text",
    "samples_text",
    "shown_pair",
    "sheet_name",
    "text_or_absent",
]


def sheet_name(record: dict) -> str:
    """``"HCW-VIB-001 rev A, fingerprint 9ed938cff9a4"``: how a report names a sheet.

    >>> sheet_name({"title_block": {"number": "HCW-VIB-001", "revision": "B"}, "fingerprint": "ab" * 32})
    'HCW-VIB-001 rev B, fingerprint abababababab'
    """
    title = record.get("title_block") or {}
    number = str(title.get("number") or "") or "(no calculation number)"
    revision = str(title.get("revision") or "") or "(no revision)"
    return f"{number} rev {revision}, fingerprint {str(record.get('fingerprint', ''))[:12]}"


def result_label(old: dict | None, new: dict | None, name: str) -> str:
    """A result under the sheet's own label: ``"Natural frequency (natural_frequency)"``, else its name."""
    label = (new or {}).get("label") or (old or {}).get("label")
    return f"{label} ({name})" if label and label != name else name


def sampled_text(record: dict) -> str:
    """The sampled study a record shows, in words (:func:`samples_text`); ``"none"`` when it shows none.

    >>> sampled_text({"tolerances": {"samples": {"n": 100000, "distribution": "normal", "seed": 7, "k": 3.0}}})
    '100,000 samples, normal (k = 3), seed 7'
    """
    return samples_text((record.get("tolerances") or {}).get("samples"))


def samples_text(samples: Any) -> str:
    """A sampled study as a record holds it (``n``, ``distribution``, ``seed``, ``k``), in words; ``"none"``.

    >>> samples_text({"n": 500, "distribution": "uniform", "seed": 3, "k": 3.0})
    '500 samples, uniform, seed 3'
    """
    if not isinstance(samples, dict) or not samples:
        return "none"
    k, n = number(samples.get("k")), samples.get("n")
    k = f" (k = {k:g})" if samples.get("distribution") == "normal" and k is not None else ""
    n = f"{n:,}" if isinstance(n, int) and not isinstance(n, bool) else str(n)
    return f"{n} samples, {samples.get('distribution')}{k}, seed {samples.get('seed')}"


def number(value: Any) -> float | None:
    return float(value) if isinstance(value, int | float) and not isinstance(value, bool) else None


def limit_text(check: dict) -> str:
    limit = number(check.get("limit"))
    unit = str(check.get("unit") or "")
    unit = {"percent": "%"}.get(unit, unit)
    shown = "?" if limit is None else fmt_number(limit, 4)
    return f"{check.get('relation', '')} {shown}{' ' + unit if unit else ''}".strip()


def text_or_absent(item: dict | None) -> str:
    if item is None:
        return "absent"
    return str(item.get("shown") or item.get("text") or "")


#: SI units a sheet shows in another unit: (the unit shown, below what size in SI; None: always).
_SHOWN_UNITS = {"m": ("mm", 0.1), "rad": ("deg", None), "1/s": ("Hz", None)}


def shown_pair(a: dict | None, b: dict | None) -> tuple[str, str]:
    """Old and new result as the sheet shows them; both in one unit when the records give no text."""
    values = [item.get("value") for item in (a, b) if item is not None and item.get("value") is not None]
    unit = str((b or {}).get("unit") or (a or {}).get("unit") or "")
    target = None
    if unit in _SHOWN_UNITS:
        shown_unit, below = _SHOWN_UNITS[unit]
        if below is None or all(abs(v) < below for v in values if math.isfinite(v)):
            target = shown_unit
    return _shown_one(a, unit, target), _shown_one(b, unit, target)


def _shown_one(item: dict | None, unit: str, target: str | None) -> str:
    if item is None:
        return "absent"
    if item.get("shown"):
        return str(item["shown"])
    value = item.get("value")
    if value is None:
        return str(item.get("text") or "absent")
    unit = str(item.get("unit") or unit)
    if not unit:
        return fmt_number(value, 4)
    try:
        quantity = Q_(float(value), unit)
        return fmt(quantity.to(target) if target else quantity, 4)
    except Exception:  # a unit text pint does not read: the number and the unit as recorded
        return f"{fmt_number(value, 4)} {unit}"
