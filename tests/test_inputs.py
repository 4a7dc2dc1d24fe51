"""Tests for calckit.workflow.inputs: safe expressions, inputs files, template parameters, value checks."""

from __future__ import annotations

import ast
import builtins
import math
from pathlib import Path

import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st

import calckit.core.expressions as expressions_module
import calckit.workflow.inputs as inputs_module
from calckit.core.checks import finite, non_negative, positive
from calckit.core.expressions import parse_expression
from calckit.core.units import Q_
from calckit.errors import CalcError, InputsError
from calckit.workflow.inputs import (
    TITLE_FIELDS,
    InputsFile,
    TitleBlock,
    check_keys,
    injected_source,
    parameters_from_source,
    read_inputs,
)

T = sp.Symbol("t", real=True)
F0, W = sp.symbols("F0 w", positive=True)
NAMES = {"F0": F0, "w": W}
ALLOWED = (
    "Allowed: numbers, the inputs F0, w, the time t, pi, + - * / ** and parentheses, "
    "and the functions sin, cos, exp, sinh, cosh, sqrt, Heaviside, Min, Max, Piecewise."
)


def message(excinfo) -> str:
    return str(excinfo.value)


def refused(text: str, names=NAMES) -> str:
    with pytest.raises(InputsError) as excinfo:
        parse_expression(text, names, where="forcing")
    return message(excinfo)


class TestParseExpressionGood:
    @pytest.mark.parametrize(
        ("text", "expected"),
        [
            ("F0*cos(w*t)", F0 * sp.cos(W * T)),
            ("2.5e-3*F0*exp(-0.5*t)*sin(w*t)", sp.Rational(1, 400) * F0 * sp.exp(-T / 2) * sp.sin(W * T)),
            ("F0*(1 + 0.2*cos(2*w*t))", F0 * (1 + sp.Rational(1, 5) * sp.cos(2 * W * T))),
            ("t**2*exp(-t)", T**2 * sp.exp(-T)),
            ("sinh(t) + cosh(t) - sqrt(2)", sp.sinh(T) + sp.cosh(T) - sp.sqrt(2)),
            ("-t + +t/2", -T / 2),
            ("pi*t", sp.pi * T),
            ("1e-3", sp.Rational(1, 1000)),
            ("0.1 + 0.2", sp.Rational(3, 10)),
            ("1_000.5", sp.Rational(2001, 2)),
            ("2**-1", sp.Rational(1, 2)),
            ("  F0  ", F0),
        ],
    )
    def test_matches_hand_built(self, text, expected):
        """Good expressions give the sympy object built by hand."""
        assert parse_expression(text, NAMES, where="forcing") == expected

    def test_number_values(self):
        """Names may stand for numbers; floats go in as the decimal shown."""
        result = parse_expression("sqrt(k/m) + z", {"k": 12000, "m": 250, "z": 0.1}, where="w")
        assert result == 4 * sp.sqrt(3) + sp.Rational(1, 10)

    def test_default_time_symbol_is_real(self):
        """t is Symbol('t', real=True) by default."""
        assert parse_expression("t", {}, where="f").free_symbols == {T}

    def test_other_time_symbol(self):
        """The caller may pass its own time symbol."""
        tau = sp.Symbol("tau", positive=True)
        assert parse_expression("sin(t)", {}, where="f", t=tau) == sp.sin(tau)

    @given(st.decimals(min_value=-1e6, max_value=1e6, places=8, allow_nan=False, allow_infinity=False))
    def test_decimals_exact(self, d):
        """Any decimal written is read exactly as that decimal."""
        assert parse_expression(str(d), {}, where="x") == sp.Rational(str(d))


