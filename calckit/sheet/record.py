"""The sheet's machine-readable record: one typed, versioned definition, written and read back.

A built sheet saves its record as JSON (``Sheet.save("x.json")``, ``Sheet.to_json()``).
:class:`SheetRecord` is the one definition of what that JSON holds: the title block,
the inputs (value in SI with its unit, the text as given, description, source), the
results, the checks (value, limit, relation, margin, verdict, basis), the
derivations, tables, assumptions, references, notes, the caution, the fingerprint
and the calckit version that built it. The sheet writes it (:func:`record_of`) and
the re-run tools read it back (:func:`read_record`), so both sides agree field by
field.

Versions
--------
``record_version`` is :data:`RECORD_VERSION` (3: sealed, every result with its
working) for records written by this calckit; versions 1 and 2 are still read. A record without it was written before the field existed: it is read as
version 0 when it holds what a record needs, and refused (saying what is missing)
when it does not. A record of a newer version than this calckit knows is refused.

Examples
--------
>>> from calckit.sheet import Sheet, read_record
>>> sheet = Sheet("Pump P-101 isolation", project="Harrow Creek WTW", show=False)
>>> _ = sheet.input("m", "250 kg", description="Pump and base mass", source="Vendor drawing")
>>> record = read_record(sheet.to_json())
>>> record.record_version, record.inputs[0].name, record.inputs[0].value, record.inputs[0].unit
(3, 'm', 250.0, 'kg')
"""

from __future__ import annotations

import hashlib
import json
import os
import re
from dataclasses import MISSING, asdict, dataclass, fields
from dataclasses import field as _field
from pathlib import Path
from typing import Any

from calckit._version import __version__
from calckit.errors import SheetError
from calckit.sheet.blocks import DerivationBlock, TableBlock, TextBlock, TitleBlock

__all__ = [
    "RECORD_VERSION",
    "RecordCheck",
    "RecordDerivation",
    "RecordInput",
    "RecordResult",
    "RecordTable",
    "SheetRecord",
    "existing_fingerprint",
    "read_record",
    "record_of",
    "seal_of",
]

RECORD_VERSION = 3
"""The version of the record this calckit writes, and the newest it reads.

1: the typed record. 2: sealed (``seal``, a SHA-256 over the whole record, results included).
3: every result carries its ``working`` (``{"kind": ..., "text": ...}``, the kinds of
:data:`calckit.sheet.working.WORKING_KINDS`), and every check its ``utilisation``.
"""

WORKING_FROM = 3
"""The first record version in which every result carries its working."""

WORKING_KINDS = ("formula", "derivation", "input", "table", "procedure")
"""The kinds of working a record holds (the sheet's :data:`calckit.sheet.working.WORKING_KINDS`)."""

SEALED_FROM = 2
"""The first record version that carries a seal; a record of this version or later without one is refused."""

LARGEST_RECORD = 64 * 1024 * 1024
"""A record file larger than this (bytes) is refused rather than read into memory."""

_REBUILD = "Rebuild the sheet with this calckit (calckit build TEMPLATE --inputs FILE --out DIR)"


@dataclass(frozen=True)
class RecordInput:
    """One input as recorded.

    Attributes
    ----------
    name : str
        The input's name on the sheet.
    text : str
        The value as given, e.g. ``"180 kN/m"``.
    value : float or None
        The value in SI (``None`` for an input without a number, e.g. a forcing).
    unit : str
        The SI unit of ``value`` (``""`` for a pure number).
    description, source : str
        What the input is, and where its value comes from.
    """

    name: str
    text: str
    value: float | None
    unit: str
    description: str
    source: str


@dataclass(frozen=True)
class RecordResult:
    """One result as recorded: ``value`` in SI with its ``unit``, ``shown`` as the sheet shows it.

    ``text`` is the result's text when it has no number (e.g. a symbolic expression), else ``None``;
    ``label`` the title its step has on the sheet (``None``: the step has none).
    ``working`` is how it was obtained, ``{"kind": ..., "text": ...}`` (``None`` in records
    older than version 3).
    """

    name: str
    value: float | None
    unit: str
    shown: str
    text: str | None = None
    label: str | None = None
    working: dict | None = None


