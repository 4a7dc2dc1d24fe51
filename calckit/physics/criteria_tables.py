"""Published vibration criteria with their sources: severity zones, criterion curves, one-third-octave bands.

The numbers live in one table file, ``criteria_tables.toml`` beside this module (package
data), read with :mod:`tomllib` and validated when it is loaded: each entry names its
standard or paper, its table or clause, and says whether its values were recalled from
memory. Nothing here holds a limit of its own.

- :func:`severity_zone`: the evaluation zone (A, B, C, D) of a machine's broad-band rms
  velocity for a machine class of the ISO 10816 / ISO 20816 series (``"ISO 10816-3 group 2
  flexible"``, :func:`severity_classes` lists them), with the zone boundaries and the source.
- :func:`criterion_curve`: a criterion curve for floors (the generic VC-A ... VC-E curves
  for sensitive equipment; the ISO 2631-2 human-perception base curve and its multiples for
  operating theatres, residences, offices and workshops) as rms velocity by frequency, and
  band by band in one-third octaves (:meth:`CriterionCurve.band_limits`).
- :func:`third_octave_bands`, :func:`third_octave_band`: the nominal midband frequencies of
  IEC 61260-1 / ANSI S1.11 and the band a frequency falls in.

Examples
--------
>>> zone = severity_zone("3.1 mm/s", "ISO 10816-3 group 2 rigid")
>>> zone.zone, zone.source
('C', 'ISO 10816-3:2009, Annex A, Table A.2 (from memory)')
>>> curve = criterion_curve("VC-A")
>>> curve.velocity_limit(20.0), curve.frequency_range
(5e-05, (1.0, 80.0))
>>> [round(f, 2) for f in third_octave_band(49.0)]
[50.0, 44.67, 56.23]
"""

from __future__ import annotations

import difflib
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from calckit.errors import InputsError

__all__ = [
    "BOUNDARY_NAMES",
    "CriteriaTables",
    "CriterionCurve",
    "CurveSegment",
    "SeverityClass",
    "SeverityZone",
    "ZONE_NAMES",
    "criterion_curve",
    "criterion_curves",
    "load_criteria",
    "severity_class",
    "severity_classes",
    "severity_zone",
    "third_octave_band",
    "third_octave_bands",
]

#: The evaluation zones, from the best, and the boundaries between them.
ZONE_NAMES = ("A", "B", "C", "D")
BOUNDARY_NAMES = ("A/B", "B/C", "C/D")

#: The table file bundled with calckit.
TABLE_FILE = Path(__file__).with_name("criteria_tables.toml")


def _marked(source: str, from_memory: bool) -> str:
    return f"{source} (from memory)" if from_memory else source


@dataclass(frozen=True)
class SeverityClass:
    """A machine class of a severity table: its zone boundaries (rms velocity, m/s) and where they come from."""

    key: str
    standard: str
    table: str
    machines: str
    foundation: str
    measured: str
    boundaries: tuple[tuple[str, float, str], ...]  # (name, m/s, as the table writes it)
    note: str
    from_memory: bool

    @property
    def source(self) -> str:
        """``"ISO 10816-3:2009, Annex A, Table A.2 (from memory)"``."""
        return _marked(f"{self.standard}, {self.table}", self.from_memory)

    def boundary(self, name: str) -> float:
        """The boundary *name* (``"B/C"``) in m/s rms."""
        return dict((n, v) for n, v, _ in self.boundaries)[name]

    def upper_boundary(self, zone: str, *, where: str = "acceptable_zone") -> tuple[str, float, str] | None:
        """The boundary above *zone* (``"B"`` -> ``("B/C", 0.0028, "2.8 mm/s")``); None for zone D.

        Raises
        ------
        InputsError
            *zone* is not A, B, C or D.
        """
        name = str(zone).strip().upper()
        if name not in ZONE_NAMES:
            raise InputsError(
                f"{zone!r} is not an evaluation zone of {self.key}",
                where=where,
                do='Give "A", "B", "C" or "D" (usually "B": acceptable for unrestricted long-term operation)',
            )
        index = ZONE_NAMES.index(name)
        return self.boundaries[index] if index < len(self.boundaries) else None


