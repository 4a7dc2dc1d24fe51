"""What changed between two built calculation sheets.

A built sheet is read from its JSON record (:meth:`calckit.Sheet.record`): give
the ``.json`` file, the ``.html`` sheet (its record sits beside it under the same
name), or the output folder of a build. The comparison lists title-block
changes, inputs changed (old and new text), inputs added or removed, results
that moved (with the change in percent), checks whose verdict flipped, and
checks whose margin moved. Two sheets with the same fingerprint came from the
same inputs through the same calculation.

Examples
--------
>>> old = {"fingerprint": "a", "title_block": {"revision": "A"}, "inputs": [], "results": [
...     {"name": "X", "value": 2.0, "unit": "m"}], "checks": []}
>>> new = {"fingerprint": "b", "title_block": {"revision": "B"}, "inputs": [], "results": [
...     {"name": "X", "value": 2.5, "unit": "m"}], "checks": []}
>>> print(diff_records(old, new).text())
Title block:
  revision: A -> B
Results moved (1):
  X: 2 m -> 2.5 m (+25.0 %)
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import InputsError
from .units import fmt_number

__all__ = [
    "Change",
    "ResultMove",
    "CheckChange",
    "SheetDiff",
    "read_record",
    "diff_records",
    "diff_sheets",
]

#: Relative change below which a result counts as unchanged (floating-point noise).
RELATIVE_TOLERANCE = 1e-9


@dataclass(frozen=True)
class Change:
    """A named text that changed (a title-block field or an input); ``""`` when absent on one side."""

    name: str
    old: str
    new: str


@dataclass(frozen=True)
class ResultMove:
    """A result whose value moved; ``percent`` is None when the old value is zero."""

    name: str
    old: float | None
    new: float | None
    unit: str
    percent: float | None

    def shown(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        old = "absent" if self.old is None else fmt_number(self.old, 4) + unit
        new = "absent" if self.new is None else fmt_number(self.new, 4) + unit
        change = f" ({self.percent:+.1f} %)" if self.percent is not None else ""
        return f"{self.name}: {old} -> {new}{change}"


@dataclass(frozen=True)
class CheckChange:
    """A check's verdict and margin on both sides (None when absent on one side)."""

    name: str
    old_verdict: str | None
    new_verdict: str | None
    old_margin: float | None
    new_margin: float | None

    @property
    def flipped(self) -> bool:
        return self.old_verdict != self.new_verdict

    def verdicts(self) -> str:
        def word(verdict: str | None) -> str:
            return "absent" if verdict is None else ("met" if verdict == "met" else "NOT MET")

        return f"{self.name}: {word(self.old_verdict)} -> {word(self.new_verdict)}"

    def margins(self) -> str:
        def pct(margin: float | None) -> str:
            return "absent" if margin is None else f"{margin:+.1f} %"

        return f"{self.name}: margin {pct(self.old_margin)} -> {pct(self.new_margin)}"


