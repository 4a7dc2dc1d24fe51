"""Tests for calckit.render.latex: step records to LaTeX and plain text."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

import pytest
import sympy as sp
from matplotlib.mathtext import MathTextParser

from calckit import LinearODE, Oscillator
from calckit.engine.steps import STEP_KINDS, Step
from calckit.errors import CalcError, SheetError
from calckit.render.latex import (
    Notation,
    notation,
    rows_latex,
    step_latex,
    step_plain,
    step_rows,
    steps_at,
    symbol_latex,
)
from calckit.render.mathml import latex_to_mathml

T = sp.Symbol("t", real=True)
M, C, K, A, R = sp.symbols("m c k A r", positive=True)


@dataclass(frozen=True)
class Case:
    """One derivation of the corpus and how it was built."""

    name: str
    build: object


CASES = (
    Case("harmonic, symbolic m c k", lambda: Oscillator(M, C, K).particular(A * sp.cos(R * T), t=T)),
    Case(
        "undamped resonance with start", lambda: Oscillator(2, 0, 50).response(3 * sp.cos(5 * T), 1, 0, t=T)
    ),
    Case(
        "polynomial + exponential, two groups",
        lambda: Oscillator(M, C, K).particular(A * sp.cos(R * T) + T * sp.exp(-T), t=T),
    ),
    Case(
        "order 4, three groups",
        lambda: LinearODE([1, 0, 0, 0, 4]).particular(T**2 + sp.exp(2 * T) * sp.sin(3 * T), t=T),
    ),
    Case("double root at zero", lambda: LinearODE([1, 0, 0]).particular(T + 1, t=T)),
)


@pytest.fixture(scope="module", params=CASES, ids=lambda case: case.name)
def derivation(request):
    return request.param.build()


def _by_kind(obj, kind):
    return [s for s in obj.steps if s.kind == kind]


def _rows_of(latex: str) -> list[str]:
    """Rows of an aligned block without the alignment marks: the part mathtext can read."""
    body = latex.replace(r"\left\{", "").replace(r"\right.", "")
    body = body.replace(r"\begin{aligned}", "").replace(r"\end{aligned}", "")
    return [row.replace("&", " ") for row in body.split(r"\\")]


class TestSymbolLatex:
    """symbol_latex: readable names for user symbols."""

    @pytest.mark.parametrize(
        ("name", "expected"),
        [
            ("omega_n", r"\omega_{n}"),
            ("zeta", r"\zeta"),
            ("x_p", r"x_{p}"),
            ("F_max", r"F_{\mathrm{max}}"),
            ("delta_st", r"\delta_{\mathrm{st}}"),
            ("k1", r"k_{1}"),
            ("Omega", r"\Omega"),
            ("C_{1,0}", r"C_{1,0}"),
        ],
    )
    def test_names(self, name, expected):
        """Greek names, subscripts, word subscripts upright (common practice, no source)."""
        assert symbol_latex(name) == expected

    def test_user_names_win(self):
        """A name the user gives replaces the automatic one, by name or by Symbol."""
        assert symbol_latex("Fo", {"Fo": "F_{o}"}) == "F_{o}"
        nt = notation(names={sp.Symbol("Fo"): r"F_{\circ}"})
        assert nt.name_map == {"Fo": r"F_{\circ}"}

    def test_names_not_a_mapping(self):
        """A list instead of a dict is refused with the expected text."""
        with pytest.raises(SheetError) as info:
            notation(names=[("Fo", "F_o")])
        assert str(info.value) == (
            "names: expected a mapping of symbol names to LaTeX, got list. "
            'Pass a dict such as {"omega_n": r"\\omega_{n}"}.'
        )

    def test_names_with_non_text(self):
        """A value that is not LaTeX text is refused."""
        with pytest.raises(SheetError) as info:
            notation(names={"Fo": 3})
        assert str(info.value) == (
            "names: the entry 'Fo': 3 is not a name and a LaTeX string. "
            'Map symbol names (str) to LaTeX (str), e.g. {"Fo": r"F_{o}"}.'
        )

    def test_bad_derivative_style(self):
        """Unknown derivative styles are refused; the error is a CalcError."""
        with pytest.raises(CalcError) as info:
            notation(derivatives="fluxions")
        assert (
            str(info.value)
            == 'derivatives: unknown derivative style "fluxions". Use "auto", "dots" or "primes".'
        )


class TestReadingOrder:
    """The formulas read like a hand calculation."""

    def test_equation_of_motion_with_dots(self):
        """Order 2: m x'' + c x' + k x = f(t) written with dots."""
        der = CASES[0].build()
        latex = step_latex(der.steps[0], notation(der.steps))
        assert latex.startswith(r"\begin{aligned}m \ddot{x} + c \dot{x} + k x &= f(t)")
        assert step_plain(der.steps[0], notation(der.steps)).splitlines()[0] == "m*x'' + c*x' + k*x = f(t)"

    def test_primes_for_higher_order(self):
        """Order 4: x^{(4)}; derivatives of the trial form x_1', x_1'', x_1''', x_1^{(4)}."""
        der = CASES[3].build()
        nt = notation(der.steps)
        assert step_latex(der.steps[0], nt).startswith(r"\begin{aligned}x^{(4)} + 4 x &= f(t)")
        derivs = step_latex(_by_kind(der, "derivatives")[0], nt)
        for piece in ("x_{1}'(t)", "x_{1}''(t)", "x_{1}'''(t)", "x_{1}^{(4)}(t)"):
            assert piece in derivs

    def test_primes_on_request(self):
        """derivatives="primes" writes x'' even for order 2."""
        der = CASES[0].build()
        latex = step_latex(der.steps[0], notation(der.steps, derivatives="primes"))
        assert "m x'' + c x' + k x" in latex

    def test_forcing_groups_with_exponents(self):
        """Each group on its own row with its exponent; a harmonic one as a +/- pair."""
        der = CASES[2].build()
        latex = step_latex(_by_kind(der, "forcing-split")[0], notation(der.steps))
        assert r"f_{1}(t) &= t e^{- t} && \qquad \lambda_{1} = -1" in latex
        assert r"\lambda_{2} = \pm i r" in latex

    def test_characteristic_polynomial_and_roots(self):
        """p(lambda) = m lambda^2 + c lambda + k = 0, highest power first, then the roots."""
        der = CASES[1].build()
        latex = step_latex(_by_kind(der, "characteristic")[0], notation(der.steps))
        assert r"p(\lambda) &= 2 \lambda^{2} + 50 = 0" in latex
        assert latex.count(r"\text{simple root}") == 2
        double = CASES[4].build()
        assert r"\text{double root}" in step_latex(_by_kind(double, "characteristic")[0])

    def test_resonance_value_and_multiplicity(self):
        """Undamped resonance: p(5i) = 0 and s = 1; away from it p(lambda) != 0 and s = 0."""
        res = CASES[1].build()
        latex = step_latex(_by_kind(res, "resonance")[0], notation(res.steps))
        assert latex.startswith(r"p\left(5 i\right) = 0")
        assert r"multiplicity } s = 1" in latex
        away = CASES[0].build()
        latex = step_latex(_by_kind(away, "resonance")[0], notation(away.steps))
        assert r"\neq 0" in latex and "multiplicity } s = 0" in latex

    def test_coefficient_system_is_braced_and_labelled(self):
        """The equations form a braced aligned system, one basis-function label per row."""
        der = CASES[0].build()
        step = _by_kind(der, "coefficient-equations")[0]
        latex = step_latex(step, notation(der.steps))
        assert latex.startswith(r"\left\{ \begin{aligned}") and latex.endswith(r"\end{aligned} \right.")
        assert latex.count(r"\text{coefficients of }") == len(step.equations) == 2
        assert r"\left(k - m r^{2}\right) C + c r D &= A" in latex

    def test_verification_with_check_word(self):
        """The residual of the operator on x_p minus f is zero, with the word "verified"."""
        der = CASES[0].build()
        latex = step_latex(_by_kind(der, "verification")[0], notation(der.steps))
        assert latex == r"m \ddot{x}_{p} + c \dot{x}_{p} + k x_{p} - f(t) = 0 \qquad \text{verified}"

    def test_verification_alone_uses_operator_name(self):
        """Without the equation step the operator is written L[x_p]."""
        der = CASES[0].build()
        assert step_latex(_by_kind(der, "verification")[0]).startswith(r"L\left[x_{p}\right] - f(t) = 0")

    def test_response_steps(self):
        """Transient x_h, initial-value equations, total x = x_h + x_p."""
        res = CASES[1].build()
        nt = notation(res.steps)
        assert step_latex(_by_kind(res, "homogeneous")[0], nt).startswith("x_{h}(t) = C_{1}")
        initial = step_latex(_by_kind(res, "initial-conditions")[0], nt)
        assert r"x(0) &= C_{1} = 1" in initial and r"\dot{x}(0) &= 5 C_{2} = 0" in initial
        total = step_plain(_by_kind(res, "total-response")[0], nt)
        assert [line.strip() for line in total.splitlines()] == [
            "x_h(t) = cos(5*t)",
            "x(t) = x_h(t) + x_p(t)",
            "= 3*t*sin(5*t)/20 + cos(5*t)",
        ]

    def test_group_names(self):
        """One group: its part is x_p; several: x_1, x_2."""
        single = CASES[0].build()
        assert step_latex(_by_kind(single, "trial-form")[0], notation(single.steps)).startswith("x_{p}(t) =")
        two = CASES[2].build()
        nt = notation(two.steps)
        assert [step_latex(s, nt)[:8] for s in _by_kind(two, "trial-form")] == ["x_{1}(t)", "x_{2}(t)"]