class TestParseExpressionRefused:
    @pytest.mark.parametrize(
        ("text", "text_message"),
        [
            (
                "__import__('os').system('x')",
                "forcing: attribute access \"__import__('os').system\" is not allowed "
                "in \"__import__('os').system('x')\". " + ALLOWED,
            ),
            (
                "().__class__.__bases__",
                'forcing: attribute access "().__class__.__bases__" is not allowed. ' + ALLOWED,
            ),
            ("t.__class__", 'forcing: attribute access "t.__class__" is not allowed. ' + ALLOWED),
            ("exp.__globals__", 'forcing: attribute access "exp.__globals__" is not allowed. ' + ALLOWED),
            ("lambda: 1", 'forcing: a lambda "lambda: 1" is not allowed. ' + ALLOWED),
            ("(lambda: 1)()", 'forcing: a lambda "lambda: 1" is not allowed in "(lambda: 1)()". ' + ALLOWED),
            ("[x for x in ()]", 'forcing: a comprehension "[x for x in ()]" is not allowed. ' + ALLOWED),
            ("open('f')", 'forcing: the function "open" is not allowed in "open(\'f\')". ' + ALLOWED),
            ("eval('1')", 'forcing: the function "eval" is not allowed in "eval(\'1\')". ' + ALLOWED),
            (
                "__import__('os')",
                'forcing: the function "__import__" is not allowed in "__import__(\'os\')". ' + ALLOWED,
            ),
            ("sin(t)(1)", 'forcing: calling "sin(t)" is not allowed in "sin(t)(1)". ' + ALLOWED),
            ("F0[0]", 'forcing: indexing "F0[0]" is not allowed. ' + ALLOWED),
            ("'text'", "forcing: a string 'text' is not allowed. " + ALLOWED),
            ("sin(x=1)", 'forcing: the keyword argument "x=1" is not allowed in "sin(x=1)". ' + ALLOWED),
            ("t if t else 1", 'forcing: a conditional "t if t else 1" is not allowed. ' + ALLOWED),
            ("t < 1", 'forcing: a comparison "t < 1" is not allowed. ' + ALLOWED),
            ("(t := 1)", 'forcing: an assignment "t := 1" is not allowed in "(t := 1)". ' + ALLOWED),
            ("F0 % 2", 'forcing: the operator "%" is not allowed in "F0 % 2". ' + ALLOWED),
            ("not t", 'forcing: the operator "not" is not allowed in "not t". ' + ALLOWED),
            ("True", 'forcing: "True" is not allowed. ' + ALLOWED),
        ],
    )
    def test_injection_corpus(self, text, text_message):
        """Each trick is refused with the offending piece and what is allowed."""
        assert refused(text) == text_message

    def test_caret(self):
        """^ is refused with the advice to use **."""
        assert (
            refused("F0*t^2")
            == 'forcing: the operator "^" is not a power in "F0*t^2". Use ** for powers, for example t**2.'
        )

    def test_unknown_name_with_suggestion(self):
        """An undeclared name is refused, suggesting the closest declared one."""
        assert (
            refused("F0*cos(ww*t)")
            == 'forcing: unknown name "ww" in "F0*cos(ww*t)". Did you mean "w"? ' + ALLOWED
        )

    def test_unknown_name_without_suggestion(self):
        """With nothing close, the allowed names are listed."""
        assert refused("omega*t") == 'forcing: unknown name "omega" in "omega*t". ' + ALLOWED

    def test_function_without_call(self):
        """A function name alone is refused."""
        assert refused("sin") == (
            'forcing: the function "sin" is used without an argument. '
            "Call it with its argument in parentheses, for example sin(w*t)."
        )

    def test_two_arguments(self):
        """Functions take one argument."""
        assert refused("sin(t, 2)") == (
            'forcing: "sin(t, 2)" gives sin 2 arguments. Give sin one argument, for example sin(w*t).'
        )

    def test_syntax_error(self):
        """Text Python cannot parse gives the column and advice."""
        assert refused("F0*cos(w*t") == (
            'forcing: cannot read "F0*cos(w*t" as an expression (column 7). '
            "Check for a missing operator or parenthesis; write products with * (2*t, not 2t)."
        )

    def test_implicit_product(self):
        """2t is not read as 2*t."""
        assert refused("2t").startswith('forcing: cannot read "2t" as an expression (column 1).')

    @pytest.mark.parametrize(
        ("text", "piece"), [("1/0", "1/0"), ("F0/(t-t)", "F0/(t-t)"), ("0**-1", "0**-1")]
    )
    def test_division_by_zero(self, text, piece):
        """Division by zero is refused."""
        expected = f'forcing: division by zero "{piece}". Check the divisor.'
        assert refused(text) == expected

    @pytest.mark.parametrize("text", ["9**9**9", "t**1000", "t**(-101)"])
    def test_large_power(self, text):
        """Powers that would hang or make no sense are refused before they are computed."""
        assert (
            refused(text)
            == f'forcing: the power "{text}" is too large. Use real exponents between -100 and 100.'
        )

    def test_power_of_big_number(self):
        """A power whose value would have too many digits is refused."""
        assert refused("((10**100)**100)**100") == (
            'forcing: the power "(10**100)**100" is too large in "((10**100)**100)**100". Keep numbers under 400 digits.'
        )

    @pytest.mark.parametrize("text", ["1e999", "1e-400"])
    def test_number_out_of_range(self, text):
        """Numbers written beyond the float range are refused."""
        assert refused(text) == f'forcing: the number "{text}" is out of range. Give a finite number.'

    def test_imaginary(self):
        """Imaginary numbers are refused."""
        assert (
            refused("2j*t")
            == 'forcing: the imaginary number "2j" is not allowed in "2j*t". Write real expressions only.'
        )

    def test_empty(self):
        """Empty text is refused."""
        assert (
            refused("   ")
            == 'forcing: the expression is empty. Write an expression, for example "F0*cos(w*t)".'
        )

    def test_not_text(self):
        """A number where text is expected is refused."""
        assert refused(3) == (
            'forcing: expected the expression as text, got int 3. Write the expression in quotes, for example "F0*cos(w*t)".'
        )

    def test_too_long(self):
        """Very long text is refused before parsing."""
        assert refused("t+" * 1000 + "t") == (
            "forcing: the expression is 2001 characters long. Keep expressions under 2000 characters."
        )

    def test_too_deep(self):
        """Deep nesting is refused, not a RecursionError."""
        assert refused("-" * 1500 + "t") == (
            "forcing: the expression is nested too deeply. Write a shorter, less nested expression."
        )

    @pytest.mark.parametrize("name", ["t", "pi", "sin"])
    def test_reserved_names(self, name):
        """t, pi and function names cannot be declared as inputs."""
        with pytest.raises(InputsError) as excinfo:
            parse_expression("1", {name: sp.Symbol("x")}, where="forcing")
        assert message(excinfo) == (
            f'forcing: the name "{name}" is reserved. '
            "Pass the time symbol as t=; do not declare t, pi or the function names as inputs."
        )

    def test_bad_name_value(self):
        """Names must stand for symbols or numbers."""
        with pytest.raises(InputsError) as excinfo:
            parse_expression("m", {"m": "250 kg"}, where="forcing")
        assert message(excinfo) == (
            "forcing: the name \"m\" stands for str '250 kg'. Declare each name as a sympy symbol or a number."
        )

    def test_errors_are_calc_errors(self):
        """Refusals are CalcErrors and ValueErrors."""
        with pytest.raises(CalcError):
            parse_expression("t.x", {}, where="f")
        with pytest.raises(ValueError):
            parse_expression("t.x", {}, where="f")