@dataclass(frozen=True)
class SheetDiff:
    """The differences between two sheets' records.

    Attributes
    ----------
    old, new : str
        Where the records came from.
    same_fingerprint : bool
    versions : Change or None
        The kit versions, when they differ.
    title : tuple of Change
    inputs : tuple of Change
        Inputs changed, added (old ``""``) or removed (new ``""``).
    results : tuple of ResultMove
    checks : tuple of CheckChange
        Checks whose verdict flipped or whose margin moved.
    """

    old: str
    new: str
    same_fingerprint: bool
    versions: Change | None = None
    title: tuple[Change, ...] = ()
    inputs: tuple[Change, ...] = ()
    results: tuple[ResultMove, ...] = ()
    checks: tuple[CheckChange, ...] = field(default=())

    @property
    def flipped(self) -> tuple[CheckChange, ...]:
        """Checks whose verdict changed."""
        return tuple(c for c in self.checks if c.flipped)

    @property
    def margins_moved(self) -> tuple[CheckChange, ...]:
        """Checks with the same verdict and another margin."""
        return tuple(c for c in self.checks if not c.flipped)

    def text(self) -> str:
        """The report as plain text, one item a line."""
        lines: list[str] = []
        if self.same_fingerprint:
            lines.append("Same inputs, same calculation (the fingerprints are equal).")
        if self.versions:
            lines.append(f"calckit version: {self.versions.old} -> {self.versions.new}")
        if self.title:
            lines.append("Title block:")
            lines += [f"  {c.name}: {c.old or '(empty)'} -> {c.new or '(empty)'}" for c in self.title]
        sections = (
            ("Inputs changed", [_input_line(c) for c in self.inputs]),
            ("Results moved", [m.shown() for m in self.results]),
            ("Checks flipped", [c.verdicts() for c in self.flipped]),
            ("Margins moved", [c.margins() for c in self.margins_moved]),
        )
        for heading, items in sections:
            if items:
                lines.append(f"{heading} ({len(items)}):")
                lines += [f"  {item}" for item in items]
        if not self.same_fingerprint and not (self.inputs or self.results or self.checks):
            lines.append(
                "No input, result or check differs, but the fingerprints do: "
                "the template or the calckit version changed."
            )
        return "\n".join(lines)

    def html(self) -> str:
        """The report as a small self-contained HTML page."""
        from .render.page import Html, escape, html_page, table

        parts = [
            f"<h1>What changed</h1><p>From <code>{escape(self.old)}</code><br>"
            f"to <code>{escape(self.new)}</code></p>"
        ]
        if self.same_fingerprint:
            parts.append(
                "<p><strong>Same inputs, same calculation</strong> (the fingerprints are equal).</p>"
            )
        if self.versions:
            parts.append(
                f"<p>calckit version: {escape(self.versions.old)} &rarr; {escape(self.versions.new)}</p>"
            )
        if self.title:
            parts.append("<h2>Title block</h2>")
            parts.append(table(["Field", "Old", "New"], [[c.name, c.old, c.new] for c in self.title]))
        if self.inputs:
            parts.append("<h2>Inputs changed</h2>")
            parts.append(
                table(
                    ["Input", "Old", "New"],
                    [[c.name, c.old or "absent", c.new or "absent"] for c in self.inputs],
                )
            )
        if self.results:
            parts.append("<h2>Results moved</h2>")
            rows = []
            for m in self.results:
                unit = f" {m.unit}" if m.unit else ""
                rows.append(
                    [
                        m.name,
                        "absent" if m.old is None else fmt_number(m.old, 4) + unit,
                        "absent" if m.new is None else fmt_number(m.new, 4) + unit,
                        "" if m.percent is None else f"{m.percent:+.1f} %",
                    ]
                )
            parts.append(table(["Result", "Old", "New", "Change"], rows))
        if self.checks:
            parts.append("<h2>Checks</h2>")

            def verdict(v: str | None) -> Any:
                if v is None:
                    return "absent"
                if v == "met":
                    return "met"
                return Html('<strong class="verdict verdict-not-met">NOT MET</strong>')

            def margin(v: float | None) -> str:
                return "absent" if v is None else f"{v:+.1f} %"

            rows = [
                [
                    Html(f"<strong>{escape(c.name)}</strong>") if c.flipped else c.name,
                    verdict(c.old_verdict),
                    verdict(c.new_verdict),
                    margin(c.old_margin),
                    margin(c.new_margin),
                ]
                for c in self.checks
            ]
            parts.append(
                table(["Check", "Old verdict", "New verdict", "Old margin", "New margin"], rows, cls="checks")
            )
        if not self.same_fingerprint and not (self.inputs or self.results or self.checks):
            parts.append("<p>No input, result or check differs, but the fingerprints do.</p>")
        return html_page("What changed", "\n".join(parts), footer_left="calckit diff")


def _input_line(change: Change) -> str:
    if not change.old:
        return f"{change.name}: added, {change.new}"
    if not change.new:
        return f"{change.name}: removed (was {change.old})"
    return f"{change.name}: {change.old} -> {change.new}"


def _record_path(path: Path) -> Path:
    if path.is_dir():
        found = sorted(p for p in path.glob("*.json") if _is_record(p))
        if len(found) == 1:
            return found[0]
        if not found:
            raise InputsError(
                "the folder holds no built sheet (no .json record)",
                where=str(path),
                do="Give a folder written by calckit build, or a sheet's .json or .html file",
            )
        names = ", ".join(p.name for p in found)
        raise InputsError(
            f"the folder holds {len(found)} sheets ({names})",
            where=str(path),
            do="Name the sheet's .json or .html file",
        )
    suffix = path.suffix.lower()
    if suffix == ".json":
        return path
    if suffix in (".html", ".pdf", ".ipynb"):
        sibling = path.with_suffix(".json")
        if sibling.exists():
            return sibling
        raise InputsError(
            f"the sheet's record {sibling.name} is not beside it",
            where=str(path),
            do="Keep the .json record that calckit build writes next to the sheet",
        )
    raise InputsError(
        f"cannot compare a {suffix or 'file without extension'}",
        where=str(path),
        do="Give a built sheet's .json or .html file, or its folder",
    )


def _is_record(path: Path) -> bool:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(data, dict) and "fingerprint" in data


