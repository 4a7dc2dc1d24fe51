"""LaTeX and plain-text pieces of formulas: symbol names, expressions, rows, the notation.

A formula is a few *rows*: an aligned left side, a right side starting with a
relation, and an optional note, each piece spelled twice (:class:`Tex`), once in
LaTeX and once in plain text. :func:`rows_latex` and :func:`rows_text` print rows;
:mod:`calckit.render.rows` turns each step record into rows.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import sympy as sp
from sympy.printing.conventions import split_super_sub
from sympy.printing.latex import translate

from calckit.engine.steps import (
    DerivativesStep,
    EquationStep,
    ForcingSplitStep,
    MatrixEquationStep,
    Step,
    TrialFormStep,
)
from calckit.errors import SheetError

__all__ = [
    "DERIVATIVE_STYLES",
    "EQ",
    "LEVELS",
    "NE",
    "SUMMARY_KINDS",
    "Notation",
    "Row",
    "Tex",
    "expr_latex",
    "expr_text",
    "notation",
    "rows_latex",
    "rows_text",
    "symbol_latex",
]

#: Levels of detail: the summary keeps the equation, the result and its check.
LEVELS = ("summary", "full")
#: Kinds of step shown at the summary level.
SUMMARY_KINDS = frozenset({"equation", "particular-solution", "verification", "total-response"})
#: How derivatives are written: dots up to order 2 and primes above ("auto"), or always one way.
DERIVATIVE_STYLES = ("auto", "dots", "primes")


@dataclass(frozen=True)
class Tex:
    """One piece of a formula, spelled in LaTeX and in plain text.

    Examples
    --------
    >>> print(Tex(r"\\omega_{n}", "omega_n").latex)
    \\omega_{n}
    """

    latex: str
    text: str


@dataclass(frozen=True)
class Row:
    """One row of a step's formula: ``lhs`` then ``rhs`` (starting with a relation), then a note.

    In LaTeX the rows are aligned at the start of ``rhs``; the note sits in a
    column of its own.
    """

    lhs: tuple[Tex, ...]
    rhs: tuple[Tex, ...]
    note: tuple[Tex, ...] = ()


@dataclass(frozen=True)
class Notation:
    """What the formulas of a derivation need to know beyond one step.

    Build it with :func:`notation`, which reads the steps of a derivation.

    Attributes
    ----------
    names : tuple of (str, str)
        Symbol name -> LaTeX, chosen by the user.
    derivatives : str
        One of :data:`DERIVATIVE_STYLES`.
    unknown : str
        Name of the dependent variable (``"x"``).
    order : int
        Order of the equation.
    coefficients : tuple, optional
        ``a_n, ..., a_0``; when known, the operator is written out.
    groups : int
        Number of exponent groups; with one group its part is ``x_p``.
    unknowns : tuple of (int, tuple of Symbol)
        The unknown coefficients of each group's trial form.
    t : sympy.Symbol
        The time variable.
    sig : int, optional
        Significant figures for the numbers of a derivation with numeric coefficients
        (None: exact). Set by :func:`notation` only when the coefficients are numbers.
    """

    names: tuple[tuple[str, str], ...] = ()
    derivatives: str = "auto"
    unknown: str = "x"
    order: int = 2
    coefficients: tuple[sp.Expr, ...] | None = None
    groups: int = 1
    unknowns: tuple[tuple[int, tuple[sp.Symbol, ...]], ...] = ()
    t: sp.Symbol = field(default_factory=lambda: sp.Symbol("t", real=True))
    sig: int | None = None

    @property
    def name_map(self) -> dict[str, str]:
        """The user's names as a dictionary."""
        return dict(self.names)

    @property
    def dots(self) -> bool:
        """True when derivatives are written with dots."""
        return self.derivatives == "dots" or (self.derivatives == "auto" and self.order <= 2)

    def unknowns_of(self, group: int) -> tuple[sp.Symbol, ...]:
        """The unknown coefficients of one group, or () when not known."""
        return dict(self.unknowns).get(group, ())