class TestNothingRuns:
    def test_no_file_created(self, tmp_path):
        """Expressions that would write a file if run leave no file behind."""
        target = tmp_path / "made"
        tricks = [
            f"open({str(target)!r}, 'w')",
            f"__import__('pathlib').Path({str(target)!r}).touch()",
            f"exec(\"open({str(target)!r}, 'w')\")",
            f"(lambda: open({str(target)!r}, 'w'))()",
            f"[open({str(target)!r}, 'w') for _ in (1,)]",
        ]
        for text in tricks:
            with pytest.raises(InputsError):
                parse_expression(text, {}, where="forcing")
        assert not target.exists()

    def test_no_eval_during_parsing(self, monkeypatch):
        """Parsing works with eval, exec and sympy's text readers disabled."""

        def forbidden(*args, **kwargs):
            raise AssertionError("text was evaluated")

        monkeypatch.setattr(builtins, "eval", forbidden)
        monkeypatch.setattr(builtins, "exec", forbidden)
        monkeypatch.setattr(sp, "sympify", forbidden)
        monkeypatch.setattr(sp, "parse_expr", forbidden)
        result = parse_expression("F0*cos(w*t) + 0.5*sinh(t)", NAMES, where="forcing")
        assert result == F0 * sp.cos(W * T) + sp.sinh(T) / 2

    @pytest.mark.parametrize("module", [expressions_module, inputs_module], ids=["expressions", "inputs"])
    def test_module_calls_no_evaluator(self, module):
        """The reader's and the inputs files' sources call none of eval, exec, compile, sympify, parse_expr."""
        tree = ast.parse(Path(module.__file__).read_text(encoding="utf-8"))
        names, attributes = set(), set()
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
                names.add(node.func.id)
            elif isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
                attributes.add(node.func.attr)
        assert not names & {"eval", "exec", "compile", "sympify", "parse_expr", "__import__", "S"}
        assert not attributes & {"eval", "exec", "sympify", "parse_expr", "literal_eval", "S"}


GOOD_TOML = """\
# Harrow Creek water-treatment works: pump P-101 on its inertia base
mass = "250 kg"
stiffness = "12 N/mm"
zeta = 0.05
forcing = "F0*cos(w*t)"
run_up = true
speeds = ["1400 rpm", "1480 rpm"]

[sheet]
project = "Harrow Creek water-treatment works"
calculation = "HCW-VIB-001"
revision = "B"
date = 2024-05-02

[machine]
speed = "1480 rpm"
"unbalance" = "120 g*mm"
"""