@dataclass(frozen=True)
class SeverityZone:
    """The zone a machine's rms velocity falls in, with the class it was judged by."""

    zone: str
    velocity_rms: float  # m/s
    machine_class: SeverityClass
    meaning: str

    @property
    def source(self) -> str:
        return self.machine_class.source

    @property
    def boundaries_text(self) -> str:
        """``"A/B 1.4 mm/s, B/C 2.8 mm/s, C/D 4.5 mm/s rms"``."""
        return ", ".join(f"{n} {text}" for n, _, text in self.machine_class.boundaries) + " rms"


@dataclass(frozen=True)
class CurveSegment:
    """A piece of a criterion curve: rms velocity or acceleration over [from_hz, to_hz], optionally sloping."""

    from_hz: float
    to_hz: float
    quantity: str  # "velocity" (m/s) or "acceleration" (m/s^2)
    value: float  # SI, at at_hz
    at_hz: float
    exponent: float

    def velocity(self, f: float) -> float:
        """The rms velocity limit at *f* Hz (m/s)."""
        level = self.value * (f / self.at_hz) ** self.exponent
        return level if self.quantity == "velocity" else level / (2 * math.pi * f)


@dataclass(frozen=True)
class CriterionCurve:
    """A criterion curve for floors: rms velocity limits over a frequency range, with its source."""

    name: str
    title: str
    source_text: str
    segments: tuple[CurveSegment, ...]
    multiple: float
    base: str
    note: str
    from_memory: bool

    @property
    def source(self) -> str:
        return _marked(self.source_text, self.from_memory)

    @property
    def frequency_range(self) -> tuple[float, float]:
        """Lowest and highest frequency the curve covers, Hz."""
        return (self.segments[0].from_hz, self.segments[-1].to_hz)

    def velocity_limit(self, f: float) -> float | None:
        """The rms velocity limit (m/s) at *f* Hz; None outside the curve's frequency range."""
        f = float(f)
        for segment in self.segments:
            if segment.from_hz <= f <= segment.to_hz:
                return self.multiple * segment.velocity(f)
        return None

    def band_limits(self) -> tuple[tuple[float, float], ...]:
        """(nominal midband frequency, rms velocity limit in m/s) for each one-third-octave band in range.

        The limit is the curve's value at the nominal midband frequency, as tables print them.
        """
        low, high = self.frequency_range
        return tuple((f, self.velocity_limit(f)) for f in third_octave_bands(low, high))


@dataclass(frozen=True)
class CriteriaTables:
    """The table file as read and checked."""

    path: Path
    band_source: str
    nominal_hz: tuple[float, ...]
    reference_hz: float
    zones: Mapping[str, str]
    severity: Mapping[str, SeverityClass]
    curves: Mapping[str, CriterionCurve]


# ----------------------------------------------------------------------------- reading


def _bad(path: Path, entry: str, what: str, do: str) -> InputsError:
    return InputsError(what, where=f"{path.name}, {entry}", do=do)


def _text(table: Mapping[str, Any], key: str, path: Path, entry: str, *, required: bool = True) -> str:
    value = table.get(key, "")
    if not isinstance(value, str) or (required and not value.strip()):
        raise _bad(path, entry, f'"{key}" is missing or not text', f'Give {key} = "..." (text)')
    return value.strip()


def _flag(table: Mapping[str, Any], path: Path, entry: str) -> bool:
    value = table.get("from_memory")
    if not isinstance(value, bool):
        raise _bad(
            path,
            entry,
            '"from_memory" is missing or not true/false',
            "Say whether the values were recalled (from_memory = true) or read from the document (false)",
        )
    return value


def _si(text: Any, kind: str, path: Path, entry: str) -> float:
    from calckit.core.units import quantity, to_si

    if not isinstance(text, str):
        raise _bad(path, entry, f"{text!r} is not text with a unit", 'Write it like "2.8 mm/s"')
    value = float(to_si(quantity(text, f"{path.name}, {entry}", expect=kind), entry).magnitude)
    if not (math.isfinite(value) and value > 0):
        raise _bad(path, entry, f"{text} is not above zero", "Give a positive value")
    return value


