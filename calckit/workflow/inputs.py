"""Inputs files for ``calckit build``.

The template's parameters cell, read without running it, and the cell of inputs a build
writes after it are in :mod:`calckit.workflow.parameters_cell` (their names are also
imported from here).

Inputs file format
------------------
An inputs file is TOML. Keys at the top level are inputs; their names are the
names in the template's parameters cell. Text values carry units; plain numbers
are dimensionless::

    # Harrow Creek water-treatment works: pump P-101 on its inertia base
    mass = "250 kg"
    stiffness = "12 N/mm"
    zeta = 0.05
    forcing = "F0*cos(w*t)"

    [sheet]                      # the title block
    subject = "Pump P-101 on its inertia base"
    project = "Harrow Creek water-treatment works"
    calculation = "HCW-VIB-001"
    revision = "B"
    author = "A. Engineer"
    checker = "B. Checker"
    date = 2024-05-02            # a TOML date or text

    [units]                      # optional: the units the sheet shows its results in
    system = "US"                # US customary (lbf, in, s); "SI" is the default
    x_max = "in"                 # or a unit for one result, by its name on the sheet

    [machine]                    # any other table only groups inputs for reading:
    speed = "1480 rpm"           # its keys are inputs like the top-level ones
    unbalance = "120 g*mm"

Where a value comes from (a vendor drawing, a data sheet, a site measurement)
may be written with it, as an inline table of ``value`` and ``source``::

    [machine]
    mass = { value = "1850 kg", source = "Vendor GA drawing P-101-GA-001 rev C" }
    stiffness = "720 kN/m"       # plain: the sheet names the inputs file as its source

An amplitude says whether it is peak, peak-to-peak or rms with ``convention`` in the
same table (``velocity_limit = { value = "4.5 mm/s", convention = "rms" }``, a source
allowed beside it): two inputs, ``velocity_limit`` and ``velocity_limit_convention``
(:mod:`calckit.workflow.input_conventions`).

The value goes to the template exactly as if it were written alone; the source
(non-empty text) is shown in the sheet's Source column in place of the inputs
file's name (:attr:`InputsFile.sources`). A value that is not exact may carry its
band, with or without a source: ``{ value = "720 kN/m", tolerance = "15 %" }``
(relative, or absolute as ``"50 kN/m"``) or ``min`` and ``max``, or in a ``[tolerances]``
table by the input's name (:attr:`InputsFile.tolerances`,
:mod:`calckit.workflow.tolerance_table`). ``value``,
``source``, ``tolerance``, ``min`` and ``max`` are the only keys such a table takes. An inline table names one input; a ``[table]``
header groups inputs. The title-block fields take no source.

With bands given, a ``[sampling]`` table asks for a sampled (Monte Carlo) study over them:
the fraction of samples that pass each check (:attr:`InputsFile.sampling`,
:mod:`calckit.workflow.sampling_table`)::

    [sampling]
    samples = 100000
    distribution = "uniform"     # or "normal", with k = 3 (the half-band as k standard deviations)
    seed = 2026

``[sheet]``, ``[units]``, ``[tolerances]`` and ``[sampling]`` are the tables that hold no inputs.

Input values are text, integers, finite floats, true/false, or arrays of those.
Input names are Python names, unique across all groups. The title-block fields
(:data:`TITLE_FIELDS`) are passed to the template under their own names
(``subject``, ``project``, ``revision``...) when the template's parameters cell
declares them. They belong in ``[sheet]``, but may also be written at the top
level (``subject = "..."`` above the tables, as older inputs files do); a field
given in both places is refused. All are optional except ``subject``
(:data:`REQUIRED_TITLE_FIELDS`): a template that declares it needs it from the
inputs file, so that no sheet goes out under the template's example subject.

Expressions such as ``forcing = "F0*cos(w*t)"`` are text; templates read them with
:func:`calckit.parse_expression` (``calckit/core/expressions.py``), which never runs them.
"""

from __future__ import annotations

import datetime as _dt
import difflib
import keyword
import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

from calckit.core.characters import lookalike
from calckit.errors import InputsError
from calckit.workflow.input_conventions import CONVENTION_SUFFIX, missing_conventions, with_convention
from calckit.workflow.parameters_cell import (  # re-exported: templates read them here
    injected_source,
    parameters_from_source,
)
from calckit.workflow.sampling_table import check_something_to_sample, read_sampling_table, table_line
from calckit.workflow.tolerance_table import split_band, table_bands
from calckit.workflow.toml_text import load_toml
from calckit.workflow.units_table import UnitsTable, read_units_table

