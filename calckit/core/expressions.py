"""A safe reader of expressions written as text (forcing functions, formulas).

:func:`parse_expression` reads a forcing expression such as ``"F0*cos(w*t)"``
without running it: Python's parser builds a syntax tree, and only numbers, the
declared names, ``t``, ``pi``, ``+ - * / **``, parentheses and the functions
``sin cos exp sinh cosh sqrt`` are turned into sympy objects, with the loads that
switch: ``Heaviside(t - a)``, ``Min(...)``, ``Max(...)`` and
``Piecewise((value, condition), ..., (value, True))`` whose conditions compare
expressions (``t < a``, ``a <= t``, ``a <= t < b``). A caller may allow more functions
by name (``functions=``, e.g. the pulses of ``calckit.physics.pulses``); they are
called with the sympy values of their arguments and ``t=`` the time symbol. Numbers
are taken as the exact decimal written. Nothing is ever passed to ``eval``.

Examples
--------
>>> import sympy as sp
>>> F0, w = sp.symbols("F0 w", positive=True)
>>> parse_expression("F0*cos(w*t) + 2.5", {"F0": F0, "w": w}, where="forcing")
F0*cos(t*w) + 5/2
"""

from __future__ import annotations

import ast
import difflib
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from types import MappingProxyType
from typing import Any

import sympy as sp

from calckit.core.characters import lookalike_error, repr_text
from calckit.core.exact import exact
from calckit.errors import CalcError, InputsError

__all__ = ["FUNCTIONS", "SWITCHES", "parse_expression", "parse_parameters"]

#: Functions an expression may call.
FUNCTIONS: Mapping[str, Any] = MappingProxyType(
    {"sin": sp.sin, "cos": sp.cos, "exp": sp.exp, "sinh": sp.sinh, "cosh": sp.cosh, "sqrt": sp.sqrt}
)

#: Functions of a load that switches: name -> (function, least and most arguments).
SWITCHES: Mapping[str, tuple[Any, int, int]] = MappingProxyType(
    {"Heaviside": (sp.Heaviside, 1, 1), "Min": (sp.Min, 2, 20), "Max": (sp.Max, 2, 20)}
)
_COMPARISONS = {ast.Lt: sp.Lt, ast.LtE: sp.Le, ast.Gt: sp.Gt, ast.GtE: sp.Ge}

_MAX_LENGTH = 2000
_MAX_EXPONENT = 100  # largest power of a number in an expression
_MAX_DECIMAL_EXPONENT = 300  # largest e-exponent in a number written
_PARSER_NESTING = 200  # most parentheses Python's parser opens in one expression
#: Most digits of a number in an expression, written or made by a power or a product: well under
#: Python's limit on printing a whole number (``sys.get_int_max_str_digits()``, 4300 by default),
#: so that the number, and what the engine makes of it, can be shown on a sheet.
_MAX_DIGITS = 400
_OPERATORS = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}
_REFUSED_OPERATORS = {
    ast.Mod: "%",
    ast.FloorDiv: "//",
    ast.MatMult: "@",
    ast.LShift: "<<",
    ast.RShift: ">>",
    ast.BitOr: "|",
    ast.BitAnd: "&",
}
_NODE_NAMES = {
    ast.Attribute: "attribute access",
    ast.Subscript: "indexing",
    ast.Lambda: "a lambda",
    ast.ListComp: "a comprehension",
    ast.SetComp: "a comprehension",
    ast.DictComp: "a comprehension",
    ast.GeneratorExp: "a comprehension",
    ast.List: "a list",
    ast.Tuple: "a tuple",
    ast.Set: "a set",
    ast.Dict: "a dict",
    ast.Compare: "a comparison",
    ast.BoolOp: "and/or",
    ast.IfExp: "a conditional",
    ast.NamedExpr: "an assignment",
    ast.JoinedStr: "a string",
    ast.Starred: "unpacking",
    ast.Slice: "a slice",
}


# ---------------------------------------------------------------------------
# Expressions


