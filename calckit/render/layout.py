"""Formulas too wide for a printed line, broken into aligned rows of whole terms.

A printed sheet must never lose a factor at the margin, so nothing here relies on
scrolling or shrinking. A formula wider than :data:`LINE_TEXT` is written as:

* a sum broken at ``+`` and ``-`` between whole terms (never inside a parenthesis
  or a fraction), the rows aligned at the equals sign; a term too wide on its
  own is multiplied out first;
* when a term still does not fit, the sum collected by its functions of time,
  ``x_h(t) = X_1 e^{-a t} cos(w t) + X_2 e^{-a t} sin(w t)``, with each named
  coefficient ``X_j`` on rows of its own, and a coefficient that is a long
  fraction as ``X_j = N_j / D_j`` with its numerator and denominator broken;
* a matrix or vector too wide for the line entry by entry (``[x_p(t)]_1 = ...``).

Widths are counted in typeset characters (:func:`tex_width`); the budget was set
by printing every demo sheet to A4 and Letter with Chromium and measuring each
``<math>`` box against the printable width (``tests/test_print_fit.py``).
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import sympy as sp

from calckit.render.tex import EQ, Notation, Row, Tex, _e, _width, negative_sum, shown_decimals

__all__ = ["LINE_TEXT", "chunk_signed", "equation_rows", "long_rows", "tex_width"]

#: typeset characters that fit one printed line of a step's formula (A4 and Letter, 10 pt)
LINE_TEXT = 54
#: width kept free for a name in the left column beside rows written in the formula's column
_BESIDE = 16
#: most terms multiplied out or collected before giving up on breaking a formula
_MAX_TERMS = 400

_NAMES = re.compile(r"[A-Za-z]{2,}")
_POWER = re.compile(r"\*\*\(?-?[\d.]+\)?")


def tex_width(piece: Tex | Sequence[Tex]) -> int:
    """Rough typeset width of pieces, in characters, read from their plain text.

    A power counts as one character, a name such as ``omega`` or ``sin`` as one or
    three, multiplication signs as nothing.

    Examples
    --------
    >>> tex_width(Tex("", "omega_n**2*x"))
    5
    """
    pieces = (piece,) if isinstance(piece, Tex) else tuple(piece)
    total = 0
    for p in pieces:
        text = _POWER.sub("^", p.text).replace("*", "")
        text = _NAMES.sub(lambda m: "xxx" if m.group(0) in ("sin", "cos", "exp", "tan", "log") else "x", text)
        total += len(text) + 1
    return max(total - 1, 0)


def _shown(expr, nt: Notation):
    return shown_decimals(expr, nt.sig) if nt.sig is not None else expr


def _fits(expr, nt: Notation, room: int) -> bool:
    return _width(_shown(expr, nt)) <= room


def _terms(expr: sp.Expr, nt: Notation, room: int) -> list[sp.Expr] | None:
    """The whole terms of *expr*, each narrower than *room*, or None."""
    out: list[sp.Expr] = []
    for term in sp.Add.make_args(expr):
        if _fits(term, nt, room):
            out.append(term)
            continue
        expanded = sp.expand_mul(term, deep=False)
        parts = sp.Add.make_args(expanded)
        if len(parts) < 2 or len(parts) > _MAX_TERMS or not all(_fits(p, nt, room) for p in parts):
            return None
        out.extend(parts)
    return out


def chunk_signed(parts: Sequence[tuple[bool, Tex]], room: int, first: bool = True) -> list[Tex]:
    """Join (negative, magnitude) pieces with their signs into lines no wider than *room*.

    Every line after the first starts with its sign, as a continued sum does.
    """
    lines: list[Tex] = []
    latex: list[str] = []
    text: list[str] = []
    width = 0
    for negative, body in parts:
        w = tex_width(body) + 3
        if latex and width + w > room:
            lines.append(Tex(" ".join(latex), " ".join(text)))
            latex, text, width = [], [], 0
        lead = not lines and not latex and first
        sign = "-" if negative else ("" if lead else "+")
        latex.append(f"{sign} {body.latex}".strip() if sign else body.latex)
        text.append(f"{sign} {body.text}".strip() if sign else body.text)
        width += w
    if latex or not lines:
        lines.append(Tex(" ".join(latex) or "0", " ".join(text) or "0"))
    return lines


def _negative(term: sp.Expr) -> bool:
    """Whether *term* is shown with a minus: its sign, or that of its numeric factor when that is a sum."""
    number = term.as_independent(*term.free_symbols, as_Add=False)[0] if term.free_symbols else term
    return term.could_extract_minus_sign() or negative_sum(number)


def _signed_terms(terms: Sequence[sp.Expr], nt: Notation) -> list[tuple[bool, Tex]]:
    out = []
    for term in terms:
        negative = _negative(term)
        out.append((negative, _e(-term if negative else term, nt)))
    return out


def _sum_rows(
    lhs: tuple[Tex, ...], lines: list[Tex], relation: Tex, note: tuple[Tex, ...]
) -> tuple[Row, ...]:
    rows = [Row(lhs, (relation, lines[0]), note)]
    rows.extend(Row((), (line,)) for line in lines[1:])
    return tuple(rows)


def long_rows(
    lhs: tuple[Tex, ...],
    expr,
    nt: Notation,
    *,
    relation: Tex = EQ,
    note: tuple[Tex, ...] = (),
    _depth: int = 0,
) -> tuple[Row, ...]:
    """``lhs = expr`` on one row, or on aligned rows of whole terms when it is too wide.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.render.tex import rows_text
    >>> t = sp.Symbol("t")
    >>> expr = sum(sp.Symbol(f"a_{i}") * sp.cos(i * t) for i in range(1, 9))
    >>> print(rows_text(long_rows((Tex("x(t)", "x(t)"),), expr, Notation())))
    x(t) = a_1*cos(t) + a_2*cos(2*t) + a_3*cos(3*t)
         + a_4*cos(4*t) + a_5*cos(5*t) + a_6*cos(6*t)
         + a_7*cos(7*t) + a_8*cos(8*t)
    """
    if isinstance(expr, sp.MatrixBase):
        return _matrix_rows(lhs, expr, nt, relation, note)
    expr = sp.sympify(expr)
    room = max(LINE_TEXT - tex_width(lhs) - 2, LINE_TEXT // 2)
    if isinstance(expr, sp.Piecewise) and not _fits(expr, nt, room):
        # a piecewise result too wide for one brace: each piece on rows of its own, its interval beside it
        return tuple(
            row
            for piece, condition in expr.args
            for row in long_rows(lhs, piece, nt, relation=relation, note=(_condition(condition, nt),), _depth=_depth)
        )
    if note and not _fits(expr, nt, room - tex_width(note) - 3):
        # the note on a row of its own above the formula, so that it adds no width
        return (Row((), (), note), *long_rows(lhs, expr, nt, relation=relation, _depth=_depth))
    if _fits(expr, nt, room):
        return (Row(lhs, (relation, _e(expr, nt)), note),)
    terms = _terms(expr, nt, room)
    if terms is not None and len(terms) > 1:
        return _sum_rows(lhs, chunk_signed(_signed_terms(terms, nt), room), relation, note)
    if _depth < 2:
        named = _named_rows(lhs, expr, nt, relation, note, _depth)
        if named is not None:
            return named
    return (Row(lhs, (relation, _e(expr, nt)), note),)


def _condition(condition, nt: Notation) -> Tex:
    """``for t < 0.015`` (to the sheet's figures), or ``otherwise``."""
    if condition is sp.true:
        return Tex(r"\text{otherwise}", "otherwise")
    numbers = condition.atoms(sp.Number)
    shown = condition.xreplace({n: shown_decimals(n, nt.sig) for n in numbers}) if nt.sig else condition
    return Tex(rf"\text{{for }} {sp.latex(shown)}", f"for {sp.sstr(shown)}")


def _named_rows(lhs, expr, nt: Notation, relation, note, depth: int) -> tuple[Row, ...] | None:
    """*expr* collected by its functions of time with named coefficients, or a long fraction
    as a named numerator over a named denominator; None when neither helps."""
    t = nt.t
    stem = "X" if depth == 0 else f"X{depth}"
    if expr.has(t):
        expanded = sp.expand_mul(expr, deep=False)
        collected: dict[sp.Expr, sp.Expr] = {}
        for term in sp.Add.make_args(expanded)[:_MAX_TERMS]:
            coef, part = term.as_independent(t, as_Add=False)
            collected[part] = collected.get(part, sp.S.Zero) + coef
        if len(sp.Add.make_args(expanded)) > _MAX_TERMS or not all(
            c.free_symbols or c.is_number for c in collected
        ):
            return None
        names = [sp.Symbol(f"{stem}_{j}") for j in range(1, len(collected) + 1)]
        body = sum((n * part for n, part in zip(names, collected, strict=True)), sp.S.Zero)
        room = max(LINE_TEXT - tex_width(lhs) - 2, LINE_TEXT // 2)
        if not _fits(body, nt, room):
            terms = _terms(body, nt, room)
            if terms is None:
                return None
            rows = list(_sum_rows(lhs, chunk_signed(_signed_terms(terms, nt), room), relation, note))
        else:
            rows = [Row(lhs, (relation, _e(body, nt)), note)]
        where = (Tex(r"\text{where}", "where"),)
        for j, (name, coef) in enumerate(zip(names, collected.values(), strict=True)):
            rows.extend(
                _coefficient_rows(_e(name, nt), sp.together(coef), nt, where if j == 0 else (), depth)
            )
        return tuple(rows)
    return None


def _coefficient_rows(name: Tex, coef: sp.Expr, nt: Notation, note, depth: int) -> list[Row]:
    room = max(LINE_TEXT - tex_width(name) - 2, LINE_TEXT // 2)
    if _fits(coef, nt, room):
        return [Row((name,), (EQ, _e(coef, nt)), note)]
    num, den = sp.fraction(coef)
    if den == 1:
        return list(long_rows((name,), coef, nt, note=note, _depth=depth + 1))
    sub = name.latex
    n_tex = Tex(f"N_{{{sub}}}", f"N_({name.text})")
    d_tex = Tex(f"D_{{{sub}}}", f"D_({name.text})")
    rows = [
        Row(
            (name,),
            (EQ, Tex(rf"\frac{{{n_tex.latex}}}{{{d_tex.latex}}}", f"{n_tex.text}/{d_tex.text}")),
            note,
        )
    ]
    rows.extend(long_rows((n_tex,), sp.expand_mul(num, deep=False), nt, _depth=depth + 1))
    rows.extend(long_rows((d_tex,), den, nt, _depth=depth + 1))
    return rows


def _matrix_rows(lhs, matrix: sp.MatrixBase, nt: Notation, relation, note) -> tuple[Row, ...]:
    """A matrix on one row when it fits, else entry by entry: ``[lhs]_i = ...``."""
    room = max(LINE_TEXT - tex_width(lhs) - 2, LINE_TEXT // 2)
    shown = _shown(matrix, nt)
    widest_row = max((sum(_width(e) + 2 for e in shown.row(i)) for i in range(shown.rows)), default=0)
    if widest_row <= room:
        return (Row(lhs, (relation, _e(matrix, nt)), note),)
    base = Tex(" ".join(p.latex for p in lhs), " ".join(p.text for p in lhs))
    vector = 1 in matrix.shape
    rows: list[Row] = []
    for i in range(matrix.rows):
        for j in range(matrix.cols):
            index = str(i + j + 1) if vector else f"{i + 1}{j + 1}"
            entry = Tex(rf"\left[{base.latex}\right]_{{{index}}}", f"[{base.text}]_{index}")
            rows.extend(
                long_rows((entry,), matrix[i, j], nt, relation=relation, note=note if not rows else ())
            )
    return tuple(rows)


def equation_rows(lhs, rhs, nt: Notation, note: tuple[Tex, ...] = ()) -> tuple[Row, ...]:
    """``lhs = rhs`` for two expressions (or matrices), broken when too wide.

    A long left side is broken into whole terms and the last of its rows carries
    ``= rhs``; matrices too wide for the line are written row by row.
    """
    if isinstance(lhs, sp.MatrixBase) and isinstance(rhs, sp.MatrixBase) and lhs.shape == rhs.shape:
        room = LINE_TEXT
        shown_l, shown_r = _shown(lhs, nt), _shown(rhs, nt)
        width = max(
            (sum(_width(e) + 2 for e in shown_l.row(i)) + sum(_width(e) + 2 for e in shown_r.row(i)) + 3)
            for i in range(lhs.rows)
        )
        if width <= room:
            return (Row((_e(lhs, nt),), (EQ, _e(rhs, nt)), note),)
        rows: list[Row] = []
        for i, (a, b) in enumerate(zip(lhs, rhs, strict=True), start=1):
            row_note = (Tex(rf"\text{{row {i}}}", f"row {i}"), *((Tex(r"\text{, }", ", "), *note) if note else ()))
            rows.extend(equation_rows(a, b, nt, row_note))
        return tuple(rows)
    lhs, rhs = sp.sympify(lhs), sp.sympify(rhs)
    both = _width(_shown(lhs, nt)) + 3 + _width(_shown(rhs, nt))
    if both + (tex_width(note) + 3 if note else 0) <= LINE_TEXT:
        return (Row((_e(lhs, nt),), (EQ, _e(rhs, nt)), note),)
    if note:
        return (Row((), (), note), *equation_rows(lhs, rhs, nt))
    if _fits(lhs, nt, LINE_TEXT // 2):
        return long_rows((_e(lhs, nt),), rhs, nt, note=note)
    room = LINE_TEXT - min(_width(_shown(rhs, nt)), LINE_TEXT // 2) - 3
    terms = _terms(lhs, nt, room)
    if terms is not None and len(terms) > 1:
        lines = chunk_signed(_signed_terms(terms, nt), room)
        rows = [Row((line,), ()) for line in lines[:-1]]
        return (*rows, *long_rows((lines[-1],), rhs, nt, note=note))
    # the left side's terms are too wide to share a row with the right side: every row in the
    # formula's column (beside an operator's name at most), the right side on rows of its own
    room = LINE_TEXT - _BESIDE
    terms = _terms(lhs, nt, room)
    if terms is None or len(terms) < 2:
        return long_rows((_e(lhs, nt),), rhs, nt, note=note)
    lines = chunk_signed(_signed_terms(terms, nt), room)
    rows = [Row((), (line,), note if i == 0 else ()) for i, line in enumerate(lines)]
    rest = long_rows((), rhs, nt)
    return (*rows, *rest)
