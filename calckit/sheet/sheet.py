"""The calculation sheet: inputs, steps, checks, figures, sign-off, fingerprint.

A :class:`Sheet` is data first. Each call adds a block (an input, a calculation
step, a derivation, an acceptance check, a figure, an assumption ...) and
returns what a template needs next (usually the value). Renderers turn the
sheet into a notebook view (each block displays as it is added), one
self-contained HTML file (inline CSS, SVG and MathML; no script, no network),
a PDF printed from that HTML by headless Chromium, and a JSON record that the
re-run and diff tools read.

The fingerprint is a SHA-256 over the canonical inputs, the kit's version and
the template's content: two sheets with the same fingerprint came from the
same inputs through the same calculation.

Examples
--------
>>> sheet = Sheet("Pump P-101 isolation", project="Harrow Creek WTW", number="HC-VIB-001",
...               author="A. Engineer", date="2026-12-01", show=False)
>>> m = sheet.input("m", "250 kg", description="Pump and base mass", source="Vendor drawing")
>>> k = sheet.input("k", "180 kN/m", description="Total isolator stiffness", source="Isolator data")
"""

from __future__ import annotations

import hashlib
import io
import json
import math
import os
import re
import tempfile
from collections.abc import Mapping
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

import sympy as sp

from calckit._version import __version__
from calckit.core.units import Q_, fmt, quantity, to_si
from calckit.errors import OverwriteError, SheetError

__all__ = [
    "Sheet",
    "TitleBlock",
    "SheetInput",
    "CalcStep",
    "ResultLine",
    "DerivationBlock",
    "Check",
    "Figure",
    "TextBlock",
    "TableBlock",
    "DEFAULT_CAUTION",
    "check_margin",
]

DEFAULT_CAUTION = (
    "The results of this calculation support, and do not replace, the judgment of a qualified "
    "engineer and the codes and standards that apply locally. Check the inputs against their "
    "sources and the assumptions against the installation before relying on the results."
)

RELATIONS = {"<=": "\\le", ">=": "\\ge", "<": "<", ">": ">"}


# ------------------------------------------------------------------ records


@dataclass(frozen=True)
class TitleBlock:
    """The sheet's title block."""

    subject: str
    project: str = ""
    number: str = ""
    revision: str = "A"
    author: str = ""
    checker: str = ""
    date: str = ""
    approver: str = ""


@dataclass(frozen=True)
class SheetInput:
    """One input: name, symbol, value as given, SI value, description, source."""

    name: str
    symbol: str  # LaTeX
    text: str  # as given, e.g. "250 kg"
    value: Any  # pint Quantity, number or sympy expression
    si: float | None
    si_unit: str
    description: str
    source: str


@dataclass(frozen=True)
class CalcStep:
    """A numbered calculation step: formula, values put through, result."""

    name: str
    title: str
    record: Any  # calckit.render.numbers.Substitution
    reference: str


@dataclass(frozen=True)
class ResultLine:
    """A result recorded with its value (computed elsewhere, e.g. by an Oscillator)."""

    name: str
    title: str
    symbol: str
    value: Any
    reference: str


@dataclass(frozen=True)
class DerivationBlock:
    """A derivation from the engine, shown step by step."""

    title: str
    derivation: Any  # Derivation or Response
    level: str


@dataclass(frozen=True)
class Check:
    """An acceptance check: value against limit, margin in percent, verdict."""

    name: str
    value: float
    limit: float
    relation: str  # "<=", ">=", "<" or ">"
    unit: str
    margin_percent: float
    met: bool
    basis: str
    shown_value: str
    shown_limit: str

    @property
    def verdict(self) -> str:
        """``"met"`` or ``"not met"``."""
        return "met" if self.met else "not met"

    @property
    def margin_unit(self) -> str:
        """What the margin is measured in (see :func:`check_margin`)."""
        return "percentage points" if self.unit == "percent" else "percent of the limit"

    @property
    def margin_text(self) -> str:
        """The margin as shown: ``+58.8 %`` of the limit, or ``+665.6 points`` for a percentage."""
        return f"{self.margin_percent:+.1f} {'points' if self.unit == 'percent' else '%'}"


