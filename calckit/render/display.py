r"""One display pipeline: LaTeX, Markdown, HTML with MathML, and plain text.

Every displayable object (a :class:`~calckit.engine.derivation.Derivation`, a
:class:`~calckit.engine.response.Response`, a single :class:`~calckit.engine.steps.Step`, a
:class:`~calckit.render.numbers.Substitution`) goes through the same
formatter, :func:`calckit.render.latex.step_rows`, and comes out in four
spellings with the same numbering and order:

* :func:`latex_document` (``text/latex``): each step's number, title and plain
  sentence as text, its formula as a ``$$ ... $$`` block. JupyterLab and the
  classic notebook typeset the blocks and show the text around them.
* :func:`markdown_document` (``text/markdown``): the same with the title in bold.
* :func:`html_fragment` (``text/html`` and exported sheets): ``<section>`` per
  step, MathML from :func:`calckit.render.mathml.latex_to_mathml`; no script,
  no address of anything outside the file.
* :func:`plain_text` (``text/plain``, ``print``): sympy's ``sstr`` spelling.

The ``derivation_*`` and ``step_*`` names are what the objects' ``_repr_*_``
methods call. :func:`show` wraps an object with a level of detail and extra
symbol names for the notebook.

Examples
--------
>>> import sympy as sp
>>> from calckit import LinearODE
>>> t = sp.Symbol("t")
>>> der = LinearODE([1, 0, 4]).particular(sp.cos(2 * t), t=t)
>>> print(derivation_text(der, level="summary"))
1. Equation of motion
   The equation to solve: a linear operator with constant coefficients on the left, the
   forcing on the right.
     x'' + 4*x = f(t)
          f(t) = cos(2*t)
(Steps 2 to 9 are shown at the full level.)
10. Particular solution
   The solved coefficients put back into the trial form give the particular solution.
     x_p(t) = t*sin(2*t)/4
11. Check by substitution
   Substituting the particular solution back into the equation leaves a residual of
   exactly zero, so the solution is verified.
     x_p'' + 4*x_p - f(t) = 0    (verified)
"""

from __future__ import annotations

import re
import textwrap
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import sympy as sp

from calckit.engine.steps import CoefficientEquationsStep, Step
from calckit.errors import SheetError
from calckit.render.latex import (
    Notation,
    Row,
    Tex,
    check_level,
    expr_latex,
    expr_text,
    notation,
    rows_latex,
    rows_text,
    step_rows,
    steps_at,
)
from calckit.render.page import Html, math_block, math_inline, prose, prose_parts, prose_text
from calckit.render.step_units import motion_units, step_units
from calckit.render.tex import _derivative

__all__ = [
    "Block",
    "blocks",
    "latex_document",
    "markdown_document",
    "html_fragment",
    "plain_text",
    "derivation_latex_document",
    "derivation_markdown",
    "derivation_html",
    "derivation_text",
    "step_latex_document",
    "step_markdown",
    "step_html",
    "step_text",
    "Shown",
    "show",
]

_MATHML_NS = re.compile(r'\s+xmlns="http://www\.w3\.org/1998/Math/MathML"')


@dataclass(frozen=True)
class Block:
    """One displayed item: a numbered step, or an unnumbered formula or note.

    ``number`` is the step's place in the full derivation (None for a formula
    shown alone); ``rows`` is the formula, printed by each output.
    """

    number: int | None
    title: str
    sentence: str
    rows: tuple[Row, ...]
    brace: bool = False
    role: str = "step"  # "step", "formula" (shown alone) or "note" (after the steps)

    @property
    def latex(self) -> str:
        """The formula in LaTeX, without delimiters."""
        return rows_latex(self.rows, brace=self.brace)

    @property
    def heading(self) -> str:
        """``"3. Characteristic polynomial"``, or the title alone when unnumbered."""
        return f"{self.number}. {self.title}" if self.number is not None else self.title


def _sentence(text: str) -> str:
    text = " ".join(text.split())
    return text if not text or text[-1] in ".?!:" else text + "."