def _check_names(names) -> tuple[tuple[str, str], ...]:
    if names is None:
        return ()
    if not isinstance(names, Mapping):
        raise SheetError(
            f"expected a mapping of symbol names to LaTeX, got {type(names).__name__}",
            where="names",
            do='Pass a dict such as {"omega_n": r"\\omega_{n}"}',
        )
    out = []
    for key, value in names.items():
        name = key.name if isinstance(key, sp.Symbol) else key
        if not isinstance(name, str) or not isinstance(value, str):
            raise SheetError(
                f"the entry {key!r}: {value!r} is not a name and a LaTeX string",
                where="names",
                do='Map symbol names (str) to LaTeX (str), e.g. {"Fo": r"F_{o}"}',
            )
        out.append((name, value))
    return tuple(out)


def notation(
    steps: Iterable[Step] = (),
    *,
    names: Mapping | None = None,
    derivatives: str = "auto",
    sig: int | None = None,
) -> Notation:
    """Read what the formulas need from the steps of a derivation.

    Parameters
    ----------
    steps : iterable of Step
        The steps of a derivation or response (any subset; missing facts keep defaults).
    names : mapping, optional
        Extra display names: symbol name (or Symbol) -> LaTeX.
    derivatives : str
        ``"auto"`` (dots up to order 2, primes above), ``"dots"`` or ``"primes"``.
    sig : int, optional
        Show the numbers of a derivation whose coefficients are all numbers in
        decimals to this many significant figures; a symbolic derivation (or
        None) stays exact. Only what is shown changes: the engine's values are exact.

    Examples
    --------
    >>> notation(names={"Fo": "F_{o}"}).name_map
    {'Fo': 'F_{o}'}
    """
    if derivatives not in DERIVATIVE_STYLES:
        raise SheetError(
            f'unknown derivative style "{derivatives}"',
            where="derivatives",
            do='Use "auto", "dots" or "primes"',
        )
    if sig is not None and (isinstance(sig, bool) or not isinstance(sig, int) or not 1 <= sig <= 15):
        raise SheetError(
            f"cannot show {sig!r} significant figures", where="sig", do="Give a whole number from 1 to 15"
        )
    fields: dict = {"names": _check_names(names), "derivatives": derivatives}
    unknowns = []
    numeric = sig is not None
    for step in steps:
        numeric = numeric and _numeric_coefficients(step)
        if isinstance(step, EquationStep):
            fields.update(
                unknown=step.unknown.name,
                order=len(step.coefficients) - 1,
                coefficients=tuple(step.coefficients),
                t=step.t,
            )
        elif isinstance(step, ForcingSplitStep):
            fields["groups"] = len(step.groups)
        elif isinstance(step, TrialFormStep):
            unknowns.append((step.group, tuple(step.unknowns)))
        elif isinstance(step, DerivativesStep) and "order" not in fields:
            fields["order"] = len(step.derivatives)
    return Notation(unknowns=tuple(unknowns), sig=sig if numeric else None, **fields)


def _numeric_coefficients(step: Step) -> bool:
    """False when the step states an equation whose coefficients hold a symbol."""
    if isinstance(step, EquationStep):
        return all(sp.sympify(c).is_number for c in step.coefficients)
    if isinstance(step, MatrixEquationStep):
        return all(
            sp.sympify(e).is_number for m in (step.mass, step.damping, step.stiffness) for e in sp.Matrix(m)
        )
    return True


# ------------------------------------------------------------------ symbols

_WORD = re.compile(r"[A-Za-z]{2,}")


@functools.lru_cache(maxsize=512)
def _name_latex(name: str) -> str:
    if any(ch in name for ch in "{}\\^"):
        return sp.latex(sp.Symbol(name))  # already LaTeX, or sympy's own reading of it
    base, sups, subs = split_super_sub(name)

    def part(text: str) -> str:
        translated = translate(text)
        if translated == text and _WORD.fullmatch(text):
            return rf"\mathrm{{{text}}}"
        return translated

    out = translate(base)
    if subs:
        out += "_{" + ",".join(part(s) for s in subs) + "}"
    if sups:
        out += "^{" + ",".join(part(s) for s in sups) + "}"
    return out


