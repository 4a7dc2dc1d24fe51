"""Tables of cases for a batch: :class:`Case` and :func:`read_cases` (CSV or TOML).

A case names itself (also its sub-folder's name) and gives the inputs it
changes; each value is kept with where it is written, so that an error about it
points at the file, the line and the case.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from calckit.core.characters import lookalike
from calckit.errors import InputsError
from calckit.workflow.templates import Template
from calckit.workflow.toml_text import load_toml

__all__ = ["Case", "read_cases"]


@dataclass(frozen=True)
class Case:
    """One case of a batch: its name, the inputs it overrides, and where they are written.

    Attributes
    ----------
    name : str
        Also the name of the case's sub-folder.
    values : Mapping[str, object]
        Inputs that replace the base inputs.
    wheres : Mapping[str, str]
        For each overridden input, where it is written (file, line, case).
    """

    name: str
    values: Mapping[str, Any]
    wheres: Mapping[str, str]


_CASE_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,79}$")


def _case_value(text: str, default: Any, where: str) -> Any:
    """A CSV cell as the type of the template's default for that input."""
    text = text.strip()
    if isinstance(default, bool):
        if text.lower() in ("true", "false"):
            return text.lower() == "true"
        raise InputsError(f"expected true or false, got {text!r}", where=where, do="Write true or false")
    if isinstance(default, int | float):
        try:
            number = int(text) if re.fullmatch(r"[+-]?\d+", text) else float(text)
        except ValueError:
            raise InputsError(
                f"expected a number, got {text!r}", where=where, do="Write a plain number, for example 0.05"
            ) from None
        if isinstance(number, float) and not math.isfinite(number):
            raise InputsError(
                f"the value {text} is not a finite number", where=where, do="Give a finite number"
            )
        return number
    return text


def _check_case_name(name: Any, where: str, seen: set[str]) -> str:
    if not isinstance(name, str) or not _CASE_NAME.match(name) or name in (".", ".."):
        raise InputsError(
            f"the case name {name!r} cannot name a folder",
            where=where,
            do="Use letters, digits, '.', '-' and '_' (up to 80), starting with a letter or digit",
        )
    if name in seen:
        raise InputsError(f'the case "{name}" is given twice', where=where, do="Give each case its own name")
    seen.add(name)
    return name