def write(tmp_path: Path, text: str, name: str = "p101.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def read_error(tmp_path: Path, text: str) -> str:
    path = write(tmp_path, text)
    with pytest.raises(InputsError) as excinfo:
        read_inputs(path)
    return message(excinfo).replace(str(path), "FILE")


class TestReadInputs:
    def test_values_in_order(self, tmp_path):
        """Inputs come out in file order, groups flattened, raw TOML values."""
        f = read_inputs(write(tmp_path, GOOD_TOML))
        assert dict(f.values) == {
            "mass": "250 kg",
            "stiffness": "12 N/mm",
            "zeta": 0.05,
            "forcing": "F0*cos(w*t)",
            "run_up": True,
            "speeds": ("1400 rpm", "1480 rpm"),
            "speed": "1480 rpm",
            "unbalance": "120 g*mm",
        }
        assert list(f.values) == [
            "mass",
            "stiffness",
            "zeta",
            "forcing",
            "run_up",
            "speeds",
            "speed",
            "unbalance",
        ]
        assert f.groups["speed"] == "machine" and f.groups["mass"] == ""

    def test_title_block(self, tmp_path):
        """The [sheet] table becomes the title block; a TOML date becomes ISO text."""
        f = read_inputs(write(tmp_path, GOOD_TOML))
        assert f.sheet == TitleBlock(
            project="Harrow Creek water-treatment works",
            calculation="HCW-VIB-001",
            revision="B",
            date="2024-05-02",
        )

    def test_frozen(self, tmp_path):
        """The result cannot be changed."""
        f = read_inputs(write(tmp_path, GOOD_TOML))
        with pytest.raises(TypeError):
            f.values["mass"] = "1 kg"
        with pytest.raises(AttributeError):
            f.path = Path("x")

    def test_line_of(self, tmp_path):
        """Line numbers are found for plain, quoted, grouped and title-block keys."""
        f = read_inputs(write(tmp_path, GOOD_TOML))
        assert [f.line_of(k) for k in ("mass", "zeta", "speed", "unbalance", "revision", "nothing")] == [
            2,
            4,
            16,
            17,
            12,
            None,
        ]
        assert f.where("speed") == f"{f.path}, line 16, speed"

    def test_assignments(self, tmp_path):
        """Assignments are the inputs, then title-block fields the template declares."""
        f = read_inputs(write(tmp_path, GOOD_TOML))
        assert list(f.assignments()) == list(f.values) + ["project", "calculation", "revision", "date"]
        assert list(f.assignments(["mass", "revision"])) == list(f.values) + ["revision"]

    def test_empty_file(self, tmp_path):
        """An empty file has no inputs and an empty title block."""
        f = read_inputs(write(tmp_path, ""))
        assert dict(f.values) == {} and f.sheet == TitleBlock()

    def test_broken_toml(self, tmp_path):
        """Broken TOML gives file, line and column (from tomllib) and what to do."""
        assert read_error(tmp_path, 'mass = "250 kg"\nstiffness = 12 N/mm\n') == (
            "FILE, line 2, column 16: the inputs file is not valid TOML: "
            "expected newline or end of document after a statement. "
            'Check that line: text needs quotes (mass = "250 kg") and each key is set once.'
        )

    def test_key_twice(self, tmp_path):
        """A key set twice in one table is a TOML error."""
        assert read_error(tmp_path, "zeta = 0.05\nzeta = 0.1\n").startswith(
            "FILE, line 2, column 11: the inputs file is not valid TOML: cannot overwrite a value."
        )

    def test_key_in_two_groups(self, tmp_path):
        """The same input in two groups is refused."""
        assert read_error(tmp_path, 'mass = "250 kg"\n[base]\nmass = "900 kg"\n') == (
            'FILE, line 3, mass: the input "mass" is also set in the top level. Give each input once.'
        )

    @pytest.mark.parametrize(("literal", "shown"), [("nan", "nan"), ("inf", "inf"), ("-inf", "-inf")])
    def test_not_finite(self, tmp_path, literal, shown):
        """NaN and infinite floats are refused at reading, with the line."""
        assert read_error(tmp_path, f'forcing = "t"\nmass = {literal}\n') == (
            f"FILE, line 2, mass: the value {shown} is not a finite number. Give a finite number."
        )

    def test_bad_name(self, tmp_path):
        """Keys that are not Python names are refused."""
        assert read_error(tmp_path, '"pump speed" = "1480 rpm"\n') == (
            'FILE, line 1, pump speed: "pump speed" is not usable as an input name. '
            "Use letters, digits and underscores, starting with a letter (e.g. pump_speed)."
        )

    def test_nested_table(self, tmp_path):
        """Only one level of grouping tables."""
        assert read_error(tmp_path, '[machine.motor]\nspeed = "1480 rpm"\n') == (
            'FILE: the table "machine.motor" is nested inside "machine". Use one level of tables to group inputs.'
        )

    def test_date_input(self, tmp_path):
        """Values other than text, numbers and booleans are refused."""
        assert read_error(tmp_path, "when = 2024-05-02\n") == (
            'FILE, line 1, when: a date value cannot be an input. Give text with a unit ("250 kg"), a number or true/false.'
        )

    def test_unknown_title_field(self, tmp_path):
        """A misspelt title-block field gets a suggestion."""
        assert read_error(tmp_path, '[sheet]\nprojekt = "Harrow Creek"\n') == (
            'FILE, line 2, sheet.projekt: unknown title-block field "projekt". Did you mean "project"? '
            "The [sheet] table takes subject, project, calculation, revision, author, checker, date."
        )

    def test_subject_in_sheet(self, tmp_path):
        """The subject may be given in [sheet]; it is a title-block field, not an input."""
        f = read_inputs(write(tmp_path, 'mass = "250 kg"\n[sheet]\nsubject = "Pump P-101"\nrevision = "B"\n'))
        assert dict(f.values) == {"mass": "250 kg"}
        assert f.sheet == TitleBlock(subject="Pump P-101", revision="B")
        assert f.where("subject") == f"{f.path}, line 3, subject"
        assert f.assignments(["subject", "mass"]) == {"mass": "250 kg", "subject": "Pump P-101"}

    def test_subject_at_top_level(self, tmp_path):
        """The subject written at the top level, as older inputs files do, still reads."""
        f = read_inputs(write(tmp_path, 'subject = "Pump P-101"\nmass = "250 kg"\n[sheet]\nrevision = "B"\n'))
        assert f.values["subject"] == "Pump P-101" and f.sheet.subject is None
        assert f.assignments(["subject", "mass", "revision"]) == {
            "subject": "Pump P-101",
            "mass": "250 kg",
            "revision": "B",
        }

    @pytest.mark.parametrize(
        ("text", "key", "line", "elsewhere"),
        [
            ('subject = "Pump P-101"\n[sheet]\nsubject = "Pump P-102"\n', "subject", 3, "at the top level"),
            ('[machine]\nrevision = "A"\n[sheet]\nrevision = "B"\n', "revision", 4, "in [machine]"),
        ],
    )
    def test_title_field_given_twice(self, tmp_path, text, key, line, elsewhere):
        """A title-block field in [sheet] and again outside it is refused: neither silently wins."""
        assert read_error(tmp_path, text) == (
            f'FILE, line {line}, sheet.{key}: "{key}" is set in [sheet] and also {elsewhere}. '
            "Give it once, preferably in [sheet]."
        )

    def test_title_field_not_text(self, tmp_path):
        """Title-block fields are text."""
        assert read_error(tmp_path, "[sheet]\nrevision = 2\n") == (
            'FILE, line 2, sheet.revision: expected text, got 2. Write it in quotes, for example revision = "2".'
        )

    def test_missing_file(self, tmp_path):
        """A missing file is refused with its path."""
        path = tmp_path / "none.toml"
        with pytest.raises(InputsError) as excinfo:
            read_inputs(path)
        assert message(excinfo) == f"{path}: the inputs file does not exist. Check the path."

    def test_not_utf8(self, tmp_path):
        """A file that is not UTF-8 is refused."""
        path = tmp_path / "latin.toml"
        path.write_bytes('author = "J. Müller"\n'.encode("latin-1"))
        with pytest.raises(InputsError) as excinfo:
            read_inputs(path)
        assert message(excinfo) == f"{path}: the inputs file is not UTF-8 text. Save it as UTF-8."


SOURCED_TOML = """\
# P-101: two inputs with their sources, the others plain
mass = { value = "1850 kg", source = "Vendor GA drawing P-101-GA-001 rev C (invented)" }
zeta = 0.05

[machine]
speed = "1480 rpm"
unbalance = {value="120 g*mm",source="  Pump data sheet P-101-DS-001  "}  # padding is trimmed
speeds = { source = "Motor data sheet M-101-DS-001 (invented)", value = ["1400 rpm", "1480 rpm"] }
"""

INLINE_EXAMPLE = '{ value = "...", source = "Vendor drawing ..." }'


class TestInputSources:
    """An input written as { value = ..., source = ... } carries where its value comes from."""

    def test_mixed_plain_and_sourced(self, tmp_path):
        """The values read as if written alone; only the inputs written with a source have one."""
        f = read_inputs(write(tmp_path, SOURCED_TOML))
        assert dict(f.values) == {
            "mass": "1850 kg",
            "zeta": 0.05,
            "speed": "1480 rpm",
            "unbalance": "120 g*mm",
            "speeds": ("1400 rpm", "1480 rpm"),
        }
        assert dict(f.sources) == {
            "mass": "Vendor GA drawing P-101-GA-001 rev C (invented)",
            "unbalance": "Pump data sheet P-101-DS-001",
            "speeds": "Motor data sheet M-101-DS-001 (invented)",
        }
        assert list(f.sources) == ["mass", "unbalance", "speeds"]
        assert dict(f.groups) == {
            "mass": "",
            "zeta": "",
            "speed": "machine",
            "unbalance": "machine",
            "speeds": "machine",
        }
        assert [f.line_of(k) for k in ("mass", "zeta", "unbalance")] == [2, 3, 7]
        assert f.assignments() == dict(f.values)
        with pytest.raises(TypeError):
            f.sources["zeta"] = "mine"

    def test_same_values_as_plain(self, tmp_path):
        """Writing a source changes no value: the plain file reads to the same inputs."""
        plain = (
            'mass = "1850 kg"\nzeta = 0.05\n[machine]\nspeed = "1480 rpm"\nunbalance = "120 g*mm"\n'
            'speeds = ["1400 rpm", "1480 rpm"]\n'
        )
        sourced = read_inputs(write(tmp_path, SOURCED_TOML))
        alone = read_inputs(write(tmp_path, plain, "plain.toml"))
        assert dict(sourced.values) == dict(alone.values) and dict(alone.sources) == {}
        check_keys(sourced, dict.fromkeys(alone.values, ""), path=sourced.path)

    def test_a_header_still_groups(self, tmp_path):
        """Under a [mass] header, value and source are two inputs of the group "mass", as before."""
        f = read_inputs(write(tmp_path, '[mass]\nvalue = "1 kg"\nsource = "x"\n'))
        assert dict(f.values) == {"value": "1 kg", "source": "x"} and dict(f.sources) == {}
        assert f.groups["value"] == "mass"

    def test_nested_header_still_refused(self, tmp_path):
        """[machine.speed] is a nested table, not an input with a source."""
        assert read_error(tmp_path, '[machine.speed]\nvalue = "1480 rpm"\nsource = "x"\n') == (
            'FILE: the table "machine.speed" is nested inside "machine". Use one level of tables to group inputs.'
        )

    @pytest.mark.parametrize(
        ("text", "expected"),
        [
            (
                'mass = { source = "Vendor drawing" }\n',
                'FILE, line 1, mass: the input "mass" is written as a table without a value. '
                f"Give its value in the table: mass = {INLINE_EXAMPLE}.",
            ),
            (
                '[machine]\nspeed = { value = "1480 rpm" }\n',
                'FILE, line 2, speed: the input "speed" is written as a table without a source. '
                f"Give its source in the table: speed = {INLINE_EXAMPLE}, or write speed = value alone.",
            ),
            (
                'mass = { value = "1850 kg", sorce = "Vendor drawing" }\n',
                'FILE, line 1, mass: unknown key "sorce" in the table of the input "mass". Did you mean "source"? '
                f"An input written as a table takes only value, source and a band (tolerance, or min and max): mass = {INLINE_EXAMPLE}; "
                "to group inputs, put them under a [mass] header.",
            ),
            (
                'machine = { speed = "1480 rpm" }\n',
                'FILE, line 1, machine: unknown key "speed" in the table of the input "machine". '
                f"An input written as a table takes only value, source and a band (tolerance, or min and max): machine = {INLINE_EXAMPLE}; "
                "to group inputs, put them under a [machine] header.",
            ),
            (
                'mass = { value = "1850 kg", source = 101 }\n',
                "FILE, line 1, mass: the source must be text, not a number. Write where the value comes from "
                f"in quotes: mass = {INLINE_EXAMPLE}, or write mass = value alone.",
            ),
            (
                'mass = { value = "1850 kg", source = 2024-05-02 }\n',
                "FILE, line 1, mass: the source must be text, not a date or time. Write where the value comes "
                f"from in quotes: mass = {INLINE_EXAMPLE}, or write mass = value alone.",
            ),
            (
                'mass = { value = "1850 kg", source = { drawing = "P-101-GA-001" } }\n',
                "FILE, line 1, mass: the source must be text, not a table. Write where the value comes from "
                f"in quotes: mass = {INLINE_EXAMPLE}, or write mass = value alone.",
            ),
            (
                'mass = { value = "1850 kg", source = "  " }\n',
                "FILE, line 1, mass: the source is empty. Write where the value comes from: "
                f"mass = {INLINE_EXAMPLE}, or write mass = value alone.",
            ),
            (
                'mass = { value = 2024-05-02, source = "Vendor drawing" }\n',
                'FILE, line 1, mass: a date value cannot be an input. Give text with a unit ("250 kg"), '
                "a number or true/false.",
            ),
            (
                'mass = { value = nan, source = "Vendor drawing" }\n',
                "FILE, line 1, mass: the value nan is not a finite number. Give a finite number.",
            ),
            (
                'subject = { value = "Pump P-101", source = "Vendor drawing" }\n',
                'FILE, line 1, subject: the title-block field "subject" is written as a table. '
                'Title-block fields take no source: write subject = "...".',
            ),
            (
                '[sheet]\nrevision = { value = "B", source = "Vendor drawing" }\n',
                'FILE, line 2, sheet.revision: the title-block field "revision" is written as a table. '
                'Title-block fields take no source: write revision = "...".',
            ),
        ],
        ids=[
            "no-value",
            "no-source",
            "unknown-key",
            "group-as-inline-table",
            "number-source",
            "date-source",
            "table-source",
            "empty-source",
            "date-value",
            "nan-value",
            "title-field",
            "title-field-in-sheet",
        ],
    )
    def test_refused(self, tmp_path, text, expected):
        """A malformed input table is refused at its line with what to write instead."""
        assert read_error(tmp_path, text) == expected


class TestCheckKeys:
    EXPECTED = {"mass": "1 kg", "stiffness": "1 N/m", "zeta": 0.0, "project": "", "revision": ""}

    def test_ok(self):
        """Exactly the expected inputs (title-block fields optional) pass."""
        check_keys({"mass": "250 kg", "stiffness": "12 N/mm", "zeta": 0.05}, self.EXPECTED, path="p101.toml")

    def test_unknown_and_missing(self):
        """Unknown keys get a suggestion, missing keys are listed, in one error."""
        with pytest.raises(InputsError) as excinfo:
            check_keys({"mass": "250 kg", "stifness": "12 N/mm"}, self.EXPECTED, path="p101.toml")
        assert message(excinfo) == (
            'p101.toml: unknown input "stifness" (did you mean "stiffness"?); '
            'missing inputs "stiffness", "zeta". The template\'s inputs are mass, stiffness, zeta.'
        )

    def test_missing_one(self):
        """One missing key is named in the singular."""
        with pytest.raises(InputsError) as excinfo:
            check_keys({"mass": "250 kg", "stiffness": "12 N/mm"}, self.EXPECTED, path="p101.toml")
        assert message(excinfo) == (
            'p101.toml: missing input "zeta". The template\'s inputs are mass, stiffness, zeta.'
        )

    def test_unknown_without_suggestion(self):
        """An unknown key with nothing close gets no suggestion."""
        with pytest.raises(InputsError) as excinfo:
            check_keys(
                {"mass": "1 kg", "stiffness": "1 N/m", "zeta": 0, "colour": "red"}, self.EXPECTED, path="a"
            )
        assert (
            message(excinfo) == 'a: unknown input "colour". The template\'s inputs are mass, stiffness, zeta.'
        )

    def test_inputs_file_gives_lines(self, tmp_path):
        """With an InputsFile, unknown keys give their line; [sheet] fields are not inputs."""
        f = read_inputs(write(tmp_path, '[sheet]\nauthor = "A. Engineer"\n[base]\nmas = "250 kg"\n'))
        with pytest.raises(InputsError) as excinfo:
            check_keys(f, {"mass": "1 kg"}, path=f.path)
        assert message(excinfo) == (
            f'{f.path}: unknown input "mas" on line 4 (did you mean "mass"?); missing input "mass". '
            "The template's inputs are mass."
        )

    @pytest.mark.parametrize(
        "text",
        ['subject = "P-101"\nmass = "1 kg"\n', 'mass = "1 kg"\n[sheet]\nsubject = "P-101"\n'],
    )
    def test_subject_given_either_way(self, tmp_path, text):
        """A template's subject is found at the top level or in [sheet]."""
        f = read_inputs(write(tmp_path, text))
        check_keys(f, {"subject": "", "mass": "1 kg", "revision": ""}, path=f.path)

    def test_subject_required(self, tmp_path):
        """The subject is the one title-block field a template's inputs file must give."""
        f = read_inputs(write(tmp_path, 'mass = "1 kg"\n[sheet]\nrevision = "B"\n'))
        with pytest.raises(InputsError) as excinfo:
            check_keys(f, {"subject": "", "mass": "1 kg", "revision": ""}, path=f.path)
        assert message(excinfo) == (
            f'{f.path}: missing input "subject". The template\'s inputs are subject, mass.'
        )

    def test_optional_names(self):
        """Names listed as optional may be missing."""
        check_keys({}, {"mass": "1 kg"}, path="a", optional=["mass"])


CELL = '''\
"""Parameters of the P-101 inertia-base calculation."""
# pump P-101, Harrow Creek
mass = "250 kg"
stiffness = "12 N/mm"  # supplier data
zeta = 0.05
offset = -2
flag = True
title: str = "P-101"
'''


class TestParametersFromSource:
    def test_reads_in_order(self):
        """Literal assignments are read in order, comments and docstring ignored."""
        params = parameters_from_source(CELL)
        assert list(params.items()) == [
            ("mass", "250 kg"),
            ("stiffness", "12 N/mm"),
            ("zeta", 0.05),
            ("offset", -2),
            ("flag", True),
            ("title", "P-101"),
        ]

    @pytest.mark.parametrize(
        ("source", "text"),
        [
            (
                "import os",
                'parameters cell, line 1: "import os" is not a plain assignment. '
                'Keep the parameters cell to lines like mass = "250 kg"; do the work in later cells.',
            ),
            (
                "a = b = 1",
                'parameters cell, line 1: "a = b = 1" is not a plain assignment. '
                'Keep the parameters cell to lines like mass = "250 kg"; do the work in later cells.',
            ),
            (
                "x = 1\nprint(x)",
                'parameters cell, line 2: "print(x)" is not a plain assignment. '
                'Keep the parameters cell to lines like mass = "250 kg"; do the work in later cells.',
            ),
            (
                "a, b = 1, 2",
                'parameters cell, line 1: "a, b" is not a plain name. '
                'Assign to a single name, for example mass = "250 kg".',
            ),
            (
                "mass = Q_(250, 'kg')",
                "parameters cell, line 1: the value of \"mass\" is not a literal: Q_(250, 'kg'). "
                "Give text, a number or True/False; compute derived values in later cells.",
            ),
            (
                "k = 2 * 6",
                'parameters cell, line 1: the value of "k" is not a literal: 2 * 6. '
                "Give text, a number or True/False; compute derived values in later cells.",
            ),
            (
                "z = -True",
                'parameters cell, line 1: the value of "z" is not a literal: -True. '
                "Give text, a number or True/False; compute derived values in later cells.",
            ),
            ("m = 1\nm = 2", 'parameters cell, line 2: "m" is set twice. Set each parameter once.'),
            (
                "%matplotlib inline",
                "parameters cell, line 1: the parameters cell is not valid Python (invalid syntax). "
                'Write one assignment per line, for example mass = "250 kg".',
            ),
        ],
    )
    def test_refused(self, source, text):
        """Anything but literal assignments is refused with the line."""
        with pytest.raises(InputsError) as excinfo:
            parameters_from_source(source)
        assert message(excinfo) == text

    def test_nothing_runs(self, tmp_path):
        """Reading a cell runs none of it."""
        target = tmp_path / "made"
        with pytest.raises(InputsError):
            parameters_from_source(f"x = open({str(target)!r}, 'w')")
        assert not target.exists()


class TestInjectedSource:
    def test_source(self):
        """Values are written with repr, one per line, after a comment."""
        assert injected_source({"mass": "250 kg", "zeta": 0.05, "n": 3, "flag": False}) == (
            "# Inputs set by calckit build\nmass = '250 kg'\nzeta = 0.05\nn = 3\nflag = False\n"
        )

    @given(
        st.dictionaries(
            st.from_regex(r"[a-z][a-z0-9_]{0,8}", fullmatch=True).filter(
                lambda s: s not in {"if", "in", "is", "or", "as", "for", "def", "del", "not", "and", "try"}
            ),
            st.one_of(
                st.text(), st.integers(), st.floats(allow_nan=False, allow_infinity=False), st.booleans()
            ),
        )
    )
    def test_round_trip(self, values):
        """Reading the injected cell back gives the same values (and types)."""
        back = parameters_from_source(injected_source(values))
        assert list(back.items()) == list(values.items())
        assert [type(v) for v in back.values()] == [type(v) for v in values.values()]

    @pytest.mark.parametrize(
        ("values", "text"),
        [
            ({"mass": math.nan}, "input mass: the value nan is not a finite number. Give a finite number."),
            (
                {"speeds": ["1 Hz"]},
                'input speeds: a list value cannot be passed to a template. Give text ("250 kg"), a number or True/False.',
            ),
            (
                {"pump speed": 1},
                "inputs: 'pump speed' is not usable as a Python name. Use letters, digits and underscores, starting with a letter.",
            ),
            (
                {"class": 1},
                "inputs: 'class' is not usable as a Python name. Use letters, digits and underscores, starting with a letter.",
            ),
        ],
    )
    def test_refused(self, values, text):
        """Values that cannot be written as literals, and bad names, are refused."""
        with pytest.raises(InputsError) as excinfo:
            injected_source(values)
        assert message(excinfo) == text


class TestValueChecks:
    @pytest.mark.parametrize("value", [Q_(250, "kg"), 3, 0.5, sp.Rational(1, 3), sp.sqrt(2)])
    def test_positive_passes(self, value):
        """Positive values come back unchanged."""
        assert positive(value, "mass") is value

    @pytest.mark.parametrize(
        ("value", "shown"),
        [(Q_(0, "kg"), "0 kg"), (Q_(-250, "kg"), "-250 kg"), (0, "0"), (sp.Integer(-2), "-2")],
    )
    def test_positive_refuses(self, value, shown):
        """Zero or negative mass is refused with what to do."""
        with pytest.raises(InputsError) as excinfo:
            positive(value, "mass")
        assert (
            message(excinfo)
            == f"mass: must be greater than zero, got {shown}. Check the value and its sign in the inputs."
        )

    def test_non_negative(self):
        """Zero passes non_negative; a negative value does not."""
        assert non_negative(Q_(0, "N*s/m"), "c") == Q_(0, "N*s/m")
        with pytest.raises(InputsError) as excinfo:
            non_negative(-0.01, "zeta")
        assert (
            message(excinfo)
            == "zeta: must be zero or more, got -0.01. Check the value and its sign in the inputs."
        )

    @pytest.mark.parametrize(
        ("value", "shown"),
        [(math.nan, "nan"), (math.inf, "inf"), (Q_(math.inf, "N/m"), "inf N/m"), (sp.oo, "oo")],
    )
    def test_finite_refuses(self, value, shown):
        """NaN and infinity are refused."""
        with pytest.raises(InputsError) as excinfo:
            finite(value, "stiffness")
        assert message(excinfo) == f"stiffness: {shown} is not a finite number. Give a finite number."

    def test_positive_refuses_nan(self):
        """positive() also refuses NaN, which compares false both ways."""
        with pytest.raises(InputsError, match="is not a finite number"):
            positive(math.nan, "mass")

    @pytest.mark.parametrize(
        ("value", "text"),
        [
            (True, "mass: got a truth value True. Give a number."),
            ("250 kg", "mass: expected a number or a quantity, got str '250 kg'. Give a number."),
            (sp.Symbol("m"), "mass: m is not a number. Give a number."),
            (sp.I, "mass: I is not a real number. Give a real number."),
        ],
    )
    def test_not_numbers(self, value, text):
        """Things that are not real numbers are refused."""
        with pytest.raises(InputsError) as excinfo:
            positive(value, "mass")
        assert message(excinfo) == text


def test_title_fields_match_title_block():
    """TITLE_FIELDS lists the TitleBlock fields in order."""
    assert tuple(TitleBlock.__dataclass_fields__) == TITLE_FIELDS


def test_inputs_file_line_of_without_text():
    """line_of gives None when the text is not kept."""
    assert InputsFile(Path("x.toml"), {"mass": "1 kg"}).line_of("mass") is None


class TestDataFiles:
    """A parameter marked ``# file`` names a data file next to the inputs file (calckit.workflow.build)."""

    def _template(self, folder: Path) -> Path:
        import nbformat

        nb = nbformat.v4.new_notebook()
        cell = nbformat.v4.new_code_cell(
            'subject = "x"\nmass = "1 kg"\nrecord_file = "r.csv"  # file: the record\n'
        )
        cell.metadata["tags"] = ["parameters"]
        nb.cells = [cell]
        path = folder / "t.ipynb"
        nbformat.write(nb, path)
        return path

    def test_resolved_next_to_the_inputs_file(self, tmp_path):
        from calckit.workflow.build import prepared_values
        from calckit.workflow.inputs import read_inputs
        from calckit.workflow.templates import load_template

        tmpl = load_template(self._template(tmp_path))
        assert tmpl.files == {"record_file"}
        (tmp_path / "data").mkdir()
        (tmp_path / "data" / "b.csv").write_text("time (s),force (N)\n0,0\n", encoding="utf-8")
        inputs = tmp_path / "data" / "in.toml"
        inputs.write_text('subject = "x"\nmass = "2 kg"\nrecord_file = "b.csv"\n', encoding="utf-8")
        values = prepared_values(tmpl, read_inputs(inputs))
        assert values["record_file"] == str((tmp_path / "data" / "b.csv").resolve())
        assert values["mass"] == "2 kg"

    def test_missing_file_at_its_line(self, tmp_path):
        from calckit.workflow.build import prepared_values
        from calckit.workflow.inputs import read_inputs
        from calckit.workflow.templates import load_template

        tmpl = load_template(self._template(tmp_path))
        inputs = tmp_path / "in.toml"
        inputs.write_text('subject = "x"\nmass = "2 kg"\nrecord_file = "gone.csv"\n', encoding="utf-8")
        with pytest.raises(InputsError) as caught:
            prepared_values(tmpl, read_inputs(inputs))
        assert str(caught.value) == (
            f'{inputs}, line 3, record_file: the file "gone.csv" is not in {tmp_path.resolve()}. '
            "Put the file next to the inputs file, or give its path relative to the inputs file."
        )
