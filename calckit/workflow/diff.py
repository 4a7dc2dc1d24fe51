"""What changed between two built calculation sheets.

A built sheet is read from its JSON record, through the one definition of a record
(:func:`calckit.sheet.read_record`'s checks of version and fields): give the ``.json``
file, the ``.html`` sheet (its record sits beside it), or a build's output folder.
The comparison lists what changed in the title block, the inputs (text, description,
source), the results (with the change in percent), the checks (verdict, margin, basis,
limit), the assumptions, references and notes, and the caution. Two sheets with the
same fingerprint came from the same inputs through the same calculation.

Results are shown as the sheet shows them: the record's ``shown`` text where it
has one, else the value (kept in SI in the record) in the unit a sheet would
use: a length under 0.1 m in mm, an angle in degrees, a frequency in 1/s in Hz.
Old and new are shown in the same unit.

Examples
--------
>>> old = {"fingerprint": "a", "title_block": {"revision": "A"}, "inputs": [], "results": [
...     {"name": "X", "value": 2.0, "unit": "m"}], "checks": []}
>>> new = {"fingerprint": "b", "title_block": {"revision": "B"}, "inputs": [], "results": [
...     {"name": "X", "value": 2.5, "unit": "m"}], "checks": []}
>>> print(diff_records(old, new).text())
Old: (no calculation number) rev A, fingerprint a
New: (no calculation number) rev B, fingerprint b
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

from calckit.errors import InputsError
from calckit.sheet import existing_fingerprint, record_from_dict
from calckit.workflow.diff_text import (
    limit_text,
    number,
    result_label,
    sampled_text,
    sheet_name,
    shown_pair,
    text_or_absent,
)

__all__ = [
    "Change",
    "ResultMove",
    "CheckChange",
    "TextsChange",
    "SheetDiff",
    "load_built_record",
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
    """A result whose value moved; ``percent`` is None when the old value is zero.

    ``old`` and ``new`` are in SI (``unit``), as in the record; ``old_shown``
    and ``new_shown`` are as the sheet shows them (``"absent"`` for a result
    one sheet does not have).
    """

    name: str
    old: float | None
    new: float | None
    unit: str
    percent: float | None
    old_shown: str = ""
    new_shown: str = ""
    label: str = ""  # the result under the sheet's own label, "Natural frequency (omega_n)"; name if none

    @property
    def change(self) -> str:
        """The change in percent as text, or ``""``."""
        return f"{self.percent:+.1f} %" if self.percent is not None else ""

    def shown(self) -> str:
        change = f" ({self.change})" if self.change else ""
        return f"{self.label or self.name}: {self.old_shown} -> {self.new_shown}{change}"


@dataclass(frozen=True)
class TextsChange:
    """Texts of a list (assumptions, references, notes) that one sheet has and the other not."""

    heading: str
    removed: tuple[str, ...] = ()
    added: tuple[str, ...] = ()

    def lines(self) -> list[str]:
        return [f"removed: {t}" for t in self.removed] + [f"added: {t}" for t in self.added]


@dataclass(frozen=True)
class CheckChange:
    """A check's verdict and margin on both sides (None when absent on one side)."""

    name: str
    old_verdict: str | None
    new_verdict: str | None
    old_margin: float | None
    new_margin: float | None
    margin_suffix: str = "%"  # "points" where the checked value is itself a percentage

    @property
    def flipped(self) -> bool:
        return self.old_verdict != self.new_verdict

    def verdicts(self) -> str:
        def word(verdict: str | None) -> str:
            return "absent" if verdict is None else ("met" if verdict == "met" else "NOT MET")

        return f"{self.name}: {word(self.old_verdict)} -> {word(self.new_verdict)}"

    def margins(self) -> str:
        def pct(margin: float | None) -> str:
            return "absent" if margin is None else f"{margin:+.1f} {self.margin_suffix}"

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
    details : tuple of Change
        Descriptions and sources of inputs that changed, one for each change
        (``name`` is ``"source of mass, stiffness"``: the inputs whose source
        changed from the same old to the same new text).
    results : tuple of ResultMove
    checks : tuple of CheckChange
        Checks whose verdict flipped or whose margin moved.
    bases : tuple of Change
        Checks whose basis changed.
    limits : tuple of Change
        Checks whose limit or relation changed (as ``"<= 0.05 mm"``).
    texts : tuple of TextsChange
        Assumptions, references and notes added or removed.
    caution : Change or None
        The caution, when it changed.
    """

    old: str
    new: str
    same_fingerprint: bool
    versions: Change | None = None
    title: tuple[Change, ...] = ()
    inputs: tuple[Change, ...] = ()
    results: tuple[ResultMove, ...] = ()
    checks: tuple[CheckChange, ...] = field(default=())
    details: tuple[Change, ...] = ()
    bases: tuple[Change, ...] = ()
    limits: tuple[Change, ...] = ()
    texts: tuple[TextsChange, ...] = ()
    caution: Change | None = None
    old_sheet: str = ""
    new_sheet: str = ""

    @property
    def anything(self) -> bool:
        """Whether any title-block field, input, result, check or text differs."""
        return bool(
            self.title
            or self.inputs
            or self.details
            or self.results
            or self.checks
            or self.bases
            or self.limits
            or self.texts
            or self.caution
        )

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
        lines: list[str] = [
            f"{side}: {name}" for side, name in (("Old", self.old_sheet), ("New", self.new_sheet)) if name
        ]
        if self.same_fingerprint:
            lines.append("Same inputs, same calculation (the fingerprints are equal).")
        if self.versions:
            lines.append(f"calckit version: {self.versions.old} -> {self.versions.new}")
        if self.title:
            lines.append("Title block:")
            lines += [f"  {c.name}: {c.old or '(empty)'} -> {c.new or '(empty)'}" for c in self.title]
        sections = (
            ("Inputs changed", [_input_line(c) for c in self.inputs]),
            ("Input descriptions and sources changed", [_change_line(c) for c in self.details]),
            ("Results moved", [m.shown() for m in self.results]),
            ("Checks flipped", [c.verdicts() for c in self.flipped]),
            ("Margins moved", [c.margins() for c in self.margins_moved]),
            ("Check limits changed", [_change_line(c) for c in self.limits]),
            ("Check bases changed", [_change_line(c) for c in self.bases]),
            *((t.heading, t.lines()) for t in self.texts),
        )
        for heading, items in sections:
            if items:
                lines.append(f"{heading} ({len(items)}):")
                lines += [f"  {item}" for item in items]
        if self.caution:
            lines.append("Caution changed:")
            lines += [f"  was: {self.caution.old or '(none)'}", f"  now: {self.caution.new or '(none)'}"]
        if not self.same_fingerprint and not self.anything:
            lines.append(
                "Nothing shown on the sheets differs, but the fingerprints do: "
                "the template or the calckit version changed."
            )
        return "\n".join(lines)

    def html(self) -> str:
        """The report as a small self-contained HTML page."""
        from calckit.render.page import Html, escape, html_page, table

        parts = [
            f"<h1>What changed</h1><p>From <code>{escape(self.old)}</code><br>"
            f"to <code>{escape(self.new)}</code></p>"
        ]
        if self.old_sheet or self.new_sheet:
            parts.append(
                table(
                    ["", "Calculation, revision and fingerprint"],
                    [["Old", self.old_sheet], ["New", self.new_sheet]],
                )
            )
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
        if self.details:
            parts.append("<h2>Input descriptions and sources changed</h2>")
            parts.append(table(["Input", "Old", "New"], [[c.name, c.old, c.new] for c in self.details]))
        if self.results:
            parts.append("<h2>Results moved</h2>")
            rows = [[m.label or m.name, m.old_shown, m.new_shown, m.change] for m in self.results]
            parts.append(table(["Result", "Old", "New", "Change"], rows))
        if self.checks:
            parts.append("<h2>Checks</h2>")

            def verdict(v: str | None) -> Any:
                if v is None:
                    return "absent"
                if v == "met":
                    return "met"
                return Html('<strong class="verdict verdict-not-met">NOT MET</strong>')

            def margin(v: float | None, suffix: str) -> str:
                return "absent" if v is None else f"{v:+.1f} {suffix}"

            rows = [
                [
                    Html(f"<strong>{escape(c.name)}</strong>") if c.flipped else c.name,
                    verdict(c.old_verdict),
                    verdict(c.new_verdict),
                    margin(c.old_margin, c.margin_suffix),
                    margin(c.new_margin, c.margin_suffix),
                ]
                for c in self.checks
            ]
            parts.append(
                table(["Check", "Old verdict", "New verdict", "Old margin", "New margin"], rows, cls="checks")
            )
        for heading, changes in (("Check limits changed", self.limits), ("Check bases changed", self.bases)):
            if changes:
                parts.append(f"<h2>{heading}</h2>")
                parts.append(table(["Check", "Old", "New"], [[c.name, c.old, c.new] for c in changes]))
        for texts in self.texts:
            parts.append(f"<h2>{escape(texts.heading)}</h2>")
            rows = [["removed", t] for t in texts.removed] + [["added", t] for t in texts.added]
            parts.append(table(["", "Text"], rows))
        if self.caution:
            parts.append("<h2>Caution changed</h2>")
            parts.append(
                table(
                    ["", "Text"],
                    [["was", self.caution.old or "(none)"], ["now", self.caution.new or "(none)"]],
                )
            )
        if not self.same_fingerprint and not self.anything:
            parts.append(
                "<p>Nothing shown on the sheets differs, but the fingerprints do: "
                "the template or the calckit version changed.</p>"
            )
        return html_page("What changed", "\n".join(parts), footer_left="calckit diff")


def _change_line(change: Change) -> str:
    return f"{change.name}: {change.old or '(empty)'} -> {change.new or '(empty)'}"


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
    except (OSError, ValueError, RecursionError):
        return False
    return isinstance(data, dict) and "fingerprint" in data


def load_built_record(path: str | os.PathLike) -> dict:
    """A built sheet's record (its .json or .html file, or its folder), checked by :class:`SheetRecord`.

    Raises InputsError (no such file, no record, several sheets in a folder, not a sheet's record,
    an HTML sheet from another build) or SheetError (a record edited after it was built).
    """
    path = Path(path)
    if not path.exists():
        raise InputsError("no such file or folder", where=str(path), do="Check the path")
    record_path = _record_path(path)
    try:
        data = json.loads(record_path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputsError("no such file", where=str(record_path), do="Check the path") from None
    except (OSError, UnicodeDecodeError, ValueError, RecursionError) as exc:
        why = "nested deeper than Python reads" if isinstance(exc, RecursionError) else str(exc).split(";")[0]
        raise InputsError(
            f"cannot read the record as JSON ({why})",
            where=str(record_path),
            do="Give a record written by calckit",
        ) from None
    if not isinstance(data, dict) or "fingerprint" not in data:
        raise InputsError(
            "the file is not a calculation sheet's record (no fingerprint)",
            where=str(record_path),
            do="Give a record written by calckit build or Sheet.save",
        )
    html = path if path.suffix.lower() == ".html" else record_path.with_suffix(".html")  # a folder's too
    if html.exists():
        shown = existing_fingerprint(html)
        if shown and shown != data["fingerprint"]:
            raise InputsError(
                f"the sheet's fingerprint {shown[:12]} differs from its record's {data['fingerprint'][:12]}",
                where=str(html),
                do="Rebuild the sheet: the HTML and its .json record come from different builds",
            )
    data = record_from_dict(data, str(record_path)).to_dict()  # version, fields and seal checked
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
    grouped: dict[tuple[str, str, str], list[str]] = {}  # one line for one change shared by inputs
    files = (str(old.get("inputs_file") or ""), str(new.get("inputs_file") or ""))
    for key in ("description", "source", "tolerance"):
        for name in inputs_old:
            if name not in inputs_new:
                continue  # removed: listed with the inputs
            was, now = (
                str((item.get(key) or {}).get("text") or "no band") if key == "tolerance" else str(item.get(key) or "")
                for item in (inputs_old[name], inputs_new[name])
            )  # a band as the inputs table shows it (record version 4)
            if key == "source" and all(files) and (was, now) == files:
                continue  # the inputs file renamed: its content is compared input by input, not its name
            if was != now:
                grouped.setdefault((key, was, now), []).append(name)
    details = [Change(f"{key} of {', '.join(names)}", was, now) for (key, was, now), names in grouped.items()]
    if sampled_text(old) != sampled_text(new):  # the request moves the fingerprint: said, not left a riddle
        details.append(Change("sampled study", sampled_text(old), sampled_text(new)))
    results_old, results_new = _by_name(old.get("results")), _by_name(new.get("results"))
    results = []
    for name in dict.fromkeys([*results_old, *results_new]):
        a, b = results_old.get(name), results_new.get(name)
        va, vb = (a or {}).get("value"), (b or {}).get("value")
        if va is None and vb is None:
            ta, tb = (a or {}).get("text"), (b or {}).get("text")
            if ta != tb or (a is None) != (b is None):
                label = result_label(a, b, name)
                results.append(
                    ResultMove(name, None, None, "", None, text_or_absent(a), text_or_absent(b), label)
                )
            continue
        if not _moved(va, vb):
            continue
        percent = (vb - va) / abs(va) * 100 if va not in (None, 0) and vb is not None else None
        unit = (b or {}).get("unit") or (a or {}).get("unit") or ""
        shown_a, shown_b = shown_pair(a, b)
        results.append(ResultMove(name, va, vb, unit, percent, shown_a, shown_b, result_label(a, b, name)))
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
            "points" if (b or a or {}).get("margin_unit") == "percentage points" else "%",
        )
        if change.flipped or _moved(change.old_margin, change.new_margin):
            checks.append(change)
    bases, limits = [], []
    for name in dict.fromkeys([*checks_old, *checks_new]):
        a, b = checks_old.get(name), checks_new.get(name)
        if a is None or b is None:
            continue  # added or removed: listed with the verdicts
        if str(a.get("basis") or "") != str(b.get("basis") or ""):
            bases.append(Change(name, str(a.get("basis") or ""), str(b.get("basis") or "")))
        if (
            a.get("relation") != b.get("relation")
            or a.get("unit") != b.get("unit")
            or _moved(number(a.get("limit")), number(b.get("limit")))
        ):
            limits.append(Change(name, limit_text(a), limit_text(b)))
    texts = []
    for key, heading in (("assumptions", "Assumptions"), ("references", "References"), ("notes", "Notes")):
        was, now = [str(t) for t in old.get(key) or []], [str(t) for t in new.get(key) or []]
        removed = tuple(t for t in was if t not in now)
        added = tuple(t for t in now if t not in was)
        if removed or added:
            texts.append(TextsChange(heading, removed, added))
    caution = None
    if str(old.get("caution") or "") != str(new.get("caution") or ""):
        caution = Change("caution", str(old.get("caution") or ""), str(new.get("caution") or ""))
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
        details=tuple(details),
        bases=tuple(bases),
        limits=tuple(limits),
        texts=tuple(texts),
        caution=caution,
        old_sheet=sheet_name(old),
        new_sheet=sheet_name(new),
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
        What changed: title block, inputs, results moved (in percent), checks flipped or moved.
    """
    a, b = load_built_record(old), load_built_record(new)
    return diff_records(a, b, old_name=a.pop("_source"), new_name=b.pop("_source"))
