"""The check by substitution: does ``L[x_p] - f`` vanish identically?

:func:`vanishes` decides exactly whether a combination of quasi-polynomial
terms is zero; :func:`satisfies` decides ``L[x] = f`` for a scalar operator,
first by the exponential shift rule and otherwise by differentiating each basis
function once. A check that fails is a defect of calckit, never of the user's
input: :func:`verification_step` then raises
:class:`~calckit.errors.InternalError` with a line that reproduces it.
"""

from __future__ import annotations

from collections import defaultdict

import sympy as sp

from calckit.engine.algebra import FIELD_ERRORS, FreeField, complex_taylor, is_zero
from calckit.engine.forcing import COS, add_into, quasi_polynomial
from calckit.engine.steps import VerificationStep
from calckit.errors import ForcingError, InternalError

__all__ = ["satisfies", "shift_rule_satisfies", "vanishes", "verification_step"]


def vanishes(expr: sp.Expr, t: sp.Symbol) -> bool:
    """True when *expr*, a combination of quasi-polynomial terms in *t*, is identically 0.

    The expression is rewritten by the product-to-sum identities into terms
    ``t^n e^{at} cos|sin(bt)``; the coefficient of each must cancel to 0. This
    decides exactly, for rational-function coefficients in any parameters.
    """
    try:
        parts = quasi_polynomial(expr, t)
    except ForcingError:
        return False
    return all(is_zero(coef) for coef in parts.values())


#: the generic exponent alpha + i beta of a basis function, for :func:`satisfies`
_ALPHA, _BETA = sp.Dummy("alpha", real=True), sp.Dummy("beta", positive=True)
#: from this many solution terms of one shape (kind, n) on, L is applied to the generic term
_GENERIC_FROM = 4


def satisfies(ode, x: sp.Expr, f: sp.Expr, t: sp.Symbol) -> bool:
    """True when ``L[x] - f`` vanishes identically (*x*, *f* quasi-polynomials in *t*).

    First by the exponential shift rule (:func:`shift_rule_satisfies`, fast and
    exact when it says yes); otherwise by differentiation, the same decision as ``vanishes(ode.apply(x, t) - f, t)``, made by linearity:
    *x* is split into terms ``c_k b_k`` with ``b_k = t^n e^{at} cos|sin(bt)`` and
    ``L[x] = sum_k c_k L[b_k]``, each ``L[b_k]`` by ``sympy.diff`` on the small
    ``b_k`` alone. When many terms share a shape (kind, n), as a long harmonic
    series does, ``L`` is applied once to the generic
    ``t^n e^{alpha t} cos|sin(beta t)`` and each term takes its own ``alpha = a``,
    ``beta = b``. The whole solution tree is never differentiated.
    """
    try:
        x_parts = quasi_polynomial(x, t)
        f_parts = quasi_polynomial(f, t)
    except ForcingError:
        return False
    if shift_rule_satisfies(ode, x_parts, f_parts):
        return True
    shapes: dict = defaultdict(int)
    for _a, _b, kind, n in x_parts:
        shapes[(kind, n)] += 1

    def image(a, b, kind, n):
        trig = sp.S.One if b == 0 else (sp.cos if kind == COS else sp.sin)(b * t)
        return quasi_polynomial(ode.apply(t**n * sp.exp(a * t) * trig, t), t)

    generic: dict = {}
    acc: dict = {}
    for (a, b, kind, n), coef in x_parts.items():
        if shapes[(kind, n)] < _GENERIC_FROM:
            for key, c in image(a, b, kind, n).items():
                add_into(acc, key, coef * c)
            continue
        if (kind, n) not in generic:
            generic[(kind, n)] = image(_ALPHA, _BETA, kind, n)
        values = {_ALPHA: a, _BETA: b}
        for (a2, b2, kind2, n2), c in generic[(kind, n)].items():
            add_into(acc, (a2.xreplace(values), b2.xreplace(values), kind2, n2), coef * c.xreplace(values))
    for key, coef in f_parts.items():
        add_into(acc, key, -coef)
    return all(is_zero(c) for c in acc.values())


