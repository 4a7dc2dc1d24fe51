r"""Numbers put through a formula: formula, substitution, result with its unit.

The trade writes a hand calculation in three moves: the formula, the formula
with the values and their units written in, and the result rounded for the
reader::

    \omega_{n} = \sqrt{\frac{k}{m}} = \sqrt{\frac{180\;\mathrm{kN/m}}{250\;\mathrm{kg}}}
               = 26.83\;\mathrm{rad/s}

:func:`put_through` makes that record. The exact result is kept (``.value``,
a sympy number in the unit asked for); it is rounded only for display, half
away from zero, to ``sig`` significant figures. Inputs may be pint quantities
in any units (``"45 lbf/in"``, ``Q_(550, "lb")``) or plain numbers; pint works
out the unit of the result, which is then converted exactly to the unit asked
for.

Examples
--------
>>> import sympy as sp
>>> k, m = sp.symbols("k m")
>>> wn = put_through("omega_n", sp.sqrt(k / m), {"k": "180 kN/m", "m": "250 kg"}, unit="rad/s")
>>> print(wn)
omega_n = sqrt(k/m) = sqrt((180 kN/m)/(250 kg)) = 26.83 rad/s
>>> wn.value
12*sqrt(5)
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from decimal import ROUND_HALF_UP, Decimal
from types import MappingProxyType

import numpy as np
import pint
import sympy as sp
from sympy.printing.latex import LatexPrinter
from sympy.printing.precedence import PRECEDENCE
from sympy.printing.str import StrPrinter

from calckit.core.units import KINDS, Q_, angular_frequency, fmt_number, kind_of, quantity, to_si, ureg
from calckit.errors import InputsError, UnitsError
from calckit.render.latex import EQ, Row, Tex, expr_latex, expr_text, symbol_latex

__all__ = ["Substitution", "put_through", "round_sig", "number_latex", "shown_magnitude", "unit_latex"]


def round_sig(value, sig: int = 4) -> Decimal:
    """*value* rounded to *sig* significant figures, half away from zero.

    The exact value is evaluated to 30 digits first, so a value that is a
    half in decimal rounds up even when its nearest float lies below it.

    Examples
    --------
    >>> import sympy as sp
    >>> round_sig(sp.Rational(26825, 1000))
    Decimal('26.83')
    >>> round_sig(sp.sqrt(720), 2)
    Decimal('27')
    """
    number = sp.sympify(value)
    if number.is_zero:
        return Decimal(0)
    digits = Decimal(str(sp.N(number, 30)))
    exponent = digits.adjusted()
    rounded = digits.quantize(Decimal(1).scaleb(exponent - sig + 1), rounding=ROUND_HALF_UP)
    if rounded.adjusted() > exponent:  # 9.9995 -> 10.00: one digit too many
        rounded = rounded.quantize(Decimal(1).scaleb(exponent - sig + 2), rounding=ROUND_HALF_UP)
    return rounded


def _decimal_text(number: Decimal) -> str:
    """Plain decimal from 0.001 to below a million, ``1.235e-5`` outside (like :func:`fmt_number`)."""
    if number == 0:
        return "0"
    exponent = number.adjusted()
    if -3 <= exponent < 6:
        text = f"{number:f}"
        if "." in text:
            text = text.rstrip("0").rstrip(".")
        return text
    mantissa = number.scaleb(-exponent)
    text = f"{mantissa:f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return f"{text}e{exponent}"


def number_latex(text: str) -> str:
    r"""LaTeX of a number written as text: ``1.2e-5`` -> ``1.2 \cdot 10^{-5}``.

    Examples
    --------
    >>> number_latex("1.2e-5"), number_latex("26.83")
    ('1.2 \\cdot 10^{-5}', '26.83')
    """
    if "e" in text:
        mantissa, exponent = text.split("e")
        return rf"{mantissa} \cdot 10^{{{int(exponent)}}}"
    return text


def unit_latex(unit: str) -> str:
    r"""LaTeX of a pint unit's compact text, upright: ``N*s/m`` -> ``\mathrm{N \cdot s/m}``.

    Examples
    --------
    >>> unit_latex("kN/m"), unit_latex("m/s**2"), unit_latex("")
    ('\\mathrm{kN/m}', '\\mathrm{m/s^{2}}', '')
    """
    if not unit:
        return ""
    text = unit.replace("%", r"\%").replace("_", r"\_")
    text = text.replace("**", "^").replace("*", r" \cdot ")
    out = []
    i = 0
    while i < len(text):  # exponents in braces: s^2 -> s^{2}, s^-1 -> s^{-1}
        if text[i] == "^":
            j = i + 1
            while j < len(text) and (text[j].isdigit() or text[j] in "-."):
                j += 1
            out.append("^{" + text[i + 1 : j] + "}")
            i = j
        else:
            out.append(text[i])
            i += 1
    return r"\mathrm{" + "".join(out) + "}"


def _unit_text(units) -> str:
    return f"{units:~C}" if units != ureg.dimensionless else ""


#: a value with more significant digits than this was computed, not typed
_TYPED_DIGITS = 6


def _quantity_pieces(q: pint.Quantity, sig: int = 4) -> tuple[str, str]:
    """(LaTeX, text) of a value put into a formula: as typed, or at ``sig`` figures.

    A value typed by the user (``1480 rpm``, ``0.05``) is shown as given; an earlier
    result carried forward (``40.6490327626598 um``) is shown rounded to ``sig``
    significant figures. The exact value is used for the result either way.
    """
    number = fmt_number(q.magnitude, 15)
    mantissa = number.split("e")[0].replace("-", "").replace(".", "").strip("0")
    if len(mantissa) > _TYPED_DIGITS:
        number = fmt_number(q.magnitude, sig)
    unit = _unit_text(q.units)
    if not unit:
        return number_latex(number), number
    return rf"{number_latex(number)}\;{unit_latex(unit)}", f"{number} {unit}"


def shown_magnitude(q: pint.Quantity, sig: int = 4) -> float:
    """The magnitude of *q* as a substitution shows it (as typed, or at ``sig`` figures), for redoing it by hand.

    >>> shown_magnitude(Q_(40.6490327626598, "um")), shown_magnitude(Q_(1480, "rpm"))
    (40.65, 1480.0)
    """
    return float(_quantity_pieces(q, sig)[1].split(" ")[0])


class _Value(sp.Symbol):
    """A value put in place of a symbol; printed as its number and unit."""


class _ValueLatex(LatexPrinter):
    def __init__(self, shown: Mapping[str, tuple[str, bool]]):
        super().__init__({"mul_symbol": "dot"})
        self._shown = shown

    def _print__Value(self, expr):
        latex, wrap = self._shown[expr.name]
        return rf"\left({latex}\right)" if wrap else latex

    def parenthesize(self, item, level, is_neg=False, strict=False):
        if isinstance(item, _Value) and level >= PRECEDENCE["Pow"] and not self._shown[item.name][1]:
            return rf"\left({self._print(item)}\right)"
        return super().parenthesize(item, level, is_neg, strict)


class _ValueText(StrPrinter):
    def __init__(self, shown: Mapping[str, tuple[str, bool]]):
        super().__init__()
        self._shown = shown

    def _print__Value(self, expr):
        return self._shown[expr.name][0]

    def parenthesize(self, item, level, strict=False):
        if isinstance(item, _Value) and self._shown[item.name][1] and level >= PRECEDENCE["Mul"]:
            return f"({self._print(item)})"
        return super().parenthesize(item, level, strict)


@dataclass(frozen=True)
class Substitution:
    """A formula with numbers put through it.

    Attributes
    ----------
    symbol : sympy.Symbol
        What is computed, e.g. ``omega_n``.
    formula : sympy.Expr
        The formula, in symbols.
    inputs : tuple of (Symbol, pint.Quantity)
        The values put in, as given.
    substituted_latex, substituted_text : str
        The formula with the values and units written in, not evaluated.
    value : sympy.Expr
        The exact result, in ``unit``.
    unit : str
        The result's unit (pint's compact text; ``""`` for a pure number).
    sig : int
        Significant figures shown.
    value_sig : mapping
        Values shown with more figures than ``sig`` (a typed input with many digits), by name.
    """

    symbol: sp.Symbol
    formula: sp.Expr
    inputs: tuple[tuple[sp.Symbol, pint.Quantity], ...]
    substituted_latex: str
    substituted_text: str
    value: sp.Expr
    unit: str
    sig: int = 4
    value_sig: Mapping = field(default_factory=lambda: MappingProxyType({}))

    @property
    def rounded(self) -> Decimal:
        """The value rounded to ``sig`` significant figures."""
        return round_sig(self.value, self.sig)

    @property
    def shown(self) -> str:
        """The rounded value as displayed, without the unit: ``"26.83"``."""
        return _decimal_text(self.rounded)

    @property
    def magnitude(self) -> float:
        """The exact value as a float (not rounded)."""
        return float(self.value)

    @property
    def quantity(self) -> pint.Quantity:
        """The exact value as a pint quantity (float magnitude, not rounded)."""
        return Q_(self.magnitude, self.unit or "")

    def display_rows(self, names: Mapping[str, str] | None = None) -> tuple[Row, ...]:
        """The one row shown: symbol = formula = substitution = result."""
        lhs = Tex(symbol_latex(self.symbol.name, names), self.symbol.name)
        result_latex = number_latex(self.shown) + (rf"\;{unit_latex(self.unit)}" if self.unit else "")
        result = Tex(result_latex, f"{self.shown} {self.unit}".strip())
        pieces: list[Tex] = []
        if self.formula.free_symbols:
            pieces.append(Tex(expr_latex(self.formula, names), expr_text(self.formula)))
            if self.substituted_text != result.text:
                pieces.append(Tex(self.substituted_latex, self.substituted_text))
        if not pieces or pieces[-1].text != result.text:
            pieces.append(result)
        if sum(len(p.text) for p in pieces) <= _ONE_LINE:
            return (Row((lhs,), tuple(x for p in pieces for x in (EQ, p))),)
        # too long for one printed line: formula, values and result on rows of their own,
        # aligned at the equals signs
        return (Row((lhs,), (EQ, pieces[0])),) + tuple(Row((), (EQ, p)) for p in pieces[1:])

    def _repr_latex_(self) -> str:
        from calckit.render.display import latex_document

        return latex_document(self)

    def _repr_html_(self) -> str:
        from calckit.render.display import html_fragment

        return html_fragment(self)

    def _repr_markdown_(self) -> str:
        from calckit.render.display import markdown_document

        return markdown_document(self)

    def _repr_pretty_(self, printer, cycle: bool) -> None:
        printer.text(str(self))

    def __str__(self) -> str:
        from calckit.render.display import plain_text

        return plain_text(self)


def _as_symbol(symbol, where: str) -> sp.Symbol:
    if isinstance(symbol, sp.Symbol):
        return symbol
    if isinstance(symbol, str) and symbol.strip():
        return sp.Symbol(symbol.strip())
    raise InputsError(
        f"expected a name or a sympy Symbol, got {type(symbol).__name__} {symbol!r}",
        where=where,
        do='Give the name of what is computed, e.g. "omega_n"',
    )


#: characters of plain text that fit one printed line of a step (A4, 11 pt)
_ONE_LINE = 60

#: units that count cycles or turns: converted to rad/s before they enter a formula
_CYCLE_UNITS = frozenset(
    {"hertz", "kilohertz", "megahertz", "cycles_per_minute", "cycle", "revolutions_per_minute", "turn"}
)


def _unit_names(unit) -> set[str]:
    return {name for name, _ in Q_(1, unit).unit_items()}


def put_through(
    symbol, formula, values: Mapping, *, unit: str | None = None, sig: int = 4, value_sig: Mapping | None = None
) -> Substitution:
    r"""Put numbers with units through a formula.

    Parameters
    ----------
    symbol : str or sympy.Symbol
        What is computed, e.g. ``"omega_n"``; shown as ``\omega_{n}``.
    formula : sympy expression
        The formula in symbols.
    values : mapping
        Symbol (or its name) -> value: a pint quantity, text such as
        ``"180 kN/m"``, or a plain number (no unit). Every symbol of the formula
        needs a value; other entries are ignored.
    unit : str, optional
        The unit of the result, e.g. ``"rad/s"``. Default: the SI unit of the
        result's kind (N/m for a stiffness), else pint's base units.
    sig : int
        Significant figures shown (1 to 15, default 4).
    value_sig : mapping, optional
        Symbol name -> significant figures to show that value with, when it was typed with
        more than :data:`_TYPED_DIGITS` (an input such as ``12.3333333333 Hz``); the result
        keeps ``sig``.

    Returns
    -------
    Substitution

    Raises
    ------
    calckit.errors.InputsError
        A value is missing, or the formula gives no finite number.
    calckit.errors.UnitsError
        An unknown unit, units that do not combine, or a result unit of the
        wrong dimension; the message names the symbol.

    Examples
    --------
    >>> import sympy as sp
    >>> c, k, m = sp.symbols("c k m")
    >>> zeta = put_through("zeta", c / (2 * sp.sqrt(k * m)), {c: "350 N*s/m", k: "180 kN/m", m: "250 kg"})
    >>> zeta.shown, zeta.unit
    ('0.02609', '')
    """
    name = _as_symbol(symbol, "put_through symbol")
    where = f"put_through {name.name}"
    formula = sp.sympify(formula) if isinstance(formula, int | float) else formula
    if not isinstance(formula, sp.Expr):
        raise InputsError(
            f"expected a sympy expression as the formula, got {type(formula).__name__}",
            where=where,
            do="Build the formula from sympy symbols, e.g. sympy.sqrt(k / m)",
        )
    if not isinstance(sig, int) or isinstance(sig, bool) or not 1 <= sig <= 15:
        raise InputsError(
            f"cannot show {sig!r} significant figures", where=where, do="Give a whole number from 1 to 15"
        )
    if not isinstance(values, Mapping):
        raise InputsError(
            f"expected a mapping of symbols to values, got {type(values).__name__}",
            where=where,
            do='Give a dict such as {"k": "180 kN/m", "m": "250 kg"}',
        )
    given = {(key.name if isinstance(key, sp.Symbol) else str(key)): v for key, v in values.items()}
    symbols = sorted(formula.free_symbols, key=lambda s: s.name)
    missing = [s.name for s in symbols if s.name not in given]
    if missing:
        raise InputsError(
            f"no value for {', '.join(missing)}",
            where=where,
            do="Add " + ", ".join(f'"{m}"' for m in missing) + " to the values, with its unit",
        )
    inputs = []
    exact_si: dict[sp.Symbol, sp.Expr] = {}
    base: dict[sp.Symbol, pint.Quantity] = {}
    shown: dict[str, tuple[str, bool]] = {}
    shown_text: dict[str, tuple[str, bool]] = {}
    for s in symbols:
        q = quantity(given[s.name], f"{where}: value of {s.name}")
        if _unit_names(q.units) & _CYCLE_UNITS:
            # formulas take angular frequencies: 1 Hz is 2 pi rad/s, not 1 rad/s; speeds in rpm
            # are shown in rad/s too, so that a checker can redo the arithmetic by hand
            q = Q_(angular_frequency(q, f"{where}: value of {s.name}"), "rad/s")
        inputs.append((s, q))
        exact_si[s] = to_si(q, f"{where}: value of {s.name}").magnitude
        in_base = q.to_base_units()
        base[s] = Q_(np.float64(in_base.magnitude), in_base.units)
        latex, text = _quantity_pieces(q, (value_sig or {}).get(s.name, sig))
        negative = q.magnitude < 0
        shown[s.name] = (latex, negative)
        shown_text[s.name] = (text, negative or bool(_unit_text(q.units)))
    result_units = _result_units(formula, symbols, base, where)
    value_si = formula.xreplace(exact_si)
    if not value_si.is_number or value_si.has(sp.zoo, sp.nan, sp.oo, -sp.oo) or value_si.is_real is not True:
        raise InputsError(
            f"the formula gives no finite real number with these values ({sp.sstr(value_si)})",
            where=where,
            do="Check the values for a zero in a denominator or a root of a negative number",
        )
    unit_text, factor = _target_unit(result_units, unit, name.name, where)
    value = sp.nsimplify(value_si / factor) if value_si.has(sp.Float) else value_si / factor
    placeholders = {s: _Value(s.name) for s in symbols}
    with sp.evaluate(False):  # the formula's shape as written: sympy would fold sqrt(3/8) into sqrt(6)/4
        shape = formula.xreplace(placeholders)
    if isinstance(formula, sp.Symbol):  # a value shown alone needs no brackets
        substituted_latex = shown[formula.name][0]
        substituted_text = _quantity_pieces(inputs[0][1], (value_sig or {}).get(formula.name, sig))[1]
    else:
        substituted_latex = (
            _ValueLatex(shown).doprint(shape).replace(r"\operatorname{atan}_{2}", r"\operatorname{atan2}")
        )
        substituted_text = _ValueText(shown_text).doprint(shape)
    return Substitution(
        name, formula, tuple(inputs), substituted_latex, substituted_text, value, unit_text, sig,
        MappingProxyType(dict(value_sig or {})),
    )


def _result_units(formula: sp.Expr, symbols, base, where: str):
    """The unit of the result, worked out by pint from the inputs' units."""
    if not symbols:
        return ureg.dimensionless
    function = sp.lambdify(symbols, formula, modules="numpy")
    try:
        with np.errstate(all="ignore"):
            try:
                result = function(*(base[s] for s in symbols))
            except ZeroDivisionError:  # the units are all we need here: try again with ones
                result = function(*(Q_(np.float64(1), base[s].units) for s in symbols))
    except pint.DimensionalityError as exc:
        first, second = (
            _unit_text(Q_(1, u).to_base_units().units) or "no unit" for u in (exc.units1, exc.units2)
        )
        raise UnitsError(
            f"the units do not combine in the formula: {first} meets {second}",
            where=where,
            do="Check the units of the values: terms that are added must have the same dimension, "
            "and functions such as exp, sin and log need a pure number",
        ) from None
    return result.units if isinstance(result, pint.Quantity) else ureg.dimensionless


