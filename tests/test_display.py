"""Tests for calckit.render.display: one pipeline to LaTeX, Markdown, HTML+MathML and text.

Golden files live in tests/golden/. To rewrite them after a deliberate change of
the output, run::

    CALCKIT_UPDATE_GOLDEN=1 python -m pytest tests/test_display.py

and review the diff before committing.
"""

from __future__ import annotations

import os
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
import sympy as sp
from IPython.core.formatters import DisplayFormatter

import calckit
from calckit import LinearODE, Oscillator
from calckit.errors import SheetError
from calckit.render import display
from calckit.render.numbers import put_through

GOLDEN = Path(__file__).parent / "golden"
UPDATE = os.environ.get("CALCKIT_UPDATE_GOLDEN") == "1"

T = sp.Symbol("t", real=True)
M, C, K, A, R = sp.symbols("m c k A r", positive=True)

BUILDERS = {
    # harmonic force on symbolic m, c, k
    "harmonic_symbolic": lambda: Oscillator(M, C, K).particular(A * sp.cos(R * T), t=T),
    # undamped resonance 2 x'' + 50 x = 3 cos 5t from x(0) = 1, x'(0) = 0
    "undamped_resonance": lambda: Oscillator(2, 0, 50).response(3 * sp.cos(5 * T), 1, 0, t=T),
    # polynomial + exponential forcing, two exponent groups
    "polynomial_exponential": lambda: Oscillator(1, 3, 2).particular(T**2 + sp.exp(-T), t=T),
}

OUTPUTS = {
    "tex": display.derivation_latex_document,
    "html": display.derivation_html,
    "txt": display.derivation_text,
}


@pytest.fixture(scope="module")
def built():
    return {name: build() for name, build in BUILDERS.items()}


def normalise(text: str) -> str:
    """Drop what may vary without meaning: the kit's version, trailing spaces, blank-line runs."""
    text = text.replace(calckit.__version__, "VERSION")
    text = "\n".join(line.rstrip() for line in text.splitlines())
    return re.sub(r"\n{3,}", "\n\n", text).strip() + "\n"


@pytest.mark.parametrize("suffix", sorted(OUTPUTS))
@pytest.mark.parametrize("name", sorted(BUILDERS))
def test_golden(built, name, suffix):
    """Output equals the reviewed golden file (regenerate with CALCKIT_UPDATE_GOLDEN=1)."""
    got = normalise(OUTPUTS[suffix](built[name]))
    path = GOLDEN / f"{name}.{suffix}"
    if UPDATE:
        GOLDEN.mkdir(exist_ok=True)
        path.write_text(got, encoding="utf-8")
    assert path.exists(), f"missing golden file {path}; run with CALCKIT_UPDATE_GOLDEN=1"
    assert got == normalise(path.read_text(encoding="utf-8"))


def _numbers_latex(doc: str) -> list[int]:
    return [int(m) for m in re.findall(r"^(\d+)\. ", doc, re.M)]


def _numbers_markdown(doc: str) -> list[int]:
    return [int(m) for m in re.findall(r"^\*\*(\d+)\. ", doc, re.M)]


def _numbers_html(doc: str) -> list[int]:
    return [int(m) for m in re.findall(r'<span class="number">(\d+)</span>', doc)]


def _numbers_text(doc: str) -> list[int]:
    return [int(m) for m in re.findall(r"^(\d+)\. ", doc, re.M)]


class TestOnePipeline:
    """The outputs show the same steps in the same order with the same numbers."""

    @pytest.mark.parametrize("level", ["full", "summary"])
    @pytest.mark.parametrize("name", sorted(BUILDERS))
    def test_numbering_agrees(self, built, name, level):
        """Numbers in LaTeX, Markdown, HTML and text are equal, and match the steps."""
        obj = built[name]
        expected = [b.number for b in display.blocks(obj, level) if b.number is not None]
        assert _numbers_latex(display.derivation_latex_document(obj, level)) == expected
        assert _numbers_markdown(display.derivation_markdown(obj, level)) == expected
        assert _numbers_html(display.derivation_html(obj, level)) == expected
        assert _numbers_text(display.derivation_text(obj, level)) == expected
        if level == "full":
            assert expected == list(range(1, len(obj.steps) + 1))

    @pytest.mark.parametrize("name", sorted(BUILDERS))
    def test_titles_and_sentences_visible(self, built, name):
        """Every step's title and plain sentence appear in the LaTeX document."""
        obj = built[name]
        doc = display.derivation_latex_document(obj)
        for step in obj.steps:
            assert step.title in doc
            assert " ".join(step.explanation.split()).rstrip(".") in doc

    @pytest.mark.parametrize("name", sorted(BUILDERS))
    def test_summary_shorter(self, built, name):
        """The summary is shorter than the full derivation in every output."""
        obj = built[name]
        for render in (display.derivation_latex_document, display.derivation_html, display.derivation_text):
            assert len(render(obj, "summary")) < len(render(obj, "full"))

    @pytest.mark.parametrize("name", sorted(BUILDERS))
    def test_text_contains_solution(self, built, name):
        """The plain text of the result, read back by ``sympy.parse_expr`` from its rows (a long
        sum is broken over rows of whole terms), equals the solution (``sympy.simplify``)."""
        obj = built[name]
        text = display.derivation_text(obj)
        lines = text.splitlines()
        heads = ("x_p(t) =", "x(t) =") if not hasattr(obj, "transient") else ("x(t) =",)
        start = max(i for i, line in enumerate(lines) if line.strip().startswith(heads))
        body = [lines[start].split("=", 1)[1]]
        for line in lines[start + 1 :]:
            stripped = line.strip()
            if stripped.startswith(("+ ", "- ")):
                body.append(stripped)
            elif stripped.startswith("= "):  # the relation continued: the last right side counts
                body = [stripped[2:]]
            else:
                break
        shown = sp.parse_expr(" ".join(body), local_dict={s.name: s for s in obj.solution.free_symbols})
        assert sp.simplify(shown - obj.solution) == 0

    def test_conditions_after_the_steps(self):
        """A symbolic mass may be zero: the result says where it holds, in every output."""
        m = sp.Symbol("m")
        der = LinearODE([m, 0, 1]).particular(sp.exp(T), t=T)
        assert der.conditions  # the engine records Ne(m, 0)
        last_two = display.derivation_latex_document(der).splitlines()[-2:]
        assert last_two == [
            "Valid when. The result holds for parameters that keep these quantities away from zero.",
            r"$$m \neq 0,\quad m + 1 \neq 0$$",
        ]
        assert "m != 0" in display.derivation_text(der)
        assert '<p class="note"><strong>Valid when:</strong>' in display.derivation_html(der)


