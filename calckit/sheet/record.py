"""The sheet's machine-readable record: one typed, versioned definition, written and read back.

A built sheet saves its record as JSON (``Sheet.save("x.json")``, ``Sheet.to_json()``).
:class:`SheetRecord` is the one definition of what that JSON holds: the title block,
the inputs (value in SI with its unit, the text as given, description, source), the
results, the checks (value, limit, relation, margin, verdict, basis), the
derivations, tables, assumptions, references, notes, the caution, the fingerprint
and the calckit version that built it. The sheet writes it (:func:`record_of`) and
the re-run tools read it back (:func:`calckit.sheet.record_reading.read_record`), so both sides agree field by
field.

Versions
--------
``record_version`` is :data:`RECORD_VERSION` (4: sealed, every result with its
working, tolerance bands and their study) for records written by this calckit; versions
1 to 3 are still read. A record without it was written before the field existed: it is read as
version 0 when it holds what a record needs, and refused (saying what is missing)
when it does not. A record of a newer version than this calckit knows is refused.

Examples
--------
>>> from calckit.sheet import Sheet, read_record
>>> sheet = Sheet("Pump P-101 isolation", project="Harrow Creek WTW", show=False)
>>> _ = sheet.input("m", "250 kg", description="Pump and base mass", source="Vendor drawing")
>>> record = read_record(sheet.to_json())
>>> record.record_version, record.inputs[0].name, record.inputs[0].value, record.inputs[0].unit
(4, 'm', 250.0, 'kg')
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass
from dataclasses import field as _field
from typing import Any

from calckit._version import __version__
from calckit.sheet.blocks import DerivationBlock, TableBlock, TextBlock, TitleBlock

__all__ = [
    "RECORD_VERSION",
    "RecordCheck",
    "RecordDerivation",
    "RecordInput",
    "RecordResult",
    "RecordTable",
    "SheetRecord",
    "record_of",
    "seal_of",
]

RECORD_VERSION = 4
"""The version of the record this calckit writes, and the newest it reads.

1: the typed record. 2: sealed (``seal``, a SHA-256 over the whole record, results included).
3: every result carries its ``working`` (``{"kind": ..., "text": ...}``, the kinds of
:data:`calckit.sheet.working.WORKING_KINDS`), and every check its ``utilisation``.
4: an input with a tolerance band carries it (``tolerance``: the band as written, its ends
and its text), and a sheet with such inputs its ``tolerances`` study (each check's nominal
and worst-case verdicts, the point that governs, the sensitivities, a sampled study's pass
fractions; :meth:`calckit.sheet.tolerance_study.ToleranceStudy.as_dict`).
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
    tolerance : dict or None
        The input's band (as written, its ``low`` and ``high`` ends shown in the value's
        unit, and its ``text``); None without one, and in records older than version 4.
    """

    name: str
    text: str
    value: float | None
    unit: str
    description: str
    source: str
    tolerance: dict | None = None


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
    tolerances: dict = _field(default_factory=dict)  # the tolerance study; {} without bands (version 4)

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
            "inputs": [_input_dict(item) for item in self.inputs],
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
        if self.tolerances:  # absent: no input has a tolerance band
            data["tolerances"] = self.tolerances
        if self.record_version >= SEALED_FROM:
            data["seal"] = seal_of(data)
        return data

    def to_json(self) -> str:
        """The record as JSON text, as ``Sheet.save("x.json")`` writes it."""
        return json.dumps(self.to_dict(), indent=2, sort_keys=False, ensure_ascii=False) + "\n"


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


def _input_dict(item: RecordInput) -> dict:
    data = asdict(item)
    if data["tolerance"] is None:  # only an input with a band says so
        del data["tolerance"]
    return data


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
                name,
                si,
                unit,
                shown_text(shown, getattr(sheet, "sig", 4)),
                text,
                labels.get(name) or None,
                working,
            )
        )
    texts = sheet.of_type(TextBlock)
    return SheetRecord(
        record_version=RECORD_VERSION,
        calckit_version=__version__,
        fingerprint=sheet.fingerprint,
        title_block=sheet.title,
        inputs=tuple(
            RecordInput(
                rec.name,
                rec.text,
                rec.si,
                rec.si_unit,
                rec.description,
                rec.source,
                rec.tolerance.as_dict() if getattr(rec, "tolerance", None) is not None else None,
            )
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
        tolerances=_tolerances(sheet),
    )


def _tolerances(sheet: Any) -> dict:
    """The sheet's tolerance study as the record holds it; {} when no input has a band."""
    from calckit.sheet.tolerance_study import study_of

    study = study_of(sheet) if hasattr(sheet, "sampling") else None
    return study.as_dict() if study is not None else {}


def _finite(value: float) -> float | None:
    import math

    return round(float(value), 9) if math.isfinite(value) else None
