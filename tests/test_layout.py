"""Formulas broken to fit a printed line, numbers shown in decimals, maths in prose.

References: ``sympy.parse_expr`` reads the shown rows back and ``sympy.simplify``
compares them with the expression (nothing of calckit's arithmetic is trusted);
``sympy.N`` (mpmath) gives the decimals a rounded value must agree with; the XML
checks use ``xml.etree.ElementTree`` on the MathML (MathML Core: ``mtd`` cells,
``mo form="prefix"``).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import sympy as sp

import calckit as ck
from calckit.render.display import derivation_html, derivation_markdown, derivation_text
from calckit.render.layout import LINE_TEXT, long_rows, tex_width
from calckit.render.mathml import latex_to_mathml
from calckit.render.page import prose, prose_parts, prose_text
from calckit.render.tex import Notation, Tex, rows_latex, rows_text, shown_decimals

T = sp.Symbol("t", real=True)


def _read_back(rows) -> sp.Expr:
    """The right sides of rows printed by rows_text, joined and parsed by sympy."""
    text = rows_text(rows)
    body = " ".join(line.split("=", 1)[1] if "=" in line else line for line in text.splitlines())
    return sp.parse_expr(body, local_dict={"t": T})


def test_long_sum_breaks_between_whole_terms():
    """Each row fits the line; the rows read back (sympy.parse_expr) are the sum itself."""
    a = sp.symbols("a_1:13")
    expr = sum(ai * sp.cos((i + 1) * T) for i, ai in enumerate(a))
    rows = long_rows((Tex("x(t)", "x(t)"),), expr, Notation(t=T))
    assert len(rows) > 1
    for row in rows:
        assert tex_width(row.rhs) <= LINE_TEXT
    shown = _read_back(rows)
    assert sp.simplify(shown.subs({sp.Symbol(s.name): s for s in a}) - expr) == 0
    assert r"\begin{aligned}" in rows_latex(rows)  # the notebook's LaTeX breaks at the same terms


def test_wide_transient_keeps_every_factor():
    """A symbolic transient too wide for one line (x_h of m x'' + c x' + k x = F cos + G sin):
    the rows keep every sin and cos factor of the expression (counted in sympy's own text)."""
    m, c, k, F, G, W, x0 = sp.symbols("m c k F_c F_s Omega x_0", positive=True)
    res = ck.Oscillator(m, c, k, regime="underdamped").response(F * sp.cos(W * T) + G * sp.sin(W * T), x0, 0, t=T)
    text = derivation_text(res)
    html = derivation_html(res)
    assert "<math" in html
    for name in ("sin", "cos"):
        assert text.count(f"{name}(") >= sp.sstr(res.transient).count(f"{name}(")
    transient = text.split("x_h(t) =")[-1].split("x(t) =")[0]
    assert len(max(transient.splitlines(), key=len)) < 2 * LINE_TEXT  # broken, not one long row


def test_shown_decimals_agree_with_sympy_N():
    """Every number shown agrees with sympy.N of the exact value to 4 significant figures."""
    exact = 16 * sp.sqrt(39) / 5 * T - sp.Rational(3052576413791662500000, 7) * sp.cos(155 * T)
    shown = shown_decimals(exact, 4)
    for term in sp.Add.make_args(exact):
        coef = term.as_independent(T, as_Add=False)[0]
        want = sp.N(coef, 4)
        got = [f for f in shown.atoms(sp.Float) if abs(f - want) <= abs(want) * 1e-3]
        assert got, (coef, shown)
    assert max(len(re.sub(r"\D", "", str(f))) for f in shown.atoms(sp.Float)) <= 12
    assert shown_decimals(sp.cos(3 * T) * 250, 4) == 250 * sp.cos(3 * T)  # whole numbers stay


def test_numeric_derivation_shown_in_decimals_symbolic_stays_exact():
    """A numeric derivation (sig given) shows decimals; a symbolic one stays symbolic."""
    numeric = ck.Oscillator(3, 1, 700).particular(7 * sp.cos(11 * T), t=T)
    md = derivation_markdown(numeric, sig=4)
    assert re.search(r"\d\.\d{1,3}", md)
    assert not re.search(r"\\frac\{\d{5,}", md)
    m, c, k = sp.symbols("m c k", positive=True)
    symbolic = ck.Oscillator(m, c, k).particular(sp.cos(T), t=T)
    assert not re.search(r"\d\.\d", derivation_markdown(symbolic, sig=4).split("$$", 1)[1])


def test_matrix_entries_separate_in_mathml():
    """Each matrix entry is its own padded cell and a negative entry's sign is a prefix."""
    root = ET.fromstring(latex_to_mathml(sp.latex(sp.Matrix([[11984, -4522], [-4522, 4522]]))))
    ns = "{http://www.w3.org/1998/Math/MathML}"
    cells = list(root.iter(f"{ns}mtd"))
    assert len(cells) == 4
    for cell in cells:
        assert "padding: 0.15em 0.9em" in cell.get("style", "")
        first = cell[0]
        if first.tag == f"{ns}mo":
            assert first.get("form") == "prefix" and first.get("rspace") == "0"


def test_prose_inline_math():
    r"""$...$ becomes inline MathML, \$ a dollar; markdown and LaTeX keep the inline math."""
    html = prose(r"Put $x = e^{\lambda t}$ in; it costs \$5 & more.")
    assert html.count("<math") == 1 and 'display="inline"' in html
    assert "costs $5 &amp; more." in html
    assert prose_parts("a $ b") == [(False, "a $ b")]  # a lone dollar is text
    assert prose_text(r"$\sqrt{A^2 + B^2}$") == "sqrt(A^2 + B^2)"
    step = ck.Oscillator(2, 0, 50).particular(3 * sp.cos(5 * T), t=T)
    assert r"$x = e^{\lambda t}$" in derivation_markdown(step)
    assert "<math" in derivation_html(step).split("Characteristic polynomial", 1)[1].split("<div", 1)[0]