@dataclass(frozen=True)
class RecordCheck:
    """One acceptance check as recorded.

    Attributes
    ----------
    name : str
        What is checked.
    value, limit : float
        The value and its limit, both in ``unit``.
    relation : str
        ``"<="``, ``">="``, ``"<"`` or ``">"``: the check is met when ``value relation limit``.
    unit : str
        The unit of value and limit (``"percent"`` for a percentage).
    margin_percent : float
        Distance to the limit, positive when met (see :func:`calckit.sheet.check_margin`),
        in ``margin_unit``.
    margin_unit : str
        ``"percent of the limit"`` or ``"percentage points"``.
    verdict : str
        ``"met"`` or ``"not met"``.
    basis : str
        Where the criterion comes from.
    utilisation : float or None
        Demand over capacity (``value / limit`` for ``<=``, ``limit / value`` for ``>=``),
        at most 1 when met; ``None`` in records older than version 3.
    """

    name: str
    value: float
    limit: float
    relation: str
    unit: str
    margin_percent: float
    margin_unit: str
    verdict: str
    basis: str
    utilisation: float | None = None

    @property
    def met(self) -> bool:
        """Whether the check is met."""
        return self.verdict == "met"

    @property
    def margin(self) -> float:
        """The margin, as :attr:`margin_percent` (in :attr:`margin_unit`)."""
        return self.margin_percent


@dataclass(frozen=True)
class RecordDerivation:
    """A derivation as recorded: its title, the solution as sympy text, whether it was verified."""

    title: str
    solution: str
    verified: bool


@dataclass(frozen=True)
class RecordTable:
    """A table as recorded: caption, headings and rows of shown text."""

    caption: str
    headers: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]


@dataclass(frozen=True)
class SheetRecord:
    """The record of one built sheet (what its JSON file holds), typed and versioned.

    Attributes
    ----------
    record_version : int
        :data:`RECORD_VERSION` for records written by this calckit; 0 for one written
        before records carried a version.
    calckit_version : str
        The calckit that built the sheet (JSON key ``"calckit"``).
    fingerprint : str
        The sheet's fingerprint (SHA-256, 64 hexadecimal digits).
    title_block : TitleBlock
        Subject, project, number, revision, author, checker, date, approver.
    inputs : tuple of RecordInput
    results : tuple of RecordResult
    checks : tuple of RecordCheck
    derivations : tuple of RecordDerivation
    tables : tuple of RecordTable
    assumptions, references, notes : tuple of str
    caution : str
    """

    record_version: int
    calckit_version: str
    fingerprint: str
    title_block: TitleBlock
    inputs: tuple[RecordInput, ...] = ()
    results: tuple[RecordResult, ...] = ()
    checks: tuple[RecordCheck, ...] = ()
    derivations: tuple[RecordDerivation, ...] = ()
    tables: tuple[RecordTable, ...] = ()
    assumptions: tuple[str, ...] = ()
    references: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    caution: str = ""
    inputs_file: str = ""
    output_units: dict = _field(default_factory=dict)

    @property
    def checks_met(self) -> int:
        """How many checks are met."""
        return sum(check.met for check in self.checks)

    def input(self, name: str) -> RecordInput | None:
        """The input called *name*, or None."""
        return next((item for item in self.inputs if item.name == name), None)

    def result(self, name: str) -> RecordResult | None:
        """The result called *name*, or None."""
        return next((item for item in self.results if item.name == name), None)

    def to_dict(self) -> dict:
        """The record as the JSON file holds it (keys in the file's order), sealed last."""
        data = {
            "record_version": self.record_version,
            "calckit": self.calckit_version,
            "fingerprint": self.fingerprint,
            "title_block": asdict(self.title_block),
            "inputs": [asdict(item) for item in self.inputs],
            "results": [_result_dict(item) for item in self.results],
            "checks": [_check_dict(item) for item in self.checks],
            "summary": {"checks": len(self.checks), "met": self.checks_met},
            "derivations": [asdict(item) for item in self.derivations],
            "tables": [
                {"caption": t.caption, "headers": list(t.headers), "rows": [list(r) for r in t.rows]}
                for t in self.tables
            ],
            "assumptions": list(self.assumptions),
            "references": list(self.references),
            "notes": list(self.notes),
            "caution": self.caution,
        }
        if self.inputs_file:  # the name the sheet gives its inputs file (the source of inputs without one)
            data["inputs_file"] = self.inputs_file
        if self.output_units:  # absent: SI, each result in the unit its step asks for
            data["output_units"] = {
                "system": self.output_units.get("system", "SI"),
                "results": dict(self.output_units.get("results", {})),
            }
        if self.record_version >= SEALED_FROM:
            data["seal"] = seal_of(data)
        return data

    def to_json(self) -> str:
        """The record as JSON text, as ``Sheet.save("x.json")`` writes it."""
        return json.dumps(self.to_dict(), indent=2, sort_keys=False, ensure_ascii=False) + "\n"

    @classmethod
    def from_dict(cls, data: Any, *, where: str = "record") -> SheetRecord:
        """Read a record from the dictionary its JSON holds; see :func:`read_record` for the refusals."""
        return _from_dict(data, where)