def _number(
    table: Mapping[str, Any], key: str, path: Path, entry: str, default: float | None = None
) -> float:
    value = table.get(key, default)
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise _bad(path, entry, f'"{key}" is missing or not a finite number', f"Give {key} = a number")
    return float(value)


def _severity(table: Mapping[str, Any], path: Path, index: int) -> SeverityClass:
    entry = f"severity entry {index}"
    key = _text(table, "key", path, entry)
    entry = f"severity {key!r}"
    bounds = table.get("boundaries")
    if not isinstance(bounds, dict) or tuple(bounds) != BOUNDARY_NAMES:
        raise _bad(
            path, entry, "the boundaries are not A/B, B/C and C/D in that order",
            'Write boundaries = { "A/B" = "...", "B/C" = "...", "C/D" = "..." }',
        )  # fmt: skip
    values = tuple(
        (name, _si(text, "velocity", path, f"{entry}, {name}"), text) for name, text in bounds.items()
    )
    if any(a[1] >= b[1] for a, b in zip(values, values[1:], strict=False)):
        raise _bad(
            path,
            entry,
            "the zone boundaries do not rise from A/B to C/D",
            "Check the values against the table",
        )
    return SeverityClass(
        key,
        _text(table, "standard", path, entry),
        _text(table, "table", path, entry),
        _text(table, "machines", path, entry),
        _text(table, "foundation", path, entry),
        _text(table, "measured", path, entry),
        values,
        _text(table, "note", path, entry, required=False),
        _flag(table, path, entry),
    )


def _segments(raw: Any, path: Path, entry: str) -> tuple[CurveSegment, ...]:
    if not isinstance(raw, list) or not raw:
        raise _bad(
            path, entry, "the curve has no segments", "Give segments = [ { from_hz, to_hz, velocity } ]"
        )
    out = []
    for number, seg in enumerate(raw, start=1):
        where = f"{entry}, segment {number}"
        if not isinstance(seg, dict):
            raise _bad(
                path, where, "a segment is not a table", "Write { from_hz = 1, to_hz = 80, velocity = ... }"
            )
        kinds = [k for k in ("velocity", "acceleration") if k in seg]
        if len(kinds) != 1:
            raise _bad(
                path, where, "a segment needs one of velocity and acceleration", "Give exactly one of them"
            )
        lo, hi = _number(seg, "from_hz", path, where), _number(seg, "to_hz", path, where)
        if not 0 < lo < hi:
            raise _bad(
                path, where, f"the range {lo:g} Hz to {hi:g} Hz is not rising from above zero", "Check it"
            )
        if out and not math.isclose(out[-1].to_hz, lo):
            raise _bad(path, where, "the segment does not start where the one before ends", "Close the gap")
        at = _number(seg, "at_hz", path, where, lo)
        exponent = _number(seg, "exponent", path, where, 0.0)
        out.append(CurveSegment(lo, hi, kinds[0], _si(seg[kinds[0]], kinds[0], path, where), at, exponent))
    return tuple(out)


def _curves(raw: list, path: Path) -> dict[str, CriterionCurve]:
    curves: dict[str, CriterionCurve] = {}
    for index, table in enumerate(raw, start=1):
        name = _text(table, "name", path, f"curve entry {index}")
        entry = f"curve {name!r}"
        if name in curves:
            raise _bad(path, entry, "the curve is given twice", "Give each curve once")
        if "base" in table:
            base = _text(table, "base", path, entry)
            if base not in curves:
                raise _bad(
                    path, entry, f"the base curve {base!r} is not given before it", "Put the base curve first"
                )
            multiple = _number(table, "multiple", path, entry)
            if not multiple > 0:
                raise _bad(path, entry, "the multiple is not above zero", "Give a positive multiple")
            segments, multiple = curves[base].segments, multiple * curves[base].multiple
        else:
            base, multiple, segments = "", 1.0, _segments(table.get("segments"), path, entry)
        curves[name] = CriterionCurve(
            name,
            _text(table, "title", path, entry),
            _text(table, "source", path, entry),
            segments,
            multiple,
            base,
            _text(table, "note", path, entry, required=False),
            _flag(table, path, entry),
        )
    return curves