def _conditions(obj: Any) -> tuple:
    found = getattr(obj, "conditions", None)
    if found is None:
        found = getattr(getattr(obj, "particular", None), "conditions", ())
    return tuple(found or ())


def _conditions_block(obj: Any, nt: Notation) -> Block | None:
    conditions = _conditions(obj)
    if not conditions:
        return None
    shown = [(expr_latex(cond, nt.name_map), expr_text(cond)) for cond in conditions]
    pieces = (Tex(r",\quad ".join(latex for latex, _ in shown), ", ".join(text for _, text in shown)),)
    return Block(
        None,
        "Valid when",
        "The result holds for parameters that keep these quantities away from zero.",
        (Row((), pieces),),
        role="note",
    )


def blocks(
    obj: Any,
    level: str = "full",
    *,
    names: Mapping | None = None,
    derivatives: str = "auto",
    sig: int | None = None,
    units=None,
) -> tuple[Block, ...]:
    """What every output shows for *obj*, in order.

    Parameters
    ----------
    obj : Derivation, Response, Step, Substitution or anything with ``steps``
    level : str
        ``"full"`` (every step) or ``"summary"`` (equation, result, verification).
    names : mapping, optional
        Extra display names, symbol name -> LaTeX.
    derivatives : str
        ``"auto"``, ``"dots"`` or ``"primes"``.
    sig : int, optional
        Significant figures for the numbers of a derivation with numeric
        coefficients (a sheet passes its own, 4 by default); None shows them exact.
    units : mapping, "SI" or MotionUnits, optional
        The units of the derivation's numbers (``{"x": "m", "t": "s", "f": "N"}``): each
        step whose numbers carry a unit says them (see :mod:`calckit.render.step_units`).

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit import LinearODE
    >>> t = sp.Symbol("t")
    >>> [b.number for b in blocks(LinearODE([1, 1]).particular(t, t=t), "summary")]
    [1, None, 10, 11]
    """
    check_level(level)
    if hasattr(obj, "display_rows"):  # a formula shown alone, e.g. numbers put through
        nt = notation(names=names, derivatives=derivatives)
        return (Block(None, "", "", tuple(obj.display_rows(nt.name_map)), role="formula"),)
    if isinstance(obj, Step):
        nt = notation((obj,), names=names, derivatives=derivatives, sig=sig)
        return (Block(None, obj.title, _sentence(obj.explanation), step_rows(obj, nt), _braced(obj)),)
    steps = getattr(obj, "steps", None)
    if steps is None:
        raise SheetError(
            f"cannot display an object of type {type(obj).__name__}",
            where="calckit display",
            do="Pass a Derivation, a Response, a Step or a Substitution",
        )
    steps = tuple(steps)
    nt = notation(steps, names=names, derivatives=derivatives, sig=sig)
    motion = motion_units(units)
    out = []
    previous = 0
    for n, step in steps_at(steps, level):
        if n > previous + 1:  # say where the summary leaves steps out
            left_out = f"step {previous + 1}" if n == previous + 2 else f"steps {previous + 1} to {n - 1}"
            out.append(
                Block(None, f"({left_out.capitalize()} are shown at the full level.)", "", (), role="note")
            )
        sentence = _sentence(step.explanation)
        said = None
        if motion is not None:
            said = step_units(step, motion, steps, lambda j: _derivative(nt, j).latex)
        if said:
            sentence = f"{sentence} {said}".strip()
        out.append(Block(n, step.title, sentence, step_rows(step, nt), _braced(step)))
        previous = n
    trailer = _conditions_block(obj, nt)
    if trailer is not None:
        out.append(trailer)
    return tuple(out)


def _braced(step: Step) -> bool:
    return isinstance(step, CoefficientEquationsStep) and len(step.equations) > 1


# ------------------------------------------------------------------ the four spellings


def _latex_text(text: str) -> str:
    """Text placed around math in text/latex: inline ``$...$`` stays math, ``\\$`` a dollar,
    and a lone ``$`` is escaped so that it cannot start math."""
    return "".join(
        f"${piece}$" if is_math else piece.replace("$", r"\$") for is_math, piece in prose_parts(text)
    )