def check_margin(value: float, limit: float, relation: str, unit: str) -> float:
    """Distance from *value* to *limit*, positive when ``value relation limit`` holds.

    In percent of the limit; for a value that is itself a percentage (``unit ==
    "percent"``, e.g. a speed separation), in percentage points, so that a margin is
    never a percent of a percent.
    """
    gap = (limit - value) if relation in ("<=", "<") else (value - limit)
    return gap if unit == "percent" else gap / abs(limit) * 100


@dataclass(frozen=True)
class Figure:
    """A figure as inline SVG with its caption."""

    caption: str
    svg: str


@dataclass(frozen=True)
class TableBlock:
    """A table of values with a caption (e.g. a harmonic table)."""

    caption: str
    headers: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]


@dataclass(frozen=True)
class TextBlock:
    """An assumption, reference or note."""

    kind: str  # "assumption" | "reference" | "note"
    text: str


# ------------------------------------------------------------------ helpers

_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def _check_name(name: str, where: str) -> str:
    if not isinstance(name, str) or not _NAME.match(name):
        raise SheetError(
            f"the name {name!r} is not usable",
            where=where,
            do="Use letters, digits and underscores, starting with a letter, e.g. k_iso",
        )
    return name


def _symbol_latex(name: str, symbol: str | None) -> str:
    if symbol:
        return symbol
    return sp.latex(sp.Symbol(name))


def _si_of(value: Any, where: str) -> tuple[float | None, str]:
    if hasattr(value, "units"):
        si = to_si(value, where)
        return float(si.magnitude), si.unit
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return float(value), ""
    if isinstance(value, sp.Basic) and value.is_number:
        return float(value), ""
    return None, ""


def _shown(value: Any, sig: int = 4) -> str:
    if hasattr(value, "units"):
        return fmt(value, sig)
    if isinstance(value, (int, float, sp.Basic)) and not isinstance(value, bool):
        try:
            from calckit.core.units import fmt_number

            return fmt_number(float(value), sig)
        except (TypeError, ValueError):
            return str(value)
    return str(value)


def _canonical(obj: Any) -> str:
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=True)