@dataclass(frozen=True)
class _Reader:
    """Walks a syntax tree of an expression and builds the sympy object."""

    text: str
    names: Mapping[str, sp.Basic]
    where: str
    extra: Mapping[str, Any] = field(default_factory=dict)

    def allowed(self) -> str:
        inputs = ", ".join(n for n in self.names if n not in ("t", "pi"))
        inputs = f"the inputs {inputs}, " if inputs else ""
        names = [*FUNCTIONS, *SWITCHES, "Piecewise", *self.extra]
        return (
            f"Allowed: numbers, {inputs}the time t, pi, + - * / ** and parentheses, "
            f"and the functions {', '.join(names)}"
        )

    def segment(self, node: ast.AST) -> str:
        return ast.get_source_segment(self.text, node) or type(node).__name__

    def refuse(self, what: str, do: str | None = None) -> InputsError:
        if self.text not in what:  # say where the piece sits, unless it is the whole text
            what = f'{what} in "{self.text}"'
        return InputsError(what, where=self.where, do=do or self.allowed())

    def read(self, node: ast.AST) -> sp.Expr:
        if isinstance(node, ast.Constant):
            return self.number(node)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.BinOp):
            return self.binary(node)
        if isinstance(node, ast.UnaryOp):
            return self.unary(node)
        if isinstance(node, ast.Call):
            return self.call(node)
        kind = _NODE_NAMES.get(type(node), "this construct")
        raise self.refuse(f'{kind} "{self.segment(node)}" is not allowed')

    def number(self, node: ast.Constant) -> sp.Expr:
        value = node.value
        piece = self.segment(node)
        if isinstance(value, str | bytes):
            raise self.refuse(f"a string {piece} is not allowed")
        if isinstance(value, bool) or value is None or value is Ellipsis:
            raise self.refuse(f'"{piece}" is not allowed')
        if isinstance(value, complex):
            raise self.refuse(
                f'the imaginary number "{piece}" is not allowed', do="Write real expressions only"
            )
        if isinstance(value, int):
            return sp.Integer(value)
        digits = piece.replace("_", "")
        exponent = re.search(r"[eE]([+-]?\d+)$", digits)
        if not math.isfinite(value) or (exponent and abs(int(exponent.group(1))) > _MAX_DECIMAL_EXPONENT):
            raise self.refuse(f'the number "{piece}" is out of range', do="Give a finite number")
        try:
            return sp.Rational(Fraction(digits))
        except ValueError:  # pragma: no cover - every float literal Python accepts reads as a Fraction
            return exact(value, self.where)

    def name(self, node: ast.Name) -> sp.Expr:
        if node.id in self.names:
            return self.names[node.id]
        if node.id in FUNCTIONS or node.id in SWITCHES or node.id in self.extra or node.id == "Piecewise":
            raise self.refuse(
                f'the function "{node.id}" is used without an argument',
                do=f"Call it with its argument in parentheses, for example {node.id}(w*t)",
            )
        close = difflib.get_close_matches(node.id, list(self.names), n=1)
        hint = f'Did you mean "{close[0]}"? ' if close else ""
        raise self.refuse(f'unknown name "{node.id}"', do=hint + self.allowed())

    def binary(self, node: ast.BinOp) -> sp.Expr:
        op = type(node.op)
        if op is ast.BitXor:
            raise self.refuse('the operator "^" is not a power', do="Use ** for powers, for example t**2")
        if op not in _OPERATORS:
            raise self.refuse(f'the operator "{_REFUSED_OPERATORS.get(op, op.__name__)}" is not allowed')
        left, right = self.read(node.left), self.read(node.right)
        if op is ast.Add:
            return left + right
        if op is ast.Sub:
            return left - right
        if op is ast.Mult:
            return left * right
        if op is ast.Div:
            if right == 0:
                raise self.refuse(f'division by zero "{self.segment(node)}"', do="Check the divisor")
            return left / right
        if right.is_number and (right.is_real is not True or abs(right) > _MAX_EXPONENT):
            raise self.refuse(
                f'the power "{self.segment(node)}" is too large',
                do=f"Use real exponents between -{_MAX_EXPONENT} and {_MAX_EXPONENT}",
            )
        if left.is_Rational and right.is_number and _digits(left) * abs(right) > _MAX_DIGITS:
            raise self.refuse(
                f'the power "{self.segment(node)}" is too large',
                do=f"Keep numbers under {_MAX_DIGITS} digits",
            )
        if left == 0 and right.is_number and right.is_negative:
            raise self.refuse(f'division by zero "{self.segment(node)}"', do="Check the divisor")
        return left**right

    def unary(self, node: ast.UnaryOp) -> sp.Expr:
        if isinstance(node.op, ast.USub):
            return -self.read(node.operand)
        if isinstance(node.op, ast.UAdd):
            return self.read(node.operand)
        word = "not" if isinstance(node.op, ast.Not) else "~"
        raise self.refuse(f'the operator "{word}" is not allowed')

    def call(self, node: ast.Call) -> sp.Expr:
        func = node.func
        if not isinstance(func, ast.Name):
            if type(func) in _NODE_NAMES:  # obj.attr(...), obj[0](...), (lambda: 1)()
                return self.read(func)
            raise self.refuse(f'calling "{self.segment(func)}" is not allowed')
        if func.id not in FUNCTIONS and func.id not in SWITCHES and func.id not in self.extra and func.id != "Piecewise":
            raise self.refuse(f'the function "{func.id}" is not allowed')
        if node.keywords:
            raise self.refuse(f'the keyword argument "{self.segment(node.keywords[0])}" is not allowed')
        if func.id == "Piecewise":
            return self.piecewise(node)
        if func.id in SWITCHES:
            function, least, most = SWITCHES[func.id]
            if not least <= len(node.args) <= most:
                count = f"{least}" if least == most else f"{least} to {most}"
                raise self.refuse(
                    f'"{self.segment(node)}" gives {func.id} {len(node.args)} arguments',
                    do=f"Give {func.id} {count} argument(s), for example {func.id}(t - a)"
                    if least == 1
                    else f"Give {func.id} {count} arguments, for example {func.id}(t, a)",
                )
            return function(*(self.read(arg) for arg in node.args))
        if func.id in self.extra:
            args = [self.read(arg) for arg in node.args]
            try:
                return self.extra[func.id](*args, t=self.names["t"])
            except TypeError as exc:
                raise self.refuse(
                    f'"{self.segment(node)}" does not fit {func.id}: {exc}',
                    do=f"See help(calckit.pulses.{func.id}) for its arguments",
                ) from None
            except CalcError as exc:
                raise self.refuse(f'"{self.segment(node)}": {exc.what}', do=exc.do) from None
        if len(node.args) != 1:
            raise self.refuse(
                f'"{self.segment(node)}" gives {func.id} {len(node.args)} arguments',
                do=f"Give {func.id} one argument, for example {func.id}(w*t)",
            )
        return FUNCTIONS[func.id](self.read(node.args[0]))


    def piecewise(self, node: ast.Call) -> sp.Expr:
        pieces = []
        for arg in node.args:
            if not (isinstance(arg, ast.Tuple) and len(arg.elts) == 2):
                raise self.refuse(
                    f'"{self.segment(arg)}" is not a (value, condition) pair',
                    do="Write Piecewise((value, condition), ..., (value, True)), e.g. Piecewise((F0, t < td), (0, True))",
                )
            value, cond = arg.elts
            pieces.append((self.read(value), self.condition(cond)))
        if not pieces:
            raise self.refuse("Piecewise has no pieces", do="Give at least one (value, True) pair")
        return sp.Piecewise(*pieces)

    def condition(self, node: ast.AST):
        if isinstance(node, ast.Constant) and node.value is True:
            return sp.true
        if isinstance(node, ast.Compare):
            terms = [self.read(node.left), *(self.read(c) for c in node.comparators)]
            relations = []
            for op, left, right in zip(node.ops, terms, terms[1:], strict=False):
                if type(op) not in _COMPARISONS:
                    raise self.refuse(
                        f'the comparison "{self.segment(node)}" is not allowed',
                        do="Compare with <, <=, > or >=, e.g. t < td",
                    )
                relations.append(_COMPARISONS[type(op)](left, right))
            return sp.And(*relations)
        raise self.refuse(
            f'"{self.segment(node)}" is not a condition',
            do="Write a comparison such as t < td, a <= t < b, or True for the last piece",
        )


