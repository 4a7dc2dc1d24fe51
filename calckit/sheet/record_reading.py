"""Reading a sheet's record back: every part checked, the seal verified, nothing trusted.

:func:`read_record` reads the JSON a built sheet saved (:mod:`calckit.sheet.record` holds
the one definition of what it contains) and refuses, naming the part, a record that is
too large, not JSON, of a newer version, missing a part, holding a part of the wrong kind,
a result without working (version 3 on) or a seal that does not match its content
(edited after it was built). :func:`existing_fingerprint` reads only the fingerprint of
an HTML or JSON sheet, for the build's check of what an output folder holds.
"""

from __future__ import annotations

import json
import os
import re
from dataclasses import MISSING, fields
from pathlib import Path
from typing import Any

from calckit.errors import SheetError
from calckit.sheet.blocks import TitleBlock
from calckit.sheet.record import (
    _REBUILD,
    LARGEST_RECORD,
    RECORD_VERSION,
    SEALED_FROM,
    WORKING_FROM,
    WORKING_KINDS,
    RecordCheck,
    RecordDerivation,
    RecordInput,
    RecordResult,
    RecordTable,
    SheetRecord,
    seal_of,
)

__all__ = ["existing_fingerprint", "read_record", "record_from_dict"]


# what a record must hold to be read at all; the rest may be missing from a version-0 record
_REQUIRED = ("calckit", "fingerprint", "title_block", "inputs", "results", "checks")


def read_record(path_or_text: str | os.PathLike, *, where: str | None = None) -> SheetRecord:
    """Read a sheet's JSON record from a file or from its text.

    Parameters
    ----------
    path_or_text : str or path
        A path to a ``.json`` record, or the record's JSON text (a string starting with ``{``).
    where : str, optional
        Where the record comes from, for messages (by default the path, or ``"record"``).

    Returns
    -------
    SheetRecord

    Raises
    ------
    SheetError
        The file cannot be read, is not JSON, is of a newer record version than this
        calckit reads, or lacks what a record holds (the message names what is missing).

    Examples
    --------
    >>> read_record('{"record_version": 9}')
    Traceback (most recent call last):
    ...
    calckit.errors.SheetError: record: the record is of version 9, newer than this calckit reads (4)...
    """
    if isinstance(path_or_text, str) and path_or_text.lstrip().startswith("{"):
        text, where = path_or_text, where or "record"
    else:
        path = Path(path_or_text)
        where = where or str(path)
        try:
            size = path.stat().st_size
        except OSError as exc:
            raise SheetError(
                f"cannot read the record ({exc.strerror or exc})",
                where=where,
                do="Give the path of a sheet's .json record, as Sheet.save or calckit build writes it",
            ) from None
        if size > LARGEST_RECORD:
            raise SheetError(
                f"the file holds {size} bytes, more than a sheet's record ({LARGEST_RECORD} at most)",
                where=where,
                do="Give the .json record of a sheet",
            )
        try:
            text = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            raise SheetError(
                f"cannot read the record ({exc})", where=where, do="Give the .json record of a sheet"
            ) from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise SheetError(
            f"the record is not JSON ({exc.msg} at line {exc.lineno}, column {exc.colno})",
            where=where,
            do="Give the .json record of a sheet, as Sheet.save writes it",
        ) from None
    except (
        ValueError,
        RecursionError,
    ) as exc:  # Python's int-string and recursion limits: no record has them
        why = "nested deeper than Python reads" if isinstance(exc, RecursionError) else str(exc).split(";")[0]
        raise SheetError(
            f"the file is not a sheet's record: {why[:1].lower()}{why[1:]}",
            where=where,
            do="Give the .json record of a sheet, as Sheet.save writes it",
        ) from None
    return record_from_dict(data, where)


def record_from_dict(data: Any, where: str) -> SheetRecord:
    """A :class:`SheetRecord` from the dictionary a record's JSON holds, every part checked (see :func:`read_record`)."""
    if not isinstance(data, dict):
        raise SheetError(
            f"a record is a JSON object, got {type(data).__name__}",
            where=where,
            do="Give a sheet's .json record",
        )
    version = data.get("record_version", 0)
    if isinstance(version, bool) or not isinstance(version, int) or version < 0:
        raise SheetError(f"the record version {version!r} is not a whole number", where=where, do=_REBUILD)
    if version > RECORD_VERSION:
        raise SheetError(
            f"the record is of version {version}, newer than this calckit reads ({RECORD_VERSION})",
            where=where,
            do="Read it with the calckit that built it or a newer one (pip install --upgrade calckit)",
        )
    missing = [key for key in _REQUIRED if key not in data]
    if version >= 1:
        missing += [key for key in ("caution",) if key not in data]
    if missing:
        label = "record" if version else "record without a record_version (written by an older calckit)"
        raise SheetError(f"the {label} has no {', '.join(missing)}", where=where, do=_REBUILD)
    reader = _Reader(where, version)
    record = SheetRecord(
        record_version=version,
        calckit_version=reader.text(data, "calckit"),
        fingerprint=reader.fingerprint(data),
        title_block=reader.item(TitleBlock, data["title_block"], "title_block"),
        inputs=reader.items(RecordInput, data, "inputs"),
        results=reader.items(RecordResult, data, "results"),
        checks=reader.items(RecordCheck, data, "checks"),
        derivations=reader.items(RecordDerivation, data, "derivations"),
        tables=reader.items(RecordTable, data, "tables"),
        assumptions=reader.texts(data, "assumptions"),
        references=reader.texts(data, "references"),
        notes=reader.texts(data, "notes"),
        caution=reader.text(data, "caution") if "caution" in data else "",
        inputs_file=reader.text(data, "inputs_file") if "inputs_file" in data else "",
        output_units=reader.output_units(data),
        tolerances=reader.tolerances(data),
    )
    if version >= WORKING_FROM:
        for index, item in enumerate(record.results):
            working = item.working
            if (
                not isinstance(working, dict)
                or set(working) != {"kind", "text"}
                or working["kind"] not in WORKING_KINDS
                or not isinstance(working["text"], str)
            ):
                raise reader.refuse(
                    f"the result {item.name!r} has no working of a known kind ({', '.join(WORKING_KINDS)})",
                    f"results[{index}]",
                )
    # the parts are read first (a part of the wrong kind is named); then the whole is checked
    if version >= SEALED_FROM:
        seal = data.get("seal")
        if not isinstance(seal, str) or not _HEX64.match(seal):
            raise SheetError("the record has no seal", where=where, do=_REBUILD)
        if seal != seal_of(data):
            raise SheetError(
                "the record was changed after it was built: its seal does not match its content",
                where=where,
                do="Rebuild the sheet (calckit build) rather than edit its record; the sheet and its record "
                "are only evidence as the build wrote them",
            )
    return record


