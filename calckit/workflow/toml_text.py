"""TOML text read with bounds: the one reader of inputs files and cases files.

:func:`tomllib.loads` alone lets three things out that are not errors of calckit's
own: a whole number longer than Python turns into an ``int`` (``ValueError``, see
:func:`sys.get_int_max_str_digits`), lists or inline tables nested thousands deep
(``RecursionError``), and a file of any size. Here each is an
:class:`~calckit.errors.InputsError` that names the limit and the line; a broken file
names its line and column, and a character drawn like a Latin one on that line
(``maсs = ...`` with a Cyrillic ``с``) is named (:mod:`calckit.core.characters`).
"""

from __future__ import annotations

import re
import sys
import tomllib
from pathlib import Path
from typing import Any

from calckit.core.characters import lookalike
from calckit.errors import InputsError

__all__ = ["LONGEST_TOML_TEXT", "load_toml"]

#: Longest inputs or cases file read, in characters: bounded before TOML parses it.
LONGEST_TOML_TEXT = 1_000_000

_TOML_POSITION = re.compile(r"\s*\(at line (\d+), column (\d+)\)$")
_RETYPE = "Type it again with plain Latin letters and ASCII signs (- * / ' \")"


def load_toml(text: str, path: str | Path, what: str = "inputs file") -> dict[str, Any]:
    """The TOML *text* of the file at *path* (*what* names it in messages) as a dictionary.

    Raises
    ------
    InputsError
        Broken TOML (line and column; a look-alike character on that line named), a
        number with more digits than Python reads, nesting deeper than Python's
        recursion limit, a file longer than :data:`LONGEST_TOML_TEXT`.

    Examples
    --------
    >>> load_toml('mass = "250 kg"', "p101.toml")
    {'mass': '250 kg'}
    >>> load_toml("mass = " + "1" * 5000, "p101.toml")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: p101.toml, line 1: a number has 5,000 digits, more than the 4,300 digits Python reads in a whole number. Write the number with an exponent (1.5e9) or as text with a unit ("1850 kg").
    """
    if len(text) > LONGEST_TOML_TEXT:
        raise InputsError(
            f"the {what} is {len(text):,} characters long, more than it needs ({LONGEST_TOML_TEXT:,} at most)",
            where=str(path),
            do="Give one value a line; a measured record goes in a CSV file of its own",
        )
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _broken(text, path, what, exc) from exc
    except ValueError as exc:  # an integer longer than Python converts
        raise _too_many_digits(text, path) from exc
    except (RecursionError, MemoryError) as exc:
        raise InputsError(
            f"the {what} nests lists or tables deeper than calckit reads",
            where=str(path),
            do="Give each value as text with a unit, a number or a flat list; group with one level of [tables]",
        ) from exc


def _broken(text: str, path: str | Path, what: str, exc: tomllib.TOMLDecodeError) -> InputsError:
    message = str(exc)
    position = _TOML_POSITION.search(message)
    where = f"{path}, line {position.group(1)}, column {position.group(2)}" if position else str(path)
    lines = text.splitlines()
    number = int(position.group(1)) if position else 0
    found = lookalike(lines[number - 1]) if 0 < number <= len(lines) else None
    if found is not None:  # a key or a sign typed with a look-alike character: name it
        return InputsError(f"the {what} is not valid TOML: {found} (on that line)", where=where, do=_RETYPE)
    said = _TOML_POSITION.sub("", message)
    return InputsError(
        f"the {what} is not valid TOML: {said[:1].lower()}{said[1:]}",
        where=where,
        do='Check that line: text needs quotes (mass = "250 kg") and each key is set once',
    )


def _too_many_digits(text: str, path: str | Path) -> InputsError:
    """The refusal of a whole number longer than Python turns into an int, naming its line."""
    limit = sys.get_int_max_str_digits() or 4300
    where, digits = str(path), 0
    for number, line in enumerate(text.splitlines(), start=1):
        run = max((len(m.replace("_", "")) for m in re.findall(r"\d[\d_]*", line)), default=0)
        if run > limit:
            where, digits = f"{path}, line {number}", run
            break
    said = f"{digits:,} digits" if digits else "too many digits"
    return InputsError(
        f"a number has {said}, more than the {limit:,} digits Python reads in a whole number",
        where=where,
        do='Write the number with an exponent (1.5e9) or as text with a unit ("1850 kg")',
    )