def load_criteria(path: str | Path | None = None) -> CriteriaTables:
    """Read and check a criteria table file (by default the one bundled with calckit).

    Raises
    ------
    InputsError
        The file is missing or not TOML, or an entry lacks its source, its from-memory flag,
        boundaries that rise, or a curve's segments that join.
    """
    if path is None:
        return _bundled()
    return _read(Path(path))


@lru_cache(maxsize=1)
def _bundled() -> CriteriaTables:
    return _read(TABLE_FILE)


def _read(path: Path) -> CriteriaTables:
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputsError(
            f"cannot read the criteria table ({exc.strerror})", where=str(path), do="Check the path"
        ) from exc
    except tomllib.TOMLDecodeError as exc:
        raise InputsError(
            f"the criteria table is not TOML ({exc})", where=str(path), do="Correct the file"
        ) from exc
    bands = data.get("third_octave")
    if not isinstance(bands, dict):
        raise _bad(
            path, "third_octave", "the table of one-third-octave bands is missing", "Add [third_octave]"
        )
    nominal = bands.get("nominal_hz")
    if (
        not isinstance(nominal, list)
        or not nominal
        or any(isinstance(f, bool) or not isinstance(f, int | float) for f in nominal)
    ):
        raise _bad(
            path, "third_octave", "nominal_hz is not a list of numbers", "Give nominal_hz = [1, 1.25, ...]"
        )
    if any(a >= b for a, b in zip(nominal, nominal[1:], strict=False)):
        raise _bad(path, "third_octave", "nominal_hz does not rise", "List the frequencies from the lowest")
    reference = _number(bands, "reference_hz", path, "third_octave")
    first = round(10 * math.log10(nominal[0] / reference))
    for n, f in enumerate(nominal, start=first):  # one band after another, each near its exact midband
        if abs(f / (reference * 10 ** (n / 10)) - 1) > 0.03:
            raise _bad(
                path, "third_octave", f"{f:g} Hz is not the midband frequency of the next one-third-octave band",
                "List every band's nominal midband frequency, none left out",
            )  # fmt: skip
    zones = data.get("zones")
    if not isinstance(zones, dict) or tuple(zones) != ZONE_NAMES:
        raise _bad(
            path, "zones", "the zones are not A, B, C and D", "Give [zones] with A, B, C and D in order"
        )
    severity: dict[str, SeverityClass] = {}
    for index, table in enumerate(data.get("severity", []), start=1):
        found = _severity(table, path, index)
        if found.key in severity:
            raise _bad(
                path, f"severity {found.key!r}", "the machine class is given twice", "Give each class once"
            )
        severity[found.key] = found
    return CriteriaTables(
        path,
        _marked(_text(bands, "source", path, "third_octave"), _flag(bands, path, "third_octave")),
        tuple(float(f) for f in nominal),
        reference,
        dict(zones),
        severity,
        _curves(data.get("curve", []), path),
    )


# ----------------------------------------------------------------------------- asking


def _choose(name: Any, known: Mapping[str, Any], what: str, where: str, example: str) -> Any:
    if isinstance(name, str) and name.strip() in known:
        return known[name.strip()]
    close = difflib.get_close_matches(str(name), list(known), n=1, cutoff=0.5)
    hint = f'Did you mean "{close[0]}"? ' if close else ""
    raise InputsError(
        f"the criteria table has no {what} {str(name)!r}",
        where=where,
        do=f"{hint}Give one of: {'; '.join(known)} (e.g. {example})",
    )


def severity_classes() -> tuple[str, ...]:
    """The machine classes the bundled severity tables cover, by key."""
    return tuple(_bundled().severity)


def severity_class(machine_class: str, *, where: str = "machine_class") -> SeverityClass:
    """The machine class *machine_class* of the severity tables.

    Raises
    ------
    InputsError
        The tables do not cover that class.
    """
    return _choose(
        machine_class,
        _bundled().severity,
        "machine class",
        where,
        'machine_class = "ISO 10816-3 group 2 rigid"',
    )


