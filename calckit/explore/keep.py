"""Keeping the explorer's values: the inputs file that ``calckit build`` reads.

The starting inputs file is copied line for line (comments, tables and the
``[sheet]`` table kept) with only the moved values replaced, in the units they were
written in; without a starting file (or where a line cannot be placed safely) the
file is written afresh. Every file goes through :func:`calckit.core.files.write_text`
and every TOML value through :func:`calckit.core.files.toml_value`, except a moved
number, written as the shortest text the explorer shows (``1923``, not ``1923.0``).

A kept file holds what-if values, not the calculation as issued, so two things of the
starting file would be untrue in it and are cleared: the revision (written as
``revision = ""`` with a note, so the sheet built from it carries no revision until the
engineer gives it one, rather than the issued sheet's letter or the template's example
letter), and the comment that says how to build the starting file (``# Build it
with: ... --inputs start.toml``), which now names the kept file instead.
"""

from __future__ import annotations

import html
import re
import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from calckit.core.files import free_name, toml_value, write_text
from calckit.explore.values import _Input
from calckit.workflow import TITLE_FIELDS, band_line

#: What a refused overwrite tells the user to do instead.
KEEP_ELSEWHERE = "Keep to another name, or pass overwrite=True to replace it"

#: The note beside the revision a kept file clears.
REVISION_CLEARED = "# cleared when kept from the explorer: what-if values; give a revision before issuing"

_SHEET_HEADER = re.compile(r"^\s*\[\s*sheet\s*\]\s*(#.*)?$")
_BUILD_COMMENT = re.compile(r"^(?P<lead>#\s*Build it with:\s*)calckit build .*$", re.MULTILINE)


@dataclass(frozen=True)
class Kept:
    """What :meth:`Explorer.keep` wrote: the file and the values changed from the start.

    ``changes`` holds ``(name, starting text, kept text)`` for each value that moved.
    """

    path: Path
    changes: tuple[tuple[str, str, str], ...]
    template: str

    def summary(self) -> str:
        """One sentence: what was written and what changed."""
        if not self.changes:
            moved = "no value changed from the start"
        else:
            moved = "; ".join(f"{name} {old} -> {new}" for name, old, new in self.changes)
        return f"Wrote {self.path}: {moved}."


def _kept_text(
    inputs: Iterable[_Input], file: Any, values: Mapping[str, Any], template: str, path: Path | None = None
) -> str:
    """The kept file's text: a header naming the moved values, then the inputs file with them in place.

    *file* is the starting inputs file (None: the template's own *values* are written afresh);
    *path* is where the kept file goes (named in its build comment). The revision is cleared.
    """
    inputs = tuple(inputs)
    moved = [i for i in inputs if i.changed]
    header = "# Kept from the what-if explorer (calckit.explore)"
    header += (
        ": " + "; ".join(f"{i.name} was {i.text(i.start)}" for i in moved) + ".\n"
        if moved
        else "; no value moved from the start.\n"
    )
    if file is not None:
        text = _replace_lines(file, {i.name: i.toml() for i in moved}, revision=True)
        if text is not None:
            return header + _build_comment(text, template, path)
        written = dict(file.values)
        groups = dict(file.groups)
        title = file.sheet.present()
    else:
        written = {n: v for n, v in values.items() if n not in TITLE_FIELDS}
        groups = {}
        title = {n: v for n, v in values.items() if n in TITLE_FIELDS}
    for item in inputs:
        written[item.name] = item.text() if item.from_text else float(item.value)
    sources = dict(getattr(file, "sources", {}) or {}) if file is not None else {}
    written.pop("revision", None)  # an older file's top-level revision: cleared in [sheet]
    title = {**title, "revision": ""}
    return header + _document(written, groups, title, template, sources)


def _build_comment(text: str, template: str, path: Path | None) -> str:
    """*text* with a comment on how to build the starting file made to name the kept one (or dropped)."""
    if path is None:
        return _BUILD_COMMENT.sub("", text)
    command = f"calckit build {template} --inputs {path.name} --out built/{path.stem}"
    return _BUILD_COMMENT.sub(lambda m: m.group("lead") + command, text)


def _write_kept(path: Path, text: str, *, overwrite: bool) -> None:
    """Write the kept file whole or not at all; without *overwrite* never replace a file."""
    write_text(path, text, overwrite=overwrite, refuse=KEEP_ELSEWHERE)


def _kept_html(kept: Kept) -> str:
    if kept.changes:
        rows = "".join(
            f"<tr><td>{html.escape(n)}</td><td>{html.escape(o)}</td><td>{html.escape(v)}</td></tr>"
            for n, o, v in kept.changes
        )
        moved = (
            f"<table><thead><tr><th>input</th><th>at the start</th><th>kept</th></tr></thead>{rows}</table>"
        )
    else:
        moved = "<p>No value moved from the start.</p>"
    command = f"calckit build {kept.template} --inputs {kept.path} --out built/"
    return (
        f"<p>Wrote <code>{html.escape(str(kept.path))}</code>.</p>{moved}"
        f"<p>Build its sheet with <code>{html.escape(command)}</code></p>"
    )


def _free_name(path: Path) -> Path:
    """*path* if it does not exist, else ``<stem>_2<suffix>``, ``_3`` ... beside it."""
    return free_name(path, "_", renumber=True)


