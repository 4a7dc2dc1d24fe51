"""Short hostile inputs are refused before the work is done: bounded parsing and expansion.

Each of these once hung a build or ate memory until a cell's time limit: a power of a
power in a unit, a 10 MB unit text, a forcing whose powers sympy merges into a degree
of 10,000. They must now be refused at once with a CalcError that says the limit. The
time bound is the harness's (a child process with a timeout), never a timed assertion.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import textwrap
import unicodedata

import pytest
import sympy as sp

import calckit as ck
from calckit.workflow.inputs import check_keys, read_inputs

T = sp.Symbol("t", real=True)
W = sp.Symbol("w", positive=True)


class TestUnitText:
    @pytest.mark.parametrize(
        "text, message",
        [
            (
                "1850 kg*10**10**10",
                'mass: "1850 kg*10**10**10" raises a power to a power. Write the unit with one power, as m**2 or s**-1.',
            ),
            (
                "5 m**99",
                'mass: "5 m**99" has the power 99, more than a unit takes. Use powers of units between -12 and 12.',
            ),
            (
                "1" * 100 + " kg",
                "mass: a number in the text has 100 digits, more than 40. Write the number with an exponent, as 1.5e9.",
            ),
        ],
        ids=["power of a power", "large power", "many digits"],
    )
    def test_refused_with_the_limit(self, text, message):
        """The refusal names the input and the limit."""
        with pytest.raises(ck.UnitsError) as caught:
            ck.quantity(text, "mass")
        assert str(caught.value) == message

    def test_ten_megabytes_refused_by_length(self):
        """A 10 MB unit text is refused by its length, before pint or int() sees it."""
        with pytest.raises(ck.UnitsError, match=r"^mass: the text is 10,000,003 characters long"):
            ck.quantity("1" * 10_000_000 + " kg", "mass")

    def test_ordinary_units_still_read(self):
        """Powers and compound units an engineer writes are read as before."""
        assert str(ck.quantity("9.81 m/s**2", "g").units) == "meter / second ** 2"
        assert str(ck.quantity("2 1/s^2", "x").units) == "1 / second ** 2"
        assert ck.quantity("3.5 N*s/mm", "c").to("N*s/m").magnitude == pytest.approx(3500)


class TestForcing:
    def test_merged_power_refused_by_the_reader(self):
        """(cos(w t)**100)**100 is cos(w t)**10000 once sympy merges it: refused by the expression reader."""
        with pytest.raises(ck.InputsError) as caught:
            ck.parse_expression(
                "F0*(cos(w*t)**100)**100", {"F0": sp.Symbol("F0"), "w": W}, where="forcing", t=T
            )
        assert str(caught.value) == (
            'forcing: "F0*(cos(w*t)**100)**100" raises cos(t*w) to the power 10000 once its powers are merged. '
            "Use powers between -100 and 100."
        )

    @pytest.mark.parametrize(
        "forcing", [(T + 1) ** 10000, sp.cos(W * T) ** 10000], ids=["(t+1)**10000", "cos**10000"]
    )
    def test_large_power_refused_by_the_split(self, forcing):
        """A forcing built in Python (no reader) is refused by the split, naming the term."""
        with pytest.raises(ck.ForcingError) as caught:
            ck.split_forcing(forcing, T)
        assert str(caught.value) == (
            f"forcing term {forcing}: the forcing is too large to expand: it is raised to the power 10000, more "
            "than 100. Write the forcing with powers up to 100 and fewer products of long sums; a load that needs "
            "more is better given as a Fourier series (calckit.physics.fourier) or integrated numerically."
        )

    def test_power_100_still_split(self):
        """cos(t)**100 is in bounds: 51 exponent groups (cos^n t as a sum of cos k t, k = 0, 2, ..., n; Kreyszig,
        10th ed., App. 3, power-reduction formulas, from memory); a small power is derived and verified."""
        assert len(ck.split_forcing(sp.cos(T) ** 100, T).groups) == 51
        assert ck.LinearODE([1, 0, 9]).particular(sp.cos(T) ** 6, t=T).verified


def test_hostile_inputs_end_quickly():
    """All of the above in a child process that the harness stops after 120 s: none may hang."""
    code = textwrap.dedent(
        """
        import sympy as sp, calckit as ck
        t = sp.Symbol("t", real=True)
        cases = [
            lambda: ck.quantity("1850 kg*10**10**10", "mass"),
            lambda: ck.quantity("1" * 10_000_000 + " kg", "mass"),
            lambda: ck.parse_expression("((t+1)**100)**100", {}, where="forcing", t=t),
            lambda: ck.Oscillator(1, 0.1, 4).particular((t + 1) ** 10000, t=t),
        ]
        for case in cases:
            try:
                case()
            except ck.CalcError:
                print("refused")
        """
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True
    )
    assert done.stdout.split() == ["refused"] * 4


# ---------------------------------------------------------------------------
# Python's own limits (integer-string length, float range, recursion depth) reached from
# hostile text are the kit's errors, naming the limit and the input.

#: Python's default limit on the digits of an int converted from text (CPython 3.11 docs,
#: "Integer string conversion length limitation", sys.get_int_max_str_digits).
INT_DIGITS = sys.get_int_max_str_digits()


class TestPythonLimits:
    def test_int_limit_is_the_documented_default(self):
        """The limit the messages quote is Python's: int() of more digits raises ValueError."""
        assert INT_DIGITS == 4300
        with pytest.raises(ValueError):
            int("1" * (INT_DIGITS + 1))

    def test_long_unit_text_refused_by_length(self):
        """A unit with a 5000-digit factor is refused by the length bound, before int() sees it."""
        with pytest.raises(ck.UnitsError, match=r"^mass: the text is 5,009 characters long"):
            ck.quantity("1850 kg*1" + "0" * 5000, "mass")

    @pytest.mark.parametrize(
        "value, number",
        [("1e999999 kg", "1e999999"), (10**5000, "of about 5,001 digits"), (sp.Integer(10) ** 400, "of about 401 digits")],
        ids=["written", "python int", "sympy integer"],
    )
    def test_float_overflow_named(self, value, number):
        """A number above the largest float (sys.float_info.max, IEEE 754 binary64) is named as an overflow."""
        with pytest.raises(ck.UnitsError) as caught:
            ck.quantity(value, "mass")
        assert str(caught.value) == (
            f"mass: the number {number} is larger than a float holds (about 1.8e308): it overflows. Give the "
            "value in a larger unit, or check it for a slip (an exponent typed twice)."
        )

    def test_expression_power_overflow(self):
        """10.0**400 is refused by the exponent bound, not computed."""
        with pytest.raises(ck.InputsError) as caught:
            ck.parse_expression("10.0**400", {}, where="forcing", t=T)
        assert str(caught.value) == (
            'forcing: the power "10.0**400" is too large. Use real exponents between -100 and 100.'
        )

    def test_product_of_big_numbers_bounded(self):
        """Each factor in bounds, the product not: refused by its digits (far under the int-string limit)."""
        with pytest.raises(ck.InputsError) as caught:
            ck.parse_expression("1e300*1e300*t", {}, where="forcing", t=T)
        assert str(caught.value) == (
            'forcing: "1e300*1e300*t" makes a number of 602 digits. Keep numbers under 400 digits.'
        )
        assert 400 < INT_DIGITS

    def test_deep_parentheses_name_the_parser_limit(self):
        """Python's parser stops at 200 nested parentheses (CPython, Parser/tokenizer.c MAXLEVEL)."""
        text = "(" * 250 + "t" + ")" * 250
        with pytest.raises(ck.InputsError) as caught:
            ck.parse_expression(text, {}, where="forcing", t=T)
        assert str(caught.value) == (
            "forcing: the expression nests parentheses or calls more than 200 deep (column 201), the limit of "
            "Python's parser. Write a shorter, less nested expression."
        )

    def test_deep_operators_name_the_depth(self):
        """Many unary minus signs pass the parser but not the reader's recursion: refused as nested too deeply."""
        with pytest.raises(ck.InputsError, match="^forcing: the expression is nested too deeply"):
            ck.parse_expression("-" * 1999 + "t", {}, where="forcing", t=T)

    def test_inputs_file_long_integer(self, tmp_path):
        """A 5000-digit integer in an inputs file: the line and Python's limit named, no ValueError."""
        path = tmp_path / "p101.toml"
        path.write_text('subject = "P-101"\nmass = ' + "1" * 5000 + "\n", encoding="utf-8")
        with pytest.raises(ck.InputsError) as caught:
            read_inputs(path)
        assert str(caught.value) == (
            f"{path}, line 2: a number has 5,000 digits, more than the 4,300 digits Python reads in a whole "
            'number. Write the number with an exponent (1.5e9) or as text with a unit ("1850 kg").'
        )

    @pytest.mark.parametrize(
        "text", ["mass = " + "[" * 5000 + "]" * 5000, "a = " + "{b = " * 3000 + "1" + "}" * 3000],
        ids=["lists", "inline tables"],
    )
    def test_inputs_file_deep_nesting(self, tmp_path, text):
        """Nesting past Python's recursion limit is refused in words, not as a RecursionError."""
        path = tmp_path / "p101.toml"
        path.write_text(text + "\n", encoding="utf-8")
        with pytest.raises(ck.InputsError) as caught:
            read_inputs(path)
        assert str(caught.value) == (
            f"{path}: the inputs file nests lists or tables deeper than calckit reads. Give each value as text "
            "with a unit, a number or a flat list; group with one level of [tables]."
        )

    def test_cases_file_long_integer(self, tmp_path):
        """The cases file goes through the same bounded reader."""
        from calckit.workflow.toml_text import load_toml

        with pytest.raises(ck.InputsError, match=r"^cases.toml, line 2: a number has 4,400 digits"):
            load_toml('[[case]]\nmass = ' + "7" * 4400 + "\n", "cases.toml", "cases file")


