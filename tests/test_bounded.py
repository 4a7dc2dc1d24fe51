"""Short hostile inputs are refused before the work is done: bounded parsing and expansion.

Each of these once hung a build or ate memory until a cell's time limit: a power of a
power in a unit, a 10 MB unit text, a forcing whose powers sympy merges into a degree
of 10,000. They must now be refused at once with a CalcError that says the limit. The
time bound is the harness's (a child process with a timeout), never a timed assertion.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap

import pytest
import sympy as sp

import calckit as ck

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
