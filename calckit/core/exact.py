"""Exact numbers from what a user types.

Engineers type ``2.5`` and mean five halves. Binary floating point would turn
``2.5 * 0.1`` into a number that is not exactly ``1/4`` and hide a resonance
behind a rounding error. Every number entering the engine goes through
:func:`exact`, which takes a float as the shortest decimal that prints as it. A float that
needs 16 or more significant digits was computed, not typed (``1/1.5``); it is
taken as the simple fraction (denominator up to a million) that rounds to it
exactly, when there is one.
"""

from __future__ import annotations

import math
from fractions import Fraction
from numbers import Number

import sympy as sp

from calckit.errors import ModelError

__all__ = ["exact", "exact_expr"]


def _float_to_rational(value: float, where: str) -> sp.Rational:
    if not math.isfinite(value):
        raise ModelError(
            f"the value {value!r} is not a finite number",
            where=where,
            do="Give a finite number",
        )
    text = repr(float(value))
    digits = len(text.split("e")[0].replace("-", "").replace(".", "").lstrip("0"))
    if digits >= 16:
        # Nobody types 16 or more significant digits: this float was computed (1/1.5, pi/3.0 ...).
        # Take the simple fraction it rounds from when one reproduces it exactly.
        simple = Fraction(value).limit_denominator(10**6)
        if float(simple) == float(value):
            return sp.Rational(simple.numerator, simple.denominator)
    return sp.Rational(text)


def exact_expr(expr: sp.Basic, where: str = "value") -> sp.Basic:
    """Replace every sympy ``Float`` in *expr* by the decimal it displays."""
    floats = expr.atoms(sp.Float)
    if not floats:
        return expr
    mapping = {}
    for f in floats:
        if f.is_finite is False or f in (sp.oo, -sp.oo) or f != f:
            raise ModelError(
                f"the value {f} is not a finite number",
                where=where,
                do="Give a finite number",
            )
        if f._prec <= 53:  # came from a Python float: shortest repr is what the user typed
            mapping[f] = _float_to_rational(float(f), where)
        else:
            mapping[f] = sp.Rational(sp.nsimplify(f, rational=True))
    return expr.xreplace(mapping)


def exact(value, where: str = "value") -> sp.Expr:
    """Return *value* as an exact sympy expression.

    Parameters
    ----------
    value : int, float, Fraction, str, or sympy expression
        Floats are read as the decimal they display: ``0.1`` becomes ``1/10``.
    where : str
        Name used in the error message if the value is not usable.

    Examples
    --------
    >>> exact(2.5)
    5/2
    >>> exact(0.1) * 3 == sp.Rational(3, 10)
    True
    """
    if isinstance(value, bool):
        raise ModelError(f"got a truth value {value!r}", where=where, do="Give a number")
    if isinstance(value, sp.Basic):
        out = exact_expr(value, where)
    elif isinstance(value, int):
        out = sp.Integer(value)
    elif isinstance(value, float):
        out = _float_to_rational(value, where)
    elif isinstance(value, Fraction):
        out = sp.Rational(value.numerator, value.denominator)
    elif isinstance(value, Number):
        try:
            out = exact_expr(sp.sympify(value), where)
        except (sp.SympifyError, TypeError) as exc:  # pragma: no cover - exotic numbers
            raise ModelError(
                f"cannot read {value!r} as a number",
                where=where,
                do="Give an int, float, Fraction or sympy expression",
            ) from exc
    else:
        raise ModelError(
            f"expected a number or sympy expression, got {type(value).__name__} {value!r}",
            where=where,
            do="Give an int, float, Fraction or sympy expression",
        )
    if out.has(sp.nan, sp.zoo, sp.oo, -sp.oo):
        raise ModelError(f"the value {out} is not a finite number", where=where, do="Give a finite number")
    return out