def symbol_latex(name: str | sp.Symbol, names: Mapping[str, str] | None = None) -> str:
    r"""LaTeX of a symbol's name.

    Greek names become letters, ``_`` starts a subscript (a word subscript is
    upright), digits at the end are a subscript; *names* overrides.

    Examples
    --------
    >>> symbol_latex("omega_n"), symbol_latex("F_max"), symbol_latex("zeta")
    ('\\omega_{n}', 'F_{\\mathrm{max}}', '\\zeta')
    >>> symbol_latex("Fo", {"Fo": "F_{o}"})
    'F_{o}'
    """
    name = name.name if isinstance(name, sp.Symbol) else name
    if names and name in names:
        return names[name]
    return _name_latex(name)


def expr_latex(expr, names: Mapping[str, str] | None = None, **settings) -> str:
    r"""LaTeX of a sympy expression with readable symbol names.

    Examples
    --------
    >>> import sympy as sp
    >>> expr_latex(sp.sqrt(sp.Symbol("k") / sp.Symbol("m_u")))
    '\\sqrt{\\frac{k}{m_{u}}}'
    """
    expr = sp.sympify(expr)
    symbols = {s: symbol_latex(s.name, names) for s in expr.free_symbols if isinstance(s, sp.Symbol)}
    # sympy writes atan2 as "atan" with a subscript 2; an engineer reads the function atan2
    return sp.latex(expr, symbol_names=symbols, **settings).replace(
        r"\operatorname{atan}_{2}", r"\operatorname{atan2}"
    )


def expr_text(expr) -> str:
    """Plain text of a sympy expression (``sympy.sstr``), relations written ``=``, ``!=``.

    Examples
    --------
    >>> import sympy as sp
    >>> expr_text(sp.Ne(sp.Symbol("k") - 4, 0))
    'k - 4 != 0'
    """
    expr = sp.sympify(expr)
    if isinstance(expr, sp.Ne):
        return f"{sp.sstr(expr.lhs)} != {sp.sstr(expr.rhs)}"
    if isinstance(expr, sp.Eq):
        return f"{sp.sstr(expr.lhs)} = {sp.sstr(expr.rhs)}"
    return sp.sstr(expr)


# ------------------------------------------------------------------ pieces

EQ = Tex("=", "=")
NE = Tex(r"\neq", "!=")


def _e(expr, nt: Notation) -> Tex:
    if nt.sig is not None:
        expr = shown_decimals(expr, nt.sig)
    return Tex(expr_latex(expr, nt.name_map), expr_text(expr))


#: integers with more digits than this are shown in decimals with a power of ten
_LONG_INTEGER = 7


def shown_decimals(expr, sig: int = 4):
    """*expr* as shown on a sheet: every number in decimals to *sig* significant figures.

    Whole numbers up to seven digits and integer powers stay as they are; other
    numbers, and constant parts such as ``16 sqrt(39) / 5`` or ``148 pi / 3``, become
    decimals. Only the display changes; use the exact expression for arithmetic.

    Examples
    --------
    >>> import sympy as sp
    >>> t = sp.Symbol("t")
    >>> shown_decimals(16 * sp.sqrt(39) / 5 * t + sp.cos(3 * t) / 7, 4)
    19.98*t + 0.1429*cos(3*t)
    """
    if isinstance(expr, sp.MatrixBase):
        return expr.applyfunc(lambda e: shown_decimals(e, sig))
    if isinstance(expr, (sp.Eq, sp.Ne)):
        return type(expr)(shown_decimals(expr.lhs, sig), shown_decimals(expr.rhs, sig), evaluate=False)
    expr = sp.sympify(expr)
    if not isinstance(expr, sp.Expr):
        return expr
    return _decimals(expr, sig)


def _decimals(expr: sp.Expr, sig: int) -> sp.Expr:
    if expr.is_number:
        if expr.is_Integer and len(str(abs(int(expr)))) <= _LONG_INTEGER:
            return expr
        value = sp.N(expr, sig + 3)
        return value.xreplace({f: sp.Float(f, sig) for f in value.atoms(sp.Float)})
    if expr.is_Atom:
        return expr
    if isinstance(expr, sp.Pow) and expr.exp.is_Integer:
        return sp.Pow(_decimals(expr.base, sig), expr.exp)
    return expr.func(*(_decimals(a, sig) for a in expr.args))