def shift_rule_satisfies(ode, x_parts: dict, f_parts: dict) -> bool:
    """True when ``L[x] = f`` holds by the exponential shift rule, decided exactly.

    With ``lambda = a + i b`` and ``u(t) = (P(t) - i Q(t))/2`` for the terms
    ``e^{at} (P cos bt + Q sin bt)``, ``L[e^{lambda t} u] = e^{lambda t} sum_j
    p^(j)(lambda)/j! u^(j)(t)``; its real and imaginary parts must give the
    forcing's ``(F_c, -F_s)``. Complex numbers are kept as pairs of elements of
    sympy's field of rational functions over the rationals, with every atom that is
    not a plain symbol (``cos(1)``, ``sqrt(k/m)``) taken as a free generator. A
    ``True`` is exact (zero in the free field is zero under any relation among the
    atoms); ``False`` may only mean that such a relation was needed, so the caller
    then decides by differentiation. This is a different route from the one that
    built the solution (real-form derivative rules on linear forms).
    """
    exprs = list(ode.coefficients) + [
        e for key, c in (*x_parts.items(), *f_parts.items()) for e in (*key[:2], c)
    ]
    if any(e.has(sp.I) for e in exprs):
        return False
    try:
        conv = FreeField(exprs)
    except FIELD_ERRORS:
        return False
    zero = conv.zero
    try:
        p = [conv(c) for c in ode.coefficients]
    except FIELD_ERRORS:
        return False

    def grouped(parts):
        table: dict = defaultdict(dict)
        for (a, b, kind, n), coef in parts.items():
            pair = table[(a, b)].setdefault(n, [zero, zero])
            pair[0 if kind == COS else 1] += conv(coef)
        return table

    try:
        xs, fs = grouped(x_parts), grouped(f_parts)
        for key in set(xs) | set(fs):
            a, b = key
            rows_x, rows_f = xs.get(key, {}), fs.get(key, {})
            size = max([*rows_x, *rows_f], default=-1) + 1
            # u = P - i Q (the common factor 1/2 cancels on both sides)
            u = [(rows_x[n][0], -rows_x[n][1]) if n in rows_x else (zero, zero) for n in range(size)]
            target = [(rows_f[n][0], -rows_f[n][1]) if n in rows_f else (zero, zero) for n in range(size)]
            lhs = [[zero, zero] for _ in range(size)]
            derivative = u
            for cr, ci in complex_taylor(conv, p, (conv(a), conv(b))):
                for n, (ur, ui) in enumerate(derivative):
                    lhs[n][0] += cr * ur - ci * ui
                    lhs[n][1] += cr * ui + ci * ur
                derivative = [(n * derivative[n][0], n * derivative[n][1]) for n in range(1, len(derivative))]
                if not derivative:
                    break
            if not all(
                conv.is_zero(l_n[0] - f_n[0]) and conv.is_zero(l_n[1] - f_n[1])
                for l_n, f_n in zip(lhs, target, strict=True)
            ):
                return False
    except FIELD_ERRORS:
        return False
    return True


def verification_step(residual, verified: bool, what: str, *, reproduce: str, where: str) -> VerificationStep:
    """The check-by-substitution step.

    An unverified solution raises :class:`~calckit.errors.InternalError`: that is
    a defect of calckit, never the user's. *what* is "the equation" or "every row of
    the equations"; *reproduce* a line the user can paste to show the defect;
    *where* names the forcing.
    """
    if not verified:
        raise InternalError(
            f"the derived particular solution does not satisfy {what} (residual {residual})",
            reproduce=reproduce,
            where=where,
        )
    return VerificationStep(
        "Check by substitution",
        f"Substituting the particular solution back into {what} leaves a residual of exactly zero, "
        "so the solution is verified.",
        residual,
        verified,
    )