def _target_unit(result_units, unit: str | None, name: str, where: str) -> tuple[str, sp.Expr]:
    """The unit to show and the exact factor from base units to it."""
    one = Q_(1, result_units)
    if unit is None:
        kind = kind_of(one)
        if one.dimensionless:
            unit = ""
        elif kind is not None and kind != "frequency":
            unit = KINDS[kind].si_unit
        else:
            unit = _unit_text(one.to_base_units().units)
    try:
        target = ureg.parse_units(unit) if unit else ureg.dimensionless
    except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError):
        raise UnitsError(
            f'unknown unit "{unit}" for the result',
            where=where,
            do="Write a unit such as rad/s, N/m, mm or kN (unit names are case-sensitive)",
        ) from None
    try:
        one.to(target)
    except pint.DimensionalityError:
        got = _unit_text(one.to_base_units().units) or "a pure number"
        raise UnitsError(
            f"the result has the unit {got}, which cannot be given in {unit or 'no unit'}",
            where=where,
            do=f"Ask {name} for a unit of the same dimension as {got}",
        ) from None
    cycles = _unit_names(target) & {"hertz", "cycles_per_minute", "cycle", "kilohertz"}
    if (
        cycles
        and one.dimensionality == ureg.get_dimensionality("1/s")
        and "radian" not in _unit_names(one.to_base_units().units)
    ):
        raise UnitsError(
            f"the result is a rate in 1/s, which does not say whether it counts radians or cycles, "
            f"so it cannot be given in {unit}",
            where=where,
            do=f"Ask {name} in rad/s or rpm (a rate in 1/s is read as radians per second); "
            "for cycles per second, divide the formula by 2*pi and ask in 1/s",
        )
    factor = to_si(Q_(1, target), where).magnitude if unit else sp.S.One
    return (_unit_text(target) if unit else ""), factor