def _width(expr) -> int:
    """Rough width of *expr* as typeset, in characters: a fraction is as wide as the wider
    of its numerator and denominator, an exponent adds little."""
    if isinstance(expr, sp.Add):
        return sum(_width(a) for a in expr.args) + 3 * (len(expr.args) - 1)
    if isinstance(expr, sp.Mul):
        num, den = sp.fraction(expr)
        if den != 1:
            return max(_width(num), _width(den)) + 1
        return sum(_width(a) for a in expr.args) + len(expr.args) - 1
    if isinstance(expr, sp.Pow):
        return _width(expr.base) + 2 + (2 if isinstance(expr.base, (sp.Add, sp.Mul)) else 0)
    if isinstance(expr, sp.Function):
        return len(type(expr).__name__) + sum(_width(a) for a in expr.args) + 2
    if isinstance(expr, sp.MatrixBase):
        return max((sum(_width(e) + 2 for e in expr.row(i)) for i in range(expr.rows)), default=0) + 2
    if isinstance(expr, sp.Symbol):
        return len(symbol_latex(expr.name)) if len(expr.name) < 3 else max(1, len(expr.name) // 2)
    if isinstance(expr, sp.Float):
        return len(sp.latex(expr).replace(r"\cdot ", "").replace("{", "").replace("}", "").replace(" ", ""))
    return len(sp.sstr(expr))


def _words(text: str) -> Tex:
    safe = re.sub(r"([&%#_{}$])", r"\\\1", text)
    return Tex(rf"\text{{{safe}}}", text.strip())


def _var(nt: Notation, sub: str | None = None) -> Tex:
    """The dependent variable, with a subscript: ``x``, ``x_p``, ``x_1``."""
    base = symbol_latex(nt.unknown, nt.name_map)
    if sub is None:
        return Tex(base, nt.unknown)
    return Tex(f"{base}_{{{sub}}}", f"{nt.unknown}_{sub}")


def _derivative(nt: Notation, j: int, sub: str | None = None, arg: str = "") -> Tex:
    """The j-th derivative of the variable: dots, primes, or ``^{(j)}``."""
    var = _var(nt, sub)
    base = symbol_latex(nt.unknown, nt.name_map)
    sub_latex = "" if sub is None else f"_{{{sub}}}"
    if j == 0:
        latex, text = var.latex, var.text
    elif nt.dots and j <= 2:
        accent = r"\dot" if j == 1 else r"\ddot"
        latex, text = f"{accent}{{{base}}}{sub_latex}", var.text + "'" * j
    elif j <= 3:
        latex, text = var.latex + "'" * j, var.text + "'" * j
    else:
        latex, text = f"{var.latex}^{{({j})}}", f"{var.text}^({j})"
    if arg:
        latex, text = f"{latex}({arg})", f"{text}({arg})"
    return Tex(latex, text)


def _group_sub(nt: Notation, group: int) -> str:
    return str(group) if nt.groups > 1 else "p"


def _signed(parts: Sequence[tuple[bool, Tex]]) -> Tex:
    """Join (negative, magnitude) pairs with + and - signs."""
    if not parts:
        return Tex("0", "0")
    latex, text = [], []
    for i, (negative, body) in enumerate(parts):
        if i == 0:
            latex.append(("-" if negative else "") + body.latex)
            text.append(("-" if negative else "") + body.text)
        else:
            latex.append((" - " if negative else " + ") + body.latex)
            text.append((" - " if negative else " + ") + body.text)
    return Tex("".join(latex), "".join(text))


def negative_sum(number) -> bool:
    """Whether a numeric sum such as ``4000000 - 12800000 pi^2/9`` is negative, though written with
    a plus first (so that it is shown with a minus, not as ``+ -2.525e5``)."""
    if not (isinstance(number, sp.Expr) and number.is_number and number.is_Add):
        return False
    try:
        return bool(number.evalf(30) < 0)
    except TypeError:  # complex
        return False


def _term(coef, what: Tex | None, nt: Notation) -> tuple[bool, Tex] | None:
    """``coef * what`` as (negative, magnitude); None when coef is 0."""
    coef = sp.sympify(coef)
    if coef == 0:
        return None
    negative = (coef.could_extract_minus_sign() and not coef.is_Add) or negative_sum(coef)
    size = -coef if negative else coef
    if what is None:
        return negative, _e(size, nt)
    if size == 1:
        return negative, what
    body = _e(size, nt)
    if size.is_Add:
        return negative, Tex(rf"\left({body.latex}\right) {what.latex}", f"({body.text})*{what.text}")
    return negative, Tex(f"{body.latex} {what.latex}", f"{body.text}*{what.text}")


def _combination(pairs: Iterable[tuple[sp.Expr, Tex | None]], nt: Notation) -> Tex:
    """A linear combination ``sum coef * what`` with tidy signs."""
    return _signed([p for p in (_term(c, w, nt) for c, w in pairs) if p is not None])


def _operator(nt: Notation, sub: str | None = None) -> Tex:
    """``m \\ddot{x} + c \\dot{x} + k x`` on the variable (with subscript)."""
    if nt.coefficients is None:
        var = _var(nt, sub)
        return Tex(rf"L\left[{var.latex}\right]", f"L[{var.text}]")
    n = len(nt.coefficients) - 1
    return _combination(((c, _derivative(nt, n - i, sub)) for i, c in enumerate(nt.coefficients)), nt)


def _exponent(group, nt: Notation) -> Tex:
    """``a \\pm i b`` of a group (``a`` alone when it does not oscillate)."""
    if not group.harmonic:
        return _e(group.decay, nt)
    b = group.frequency * sp.I
    b_latex, b_text = expr_latex(b, nt.name_map), expr_text(b)
    if group.decay == 0:
        return Tex(rf"\pm {b_latex}", f"+/- {b_text}")
    a = _e(group.decay, nt)
    return Tex(rf"{a.latex} \pm {b_latex}", f"{a.text} +/- {b_text}")


def _call(name: Tex, arg, nt: Notation) -> Tex:
    inner = _e(arg, nt)
    return Tex(rf"{name.latex}\left({inner.latex}\right)", f"{name.text}({inner.text})")


# ------------------------------------------------------------------ steps


def rows_latex(rows: Sequence[Row], *, brace: bool = False) -> str:
    r"""LaTeX of a step's rows: one line, or an ``aligned`` block.

    Parameters
    ----------
    rows : sequence of Row
    brace : bool
        Put a left brace before the block (a system of equations).

    Examples
    --------
    >>> rows_latex([Row((Tex("a", "a"),), (EQ, Tex("1", "1")))])
    'a = 1'
    """
    if not rows:
        return ""

    def join(pieces: tuple[Tex, ...]) -> str:
        return " ".join(p.latex for p in pieces)

    if len(rows) == 1 and not brace:
        row = rows[0]
        line = " ".join(s for s in (join(row.lhs), join(row.rhs)) if s)
        if row.note:
            line += (r" \qquad " if line else "") + join(row.note)
        return line
    lines = []
    for row in rows:
        if not row.lhs and not row.rhs:  # a note alone sits in the formula's column, adding no width
            lines.append(f"&{join(row.note)}")
            continue
        line = f"{join(row.lhs)} &{join(row.rhs)}"
        if row.note:
            line += r" && \qquad " + join(row.note)
        lines.append(line.strip())
    block = r"\begin{aligned}" + r" \\ ".join(lines) + r"\end{aligned}"
    return rf"\left\{{ {block} \right." if brace else block


def rows_text(rows: Sequence[Row], *, indent: str = "") -> str:
    """Plain text of a step's rows, aligned at the relation.

    Examples
    --------
    >>> rows = [Row((Tex("a", "a"),), (EQ, Tex("1", "1"))), Row((Tex("bb", "bb"),), (EQ, Tex("2", "2")))]
    >>> print(rows_text(rows))
     a = 1
    bb = 2
    """
    width = max((len(" ".join(p.text for p in r.lhs)) for r in rows), default=0)
    lines = []
    for row in rows:
        lhs = " ".join(p.text for p in row.lhs)
        line = f"{lhs:>{width}} " + " ".join(p.text for p in row.rhs) if row.rhs else lhs
        if row.note:
            note = " ".join(p.text for p in row.note)
            line = f"{line.rstrip()}    ({note})" if line.strip() else note
        lines.append(indent + line.rstrip())
    return "\n".join(lines)