_HEX64 = re.compile(r"^[0-9a-f]{64}$")

# the JSON types a field may hold, by the field's annotation
_KINDS = {
    "str": (str,),
    "str | None": (str, type(None)),
    "float": (int, float),
    "float | None": (int, float, type(None)),
    "dict | None": (dict, type(None)),
    "bool": (bool,),
    "tuple[str, ...]": (list,),
    "tuple[tuple[str, ...], ...]": (list,),
}


class _Reader:
    """Reads the parts of one record, naming the part that does not fit."""

    def __init__(self, where: str, version: int):
        self.where, self.version = where, version

    def refuse(self, what: str, part: str) -> SheetError:
        return SheetError(what, where=f"{self.where}, {part}", do=_REBUILD)

    def text(self, data: dict, key: str) -> str:
        value = data[key]
        if not isinstance(value, str):
            raise self.refuse(f"expected text, got {type(value).__name__}", key)
        return value

    def fingerprint(self, data: dict) -> str:
        value = self.text(data, "fingerprint")
        if not _HEX64.match(value):
            raise self.refuse("the fingerprint is not 64 hexadecimal digits", "fingerprint")
        return value

    def output_units(self, data: dict) -> dict:
        """The units the sheet was asked to show its results in (``{}``: SI, as each step asks)."""
        value = data.get("output_units", {})
        results = value.get("results", {}) if isinstance(value, dict) else None
        if (
            not isinstance(value, dict)
            or set(value) - {"system", "results"}
            or not isinstance(value.get("system", "SI"), str)
            or not isinstance(results, dict)
            or not all(isinstance(k, str) and isinstance(v, str) for k, v in results.items())
        ):
            raise self.refuse("expected the system and a unit by result", "output_units")
        return {"system": value.get("system", "SI"), "results": dict(results)} if value else {}

    def tolerances(self, data: dict) -> dict:
        """The tolerance study (``{}``: no input has a band, or a record older than version 4)."""
        value = data.get("tolerances", {})
        if not isinstance(value, dict) or (value and not isinstance(value.get("checks"), list)):
            raise self.refuse("expected the tolerance study: its method and checks", "tolerances")
        return value

    def texts(self, data: dict, key: str) -> tuple[str, ...]:
        value = data.get(key, [])
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.refuse("expected a list of texts", key)
        return tuple(value)

    def items(self, cls: type, data: dict, key: str) -> tuple:
        value = data.get(key, [])
        if not isinstance(value, list):
            raise self.refuse(f"expected a list, got {type(value).__name__}", key)
        return tuple(self.item(cls, entry, f"{key}[{index}]") for index, entry in enumerate(value))

    def item(self, cls: type, entry: Any, part: str):
        if not isinstance(entry, dict):
            raise self.refuse(f"expected an object, got {type(entry).__name__}", part)
        given = {}
        for field in fields(cls):
            if field.name not in entry:
                if field.default is not MISSING:  # an optional part, e.g. a result's text
                    continue
                raise self.refuse(f"no {field.name}", part)
            value = entry[field.name]
            kinds = _KINDS[str(field.type)]
            if not isinstance(value, kinds) or (bool not in kinds and isinstance(value, bool)):
                raise self.refuse(f"{field.name} is {value!r}, not of the kind a record holds", part)
            if field.type == "float" or field.type == "float | None":
                value = None if value is None else float(value)
            elif field.type == "tuple[str, ...]":
                value = self.strings(value, f"{part}.{field.name}")
            elif field.type == "tuple[tuple[str, ...], ...]":
                value = tuple(self.strings(row, f"{part}.{field.name}") for row in value)
            given[field.name] = value
        return cls(**given)

    def strings(self, value: Any, part: str) -> tuple[str, ...]:
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.refuse("expected a list of texts", part)
        return tuple(value)


# ------------------------------------------------------------------ fingerprint of a file

_FINGERPRINT_IN_FILE = re.compile(rb'(?:data-fingerprint="|"fingerprint":\s*")([0-9a-f]{64})')


def existing_fingerprint(path: Path) -> str | None:
    """The fingerprint recorded in an existing HTML or JSON sheet, if any."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(2_000_000)
    except OSError:
        return None
    found = _FINGERPRINT_IN_FILE.search(head)
    return found.group(1).decode() if found else None