class TestEveryOutputParses:
    """Every LaTeX string the corpus produces is read by two independent parsers."""

    def test_mathml_well_formed(self, derivation):
        """latex2mathml (through calckit.render.mathml) gives well-formed XML for every step."""
        nt = notation(derivation.steps)
        for step in derivation.steps:
            mathml = latex_to_mathml(step_latex(step, nt))
            assert ET.fromstring(mathml).tag.endswith("math")

    def test_mathtext_parses_rows(self, derivation):
        """Outside check: matplotlib.mathtext.MathTextParser parses every row (its subset has no aligned)."""
        parser = MathTextParser("path")
        nt = notation(derivation.steps)
        for step in derivation.steps:
            for row in _rows_of(step_latex(step, nt)):
                parser.parse(f"${row}$")

    def test_plain_text_solution_reads_back(self, derivation):
        """Outside check: sympy.sympify reads the text of x_p back to the solution."""
        nt = notation(derivation.steps)
        text = step_plain(_by_kind(derivation, "particular-solution")[0], nt)
        lhs, rhs = text.split(" = ", 1)
        assert lhs == "x_p(t)"
        steady = getattr(derivation, "steady_state", derivation.solution)
        back = sp.sympify(rhs, locals={s.name: s for s in steady.free_symbols | {T}})
        assert sp.simplify(back - steady) == 0