def read_cases(path: str | os.PathLike, template: Template) -> tuple[Case, ...]:
    """Read a table of cases from CSV or TOML.

    CSV: a header row with ``case`` and input names, then one row a case; an
    empty cell keeps the base input. Values are read as the type of the
    template's default (a number where the default is a number, else text).
    TOML: one ``[[case]]`` table a case, with ``name`` and the inputs it
    changes. Title-block fields (``revision`` ...) may be changed too.

    Raises
    ------
    InputsError
        Unreadable file, no cases, a bad or repeated case name, a name that is
        not one of the template's parameters.
    """
    from calckit.workflow.inputs import TITLE_FIELDS

    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputsError("the cases file does not exist", where=str(path), do="Check the path") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputsError(
            f"cannot read the cases file ({exc})", where=str(path), do="Check the path"
        ) from None
    known = {**{name: "" for name in TITLE_FIELDS}, **template.parameters}
    cases: list[Case] = []
    seen: set[str] = set()
    if path.suffix.lower() == ".csv":
        try:  # a cell past the csv module's field limit (131072 characters) is refused here, once
            rows = list(csv.reader(io.StringIO(text)))
        except csv.Error as exc:
            raise InputsError(
                f"cannot read the cases file as CSV: {exc}",
                where=str(path),
                do="Write case,<input>,<input>... then one row a case, each cell a value with its unit",
            ) from None
        rows = [row for row in rows if any(cell.strip() for cell in row)]
        if not rows or [c.strip() for c in rows[0]][:1] != ["case"]:
            raise InputsError(
                'the first row must be a header starting with "case"',
                where=f"{path}, line 1",
                do="Write case,<input>,<input>... then one row a case",
            )
        header = [c.strip() for c in rows[0]]
        _check_names(header[1:], known, path, lambda name: 1)
        for number, row in enumerate(csv.reader(io.StringIO(text)), start=1):
            if number == 1 or not any(cell.strip() for cell in row):
                continue
            where = f"{path}, line {number}"
            if len(row) != len(header):
                raise InputsError(
                    f"the row has {len(row)} cells but the header has {len(header)}",
                    where=where,
                    do="Give every row one cell per column (leave a cell empty to keep the base input)",
                )
            name = _check_case_name(row[0].strip(), where, seen)
            values, wheres = {}, {}
            for key, cell in zip(header[1:], row[1:], strict=True):
                if cell.strip():
                    place = f"{path}, line {number} (case {name}), {key}"
                    values[key] = _case_value(cell, known[key], place)
                    wheres[key] = place
            cases.append(Case(name, values, wheres))
    elif path.suffix.lower() == ".toml":
        data = load_toml(text, path, "cases file")
        tables = data.get("case")
        if set(data) - {"case"} or not isinstance(tables, list):
            raise InputsError(
                "expected only [[case]] tables",
                where=str(path),
                do='Write one [[case]] table a case, with name = "..." and the inputs it changes',
            )
        lines = text.splitlines()
        starts = [n for n, line in enumerate(lines, start=1) if line.strip().startswith("[[case]]")]
        for index, table in enumerate(tables):
            start = starts[index] if index < len(starts) else None
            where = f"{path}, line {start}" if start else str(path)
            name = _check_case_name(table.get("name"), where, seen)
            keys = [key for key in table if key != "name"]
            _check_names(keys, known, path, lambda key, s=start: _line_after(lines, s, key))
            values, wheres = {}, {}
            for key in keys:
                value = table[key]
                line = _line_after(lines, start, key)
                place = (
                    f"{path}, line {line} (case {name}), {key}" if line else f"{path} (case {name}), {key}"
                )
                if isinstance(value, float) and not math.isfinite(value):
                    raise InputsError(
                        f"the value {value} is not a finite number", where=place, do="Give a finite number"
                    )
                if not isinstance(value, str | int | float | bool):
                    raise InputsError(
                        f"a {type(value).__name__} value cannot be an input",
                        where=place,
                        do='Give text with a unit ("250 kg"), a number or true/false',
                    )
                values[key], wheres[key] = value, place
            cases.append(Case(name, values, wheres))
    else:
        raise InputsError(
            f"cannot read cases from a {path.suffix or 'file without extension'}",
            where=str(path),
            do="Give a .csv or a .toml table of cases",
        )
    if not cases:
        raise InputsError(
            "the cases file holds no cases", where=str(path), do="Add one row or [[case]] a case"
        )
    return tuple(cases)


def _line_after(lines: Sequence[str], start: int | None, key: str) -> int | None:
    if not start:
        return None
    pattern = re.compile(r"\s*" + re.escape(key) + r"\s*=")
    for number in range(start, len(lines) + 1):
        line = lines[number - 1]
        if number > start and line.strip().startswith("["):
            return None
        if pattern.match(line):
            return number
    return None


def _check_names(names: Sequence[str], known: Mapping[str, Any], path: Path, line_of: Callable) -> None:
    import difflib

    from calckit.workflow.inputs import OPTIONAL_TITLE_FIELDS

    for name in names:
        if name not in known:
            close = difflib.get_close_matches(name, list(known), n=1)
            hint = f'Did you mean "{close[0]}"? ' if close else ""
            line = line_of(name)
            found = lookalike(name)
            raise InputsError(
                f'unknown input "{name}"' + (f" ({found})" if found else ""),
                where=f"{path}, line {line}" if line else str(path),
                do=f"{hint}The template's inputs are {', '.join(n for n in known if n not in OPTIONAL_TITLE_FIELDS)}",
            )
