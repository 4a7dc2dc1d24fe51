"""The scalar operator ``L(D) = a_n D^n + ... + a_1 D + a_0`` with constant coefficients.

:class:`LinearODE` holds the coefficients, the characteristic polynomial, its
roots and the exact multiplicity of an exponent as a root; its ``particular``
runs the method's skeleton (:func:`calckit.engine.method.derive`) with the
scalar strategy, its ``response`` adds the transient
(:func:`calckit.engine.response.total_response`).
"""

from __future__ import annotations

import sympy as sp

from calckit.core.exact import exact
from calckit.engine.algebra import FIELD_ERRORS, LAMBDA, FreeField, complex_taylor, is_zero
from calckit.engine.derivation import Derivation
from calckit.engine.forcing import resolve_time
from calckit.engine.method import derive
from calckit.engine.periodic import periodic_steady_state
from calckit.engine.piecewise import (
    IntervalSolver,
    is_switching,
    piecewise_particular,
    piecewise_response,
    scalar_solver,
)
from calckit.engine.response import Response, total_response
from calckit.engine.scalar import ScalarStrategy
from calckit.errors import ModelError

__all__ = ["LAMBDA", "LinearODE"]


def _check_coefficient(value, index: int, order: int):
    where = f"coefficient a_{order - index} (position {index + 1}, highest derivative first)"
    value = exact(value, where=where)
    if value.has(sp.I) or (value.is_number and not value.is_real):
        raise ModelError(
            f"the coefficient {value} is complex",
            where=where,
            do="Use real coefficients; split a complex model into real and imaginary parts",
        )
    if value.atoms(sp.core.function.AppliedUndef) or value.atoms(sp.Derivative):
        raise ModelError(
            f"the coefficient {value} is a function, not a constant",
            where=where,
            do="Use numbers or plain symbols; the method needs constant coefficients",
        )
    return value


