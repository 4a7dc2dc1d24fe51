"""Characteristic roots for the total response, and the conditions a symbolic result needs.

:func:`roots_for_response` gives the roots of ``p(lambda)`` with multiplicities:
closed forms where sympy finds them, and otherwise, for numeric coefficients of
any order, numerical roots: ``p`` is split exactly into its factors irreducible
over the rationals (``sympy.factor_list``, so multiplicities are exact and a
rational root such as 1 stays exact), and each factor without a closed form
is solved by ``sympy.Poly.nroots`` (mpmath's polynomial root finder) with
``NROOTS_DIGITS`` working digits, the roots kept to ``ROOT_DIGITS``
significant digits.

:func:`normal_conditions` writes conditions ``expr != 0`` in one normal form:
numeric factors and powers stripped, products split into their factors, a
leading minus sign dropped, duplicates and conditions that always hold removed
(``Ne(-12 k**2, 0), Ne(-16 k, 0)`` is ``k != 0`` once).
:func:`distinct_roots_condition` is the condition under which the roots of a
symbolic polynomial stay distinct (its discriminant is not zero).
"""

from __future__ import annotations

import sympy as sp

from calckit.engine.algebra import LAMBDA

__all__ = [
    "numeric_roots",
    "NROOTS_DIGITS",
    "ROOT_DIGITS",
    "distinct_roots_condition",
    "normal_conditions",
    "roots_for_response",
]

#: working precision (decimal digits) of the numerical root finder
NROOTS_DIGITS = 30
#: significant digits kept of a numerical root
ROOT_DIGITS = 15


def roots_for_response(ode) -> tuple[tuple[tuple[sp.Expr, int], ...] | None, bool]:
    """``(roots with multiplicities, numerical)`` of *ode*'s characteristic polynomial.

    Closed forms when sympy finds them all (``numerical`` False); for numeric
    coefficients, numerical roots of the factors without a closed form
    (``numerical`` True); ``(None, False)`` for a symbolic polynomial whose roots
    are not found.
    """
    roots = ode.characteristic_roots()
    if roots is not None:
        return roots, False
    if ode.parameters:
        return None, False
    return numeric_roots(ode.characteristic_polynomial()), True


def numeric_roots(polynomial) -> tuple[tuple[sp.Expr, int], ...]:
    """Roots of a polynomial in ``lambda`` with numeric coefficients, with multiplicities: each exact
    irreducible factor's roots in closed form up to degree 2, numerically (``Poly.nroots``) above."""
    poly = sp.Poly(polynomial, LAMBDA)
    found: list[tuple[sp.Expr, int]] = []
    _, factors = sp.factor_list(poly)
    for factor, mult in factors:
        closed = sp.roots(factor, cubics=False, quartics=False)
        if sum(closed.values()) == factor.degree():
            found.extend((root, mult) for root in closed)
            continue
        for root in factor.nroots(n=NROOTS_DIGITS, maxsteps=200):
            found.append((_rounded(root), mult))
    return tuple(found)


def _rounded(root: sp.Expr) -> sp.Expr:
    real, imag = root.as_real_imag()
    real = sp.Float(real, ROOT_DIGITS)
    return real if imag == 0 else real + sp.I * sp.Float(imag, ROOT_DIGITS)


def distinct_roots_condition(ode) -> tuple[sp.Expr, ...]:
    """``(Ne(discriminant, 0),)`` in normal form when the distinct roots of a symbolic
    characteristic polynomial could meet for some values of its parameters; ``()`` otherwise."""
    if not ode.parameters:
        return ()
    poly = sp.Poly(ode.characteristic_polynomial(), LAMBDA)
    square_free = sp.Poly(sp.sqf_part(poly), LAMBDA)
    if square_free.degree() < 2:
        return ()
    disc = sp.discriminant(square_free)
    numerator = sp.fraction(sp.together(disc))[0]
    return normal_conditions([sp.Ne(numerator, 0)])


def normal_conditions(conditions) -> tuple:
    """*conditions* in normal form: each ``a != b`` as the factors of ``a - b`` that must not vanish.

    Numeric factors, powers and a leading minus sign are stripped, denominators
    dropped (a condition is on the numerator), duplicates and conditions that
    always hold removed; anything that is not an inequation is kept as it is.

    Examples
    --------
    >>> k, m = sp.symbols("k m")
    >>> normal_conditions([sp.Ne(-12 * k**2, 0), sp.Ne(-16 * k, 0), sp.Ne((k - m) ** 2 * m, 0)])
    (Ne(k, 0), Ne(m, 0), Ne(k - m, 0))
    """
    out: list = []
    for condition in conditions:
        if condition is sp.true:
            continue
        if not isinstance(condition, sp.Ne):
            if condition not in out:
                out.append(condition)
            continue
        expr = sp.factor_terms(sp.together(condition.lhs - condition.rhs))
        numerator = sp.fraction(expr)[0]
        for factor in sp.Mul.make_args(numerator):
            if factor.is_number:
                continue
            while isinstance(factor, sp.Pow) and factor.exp.is_positive:
                factor = factor.base
            if factor.could_extract_minus_sign():
                factor = -factor
            normal = sp.Ne(factor, 0)
            if normal is not sp.true and normal not in out:
                out.append(normal)
    return tuple(out)