def latex_document(obj: Any, level: str = "full", **options) -> str:
    r"""The ``text/latex`` document: numbered text lines and ``$$`` blocks.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import HomogeneousStep
    >>> C1, t = sp.symbols("C_1 t")
    >>> print(latex_document(HomogeneousStep("Transient", "Free motion", C1 * sp.exp(-t), (C1,), "")))
    Transient. Free motion.
    $$x_{h}(t) = C_{1} e^{- t}$$
    """
    parts = []
    for block in blocks(obj, level, **options):
        head = block.heading
        if head and block.sentence:
            head = head if head[-1] in ".?!:" else head + "."
            parts.append(_latex_text(f"{head} {block.sentence}"))
        elif head:
            parts.append(_latex_text(head))
        if block.rows:
            parts.append(f"$${block.latex}$$")
    return "\n".join(parts)


_MD_SPECIAL = re.compile(r"([\\`*_{}\[\]<>#|$])")


def _md(text: str) -> str:
    """Markdown of sheet text: the prose escaped, each ``$...$`` kept as inline math."""
    return "".join(
        f"${piece}$" if is_math else _MD_SPECIAL.sub(r"\\\1", piece) for is_math, piece in prose_parts(text)
    )


def markdown_document(obj: Any, level: str = "full", **options) -> str:
    r"""The ``text/markdown`` document: bold numbered titles, sentences, ``$$`` blocks.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import HomogeneousStep
    >>> C1, t = sp.symbols("C_1 t")
    >>> print(markdown_document(HomogeneousStep("Transient", "Free motion", C1 * sp.exp(-t), (C1,), "")))
    **Transient.** Free motion.
    <BLANKLINE>
    $$x_{h}(t) = C_{1} e^{- t}$$
    """
    parts = []
    for block in blocks(obj, level, **options):
        head = block.heading
        if head:
            head = head if head[-1] in ".?!:" else head + "."
            parts.append(f"**{_md(head)}** {_md(block.sentence)}".rstrip())
        if block.rows:
            parts.append(f"$${block.latex}$$")
    return "\n\n".join(parts)


def _mathml(html: str) -> Html:
    """MathML inside HTML5 needs no namespace: drop it, so the file names no address."""
    return Html(_MATHML_NS.sub("", html))


def html_fragment(obj: Any, level: str = "full", **options) -> Html:
    """HTML of *obj*: one ``<section class="step">`` per step, formulas in MathML, no script.

    The fragment uses the classes of :data:`calckit.render.page.SHEET_CSS`
    (``step``, ``number``, ``math``) and needs no style to be read.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import HomogeneousStep
    >>> C1, t = sp.symbols("C_1 t")
    >>> html = html_fragment(HomogeneousStep("Transient", "Free motion", C1 * sp.exp(-t), (C1,), ""))
    >>> html.startswith('<div class="calckit-display">') and "<math" in html and "<script" not in html
    True
    """
    parts = ['<div class="calckit-display">']
    for block in blocks(obj, level, **options):
        math = _mathml(math_block(block.latex)) if block.rows else ""
        if block.role == "formula":
            parts.append(math)
        elif block.role == "note":
            if block.rows:
                inline = _mathml(math_inline(block.latex))
                parts.append(f'<p class="note"><strong>{prose(block.title)}:</strong> {inline}</p>')
            else:
                parts.append(f'<p class="note"><em>{prose(block.title)}</em></p>')
        else:
            number = "" if block.number is None else f'<span class="number">{block.number}</span> '
            data = "" if block.number is None else f' data-step="{block.number}"'
            tall = " tall" if 'class="math tall"' in math else ""  # a formula that may break across pages
            parts.append(
                f'<section class="step{tall}"{data}><h3>{number}{prose(block.title)}</h3>'
                f"<p>{prose(block.sentence)}</p>{math}</section>"
            )
    parts.append("</div>")
    return Html("\n".join(parts))