def _digits(r: sp.Rational) -> int:
    """Decimal digits of numerator and denominator, counted without printing them."""
    return sum(int(abs(n).bit_length() * math.log10(2)) + 1 for n in (r.p, r.q))


def _declared(names: Mapping[str, Any], t: sp.Symbol, where: str) -> dict[str, sp.Basic]:
    declared: dict[str, sp.Basic] = {}
    for name, value in names.items():
        if name in ("t", "pi", "Piecewise") or name in FUNCTIONS or name in SWITCHES:
            raise InputsError(
                f'the name "{name}" is reserved',
                where=where,
                do="Pass the time symbol as t=; do not declare t, pi or the function names as inputs",
            )
        if not isinstance(value, sp.Basic | int | float | Fraction):
            raise InputsError(
                f'the name "{name}" stands for {type(value).__name__} {value!r}',
                where=where,
                do="Declare each name as a sympy symbol or a number",
            )
        declared[name] = value if isinstance(value, sp.Basic) and not value.is_Float else exact(value, name)
    declared["t"] = t
    declared["pi"] = sp.pi
    return declared


def parse_expression(
    text: str,
    names: Mapping[str, Any],
    *,
    where: str,
    t: sp.Symbol | None = None,
    functions: Mapping[str, Any] | None = None,
) -> sp.Expr:
    """Read *text* as a sympy expression without running any of it.

    Parameters
    ----------
    text : str
        For example ``"F0*cos(w*t) + 0.2*F0*sin(2*w*t)"``.
    names : mapping
        Declared input names: name -> sympy symbol or number (numbers go in
        exactly: ``2.5`` is ``5/2``).
    where : str
        The input's name, used in error messages.
    t : sympy.Symbol, optional
        The time symbol; ``Symbol("t", real=True)`` unless given.
    functions : mapping, optional
        More functions allowed by name, called with the arguments' sympy values and
        ``t=`` the time symbol (``calckit.pulses.FUNCTIONS``: ``half_sine(P, td)``...).

    Returns
    -------
    sympy.Expr

    Raises
    ------
    InputsError
        Anything outside the whitelist, with the offending piece and what is allowed.

    Examples
    --------
    >>> parse_expression("2.5*sin(3*t)", {}, where="forcing")
    5*sin(3*t)/2
    >>> parse_expression("t^2", {}, where="forcing")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: forcing: the operator "^" is not a power in "t^2". Use ** for powers, for example t**2.
    """
    try:
        return _parse(text, names, where=where, t=t, functions=functions)
    except InputsError as exc:  # a character drawn like a Latin one is likely the cause: say which
        declared = "".join(str(name) for name in [*names, *(functions or {})])  # a declared Greek name is no cause
        better = lookalike_error(text, InputsError, where=where, allowed=declared) if isinstance(text, str) else None
        if better is None:
            raise
        raise better from exc