def _atomic_write(path: Path, data: bytes) -> None:
    """Write through a temporary file in the same folder, then rename: never a half file."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".calckit-", suffix=path.suffix, dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


_FINGERPRINT_IN_FILE = re.compile(rb'(?:data-fingerprint="|"fingerprint":\s*")([0-9a-f]{64})')


def existing_fingerprint(path: Path) -> str | None:
    """The fingerprint recorded in an existing HTML or JSON sheet, if any."""
    try:
        head = path.read_bytes()[:2_000_000]
    except OSError:
        return None
    found = _FINGERPRINT_IN_FILE.search(head)
    return found.group(1).decode() if found else None


# ------------------------------------------------------------------ the sheet


class Sheet:
    """A calculation sheet built block by block.

    Parameters
    ----------
    subject : str
        What the calculation is about, e.g. "Pump P-101 on spring isolators".
    project, number, revision, author, checker, date, approver : str
        The title block. ``date`` is printed as given; fix it to rebuild the
        same bytes.
    template : str, optional
        The template's content (or any text identifying the calculation); it
        enters the fingerprint.
    caution : str
        The caution printed on the sheet; by default :data:`DEFAULT_CAUTION`.
        It cannot be left out: sheets size or accept equipment.
    show : bool
        Display each block in Jupyter as it is added (default: when running in
        an IPython kernel).
    sources : mapping, optional
        Source of an input by its name (from an inputs file); it wins over the
        ``source=`` given to :meth:`input`.
    """

    def __init__(
        self,
        subject: str,
        *,
        project: str = "",
        number: str = "",
        revision: str = "A",
        author: str = "",
        checker: str = "",
        date: str = "",
        approver: str = "",
        template: str = "",
        caution: str = DEFAULT_CAUTION,
        show: bool | None = None,
        sources: Mapping[str, str] | None = None,
    ):
        self.sources = dict(sources or {})
        self.title = TitleBlock(subject, project, number, revision, author, checker, date, approver)
        self.template_digest = hashlib.sha256(template.encode()).hexdigest() if template else ""
        if not caution or not str(caution).strip():
            raise SheetError(
                "a calculation sheet must carry a caution",
                where="Sheet(caution=...)",
                do="Keep the default (calckit.DEFAULT_CAUTION) or give your own wording",
            )
        self.caution = caution
        self.blocks: list[Any] = []
        self.inputs: dict[str, SheetInput] = {}
        self.results: dict[str, Any] = {}
        self._show = in_kernel() if show is None else show

    # -------------------------------------------------------------- adding
    def _add(self, block):
        self.blocks.append(block)
        if self._show:
            from calckit.sheet.html import show_block

            show_block(self, block)
        return block

    def input(
        self,
        name: str,
        value: Any,
        *,
        symbol: str | None = None,
        description: str = "",
        source: str = "",
        expect: str | None = None,
    ):
        """Add an input and return its value (a pint Quantity when it has a unit).

        ``value`` may be text with a unit ("250 kg", "1480 rpm"), a number, a
        pint Quantity, or a sympy expression (e.g. a forcing). ``expect`` names
        the kind of quantity ("mass", "stiffness", "frequency" ...) to check.
        A source given for *name* in the sheet's ``sources`` wins over ``source``.
        """
        source = self.sources.get(name, source)
        _check_name(name, "input name")
        if name in self.inputs:
            raise SheetError(
                f"the input {name!r} is already on the sheet",
                where=f"input {name}",
                do="Give each input its own name",
            )
        text = str(value)
        if isinstance(value, str) or hasattr(value, "units") or expect:
            value = quantity(value, name, expect=expect)
            text = text if isinstance(text, str) else fmt(value)
        si, si_unit = _si_of(value, name)
        record = SheetInput(name, _symbol_latex(name, symbol), text, value, si, si_unit, description, source)
        self.inputs[name] = record
        self._add(record)
        return value

    def calc(
        self,
        name: str,
        formula: Any,
        values: dict[str, Any] | None = None,
        *,
        title: str = "",
        symbol: str | None = None,
        unit: str | None = None,
        reference: str = "",
        sig: int = 4,
    ):
        """Put numbers through a formula as a numbered step and return the result.

        ``formula`` is a sympy expression in symbols named after inputs or earlier
        results (or given in ``values``). The step shows the formula, the values
        with units substituted, and the result in ``unit``.
        """
        from calckit.render.numbers import put_through

        _check_name(name, "result name")
        known = {key: rec.value for key, rec in self.inputs.items()}
        known.update(self.results)
        if values:
            known.update(values)
        if isinstance(formula, str):  # read by the whitelist parser: text is never run
            from calckit.core.expressions import parse_expression

            expr = parse_expression(formula, {key: sp.Symbol(key) for key in known}, where=f"step {name}")
        elif isinstance(formula, sp.Expr):
            expr = formula
        elif isinstance(formula, (int, float)) and not isinstance(formula, bool):
            expr = sp.Float(formula) if isinstance(formula, float) else sp.Integer(formula)
        else:
            raise SheetError(
                f"expected a formula (sympy expression or text), got {type(formula).__name__}",
                where=f"step {name}",
                do='Give the formula in symbols, e.g. sympy.sqrt(k / m) or "sqrt(k/m)"',
            )
        needed = {s.name: known[s.name] for s in expr.free_symbols if s.name in known}
        missing = sorted(s.name for s in expr.free_symbols if s.name not in known)
        if missing:
            raise SheetError(
                f"the formula needs {', '.join(missing)}, which {'is' if len(missing) == 1 else 'are'} "
                "neither an input nor an earlier result",
                where=f"step {name}",
                do="Add the input first, or pass values={...}",
            )
        record = put_through(symbol or name, expr, needed, unit=unit, sig=sig)
        self._add(CalcStep(name, title, record, reference))
        result = record.quantity if hasattr(record, "quantity") else record.value
        self.results[name] = result
        return result

    def result(
        self, name: str, value: Any, *, title: str = "", symbol: str | None = None, reference: str = ""
    ):
        """Record a result computed elsewhere (e.g. an Oscillator property) as a step."""
        _check_name(name, "result name")
        self.results[name] = value
        self._add(ResultLine(name, title, _symbol_latex(name, symbol), value, reference))
        return value

    def derivation(self, derivation: Any, title: str = "Derivation", *, level: str = "full"):
        """Add a derivation (a :class:`~calckit.Derivation` or :class:`~calckit.Response`)."""
        if level not in ("full", "summary"):
            raise SheetError(f"unknown level {level!r}", where="derivation", do='Use "full" or "summary"')
        if not hasattr(derivation, "steps"):
            raise SheetError(
                f"expected a Derivation or Response, got {type(derivation).__name__}",
                where="derivation",
                do="Pass what Oscillator.particular or Oscillator.response returned",
            )
        self._add(DerivationBlock(title, derivation, level))
        return derivation

    def check(
        self,
        name: str,
        value: Any,
        limit: Any,
        *,
        relation: str = "<=",
        basis: str = "",
        unit: str | None = None,
    ) -> Check:
        """Add an acceptance check ``value relation limit`` with its margin and verdict.

        The margin is the distance to the limit in percent of the limit (in
        percentage points when the value is itself a percentage), positive when the
        criterion is met; see :func:`check_margin`. ``basis`` says where the criterion
        comes from (a specification, a standard clause, or "common practice,
        no source").
        """
        if not isinstance(name, str) or not name.strip():
            raise SheetError(
                "a check needs a name", where="check", do='Name what is checked, e.g. "amplitude"'
            )
        if relation not in RELATIONS:
            raise SheetError(
                f"unknown relation {relation!r}", where=f"check {name}", do="Use one of <=, >=, <, >"
            )
        for label, given in (("value", value), ("limit", limit)):
            _require_real(given, f"check {name}", label)
        v, lim, unit_text = _same_unit(value, limit, unit, name)
        if not (math.isfinite(v) and math.isfinite(lim)):
            raise SheetError(
                f"the {'value' if not math.isfinite(v) else 'limit'} is not a finite number",
                where=f"check {name}",
                do="Check the calculation that produced it",
            )
        if lim == 0:
            raise SheetError(
                "the limit is zero, so a margin in percent is undefined",
                where=f"check {name}",
                do="Give a non-zero limit",
            )
        margin = check_margin(v, lim, relation, unit_text)
        if relation in ("<=", "<"):
            met = v <= lim if relation == "<=" else v < lim
        else:
            met = v >= lim if relation == ">=" else v > lim
        shown_v = _shown(Q_(v, unit_text) if unit_text else v)
        shown_l = _shown(Q_(lim, unit_text) if unit_text else lim)
        record = Check(name, v, lim, relation, unit_text, margin, bool(met), basis, shown_v, shown_l)
        self._add(record)
        return record

    def separation_check(
        self,
        name: str,
        operating: Any,
        natural: Any,
        *,
        band: float = 0.20,
        basis: str = "common practice, no source: keep the operating frequency outside about "
        "+/-20 % of a natural frequency",
    ) -> Check:
        """Check that an operating frequency is at least ``band`` away from a natural frequency.

        The value is ``|f_op / f_n - 1|`` (as a percentage), the limit ``band``.
        """
        from calckit.core.units import angular_frequency

        def rad_per_s(given, label):
            _require_real(given, f"check {name}", label)
            if isinstance(given, str) or hasattr(given, "units"):
                where = f"check {name} {label}"
                return float(angular_frequency(quantity(given, where), where))
            return float(given)

        w_op = rad_per_s(operating, "operating frequency")
        w_n = rad_per_s(natural, "natural frequency")
        if not w_n > 0 or not math.isfinite(w_op) or w_op < 0:
            raise SheetError(
                f"the frequencies must be finite with a natural frequency above zero (got {w_op:g} and "
                f"{w_n:g} rad/s)",
                where=f"check {name}",
                do="Check the natural frequency: a model with no spring has none to separate from",
            )
        separation = abs(w_op / w_n - 1) * 100
        return self.check(name, separation, band * 100, relation=">=", basis=basis, unit="percent")

    def figure(self, fig: Any, caption: str) -> Figure:
        """Add a matplotlib figure, embedded as inline SVG (text as paths, no date)."""
        import matplotlib

        if not hasattr(fig, "savefig"):
            raise SheetError(
                f"expected a matplotlib figure, got {type(fig).__name__}",
                where=f"figure {caption!r}",
                do="Pass the figure object, e.g. fig from fig, ax = plt.subplots()",
            )
        buffer = io.StringIO()
        with matplotlib.rc_context({"svg.hashsalt": "calckit", "svg.fonttype": "path"}):
            fig.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None}, bbox_inches="tight")
        svg = buffer.getvalue()
        svg = svg[svg.index("<svg") :]
        # the RDF metadata block names remote vocabularies; the sheet needs none of it
        svg = re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.DOTALL)
        return self._add(Figure(caption, svg))

    def table(self, headers, rows, caption: str = "") -> TableBlock:
        """Add a table; cells are shown as text (quantities and numbers rounded to 4 figures)."""
        headers = tuple(str(h) for h in headers)
        shown_rows = []
        for index, row in enumerate(rows, start=1):
            cells = tuple(_shown(cell) for cell in row)
            if len(cells) != len(headers):
                raise SheetError(
                    f"row {index} has {len(cells)} cells but there are {len(headers)} headings",
                    where=f"table {caption or ''}".strip(),
                    do="Give every row one cell per heading",
                )
            shown_rows.append(cells)
        return self._add(TableBlock(caption, headers, tuple(shown_rows)))

    def assume(self, text: str) -> TextBlock:
        """Add an assumption."""
        return self._add(TextBlock("assumption", text))

    def reference(self, text: str) -> TextBlock:
        """Add a reference (book, standard and clause, drawing)."""
        return self._add(TextBlock("reference", text))

    def note(self, text: str) -> TextBlock:
        """Add a note."""
        return self._add(TextBlock("note", text))

    # -------------------------------------------------------------- reading
    def of_type(self, cls) -> list:
        """Blocks of one type, in order."""
        return [block for block in self.blocks if isinstance(block, cls)]

    @property
    def checks(self) -> list[Check]:
        return self.of_type(Check)

    @property
    def checks_met(self) -> int:
        return sum(check.met for check in self.checks)

    @property
    def fingerprint(self) -> str:
        """SHA-256 over everything the user provided, the kit version and the template.

        Covered: the title block except the date, every input (name, text as given,
        exact value, unit, description, source), every check's name, limit,
        relation and basis, the assumptions, references, notes and the caution.
        Results are not covered: they follow from these. Two sheets with the same
        fingerprint came from the same inputs through the same calculation.
        """
        title = {key: value for key, value in asdict(self.title).items() if key != "date"}
        payload = {
            "calckit": __version__,
            "template": self.template_digest,
            "title": title,
            "inputs": [
                [rec.name, rec.text, _exact_text(rec.value), rec.si_unit, rec.description, rec.source]
                for rec in self.inputs.values()
            ],
            "checks": [[c.name, c.relation, repr(c.limit), c.unit, c.basis] for c in self.checks],
            "text": [[b.kind, b.text] for b in self.of_type(TextBlock)],
            "caution": self.caution,
        }
        return hashlib.sha256(_canonical(payload).encode()).hexdigest()

    def record(self) -> dict:
        """The machine-readable record (inputs, results, checks, fingerprint)."""
        return {
            "calckit": __version__,
            "fingerprint": self.fingerprint,
            "title_block": asdict(self.title),
            "inputs": [
                {
                    "name": rec.name,
                    "text": rec.text,
                    "value": rec.si,
                    "unit": rec.si_unit,
                    "description": rec.description,
                    "source": rec.source,
                }
                for rec in self.inputs.values()
            ],
            "results": [_result_record(name, value) for name, value in self.results.items()],
            "checks": [
                {
                    "name": c.name,
                    "value": c.value,
                    "limit": c.limit,
                    "relation": c.relation,
                    "unit": c.unit,
                    "margin_percent": round(c.margin_percent, 6),
                    "margin_unit": c.margin_unit,
                    "verdict": c.verdict,
                    "basis": c.basis,
                }
                for c in self.checks
            ],
            "summary": {"checks": len(self.checks), "met": self.checks_met},
            "derivations": [
                {
                    "title": block.title,
                    "solution": sp.sstr(block.derivation.solution),
                    "verified": bool(block.derivation.verified),
                }
                for block in self.of_type(DerivationBlock)
            ],
            "tables": [
                {"caption": b.caption, "headers": list(b.headers), "rows": [list(r) for r in b.rows]}
                for b in self.of_type(TableBlock)
            ],
            "assumptions": [b.text for b in self.of_type(TextBlock) if b.kind == "assumption"],
            "references": [b.text for b in self.of_type(TextBlock) if b.kind == "reference"],
            "notes": [b.text for b in self.of_type(TextBlock) if b.kind == "note"],
            "caution": self.caution or "",
        }

    # -------------------------------------------------------------- output
    def to_html(self, *, paper: str | None = None) -> str:
        """The whole sheet as one self-contained HTML page (``paper`` fixes the printed size)."""
        from calckit.sheet.html import sheet_page

        if paper not in (None, "A4", "Letter"):
            raise SheetError(f"unknown paper size {paper!r}", where="paper", do='Use "A4" or "Letter"')
        page = sheet_page(self)
        if paper:
            page = page.replace("</style>", f"@page {{ size: {paper}; }}\n</style>", 1)
        return page

    def to_json(self) -> str:
        return json.dumps(self.record(), indent=2, sort_keys=False, ensure_ascii=False) + "\n"

    def save(
        self, path: str | os.PathLike, *, overwrite: bool = False, keep_both: bool = False, paper: str = "A4"
    ) -> Path:
        """Write the sheet to ``.html``, ``.pdf`` or ``.json``; return the path written.

        A file that already holds a sheet with a different fingerprint is not
        replaced unless ``overwrite=True``; with ``keep_both=True`` the new sheet
        is written alongside as ``name-2.html`` (``-3`` ...). Writes are atomic:
        a failed save never leaves a file that looks complete. ``paper`` ("A4" or
        "Letter") sets the page size of a PDF; the HTML prints on either.
        """
        path = Path(path)
        suffix = path.suffix.lower()
        if suffix not in (".html", ".pdf", ".json"):
            raise SheetError(
                f"cannot write a sheet as {suffix or 'a file without extension'}",
                where=str(path),
                do="Use a name ending in .html, .pdf or .json",
            )
        path = self._target(path, overwrite=overwrite, keep_both=keep_both)
        if suffix == ".json":
            _atomic_write(path, self.to_json().encode())
        elif suffix == ".html":
            _atomic_write(path, self.to_html().encode())
        else:
            from calckit.render.printing import html_to_pdf

            html_to_pdf(self.to_html(paper=paper), path)
        return path

    def _target(self, path: Path, *, overwrite: bool, keep_both: bool) -> Path:
        if not path.exists() or overwrite:
            return path
        found = existing_fingerprint(path)
        if path.suffix.lower() == ".pdf":
            sibling = path.with_suffix(".json")
            found = existing_fingerprint(sibling) if sibling.exists() else None
        if found == self.fingerprint:
            return path
        if keep_both:
            n = 2
            while True:
                candidate = path.with_name(f"{path.stem}-{n}{path.suffix}")
                if not candidate.exists():
                    return candidate
                n += 1
        held = (
            f"a sheet with fingerprint {found[:12]}" if found else "a file whose fingerprint cannot be read"
        )
        raise OverwriteError(
            f"the file already holds {held}, built from other inputs",
            where=str(path),
            do="Pass overwrite=True to replace it, keep_both=True to write alongside it, or choose another name",
        )

    # -------------------------------------------------------------- display
    def _repr_html_(self) -> str:
        from calckit.sheet.html import sheet_fragment

        return sheet_fragment(self)

    def __repr__(self) -> str:
        return (
            f"<Sheet {self.title.number or ''} rev {self.title.revision}: {self.title.subject!r}, "
            f"{len(self.inputs)} inputs, {len(self.checks)} checks ({self.checks_met} met)>"
        )


def _exact_text(value: Any) -> str:
    if hasattr(value, "units"):
        mag = value.magnitude
        return f"{sp.sstr(mag) if isinstance(mag, sp.Basic) else repr(mag)} {value.units:~}"
    if isinstance(value, sp.Basic):
        return sp.srepr(value)
    return repr(value)


def _result_record(name: str, value: Any) -> dict:
    si, unit = _si_of(value, name)
    out = {"name": name, "value": si, "unit": unit, "shown": _shown(value)}
    if si is None:
        out["text"] = str(value)
    return out


def _require_real(value: Any, where: str, label: str) -> None:
    """Refuse what a check cannot compare: None, truth values, complex numbers, symbols."""
    if isinstance(value, str) or hasattr(value, "units"):
        return
    if value is None or isinstance(value, (bool, complex)):
        ok = False
    elif isinstance(value, sp.Basic):
        ok = bool(value.is_number and value.is_real)
    else:
        try:
            float(value)  # numbers of any kind, numpy scalars included
            ok = True
        except (TypeError, ValueError):
            ok = False
    if not ok:
        raise SheetError(
            f"the {label} {value!r} is not a real number or quantity",
            where=where,
            do='Give a number, a quantity with its unit (e.g. "0.1 mm"), or substitute numbers for symbols first',
        )


def _same_unit(value: Any, limit: Any, unit: str | None, name: str) -> tuple[float, float, str]:
    """Bring value and limit to one unit (``unit`` or the limit's) and return magnitudes."""
    has_v, has_l = hasattr(value, "units"), hasattr(limit, "units")
    if isinstance(limit, str):
        limit, has_l = quantity(limit, f"check {name} limit"), True
    if isinstance(value, str):
        value, has_v = quantity(value, f"check {name} value"), True
    if has_v or has_l:
        if not (has_v and has_l):
            if unit and unit != "percent":
                value = value if has_v else Q_(float(value), unit)
                limit = limit if has_l else Q_(float(limit), unit)
            else:
                raise SheetError(
                    "one of value and limit has a unit and the other has none",
                    where=f"check {name}",
                    do="Give both with units, or pass unit=... for the bare number",
                )
        target = unit or f"{limit.units}"
        try:
            return float(value.to(target).magnitude), float(limit.to(target).magnitude), target
        except Exception as exc:  # pint DimensionalityError
            from calckit.errors import UnitsError

            raise UnitsError(
                f"cannot compare {fmt(value)} with {fmt(limit)}: the dimensions differ",
                where=f"check {name}",
                do="Give the value and the limit in compatible units",
            ) from exc
    return float(value), float(limit), unit or ""


def in_kernel() -> bool:
    import sys

    ipython = sys.modules.get("IPython")
    if ipython is None:
        return False
    try:
        shell = ipython.get_ipython()
    except AttributeError:
        return False
    return shell is not None and getattr(shell, "kernel", None) is not None