def plain_text(obj: Any, level: str = "full", *, width: int = 88, **options) -> str:
    """Readable plain text of *obj* for a terminal (sympy ``sstr`` spelling).

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import HomogeneousStep
    >>> C1, t = sp.symbols("C_1 t")
    >>> print(plain_text(HomogeneousStep("Transient", "Free motion", C1 * sp.exp(-t), (C1,), "")))
    Transient
       Free motion.
         x_h(t) = C_1*exp(-t)
    """
    lines = []
    for block in blocks(obj, level, **options):
        if block.role == "formula":
            lines.append(rows_text(block.rows))
            continue
        lines.append(prose_text(block.heading))
        if block.sentence:
            lines.append(
                textwrap.fill(
                    prose_text(block.sentence), width, initial_indent="   ", subsequent_indent="   "
                )
            )
        if block.rows:
            lines.append(rows_text(block.rows, indent="     "))
    return "\n".join(lines)


# ------------------------------------------------------------------ names the objects call


def derivation_latex_document(obj: Any, level: str = "full", **options) -> str:
    """``text/latex`` of a Derivation or Response (see :func:`latex_document`)."""
    return latex_document(obj, level, **options)


def derivation_markdown(obj: Any, level: str = "full", **options) -> str:
    """``text/markdown`` of a Derivation or Response (see :func:`markdown_document`)."""
    return markdown_document(obj, level, **options)


def derivation_html(obj: Any, level: str = "full", **options) -> Html:
    """HTML with MathML of a Derivation or Response (see :func:`html_fragment`)."""
    return html_fragment(obj, level, **options)


def derivation_text(obj: Any, level: str = "full", **options) -> str:
    """Plain text of a Derivation or Response (see :func:`plain_text`)."""
    return plain_text(obj, level, **options)


def step_latex_document(step: Step, **options) -> str:
    """``text/latex`` of one step."""
    return latex_document(step, **options)


def step_markdown(step: Step, **options) -> str:
    """``text/markdown`` of one step."""
    return markdown_document(step, **options)


def step_html(step: Step, **options) -> Html:
    """HTML with MathML of one step."""
    return html_fragment(step, **options)


def step_text(step: Step, **options) -> str:
    """Plain text of one step."""
    return plain_text(step, **options)


# ------------------------------------------------------------------ notebook wrapper


@dataclass(frozen=True)
class Shown:
    """An object with display options; Jupyter shows it through the same pipeline.

    Build it with :func:`show`.
    """

    obj: Any
    level: str = "full"
    names: tuple[tuple[str, str], ...] = ()
    derivatives: str = "auto"

    def _kw(self) -> dict:
        return {"names": dict(self.names), "derivatives": self.derivatives}

    def _repr_latex_(self) -> str:
        return latex_document(self.obj, self.level, **self._kw())

    def _repr_markdown_(self) -> str:
        return markdown_document(self.obj, self.level, **self._kw())

    def _repr_html_(self) -> str:
        return html_fragment(self.obj, self.level, **self._kw())

    def _repr_pretty_(self, printer, cycle: bool) -> None:
        printer.text(str(self))

    def __str__(self) -> str:
        return plain_text(self.obj, self.level, **self._kw())


def show(obj: Any, level: str = "full", *, names: Mapping | None = None, derivatives: str = "auto") -> Shown:
    r"""Show *obj* at a level of detail, with extra symbol names.

    Parameters
    ----------
    obj : Derivation, Response, Step or Substitution
    level : str
        ``"full"`` or ``"summary"``.
    names : mapping, optional
        Symbol name -> LaTeX, e.g. ``{"Fo": r"F_{o}"}``.
    derivatives : str
        ``"auto"`` (dots up to order 2), ``"dots"`` or ``"primes"``.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit import LinearODE
    >>> t, Fo = sp.symbols("t Fo")
    >>> shown = show(LinearODE([1, 2]).particular(Fo, t=t), "summary", names={"Fo": "F_{o}"})
    >>> "F_{o}" in shown._repr_latex_()
    True
    """
    blocks(obj, level, names=names, derivatives=derivatives)  # check the options now, not at display
    pairs = tuple((k.name if isinstance(k, sp.Symbol) else k, v) for k, v in (names or {}).items())
    return Shown(obj, level, pairs, derivatives)