def _parse(text, names, *, where, t, functions) -> sp.Expr:
    if not isinstance(text, str):
        raise InputsError(
            f"expected the expression as text, got {type(text).__name__} {text!r}",
            where=where,
            do='Write the expression in quotes, for example "F0*cos(w*t)"',
        )
    text = text.strip()
    if not text:
        raise InputsError(
            "the expression is empty", where=where, do='Write an expression, for example "F0*cos(w*t)"'
        )
    if len(text) > _MAX_LENGTH:
        raise InputsError(
            f"the expression is {len(text)} characters long",
            where=where,
            do=f"Keep expressions under {_MAX_LENGTH} characters",
        )
    extra = MappingProxyType(dict(functions or {}))
    for name in extra:
        if name in names:
            raise InputsError(
                f'the name "{name}" is both an input and a function', where=where, do="Rename the input"
            )
    reader = _Reader(text, _declared(names, t if t is not None else sp.Symbol("t", real=True), where), where, extra)
    try:
        tree = ast.parse(text, mode="eval")
    except SyntaxError as exc:
        if "too many nested parentheses" in str(exc.msg):  # Python's parser stops at 200 levels
            raise InputsError(
                f"the expression nests parentheses or calls more than {_PARSER_NESTING} deep "
                f"(column {exc.offset}), the limit of Python's parser",
                where=where,
                do="Write a shorter, less nested expression",
            ) from exc
        column = f" (column {exc.offset})" if exc.offset else ""
        raise InputsError(
            f'cannot read "{text}" as an expression{column}',
            where=where,
            do="Check for a missing operator or parenthesis; write products with * (2*t, not 2t)",
        ) from exc
    except (RecursionError, MemoryError, ValueError) as exc:
        raise InputsError(
            f'cannot read "{text}" as an expression',
            where=where,
            do="Write a shorter, less nested expression",
        ) from exc
    try:
        result = reader.read(tree.body)
    except RecursionError as exc:
        raise InputsError(
            "the expression is nested too deeply", where=where, do="Write a shorter, less nested expression"
        ) from exc
    big = next((r for r in result.atoms(sp.Rational) if _digits(r) > _MAX_DIGITS), None)
    if big is not None:  # a product of many numbers, each in bounds
        raise InputsError(
            f"{repr_text(text)} makes a number of {_digits(big):,} digits",
            where=where,
            do=f"Keep numbers under {_MAX_DIGITS} digits",
        )
    if result.has(sp.nan, sp.zoo, sp.oo, -sp.oo):
        raise InputsError(f'"{text}" is not finite', where=where, do="Check for division by zero")
    for power in result.atoms(sp.Pow):  # sympy merges (x**a)**b into x**(a*b): bound what it made
        if power.exp.is_number and not power.base.is_number and abs(power.exp) > _MAX_EXPONENT:
            raise InputsError(
                f'"{text}" raises {power.base} to the power {power.exp} once its powers are merged',
                where=where,
                do=f"Use powers between -{_MAX_EXPONENT} and {_MAX_EXPONENT}",
            )
    return result