# ---------------------------------------------------------------------------
# Look-alike characters: the message names the character, by unicodedata's name and code point.


def lookalike_words(char: str, position: int, plain: str) -> str:
    """The words a refusal uses, built from unicodedata (the outside source of the name)."""
    return f"character {char!r} ({unicodedata.name(char)}, U+{ord(char):04X}) at position {position} looks like {plain!r}"


class TestLookalikes:
    def test_the_words_of_the_brief(self):
        """unicodedata names U+0441 CYRILLIC SMALL LETTER ES (The Unicode Standard, Cyrillic block)."""
        assert lookalike_words("\u0441", 3, "c") == (
            "character 'с' (CYRILLIC SMALL LETTER ES, U+0441) at position 3 looks like 'c'"
        )

    @pytest.mark.parametrize(
        "text, char, position, plain",
        [("F0*\u0441os(w*t)", "\u0441", 4, "c"), ("F0*c\u03bfs(w*t)", "\u03bf", 5, "o"), ("F0 \u2212 t", "\u2212", 4, "-")],
        ids=["cyrillic es", "greek omicron", "minus sign"],
    )
    def test_expression(self, text, char, position, plain):
        with pytest.raises(ck.InputsError) as caught:
            ck.parse_expression(text, {"F0": sp.Symbol("F0"), "w": W}, where="forcing", t=T)
        assert str(caught.value) == (
            f'forcing: {lookalike_words(char, position, plain)}, in "{text}". '
            "Type it again with plain Latin letters and ASCII signs (- * / ' \")."
        )

    def test_unit(self):
        """A Cyrillic ka in kg."""
        with pytest.raises(ck.UnitsError) as caught:
            ck.quantity("1850 \u043ag", "mass")
        assert lookalike_words("\u043a", 6, "k") in str(caught.value)

    def test_units_read_as_before(self):
        """The micro and degree signs are units, not look-alikes."""
        assert ck.quantity("25 µm", "x").to("m").magnitude == pytest.approx(25e-6)
        assert ck.quantity("30 °", "a").to("rad").magnitude == pytest.approx(math.pi / 6)

    def test_inputs_file_bare_key(self, tmp_path):
        """A bare key with a Cyrillic es is broken TOML (TOML 1.0: bare keys are A-Za-z0-9_-): named."""
        path = tmp_path / "p101.toml"
        path.write_text('ma\u0441s = "1850 kg"\n', encoding="utf-8")
        with pytest.raises(ck.InputsError) as caught:
            read_inputs(path)
        assert str(caught.value) == (
            f"{path}, line 1, column 3: the inputs file is not valid TOML: {lookalike_words(chr(0x441), 3, 'c')} "
            "(on that line). Type it again with plain Latin letters and ASCII signs (- * / ' \")."
        )

    def test_inputs_file_quoted_key(self):
        """A quoted key is valid TOML; the template does not know it, and the message says why."""
        with pytest.raises(ck.InputsError) as caught:
            check_keys({"ma\u0441s": "1850 kg"}, {"mass": ""}, path="p101.toml")
        assert f'unknown input "ma\u0441s" (did you mean "mass"?) ({lookalike_words(chr(0x441), 3, "c")})' in str(
            caught.value
        )

    def test_declared_greek_name_still_read(self):
        """Only a refused text is searched: a declared Greek name reads as before."""
        omega = sp.Symbol("omega")
        assert ck.parse_expression("cos(\u03c9*t)", {"\u03c9": omega}, where="forcing", t=T) == sp.cos(omega * T)