__all__ = [
    "TITLE_FIELDS",
    "REQUIRED_TITLE_FIELDS",
    "OPTIONAL_TITLE_FIELDS",
    "TitleBlock",
    "InputsFile",
    "read_inputs",
    "check_keys",
    "parameters_from_source",
    "injected_source",
]

#: Fields of the ``[sheet]`` table (the title block).
TITLE_FIELDS: tuple[str, ...] = ("subject", "project", "calculation", "revision", "author", "checker", "date")
#: Title-block fields an inputs file must give when the template declares them (in ``[sheet]`` or at the top level).
REQUIRED_TITLE_FIELDS: tuple[str, ...] = ("subject",)
#: Title-block fields that keep the template's value when an inputs file leaves them out.
OPTIONAL_TITLE_FIELDS: tuple[str, ...] = tuple(f for f in TITLE_FIELDS if f not in REQUIRED_TITLE_FIELDS)

# ---------------------------------------------------------------------------
# Inputs files


@dataclass(frozen=True)
class TitleBlock:
    """Title-block fields from the ``[sheet]`` table (each may be absent from the table)."""

    subject: str | None = None
    project: str | None = None
    calculation: str | None = None
    revision: str | None = None
    author: str | None = None
    checker: str | None = None
    date: str | None = None

    def present(self) -> dict[str, str]:
        """The fields that were given, by name, in :data:`TITLE_FIELDS` order."""
        return {name: getattr(self, name) for name in TITLE_FIELDS if getattr(self, name) is not None}


@dataclass(frozen=True)
class InputsFile:
    """An inputs file as read: its path, inputs, title block and text.

    Attributes
    ----------
    path : Path
    values : Mapping[str, object]
        Inputs by name, raw TOML values (text, int, float, bool, tuple), in file order.
    sheet : TitleBlock
    groups : Mapping[str, str]
        Name of the table each input sits in (``""`` at the top level).
    text : str
        The file's text, kept for line numbers.
    sources : Mapping[str, str]
        Where each input written as ``{ value = ..., source = ... }`` comes
        from, by name, in file order; inputs written plainly are not in it.
    units : UnitsTable
        The ``[units]`` table: the units the sheet shows its results in
        (:mod:`calckit.workflow.units_table`).
    conventions : Mapping[str, str]
        The amplitude convention of each input written as ``{ value = ..., convention = ... }``
        (peak, peak-to-peak or rms), by name; each is also the input ``{name}_convention``.
    tolerances : Mapping[str, Mapping[str, str]]
        The band of each input written with one (``{"tolerance": "15 %"}`` or
        ``{"min": ..., "max": ...}``), by name.
    sampling : Mapping[str, object] or None
        The sampled study the ``[sampling]`` table asks for (``samples``, ``distribution``,
        ``seed`` and, for a normal distribution, ``k``); None when the file has no such table.
    """

    path: Path
    values: Mapping[str, Any]
    sheet: TitleBlock = field(default_factory=TitleBlock)
    groups: Mapping[str, str] = field(default_factory=dict)
    text: str = ""
    sources: Mapping[str, str] = field(default_factory=dict)
    units: UnitsTable = field(default_factory=UnitsTable)
    conventions: Mapping[str, str] = field(default_factory=dict)
    tolerances: Mapping[str, Mapping[str, str]] = field(default_factory=dict)
    sampling: Mapping[str, Any] | None = None

    def line_of(self, key: str) -> int | None:
        """Line number (from 1) where *key* is set, best effort; None if not found.

        Examples
        --------
        >>> f = InputsFile(Path("a.toml"), {"mass": "250 kg"}, text='# P-101\\nmass = "250 kg"\\n')
        >>> f.line_of("mass")
        2
        """
        if key in TITLE_FIELDS and key not in self.values:
            table = "sheet"
        else:
            table = self.groups.get(key, "")
        found = _find_line(self.text, table, key)
        base = key.removesuffix(CONVENTION_SUFFIX)
        if found is None and key != base and base in self.conventions:  # written inside its amplitude's table
            return _find_line(self.text, self.groups.get(base, ""), base)
        return found

    def where(self, key: str) -> str:
        """``"p101.toml, line 4, mass"``: where to point an error about *key*."""
        line = self.line_of(key)
        place = f", line {line}" if line else ""
        return f"{self.path}{place}, {key}"

    def assignments(self, declared: Iterable[str] | None = None) -> dict[str, Any]:
        """Values to hand to the template: the inputs, then the title-block fields given.

        With *declared* (the template's parameter names), only title-block fields
        the template declares are included; the inputs always are.
        """
        title = self.sheet.present()
        if declared is not None:
            declared = set(declared)
            title = {name: value for name, value in title.items() if name in declared}
        return {**self.values, **title}