class LinearODE:
    """A linear differential operator with constant coefficients.

    Parameters
    ----------
    coefficients : sequence
        ``[a_n, ..., a_1, a_0]``, highest derivative first. Ints, floats (read as
        the decimals they display), Fractions, sympy numbers or symbols.
    name : str
        Name of the dependent variable, used in displayed steps (default ``x``).

    Examples
    --------
    >>> t = sp.Symbol("t", real=True)
    >>> LinearODE([1, 0, 4]).particular(sp.cos(2*t), t=t).solution
    t*sin(2*t)/4
    """

    def __init__(self, coefficients, *, name: str = "x"):
        coefficients = list(coefficients)
        if len(coefficients) < 2:
            raise ModelError(
                f"got {len(coefficients)} coefficient(s); a differential equation needs at least two",
                where="LinearODE coefficients",
                do="Give [a_n, ..., a_1, a_0], highest derivative first, e.g. [m, c, k]",
            )
        order = len(coefficients) - 1
        coeffs = tuple(_check_coefficient(v, i, order) for i, v in enumerate(coefficients))
        if coeffs[0] == 0:
            raise ModelError(
                "the leading coefficient is zero, so the equation is not of the order its length says",
                where="LinearODE coefficients",
                do="Drop the leading zero(s) and give the lower-order equation",
            )
        self.coefficients: tuple[sp.Expr, ...] = coeffs
        self.name = name

    # ------------------------------------------------------------------ basics
    @property
    def order(self) -> int:
        """Order of the highest derivative."""
        return len(self.coefficients) - 1

    @property
    def parameters(self) -> frozenset:
        """Free symbols of the coefficients."""
        return frozenset().union(*(c.free_symbols for c in self.coefficients))

    def characteristic_polynomial(self, variable: sp.Symbol = LAMBDA) -> sp.Expr:
        """``p(lambda) = a_n lambda^n + ... + a_0``."""
        n = self.order
        return sp.Add(*(c * variable ** (n - i) for i, c in enumerate(self.coefficients)))

    def characteristic_roots(self) -> tuple[tuple[sp.Expr, int], ...] | None:
        """Roots of ``p`` with multiplicities, or None when not found in closed form."""
        found = sp.roots(sp.Poly(self.characteristic_polynomial(), LAMBDA))
        if sum(found.values()) != self.order:
            return None
        return tuple(sorted(found.items(), key=lambda item: sp.default_sort_key(item[0])))

    def multiplicity(self, exponent: sp.Expr) -> tuple[int, sp.Expr]:
        """Multiplicity of *exponent* as a root of ``p`` and the value ``p(exponent)``.

        Exact: ``p^(j)(exponent)`` must expand to 0 for every ``j < s``.
        """
        fast = self._multiplicity_in_field(exponent)
        if fast is not None:
            return fast
        poly = self.characteristic_polynomial()
        value = sp.expand(poly.subs(LAMBDA, exponent))
        s, current = 0, poly
        at = value
        while s < self.order and is_zero(at):
            s += 1
            current = sp.diff(current, LAMBDA)
            at = sp.expand(current.subs(LAMBDA, exponent))
        return s, value

    def _multiplicity_in_field(self, exponent: sp.Expr):
        """Multiplicity and ``p(exponent)`` by Horner's rule in the field of fractions,
        or None when that cannot decide (complex coefficients, roots among atoms)."""
        real, imag = sp.S.Zero, sp.S.Zero
        for term in sp.Add.make_args(exponent):
            coef, rest = term.as_independent(sp.I, as_Add=False)
            if rest == sp.I:
                imag += coef
            elif rest == 1:
                real += term
            else:
                return None
        try:
            field = FreeField([*self.coefficients, real, imag])
            if not field.exact:
                return None
            taylor = complex_taylor(field, [field(c) for c in self.coefficients], (field(real), field(imag)))
        except FIELD_ERRORS:
            return None
        s = 0
        while s < self.order and field.is_zero(taylor[s][0]) and field.is_zero(taylor[s][1]):
            s += 1
        re0, im0 = taylor[0]
        value = sp.expand(field.as_expr(re0) + sp.I * field.as_expr(im0))
        return s, value

    def apply(self, x: sp.Expr, t: sp.Symbol) -> sp.Expr:
        """``L[x]`` by differentiation."""
        n = self.order
        return sp.Add(*(c * sp.diff(x, t, n - i) for i, c in enumerate(self.coefficients)))

    def __repr__(self) -> str:
        return f"LinearODE({list(self.coefficients)!r})"

    # ---------------------------------------------------------- the method
    def response(self, f, initial_values, *, t: sp.Symbol | None = None) -> Response:
        """Total response meeting ``x(0), x'(0), ..., x^(n-1)(0) = initial_values``.

        Returns a :class:`~calckit.engine.response.Response` (``solution``, ``transient``,
        ``steady_state``, ``steps``); see :func:`calckit.engine.response.total_response`.

        Examples
        --------
        >>> t = sp.Symbol("t", real=True)
        >>> LinearODE([1, 0, 0]).response(sp.Integer(2), [1, 0], t=t).solution
        t**2 + 1
        """
        if is_switching(f, t):
            t = resolve_time(f, t)
            values = [exact(v, where=f"initial value {i + 1}") for i, v in enumerate(initial_values)]
            if len(values) != self.order:
                return total_response(self, 0, values, t=t)  # its refusal names the count
            return piecewise_response(self, f, tuple(values), self.interval_solver(), t=t)
        return total_response(self, f, initial_values, t=t)

    def periodic_steady_state(self, f, period, *, t: sp.Symbol | None = None):
        """The exact periodic response to *f* (one period on ``[0, period)``) repeated with *period*.

        See :func:`calckit.engine.periodic.periodic_steady_state`.
        """
        return periodic_steady_state(self, f, period, self.interval_solver(), t=resolve_time(f, t))

    def interval_solver(self, regime: str = "") -> IntervalSolver:
        """How one interval of a switching forcing is solved (:mod:`calckit.engine.piecewise`)."""

        def respond(piece, state, tau):
            return total_response(self, piece, list(state), t=tau, regime=regime)

        return scalar_solver(respond, self.order)

    def particular(self, f, *, t: sp.Symbol | None = None) -> Derivation:
        """Particular solution of ``L[x] = f(t)`` by undetermined coefficients.

        Parameters
        ----------
        f : sympy expression or number
            The forcing; any finite sum of ``t**n exp(a t) cos|sin(b t)`` terms
            and their products and powers.
        t : sympy.Symbol, optional
            The time variable (default: the symbol named ``t`` in *f*).

        Returns
        -------
        Derivation
        """
        if is_switching(f, t):
            return piecewise_particular(self, f, self.interval_solver(), t=resolve_time(f, t))
        return derive(ScalarStrategy(self), f, t)