def test_python_limits_end_quickly():
    """The hostile texts of Python's limits in a child process the harness stops after 120 s."""
    code = textwrap.dedent(
        """
        import sympy as sp, calckit as ck
        from calckit.workflow.toml_text import load_toml
        t = sp.Symbol("t", real=True)
        cases = [
            lambda: ck.quantity("1850 kg*1" + "0" * 5000, "mass"),
            lambda: ck.quantity("1e999999 kg", "mass"),
            lambda: ck.quantity("(" * 100000, "mass"),
            lambda: ck.parse_expression("(" * 100000, {}, where="forcing", t=t),
            lambda: ck.parse_expression("(" * 199 + "t" + ")" * 199 + "*10.0**400", {}, where="forcing", t=t),
            lambda: load_toml("x = " + "[" * 100000 + "]" * 100000, "x.toml"),
            lambda: load_toml("x = " + "9" * 100000, "x.toml"),
        ]
        for case in cases:
            try:
                case()
            except ck.CalcError:
                print("refused")
        """
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True)
    assert done.stdout.split() == ["refused"] * 7


class TestOutputUnits:
    """A unit asked for a result ([units] table, Sheet.use_units) is bounded like a quantity's text."""

    @pytest.mark.parametrize(
        "unit, start",
        [
            ("in**10**10", 'units.x_max: "in**10**10" raises a power to a power.'),
            ("m" * 100_000, "units.x_max: the text is 100,000 characters long"),
            ("\u043ag", "units.x_max: character 'к' (CYRILLIC SMALL LETTER KA, U+043A) at position 1 looks like 'k'"),
        ],
        ids=["power of a power", "100 kB", "cyrillic ka"],
    )
    def test_refused(self, unit, start):
        from calckit.sheet.output_units import OutputUnits

        with pytest.raises(ck.UnitsError) as caught:
            OutputUnits.of("SI", {"x_max": unit})
        assert str(caught.value).startswith(start)

    def test_ends_quickly(self):
        """pint alone took minutes on these (the harness stops the child after 60 s)."""
        code = textwrap.dedent(
            """
            import calckit as ck
            from calckit.sheet.output_units import OutputUnits
            for unit in ["m" * 100_000, "(" * 5000 + "m" + ")" * 5000, "in**10**10"]:
                try:
                    OutputUnits.of("SI", {"x_max": unit})
                except ck.CalcError:
                    print("refused")
            """
        )
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, check=True)
        assert done.stdout.split() == ["refused"] * 3