def seal_of(data: dict) -> str:
    """The seal of a record: SHA-256 over its whole content but the seal itself, in one canonical form.

    Written into every record (version 2 on) and checked on every read, so that a record
    edited after it was built (an input, a result, a verdict) is noticed. The fingerprint
    says which inputs made a sheet; the seal says the record is as the build wrote it.

    >>> seal_of({"a": 1}) == seal_of({"a": 1, "seal": "anything"})
    True
    """
    content = {key: value for key, value in data.items() if key != "seal"}
    canonical = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(canonical.encode("ascii")).hexdigest()


def _result_dict(item: RecordResult) -> dict:
    out = {"name": item.name, "value": item.value, "unit": item.unit, "shown": item.shown}
    if item.text is not None:
        out["text"] = item.text
    if item.label:
        out["label"] = item.label
    if item.working is not None:
        out["working"] = dict(item.working)
    return out


def _check_dict(item: RecordCheck) -> dict:
    out = asdict(item)
    if item.utilisation is None:
        del out["utilisation"]
    return out


# ------------------------------------------------------------------ writing


def record_of(sheet: Any) -> SheetRecord:
    """The record of *sheet* as it stands (inputs, results, checks, fingerprint ...)."""
    import sympy as sp  # here, not at the top: reading a record (a build's last step) stays light

    from calckit.sheet.values import shown_text, si_value
    from calckit.sheet.working import require_working

    results = []
    units = getattr(sheet, "units", None)
    labels = {b.name: b.title for b in sheet.blocks if getattr(b, "title", "") and hasattr(b, "name")}
    workings = getattr(sheet, "working", {})
    for name, value in sheet.results.items():
        working = require_working(name, workings.get(name)).as_dict()
        si, unit = si_value(value, name)
        shown = units.shown_value(name, value) if units is not None else value  # the sheet's units
        text = str(value) if si is None else None
        results.append(
            RecordResult(
                name, si, unit, shown_text(shown, getattr(sheet, "sig", 4)), text, labels.get(name) or None, working
            )
        )
    texts = sheet.of_type(TextBlock)
    return SheetRecord(
        record_version=RECORD_VERSION,
        calckit_version=__version__,
        fingerprint=sheet.fingerprint,
        title_block=sheet.title,
        inputs=tuple(
            RecordInput(rec.name, rec.text, rec.si, rec.si_unit, rec.description, rec.source)
            for rec in sheet.inputs.values()
        ),
        results=tuple(results),
        checks=tuple(
            RecordCheck(
                c.name,
                c.value,
                c.limit,
                c.relation,
                c.unit,
                round(c.margin_percent, 6),
                c.margin_unit,
                c.verdict,
                c.basis,
                _finite(c.utilisation),
            )
            for c in sheet.checks
        ),  # fmt: skip
        derivations=tuple(
            RecordDerivation(b.title, sp.sstr(b.derivation.solution), bool(b.derivation.verified))
            for b in sheet.of_type(DerivationBlock)
        ),
        tables=tuple(RecordTable(b.caption, b.headers, b.rows) for b in sheet.of_type(TableBlock)),
        assumptions=tuple(b.text for b in texts if b.kind == "assumption"),
        references=tuple(b.text for b in texts if b.kind == "reference"),
        notes=tuple(b.text for b in texts if b.kind == "note"),
        caution=sheet.caution or "",
        inputs_file=str(getattr(sheet, "inputs_file", "") or ""),
        output_units=units.record() if units is not None and units.asked else {},
    )


def _finite(value: float) -> float | None:
    import math

    return round(float(value), 9) if math.isfinite(value) else None


# ------------------------------------------------------------------ reading

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
    calckit.errors.SheetError: record: the record is of version 9, newer than this calckit reads (3)...
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
    except (ValueError, RecursionError) as exc:  # Python's int-string and recursion limits: no record has them
        why = "nested deeper than Python reads" if isinstance(exc, RecursionError) else str(exc).split(";")[0]
        raise SheetError(
            f"the file is not a sheet's record: {why[:1].lower()}{why[1:]}",
            where=where,
            do="Give the .json record of a sheet, as Sheet.save writes it",
        ) from None
    return _from_dict(data, where)


def _from_dict(data: Any, where: str) -> SheetRecord:
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