_VALUE = re.compile(
    r"""^(?P<lead>\s*(?P<key>[A-Za-z0-9_-]+|"[^"]*"|'[^']*')\s*=\s*)"""
    r"""(?P<value>"(?:[^"\\]|\\.)*"|'[^']*'|[^\s#"']+)(?P<tail>\s*(?:#.*)?)$"""
)


_INLINE = re.compile(
    r"""^(?P<lead>\s*(?P<key>[A-Za-z0-9_-]+|"[^"]*"|'[^']*')\s*=\s*)\{(?P<body>[^{}]*)\}(?P<tail>\s*(?:#.*)?)$"""
)


def _replace_lines(file: Any, new: Mapping[str, str], *, revision: bool = False) -> str | None:
    """The inputs file's text with the values of *new* replaced in place, or None if a line
    cannot be placed safely (then the caller writes the file afresh).

    With *revision*, a revision the file gives is cleared (``revision = ""`` and a note).
    """
    lines = file.text.splitlines(keepends=True)
    cleared = revision
    revision = revision and (file.sheet.revision is not None or "revision" in file.values)
    if revision:
        number = file.line_of("revision")
        found = _VALUE.match(lines[number - 1].rstrip("\r\n")) if number else None
        if not found or found.group("key").strip("\"'") != "revision":
            return None
        ending = lines[number - 1][len(lines[number - 1].rstrip("\r\n")) :]
        lines[number - 1] = f'{found.group("lead")}""  {REVISION_CLEARED}{ending}'
    for name, toml in new.items():
        number = file.line_of(name)
        if number is None:
            return None
        line = lines[number - 1]
        ending = line[len(line.rstrip("\r\n")) :]
        found = _VALUE.match(line.rstrip("\r\n"))
        inline = _INLINE.match(line.rstrip("\r\n")) if not found else None
        if found and found.group("key").strip("\"'") == name:
            lines[number - 1] = found.group("lead") + toml + found.group("tail") + ending
        elif inline and inline.group("key").strip("\"'") == name:
            # { value = ..., source = ... }: the new value keeps its provenance in the source
            try:
                old = tomllib.loads(f"x = {{{inline.group('body')}}}")["x"]
            except tomllib.TOMLDecodeError:
                return None
            source = f"{old.get('source', '')}; moved in the what-if explorer from {old.get('value', '')}"
            # a tolerance either side moves with the value; a min and max might not hold it: left out, said so
            band = f", tolerance = {toml_value(old['tolerance'])}" if "tolerance" in old else ""
            if "min" in old and "max" in old:
                source += f"; its band {old['min']} to {old['max']} left out"
            lines[number - 1] = (
                inline.group("lead")
                + f"{{ value = {toml}{band}, source = {toml_value(source.lstrip('; '))} }}"
                + inline.group("tail")
                + ending
            )
        else:
            return None
    for name in new:  # a band's min and max may not hold the moved value: kept as a comment, not applied
        number = band_line(file.text, name)
        if number is not None and set(file.tolerances.get(name, {})) == {"min", "max"}:
            line = lines[number - 1]
            ending = line[len(line.rstrip("\r\n")) :]
            lines[number - 1] = f"# {line.rstrip()}  # left out: moved in the what-if explorer{ending}"
    if cleared and not revision:  # none given: the template's example letter would print; give none
        entry = f'revision = ""  {REVISION_CLEARED}\n'
        header = next((n for n, line in enumerate(lines) if _SHEET_HEADER.match(line)), None)
        if header is None:
            if lines and not lines[-1].endswith("\n"):
                lines[-1] += "\n"
            lines += ["\n", "[sheet]\n", entry]
        else:  # after the values are replaced: their line numbers hold until here
            lines.insert(header + 1, entry)
        revision = True
    text = "".join(lines)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError:  # pragma: no cover - a value the pattern misread
        return None
    if revision and (data.get("sheet", {}).get("revision", data.get("revision"))) != "":
        return None  # pragma: no cover - a revision the pattern misread
    for name, toml in new.items():
        group = file.groups.get(name, "")
        table = data.get(group, {}) if group else data
        got = table.get(name)
        if isinstance(got, dict):
            got = got.get("value")
        if got != tomllib.loads(f"x = {toml}")["x"]:  # pragma: no cover
            return None
    return text


def _document(
    values: Mapping[str, Any],
    groups: Mapping[str, str],
    title: Mapping[str, Any],
    template: str,
    sources: Mapping[str, str] | None = None,
) -> str:
    """An inputs file written afresh: top-level inputs, then each table, then ``[sheet]``;
    inputs with a source are written ``{ value = ..., source = ... }``."""
    lines = [f"# Inputs for the template {template}.", ""]
    tables: dict[str, list[str]] = {}
    sources = sources or {}
    for name, value in values.items():
        group = groups.get(name, "")
        entry = f"{name} = {toml_value(value)}"
        if name in sources:
            entry = f"{name} = {{ value = {toml_value(value)}, source = {toml_value(sources[name])} }}"
        if group:
            tables.setdefault(group, []).append(entry)
        else:
            lines.append(entry)
    for group, entries in tables.items():
        lines += ["", f"[{group}]", *entries]
    if title:
        lines += ["", "[sheet]"] + [f"{n} = {toml_value(v)}" for n, v in title.items()]
    return "\n".join(lines) + "\n"