class TestDegreeBound:
    """The degree of t is bounded once the forcing is multiplied out, and t**n itself needs no expansion, so
    a forcing in bounds is derived and verified and one beyond is refused as too large, never as a defect."""

    @pytest.mark.parametrize("order", [1, 2], ids=["x' = t**100", "x'' = t**100"])
    def test_degree_100_derived_and_verified(self, order):
        """Against sympy.integrate, once or twice (the particular solution with no constant terms)."""
        coefficients = [1] + [0] * order
        derivation = ck.LinearODE(coefficients).particular(T**100, t=T)
        assert derivation.verified
        expected = T**100
        for _ in range(order):
            expected = sp.integrate(expected, T)
        assert sp.expand(derivation.solution - expected) == 0

    @pytest.mark.parametrize(
        "forcing, degree", [((T + 1) ** 100 * (T + 2) ** 100, 200), (T**10000, 10000)], ids=["product", "t**10000"]
    )
    def test_degree_beyond_refused(self, forcing, degree):
        """(t+1)**100 (t+2)**100 has degree 200: sympy.Poly(...).degree() says so, outside the kit."""
        assert sp.Poly(forcing, T).degree() == degree
        with pytest.raises(ck.ForcingError) as caught:
            ck.Oscillator(1, sp.Rational(1, 10), 4).particular(forcing, t=T)
        assert f"it has degree {degree} in t once multiplied out, more than 100" in str(caught.value)
        assert not isinstance(caught.value, ck.InternalError)