class TestCoverage:
    """Every step type has a formula."""

    def test_every_step_type_has_rows(self):
        """Each Step subclass is registered with step_rows (the base alone falls back to none)."""
        registered = set(step_rows.registry)
        missing = [cls.__name__ for cls in STEP_KINDS if cls is not Step and cls not in registered]
        assert missing == []

    def test_every_step_in_corpus_has_a_formula(self, derivation):
        """No step of a real derivation renders empty."""
        nt = notation(derivation.steps)
        assert all(step_rows(step, nt) for step in derivation.steps)

    def test_unknown_step_type_renders_no_formula(self):
        """A step type without a formula gives no rows instead of failing."""
        assert step_rows(Step("Note", "Plain words."), Notation()) == ()
        assert rows_latex(()) == ""


class TestLevels:
    """steps_at: summary keeps the equation, the result and the check, with their numbers."""

    def test_summary_numbers(self):
        """The summary keeps full-derivation numbers."""
        res = CASES[1].build()
        numbered = steps_at(res.steps, "summary")
        assert [s.kind for _, s in numbered] == [
            "equation",
            "particular-solution",
            "verification",
            "total-response",
        ]
        assert [n for n, _ in numbered] == [1] + [res.steps.index(s) + 1 for _, s in numbered[1:]]

    def test_unknown_level(self):
        """An unknown level is refused with the expected text."""
        with pytest.raises(SheetError) as info:
            steps_at((), "brief")
        assert str(info.value) == 'level: unknown level "brief". Use "summary" or "full".'


def test_no_jupyter_import():
    """The formula module imports nothing from Jupyter, IPython or matplotlib."""
    import calckit.render.latex as module

    source = Path(module.__file__).read_text(encoding="utf-8")
    assert not re.search(r"^\s*(import|from)\s+(IPython|ipywidgets|matplotlib|jupyter)", source, re.M)