def severity_zone(velocity_rms: Any, machine_class: str, *, where: str = "machine_class") -> SeverityZone:
    """The evaluation zone of a broad-band rms velocity (m/s, or a quantity or text with a unit).

    A velocity on a boundary belongs to the zone below it (the better one): zone B ends at
    the B/C boundary, which it still meets.

    Raises
    ------
    InputsError
        The tables do not cover *machine_class*, or the velocity is negative or not a velocity.

    Examples
    --------
    >>> severity_zone(0.0028, "ISO 10816-3 group 2 rigid").zone
    'B'
    """
    from calckit.core.units import quantity, to_si

    found = severity_class(machine_class, where=where)
    if isinstance(velocity_rms, str) or hasattr(velocity_rms, "units"):
        velocity_rms = to_si(
            quantity(velocity_rms, "velocity_rms", expect="velocity"), "velocity_rms"
        ).magnitude
    v = float(velocity_rms)
    if not (math.isfinite(v) and v >= 0):
        raise InputsError(
            f"a velocity of {v!r} m/s has no severity zone",
            where="velocity_rms",
            do="Give the rms velocity measured or computed on the machine, zero or more",
        )
    index = next((i for i, (_, bound, _) in enumerate(found.boundaries) if v <= bound), len(found.boundaries))
    zone = ZONE_NAMES[index]
    return SeverityZone(zone, v, found, _bundled().zones[zone])


def criterion_curves() -> tuple[str, ...]:
    """The names of the bundled criterion curves."""
    return tuple(_bundled().curves)


def criterion_curve(name: str, *, where: str = "criterion_curve") -> CriterionCurve:
    """The criterion curve *name* (``"VC-A"``, ``"ISO office"`` ...), with its source.

    Raises
    ------
    InputsError
        No curve of that name.
    """
    return _choose(name, _bundled().curves, "criterion curve", where, 'criterion_curve = "VC-A"')


def _band_index(f: float) -> int:
    tables = _bundled()
    return round(10 * math.log10(f / tables.reference_hz))


def third_octave_bands(f_min: float | None = None, f_max: float | None = None) -> tuple[float, ...]:
    """Nominal midband frequencies (Hz) of the one-third-octave bands from *f_min* to *f_max*, inclusive.

    >>> third_octave_bands(8, 20)
    (8.0, 10.0, 12.5, 16.0, 20.0)
    """
    nominal = _bundled().nominal_hz
    low = -math.inf if f_min is None else float(f_min) * (1 - 1e-9)
    high = math.inf if f_max is None else float(f_max) * (1 + 1e-9)
    return tuple(f for f in nominal if low <= f <= high)


def third_octave_band(frequency: float) -> tuple[float, float, float]:
    """The one-third-octave band *frequency* (Hz) falls in: (nominal midband, lower edge, upper edge), Hz.

    The edges are the exact midband frequency ``1000 Hz * 10^(n/10)`` times ``10^(-1/20)`` and
    ``10^(1/20)`` (base-ten bands of IEC 61260-1).

    Raises
    ------
    InputsError
        A frequency outside the bands of the table (or not above zero).
    """
    f = float(frequency)
    tables = _bundled()
    nominal = tables.nominal_hz
    if not (math.isfinite(f) and f > 0):
        raise InputsError(
            f"{f!r} Hz is not a frequency above zero", where="third_octave_band", do="Give a frequency in Hz"
        )
    n = _band_index(f)
    exact = tables.reference_hz * 10 ** (n / 10)
    lo, hi = exact * 10 ** (-1 / 20), exact * 10 ** (1 / 20)
    first = _band_index(nominal[0])
    if not 0 <= n - first < len(nominal):
        raise InputsError(
            f"{f:g} Hz lies outside the one-third-octave bands of the table ({nominal[0]:g} Hz to {nominal[-1]:g} Hz)",
            where="third_octave_band",
            do="Give frequencies within the bands a criterion covers",
        )
    return nominal[n - first], lo, hi