class TestRecordsAsJson:
    """A .json file given as a record, past Python's int-string or recursion limit (json.loads raises
    ValueError / RecursionError there, Python docs of json and sys.get_int_max_str_digits): the kit's error."""

    @pytest.mark.parametrize(
        "text, why",
        [
            ('{"x": ' + "1" * 5000 + "}", "exceeds the limit (4300 digits) for integer string conversion"),
            ("[" * 100_000 + "]" * 100_000, "nested deeper than Python reads"),
        ],
        ids=["long integer", "deep nesting"],
    )
    def test_read_record_and_diff(self, tmp_path, text, why):
        from calckit.sheet import read_record
        from calckit.workflow.diff import load_built_record

        path = tmp_path / "sheet.json"
        path.write_text(text, encoding="utf-8")
        with pytest.raises((ValueError, RecursionError)):  # what json.loads alone does with it
            json.loads(text)
        with pytest.raises(ck.SheetError) as caught:
            read_record(path)
        assert str(caught.value).startswith(f"{path}: the file is not a sheet's record: {why}")
        with pytest.raises(ck.InputsError) as caught:
            load_built_record(path)
        assert str(caught.value).lower().startswith(f"{path}: cannot read the record as json ({why}".lower())


class TestCsvFiles:
    """CSV files past the csv module's field limit (csv.field_size_limit(), 131072 by default, Python docs of
    csv) or not UTF-8: the kit's InputsError, not csv.Error or UnicodeDecodeError."""

    def test_field_limit_is_pythons(self, tmp_path):
        import csv
        import io

        assert csv.field_size_limit() == 131072
        with pytest.raises(csv.Error):
            list(csv.reader(io.StringIO("t,x\n0," + "1" * 200_000 + "\n")))

    def test_record_long_cell(self, tmp_path):
        from calckit.physics.records import load_time_history

        path = tmp_path / "long.csv"
        path.write_text("time (s),force (N)\n0," + "1" * 200_000 + "\n", encoding="utf-8")
        with pytest.raises(ck.InputsError) as caught:
            load_time_history(path)
        assert str(caught.value) == (
            "long.csv: cannot read the file as CSV: field larger than field limit (131072). Give one time and "
            "one value, plain numbers, on each row."
        )

    def test_record_not_utf8(self, tmp_path):
        from calckit.physics.records import load_time_history

        path = tmp_path / "latin.csv"
        path.write_bytes(b"time (s),force (N)\n0,\xff\n")
        with pytest.raises(ck.InputsError, match=r"^latin\.csv: the file is not UTF-8 text"):
            load_time_history(path)

    def test_cases_long_cell(self, tmp_path):
        from calckit.workflow.cases import read_cases
        from calckit.workflow.templates import load_template

        path = tmp_path / "cases.csv"
        path.write_text("case,mass\na," + "1" * 200_000 + "\n", encoding="utf-8")
        with pytest.raises(ck.InputsError, match=r"cannot read the cases file as CSV: field larger than field limit"):
            read_cases(path, load_template("single_mass_harmonic"))


class TestLookalikeNames:
    def test_cases_column(self, tmp_path):
        """A cases file's column spelt with a Cyrillic a (U+0430) for Latin a."""
        from calckit.workflow.cases import read_cases
        from calckit.workflow.templates import load_template

        path = tmp_path / "cases.csv"
        path.write_text("case,m\u0430ss\na,1850 kg\n", encoding="utf-8")
        with pytest.raises(ck.InputsError) as caught:
            read_cases(path, load_template("single_mass_harmonic"))
        assert f'unknown input "m\u0430ss" ({lookalike_words(chr(0x430), 2, "a")})' in str(caught.value)

    def test_template_name(self):
        """A bundled template's name typed with a Greek omicron (U+03BF) for o."""
        from calckit.workflow.templates import load_template

        with pytest.raises(ck.BuildError) as caught:
            load_template("peri\u03bfdic_load")
        assert lookalike_words("\u03bf", 5, "o") in str(caught.value)


def test_declared_greek_name_is_no_cause():
    """With rho (U+03C1) declared, another mistake in the expression is named as itself, not as rho."""
    rho = sp.Symbol("rho")
    with pytest.raises(ck.InputsError) as caught:
        ck.parse_expression("\u03c1^2*t", {"\u03c1": rho}, where="forcing", t=T)
    assert 'the operator "^" is not a power' in str(caught.value) and "GREEK" not in str(caught.value)