def parse_parameters(entries, *, where: str) -> dict[str, Any]:
    """Named parameters of an expression, as the inputs file gives them: ``["P = 12 kN", "td = 8 ms"]``
    or one text ``"P = 12 kN; td = 8 ms"`` (entries separated by ``;`` or new lines).

    Any Python name the user chooses (not ``t``, ``pi`` or a function's name); each value
    is read as a quantity (:func:`calckit.core.units.quantity`). Returns name -> quantity,
    in the order given.

    >>> sorted(parse_parameters(["P = 12 kN", "td = 8 ms"], where="load_parameters"))
    ['P', 'td']
    >>> list(parse_parameters("P = 12 kN; td = 8 ms", where="load_parameters"))
    ['P', 'td']
    """
    from calckit.core.units import quantity

    if isinstance(entries, str):
        entries = [e for e in entries.replace("\n", ";").split(";") if e.strip()]
    if not isinstance(entries, (list, tuple)):
        raise InputsError(
            f"expected a list of \"name = value\" texts, got {type(entries).__name__} {entries!r}",
            where=where,
            do='Write e.g. "P = 12 kN; td = 8 ms" or ["P = 12 kN", "td = 8 ms"]',
        )
    out: dict[str, Any] = {}
    for i, entry in enumerate(entries, start=1):
        name, sep, value = entry.partition("=") if isinstance(entry, str) else ("", "", "")
        name = name.strip()
        spot = f"{where}, entry {i}"
        if not sep or not name.isidentifier() or not value.strip():
            raise InputsError(
                f"{entry!r} is not of the form \"name = value\"", where=spot, do='Write e.g. "td = 8 ms"'
            )
        if name in ("t", "pi", "Piecewise") or name in FUNCTIONS or name in SWITCHES:
            raise InputsError(f'the name "{name}" is reserved', where=spot, do="Choose another name")
        if name in out:
            raise InputsError(f'the name "{name}" is given twice', where=spot, do="Give each name once")
        out[name] = quantity(value.strip(), f"{where}: {name}")
    return out