class TestHtml:
    """The HTML is self-contained and well formed."""

    @pytest.mark.parametrize("name", sorted(BUILDERS))
    def test_no_script_no_address(self, built, name):
        """No <script and no http reference (the MathML namespace is not needed in HTML5)."""
        html = display.derivation_html(built[name])
        assert "<script" not in html.lower()
        assert "http" not in html.lower()

    @pytest.mark.parametrize("name", sorted(BUILDERS))
    def test_well_formed(self, built, name):
        """Outside check: xml.etree parses the fragment, and it holds one block <math> per step
        (inline maths in the sentences are display="inline")."""
        obj = built[name]
        root = ET.fromstring(display.derivation_html(obj))
        assert len([m for m in root.findall(".//math") if m.get("display") == "block"]) == len(obj.steps)

    def test_text_is_escaped(self):
        """A title with < and & is escaped."""
        from calckit.engine.steps import HomogeneousStep

        step = HomogeneousStep("a < b & c", "x > 0.", sp.Symbol("C_1"), (sp.Symbol("C_1"),), "")
        html = display.step_html(step)
        assert "a &lt; b &amp; c" in html and "x &gt; 0." in html


class TestStepsAlone:
    """A single step shows its title, sentence and formula."""

    def test_step_documents(self, built):
        """The step's own outputs carry its title and its formula."""
        step = built["harmonic_symbolic"].steps[-1]
        assert display.step_latex_document(step).startswith("Check by substitution. Substituting")
        assert "$$" in display.step_latex_document(step)
        assert display.step_markdown(step).startswith("**Check by substitution.**")
        assert display.step_text(step).splitlines()[0] == "Check by substitution"
        assert "<h3>Check by substitution</h3>" in display.step_html(step)

    def test_sentence_gets_full_stop(self, built):
        """A sentence without a final full stop gets one."""
        der = Oscillator(1, 1, 1).particular(sp.cos(T), t=T)
        step = der.steps_of("solved-coefficients")[0]
        assert display.step_text(step).splitlines()[1].endswith("solved for the two unknowns.")


class TestJupyter:
    """IPython's display formatter finds text/latex, text/html and text/plain."""

    @pytest.mark.parametrize(
        "make",
        [
            lambda b: b["harmonic_symbolic"],
            lambda b: b["undamped_resonance"],
            lambda b: b["harmonic_symbolic"].steps[3],
            lambda b: display.show(b["harmonic_symbolic"], "summary"),
            lambda b: put_through("omega_n", sp.sqrt(K / M), {"k": "180 kN/m", "m": "250 kg"}, unit="rad/s"),
        ],
        ids=["derivation", "response", "step", "shown", "substitution"],
    )
    def test_mime_types(self, built, make):
        """IPython.core.formatters.DisplayFormatter().format gives all three kinds."""
        data, _ = DisplayFormatter().format(make(built))
        assert {"text/latex", "text/html", "text/plain"} <= set(data)
        assert "$$" in data["text/latex"]
        assert "<math" in data["text/html"]

    def test_shown_adds_markdown_and_names(self, built):
        """show() gives Markdown too, uses the user's names and the chosen level."""
        b = sp.Symbol("Fo")
        der = LinearODE([1, 2]).particular(b, t=T)
        data, _ = DisplayFormatter().format(display.show(der, "summary", names={"Fo": r"F_{\circ}"}))
        assert r"F_{\circ}" in data["text/markdown"] and r"F_{\circ}" in data["text/latex"]
        assert data["text/plain"] == display.derivation_text(der, "summary")

    def test_show_checks_options_at_once(self, built):
        """A bad level fails when show() is called, not later inside the notebook's display."""
        with pytest.raises(SheetError) as info:
            display.show(built["harmonic_symbolic"], "short")
        assert str(info.value) == 'level: unknown level "short". Use "summary" or "full".'

    def test_unknown_object(self):
        """An object without steps cannot be displayed."""
        with pytest.raises(SheetError) as info:
            display.latex_document(42)
        assert str(info.value) == (
            "calckit display: cannot display an object of type int. Pass a Derivation, a Response, a Step or a Substitution."
        )
