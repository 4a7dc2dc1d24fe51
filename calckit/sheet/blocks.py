"""The blocks a calculation sheet is made of: frozen records, built by keyword or position.

Each call on a :class:`~calckit.sheet.sheet.Sheet` adds one of these records to
its list of blocks: the title block, an input, a calculation step, a result, a
derivation, an acceptance check (with :func:`check_margin`, the one rule for its
margin), a figure, a table, an assumption, reference or note. Nothing here knows
how it will be shown (see :mod:`calckit.sheet.html`) or saved (see
:mod:`calckit.sheet.record`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = [
    "CalcStep",
    "Check",
    "DEFAULT_CAUTION",
    "DerivationBlock",
    "Figure",
    "IndependentCheck",
    "RELATIONS",
    "ResultLine",
    "SheetInput",
    "TableBlock",
    "TextBlock",
    "TitleBlock",
    "check_margin",
]

DEFAULT_CAUTION = (
    "The results of this calculation support, and do not replace, the judgment of a qualified "
    "engineer and the codes and standards that apply locally. Check the inputs against their "
    "sources and the assumptions against the installation before relying on the results."
)
"""The caution every sheet carries unless it is given its own wording."""

RELATIONS = {"<=": "\\le", ">=": "\\ge", "<": "<", ">": ">"}
"""The relations a check may state, with their LaTeX."""


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
    tolerance: Any = None  # calckit.core.tolerances.Tolerance: the input's band, when it has one

    @property
    def shown_value(self) -> str:
        """The value as the inputs table prints it, with its band: ``720 kN/m ± 15 %``."""
        from calckit.sheet.values import shown_text

        shown = shown_text(self.value) if hasattr(self.value, "units") else self.text
        return f"{shown} {self.tolerance.text}" if self.tolerance is not None else shown


@dataclass(frozen=True)
class CalcStep:
    """A numbered calculation step: formula, values put through, result."""

    name: str
    title: str
    record: Any  # calckit.render.numbers.Substitution
    reference: str

    @property
    def working(self):
        """A formula with the values and units put through it: the step's own line of text."""
        from calckit.sheet.working import Working

        return Working("formula", str(self.record))


@dataclass(frozen=True)
class ResultLine:
    """A result recorded with its value (computed elsewhere, e.g. by an Oscillator)."""

    name: str
    title: str
    symbol: str
    value: Any
    reference: str
    working: Any = None  # calckit.sheet.working.Working: how the value was obtained


@dataclass(frozen=True)
class DerivationBlock:
    """A derivation from the engine, shown step by step."""

    title: str
    derivation: Any  # Derivation or Response
    level: str
    units: Any = None  # calckit.render.step_units.MotionUnits: what its numbers are in; None: not stated

    @property
    def numeric(self) -> bool:
        """Whether the derivation has numbers for its parameters (no symbol but time in its solution)."""
        solution = self.derivation.solution
        t = getattr(self.derivation, "t", None)
        return not {s for s in solution.free_symbols if s != t}


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
    value_from: str = ""  # the result or input the value is, for the tolerance study ("" when not traced)
    limit_from: str = ""  # the result or input the limit is ("" for a fixed limit)

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
        """The margin as shown: ``+58.8 %`` of the limit, or ``+665.6 points`` for a percentage.

        A margin smaller than 0.05 is shown to two significant figures (``-0.008 %``), so
        that a check not met never shows a margin of ``-0.0``.
        """
        m = self.margin_percent
        text = f"{m:+.1f}" if m == 0 or abs(m) >= 0.05 else f"{m:+.2g}"
        return f"{text} {'points' if self.unit == 'percent' else '%'}"

    @property
    def utilisation(self) -> float:
        """Demand over capacity, at most 1 when met: ``value / limit`` for ``<=``, ``limit / value`` for ``>=``."""
        if self.relation in ("<=", "<"):
            return self.value / self.limit
        return self.limit / self.value if self.value else float("inf")

    @property
    def utilisation_text(self) -> str:
        """The utilisation as shown, to three decimals (``0.812``), enough digits to decide it against 1."""
        u = self.utilisation
        if u != u or u in (float("inf"), float("-inf")):
            return "not defined"
        for places in range(3, 13):
            text = f"{u:.{places}f}"
            if (float(text) <= 1) == (u <= 1) and (float(text) != 1 or u == 1):
                return text
        return f"{u:.12f}"


def check_margin(value: float, limit: float, relation: str, unit: str) -> float:
    """Distance from *value* to *limit*, positive when ``value relation limit`` holds.

    In percent of the limit; for a value that is itself a percentage (``unit ==
    "percent"``, e.g. a speed separation), in percentage points, so that a margin is
    never a percent of a percent.
    """
    gap = (limit - value) if relation in ("<=", "<") else (value - limit)
    return gap if unit == "percent" else gap / abs(limit) * 100


@dataclass(frozen=True)
class IndependentCheck:
    """A derived response's peak beside a numerical integration of the same equation (a numbered step).

    ``comparison`` is a :class:`calckit.engine.crosscheck.PeakComparison`; the two peaks
    are shown in ``unit``; the verdict is a :class:`Check` on the sheet as well.
    """

    name: str
    title: str
    symbol: str  # LaTeX of the coordinate, e.g. x
    unit: str
    derived_shown: str
    integrated_shown: str
    comparison: Any

    @property
    def agrees(self) -> bool:
        """Whether the peaks agree within the tolerance."""
        return self.comparison.agrees

    @property
    def line(self) -> str:
        """The check in one line of text."""
        c = self.comparison
        verdict = "agree" if c.agrees else "DISAGREE"
        return (
            f"largest |{self.name}| derived {self.derived_shown}, by numerical integration "
            f"{self.integrated_shown}: relative difference {c.agreement:.2g}, tolerance {c.tolerance:g}; the two "
            f"routes {verdict}"
        )


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