_HEADER = re.compile(r"\s*\[\s*([^\[\]]*?)\s*\]\s*(#.*)?$")


def _find_line(text: str, table: str, key: str) -> int | None:
    key_pattern = re.compile(
        r"\s*(?:" + re.escape(key) + r"|\"" + re.escape(key) + r"\"|'" + re.escape(key) + r"')\s*="
    )
    current = ""
    for number, line in enumerate(text.splitlines(), start=1):
        header = _HEADER.match(line)
        if header:
            current = header.group(1).strip().strip("\"'")
        elif current == table and key_pattern.match(line):
            return number
    return None


def read_inputs(path: str | Path) -> InputsFile:
    """Read an inputs file (TOML; format in the module notes).

    Raises
    ------
    InputsError
        Missing file, broken TOML (with line and column), a key that is not a
        Python name, a key given twice across groups, a value of a kind that
        inputs cannot have, a float that is NaN or infinite; an input written
        as an inline table without ``value``, with a key other than ``value``
        and ``source``, or with a source that is not non-empty text; a ``[sampling]``
        table that is not a sampled study (:mod:`calckit.workflow.sampling_table`), or
        one in a file where no input carries a band.

    Examples
    --------
    >>> import tempfile, os
    >>> folder = tempfile.mkdtemp()
    >>> p = Path(folder, "p101.toml")
    >>> _ = p.write_text('mass = "250 kg"\\n[sheet]\\nrevision = "A"\\n')
    >>> f = read_inputs(p)
    >>> dict(f.values), f.sheet.revision
    ({'mass': '250 kg'}, 'A')
    >>> _ = p.write_text('mass = { value = "250 kg", source = "drawing P-101-GA-001" }\\nzeta = 0.05\\n')
    >>> f = read_inputs(p)
    >>> dict(f.values), dict(f.sources)
    ({'mass': '250 kg', 'zeta': 0.05}, {'mass': 'drawing P-101-GA-001'})
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError as exc:
        raise InputsError("the inputs file does not exist", where=str(path), do="Check the path") from exc
    except UnicodeDecodeError as exc:
        raise InputsError(
            "the inputs file is not UTF-8 text", where=str(path), do="Save it as UTF-8"
        ) from exc
    except OSError as exc:
        raise InputsError(
            f"cannot read the inputs file ({exc.strerror})", where=str(path), do="Check the path"
        ) from exc
    data = load_toml(text, path, "inputs file")
    values: dict[str, Any] = {}
    groups: dict[str, str] = {}
    sources: dict[str, str] = {}
    conventions: dict[str, str] = {}
    tolerances: dict[str, dict[str, str]] = {}
    sheet = TitleBlock()
    units = UnitsTable()
    bands: dict[str, Any] = {}
    sampling: dict[str, Any] | None = None
    text_file = InputsFile(path, {}, text=text)

    def add(key: str, value: Any, group: str) -> None:
        place = f"{path}, line {_find_line(text, group, key) or '?'}, {key}"
        if not key.isidentifier() or keyword.iskeyword(key) or key.startswith("_"):
            raise InputsError(
                f'"{key}" is not usable as an input name',
                where=place,
                do="Use letters, digits and underscores, starting with a letter (e.g. pump_speed)",
            )
        if key in values:
            first = f"[{groups[key]}]" if groups[key] else "the top level"
            raise InputsError(
                f'the input "{key}" is also set in {first}',
                where=place,
                do="Give each input once",
            )
        if isinstance(value, dict) and "convention" in value:
            value, conventions[key] = with_convention(value, place)
        if isinstance(value, dict):
            value, band = split_band(key, value, place)
            value, source = _sourced_value(key, value, place, band is not None)
            sources.update({key: source} if source is not None else {})
            tolerances.update({key: band} if band is not None else {})
        values[key] = _input_value(value, place)
        groups[key] = group
        if key in conventions:  # the convention is an input of its own, next to its amplitude
            add(key + CONVENTION_SUFFIX, conventions[key], group)

    for key, value in data.items():
        if key == "sheet" and isinstance(value, dict):
            sheet = _title_block(value, path, text_file)
        elif key == "units" and isinstance(value, dict) and _find_line(text, "", key) is None:
            units = read_units_table(value, path, lambda inner: _find_line(text, "units", inner))
        elif key == "tolerances" and isinstance(value, dict) and _find_line(text, "", key) is None:
            bands = value  # read once every input is known
        elif key == "sampling" and isinstance(value, dict) and _find_line(text, "", key) is None:
            header = table_line(text, "sampling")
            sampling = read_sampling_table(
                value, path, lambda inner: _find_line(text, "sampling", inner), header
            )
        elif isinstance(value, dict) and _find_line(text, "", key) is not None:
            add(key, value, "")  # key = { value = ..., source = ... }: one input, not a group
        elif isinstance(value, dict):
            for inner, inner_value in value.items():
                if isinstance(inner_value, dict) and _find_line(text, key, inner) is None:
                    raise InputsError(
                        f'the table "{key}.{inner}" is nested inside "{key}"',
                        where=str(path),
                        do="Use one level of tables to group inputs",
                    )
                add(inner, inner_value, key)
        else:
            add(key, value, "")
    tolerances.update(
        table_bands(bands, values, tolerances, path, lambda k: _find_line(text, "tolerances", k))
    )
    check_something_to_sample(
        sampling, tolerances, f"{path}, line {table_line(text, 'sampling') or '?'}, sampling"
    )
    for key in sheet.present():  # one value a field: which one would win is not for us to guess
        if key in values:
            first = f"in [{groups[key]}]" if groups[key] else "at the top level"
            raise InputsError(
                f'"{key}" is set in [sheet] and also {first}',
                where=f"{path}, line {_find_line(text, 'sheet', key) or '?'}, sheet.{key}",
                do="Give it once, preferably in [sheet]",
            )
    return InputsFile(
        path,
        MappingProxyType(values),
        sheet,
        MappingProxyType(groups),
        text,
        MappingProxyType(sources),
        units,
        MappingProxyType(conventions),
        MappingProxyType(tolerances),
        MappingProxyType(sampling) if sampling is not None else None,
    )


_SOURCED_KEYS = ("value", "source", "tolerance", "min", "max")


def _sourced_value(
    key: str, table: Mapping[str, Any], place: str, banded: bool = False
) -> tuple[Any, str | None]:
    """The value and the source of an input written as ``key = { value = ..., source = ... }``."""
    example = f'{key} = {{ value = "...", source = "Vendor drawing ..." }}'
    if key in TITLE_FIELDS:
        raise InputsError(
            f'the title-block field "{key}" is written as a table',
            where=place,
            do=f'Title-block fields take no source: write {key} = "..."',
        )
    for inner in table:
        if inner not in _SOURCED_KEYS:
            close = difflib.get_close_matches(inner, _SOURCED_KEYS, n=1)
            hint = f'Did you mean "{close[0]}"? ' if close else ""
            raise InputsError(
                f'unknown key "{inner}" in the table of the input "{key}"',
                where=place,
                do=f"{hint}An input written as a table takes only value, source and a band (tolerance, or min "
                f"and max): {example}; "
                f"to group inputs, put them under a [{key}] header",
            )
    if "value" not in table:
        raise InputsError(
            f'the input "{key}" is written as a table without a value',
            where=place,
            do=f"Give its value in the table: {example}",
        )
    if "source" not in table and banded:
        return table["value"], None
    if "source" not in table:
        raise InputsError(
            f'the input "{key}" is written as a table without a source',
            where=place,
            do=f"Give its source in the table: {example}, or write {key} = value alone",
        )
    source = table["source"]
    if not isinstance(source, str):
        raise InputsError(
            f"the source must be text, not {_kind(source)}",
            where=place,
            do=f"Write where the value comes from in quotes: {example}, or write {key} = value alone",
        )
    if not source.strip():
        raise InputsError(
            "the source is empty",
            where=place,
            do=f"Write where the value comes from: {example}, or write {key} = value alone",
        )
    return table["value"], source.strip()


def _kind(value: Any) -> str:
    """``"a number"``, ``"a table"``...: what a TOML value is, in words."""
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, int | float):
        return "a number"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, _dt.date | _dt.time):
        return "a date or time"
    return f"a {type(value).__name__}"


def _input_value(value: Any, place: str) -> Any:
    if isinstance(value, list):
        return tuple(_input_value(item, place) for item in value)
    if isinstance(value, float) and not math.isfinite(value):
        raise InputsError(f"the value {value} is not a finite number", where=place, do="Give a finite number")
    if isinstance(value, str | int | float | bool):
        return value
    raise InputsError(
        f"a {type(value).__name__} value cannot be an input",
        where=place,
        do='Give text with a unit ("250 kg"), a number or true/false',
    )


def _title_block(table: Mapping[str, Any], path: Path, file: InputsFile) -> TitleBlock:
    fields: dict[str, str] = {}
    for key, value in table.items():
        line = _find_line(file.text, "sheet", key)
        place = f"{path}, line {line or '?'}, sheet.{key}"
        if key not in TITLE_FIELDS:
            close = difflib.get_close_matches(key, TITLE_FIELDS, n=1)
            hint = f'Did you mean "{close[0]}"? ' if close else ""
            raise InputsError(
                f'unknown title-block field "{key}"',
                where=place,
                do=f"{hint}The [sheet] table takes {', '.join(TITLE_FIELDS)}",
            )
        if isinstance(value, _dt.date | _dt.datetime):
            value = value.isoformat()
        if isinstance(value, dict):
            raise InputsError(
                f'the title-block field "{key}" is written as a table',
                where=place,
                do=f'Title-block fields take no source: write {key} = "..."',
            )
        if not isinstance(value, str):
            raise InputsError(
                f"expected text, got {value!r}",
                where=place,
                do=f'Write it in quotes, for example {key} = "{value}"',
            )
        fields[key] = value
    return TitleBlock(**fields)


def _quoted(names: Iterable[str]) -> str:
    return ", ".join(f'"{n}"' for n in names)


def check_keys(
    inputs: InputsFile | Mapping[str, Any],
    expected: Mapping[str, Any],
    *,
    path: str | Path,
    optional: Iterable[str] = OPTIONAL_TITLE_FIELDS,
) -> None:
    """Check that *inputs* gives exactly the names *expected* (a template's parameters).

    Unknown names are reported with the closest expected name; missing names
    are reported unless listed in *optional* (by default the title-block
    fields but ``subject``, which keep the template's values when not given).
    For an :class:`InputsFile` the inputs are checked, not the ``[sheet]``
    table (its fields were checked when it was read, and a field given there
    counts as given), and unknown names give their line.

    Raises
    ------
    InputsError
        One error listing every unknown and missing name.

    Examples
    --------
    >>> check_keys({"mass": "250 kg", "stifness": "12 N/mm"}, {"mass": "", "stiffness": ""}, path="p101.toml")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: p101.toml: unknown input "stifness" (did you mean "stiffness"?); missing input "stiffness". The template's inputs are mass, stiffness.
    """
    given = dict(inputs.values) if isinstance(inputs, InputsFile) else dict(inputs)
    in_sheet = set(inputs.sheet.present()) if isinstance(inputs, InputsFile) else set()
    optional = set(optional)
    problems = []
    for name in given:
        if name in expected:
            continue
        line = inputs.line_of(name) if isinstance(inputs, InputsFile) else None
        at = f" on line {line}" if line else ""
        close = difflib.get_close_matches(name, list(expected), n=1)
        hint = f' (did you mean "{close[0]}"?)' if close else ""
        found = lookalike(name)
        hint += f" ({found})" if found else ""
        problems.append(f'unknown input "{name}"{at}{hint}')
    missing = [
        name for name in expected if name not in given and name not in in_sheet and name not in optional
    ]
    missing, unsaid = missing_conventions(
        missing, given, lambda n: inputs.line_of(n) if isinstance(inputs, InputsFile) else None
    )
    problems += unsaid
    if missing:
        problems.append(f"missing input{'s' if len(missing) > 1 else ''} {_quoted(missing)}")
    if problems:
        required = [name for name in expected if name not in optional]
        raise InputsError(
            "; ".join(problems),
            where=str(path),
            do=f"The template's inputs are {', '.join(required)}",
        )