def read_record(path: str | os.PathLike) -> dict:
    """The JSON record of a built sheet given as its .json or .html file or its folder.

    Raises
    ------
    InputsError
        No such file, no record, several sheets in a folder, not a sheet's record.
    """
    path = Path(path)
    if not path.exists():
        raise InputsError("no such file or folder", where=str(path), do="Check the path")
    record_path = _record_path(path)
    try:
        data = json.loads(record_path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputsError("no such file", where=str(record_path), do="Check the path") from None
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        raise InputsError(
            f"cannot read the record as JSON ({exc})",
            where=str(record_path),
            do="Give a record written by calckit",
        ) from None
    if not isinstance(data, dict) or "fingerprint" not in data:
        raise InputsError(
            "the file is not a calculation sheet's record (no fingerprint)",
            where=str(record_path),
            do="Give a record written by calckit build or Sheet.save",
        )
    if path.suffix.lower() == ".html":
        from .sheet import existing_fingerprint

        shown = existing_fingerprint(path)
        if shown and shown != data["fingerprint"]:
            raise InputsError(
                f"the sheet's fingerprint {shown[:12]} differs from its record's {data['fingerprint'][:12]}",
                where=str(path),
                do="Rebuild the sheet: the HTML and its .json record come from different builds",
            )
    data.setdefault("_source", str(record_path))
    return data


def _by_name(items: Any) -> dict[str, dict]:
    return {item["name"]: item for item in items or [] if isinstance(item, dict) and "name" in item}


def _moved(old: float | None, new: float | None) -> bool:
    if old is None or new is None:
        return old is not new
    if math.isnan(old) or math.isnan(new):
        return math.isnan(old) != math.isnan(new)
    return abs(new - old) > RELATIVE_TOLERANCE * max(abs(old), abs(new))


def diff_records(old: dict, new: dict, *, old_name: str = "old", new_name: str = "new") -> SheetDiff:
    """Compare two sheets' JSON records (see :meth:`calckit.Sheet.record`).

    Results count as moved when they differ by more than one part in 10^9.
    """
    title_old, title_new = old.get("title_block", {}) or {}, new.get("title_block", {}) or {}
    title = tuple(
        Change(key, str(title_old.get(key, "")), str(title_new.get(key, "")))
        for key in dict.fromkeys([*title_old, *title_new])
        if str(title_old.get(key, "")) != str(title_new.get(key, ""))
    )
    inputs_old, inputs_new = _by_name(old.get("inputs")), _by_name(new.get("inputs"))
    inputs = tuple(
        Change(
            name, str(inputs_old.get(name, {}).get("text", "")), str(inputs_new.get(name, {}).get("text", ""))
        )
        for name in dict.fromkeys([*inputs_old, *inputs_new])
        if inputs_old.get(name, {}).get("text") != inputs_new.get(name, {}).get("text")
    )
    results_old, results_new = _by_name(old.get("results")), _by_name(new.get("results"))
    results = []
    for name in dict.fromkeys([*results_old, *results_new]):
        a, b = results_old.get(name, {}), results_new.get(name, {})
        va, vb = a.get("value"), b.get("value")
        if va is None and vb is None:
            if a.get("text") != b.get("text"):
                results.append(ResultMove(name, None, None, "", None))
            continue
        if not _moved(va, vb):
            continue
        percent = (vb - va) / abs(va) * 100 if va not in (None, 0) and vb is not None else None
        results.append(ResultMove(name, va, vb, b.get("unit") or a.get("unit") or "", percent))
    checks_old, checks_new = _by_name(old.get("checks")), _by_name(new.get("checks"))
    checks = []
    for name in dict.fromkeys([*checks_old, *checks_new]):
        a, b = checks_old.get(name), checks_new.get(name)
        change = CheckChange(
            name,
            a.get("verdict") if a else None,
            b.get("verdict") if b else None,
            a.get("margin_percent") if a else None,
            b.get("margin_percent") if b else None,
        )
        if change.flipped or _moved(change.old_margin, change.new_margin):
            checks.append(change)
    versions = None
    if old.get("calckit") != new.get("calckit"):
        versions = Change("calckit", str(old.get("calckit", "")), str(new.get("calckit", "")))
    return SheetDiff(
        old=old_name,
        new=new_name,
        same_fingerprint=old.get("fingerprint") == new.get("fingerprint"),
        versions=versions,
        title=title,
        inputs=inputs,
        results=tuple(results),
        checks=tuple(checks),
    )


def diff_sheets(old: str | os.PathLike, new: str | os.PathLike) -> SheetDiff:
    """Compare two built sheets: what changed from OLD to NEW.

    Each of OLD and NEW is a built sheet's ``.json`` record, its ``.html`` file
    (the record beside it is read), or the output folder of a build.

    Parameters
    ----------
    old, new : str or path
        The sheets to compare.

    Returns
    -------
    SheetDiff
        Title-block changes, inputs changed, results moved with their change in
        percent, checks whose verdict flipped or whose margin moved.
    """
    a, b = read_record(old), read_record(new)
    return diff_records(a, b, old_name=a.pop("_source"), new_name=b.pop("_source"))
