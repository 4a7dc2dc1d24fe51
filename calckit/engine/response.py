"""Transient and total response of a linear constant-coefficient equation.

The homogeneous solution is written in real form from the roots of the
characteristic polynomial: a real root ``r`` of multiplicity ``mu`` gives
``t^j e^{rt}`` for ``j < mu``; a complex pair ``a +/- i b`` gives
``t^j e^{at} cos bt`` and ``t^j e^{at} sin bt``. The free constants are fixed
by the initial values ``x(0), x'(0), ..., x^{(n-1)}(0)``; the total response is
transient (homogeneous) plus steady state (particular).
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy as sp

from calckit.core.display import Displayable
from calckit.core.exact import exact
from calckit.engine.algebra import is_zero, plain, rationalised, real_imag, tidy
from calckit.engine.derivation import Derivation, ScalarOperator
from calckit.engine.roots import (
    NROOTS_DIGITS,
    ROOT_DIGITS,
    distinct_roots_condition,
    normal_conditions,
    roots_for_response,
)
from calckit.engine.steps import HomogeneousStep, InitialConditionsStep, Step, TotalResponseStep
from calckit.errors import InternalError, ModelError

__all__ = ["Response", "homogeneous_basis", "total_response"]


@dataclass(frozen=True, kw_only=True)
class Response(Displayable):
    """Total response ``x(t) = transient + steady state`` meeting the initial values.

    Attributes
    ----------
    solution, transient, steady_state : sympy.Expr or sympy.ImmutableMatrix
        Columns for a multi-mass model.
    particular : Derivation
        The derivation of the steady state (particular solution).
    constants : tuple of (Symbol, value)
        The constants of the homogeneous solution as fixed by the initial values.
    steps : tuple of Step
        The particular solution's steps followed by the homogeneous solution, the
        initial-value equations and the total.
    conditions : tuple
        Relations the result needs when parameters are symbolic: the particular
        solution's, and that the characteristic roots stay distinct (e.g.
        ``Ne(C*R**2 - 4*L, 0)``), in the normal form of
        :func:`calckit.engine.roots.normal_conditions`.
    """

    solution: sp.Expr | sp.ImmutableMatrix
    transient: sp.Expr | sp.ImmutableMatrix
    steady_state: sp.Expr | sp.ImmutableMatrix
    particular: Derivation
    constants: tuple[tuple[sp.Symbol, sp.Expr], ...]
    # x(0), x'(0), ... of a scalar model; (x0, v0) columns of a multi-mass model
    initial_values: tuple[sp.Expr, ...] | tuple[sp.ImmutableMatrix, sp.ImmutableMatrix]
    t: sp.Symbol
    steps: tuple[Step, ...]
    conditions: tuple[sp.Expr, ...] = ()

    def evaluate(self, times, part: str = "solution", **values):
        """The response (or its ``"transient"`` / ``"steady_state"`` part) at numeric *times*."""
        from calckit.engine.numeric import time_history

        return time_history(self, times, part=part, **values)

    @property
    def verified(self) -> bool:
        """The particular solution's back-substitution check."""
        return self.particular.verified


def _root_groups(roots):
    """Pair complex roots as (a, b, multiplicity) with b > 0; real ones with b = 0."""
    out = []
    seen = set()
    for root, mult in roots:
        real, imag = root.as_real_imag() if root.is_number else real_imag(root)
        real, imag = sp.simplify(real), sp.simplify(imag)
        if is_zero(imag):
            out.append((real, sp.S.Zero, mult))
            continue
        key = (real, abs(imag) if imag.is_number else sp.sqrt(sp.factor(imag**2)))
        if key in seen:
            continue
        seen.add(key)
        out.append((real, key[1], mult))
    return out


def homogeneous_basis(ode: ScalarOperator, t: sp.Symbol, roots=None) -> tuple[sp.Expr, ...]:
    """Real basis functions of the homogeneous solution.

    Raises ModelError when the roots of a symbolic characteristic polynomial are
    not found in closed form.
    """
    roots = roots_for_response(ode)[0] if roots is None else roots
    if roots is None:
        raise ModelError(
            "the roots of the characteristic polynomial of this symbolic model were not found in closed form",
            where=f"{ode!r}",
            do="Substitute numbers for the parameters (numeric models fall back to numerical roots), "
            "or use a lower-order model",
        )
    basis = []
    for a, b, mult in _root_groups(roots):
        for j in range(mult):
            if b == 0:
                basis.append(t**j * sp.exp(a * t))
            else:
                basis.append(t**j * sp.exp(a * t) * sp.cos(b * t))
                basis.append(t**j * sp.exp(a * t) * sp.sin(b * t))
    if len(basis) != ode.order:
        raise InternalError(
            f"the homogeneous solution has {len(basis)} basis functions for an equation of order {ode.order}",
            where=f"{ode!r}",
            reproduce=_reproducer(ode, 0, [0] * ode.order, t),
        )
    return tuple(basis)


def total_response(
    ode: ScalarOperator,
    f,
    initial_values,
    *,
    t: sp.Symbol | None = None,
    basis: tuple[sp.Expr, ...] | None = None,
    regime: str = "",
    names: tuple[str, ...] | None = None,
) -> Response:
    """Total response of ``L[x] = f`` meeting ``x^{(j)}(0) = initial_values[j]``.

    Parameters
    ----------
    ode : LinearODE
    f : forcing (see :meth:`LinearODE.particular`)
    initial_values : sequence of length ``ode.order``
        ``x(0), x'(0), ...``.
    basis : tuple, optional
        Basis functions of the homogeneous solution (default: from the roots).
    """
    values = list(initial_values)
    if len(values) != ode.order:
        raise ModelError(
            f"got {len(values)} initial value(s) for an equation of order {ode.order}",
            where="initial values",
            do=f"Give x(0) and the first {ode.order - 1} derivative(s) at t = 0, {ode.order} values in all",
        )
    values = [exact(v, where=f"initial value {i + 1}") for i, v in enumerate(values)]
    der = ode.particular(f, t=t)
    t = der.t
    numerical = False
    conditions = list(der.conditions)
    if basis is None:
        roots, numerical = roots_for_response(ode)
        basis = homogeneous_basis(ode, t, roots)
        conditions.extend(distinct_roots_condition(ode))
    conditions = normal_conditions(conditions)
    n = ode.order
    names = names or tuple(f"C_{i + 1}" for i in range(n))
    taken = {s.name for s in der.solution.free_symbols}
    constants = tuple(sp.Symbol(name if name not in taken else name + "'") for name in names)
    transient_general = sp.Add(*(c * phi for c, phi in zip(constants, basis, strict=True)))
    homogeneous = HomogeneousStep(
        "Homogeneous (transient) solution",
        "The roots of the characteristic polynomial give the free motion of the system"
        + (f" ({regime})" if regime else "")
        + "; its constants are fixed by the initial state."
        + (
            f" The roots have no closed form: they are computed numerically (mpmath's polynomial root "
            f"finder, {NROOTS_DIGITS} working digits, on the exact irreducible factors, so multiplicities "
            f"are exact) and kept to {ROOT_DIGITS} significant digits."
            if numerical
            else ""
        )
        + (
            " This form holds while "
            + ", ".join(f"{plain(c.lhs)} != 0" for c in conditions if isinstance(c, sp.Ne))
            + "."
            if any(isinstance(c, sp.Ne) for c in conditions)
            else ""
        ),
        transient_general,
        constants,
        regime,
    )
    total_general = transient_general + der.solution
    equations = []
    current = total_general
    for j in range(n):
        lhs = sp.expand(current.subs(t, 0))
        equations.append(sp.Eq(lhs, values[j]))
        current = sp.diff(current, t)
    matrix, rhs = sp.linear_eq_to_matrix([eq.lhs - eq.rhs for eq in equations], constants)
    try:
        solved = matrix.LUsolve(rhs)
    except (ValueError, ZeroDivisionError) as exc:  # singular: basis not independent
        raise InternalError(
            "the initial-value equations are singular, although the basis of free motions is independent",
            where=f"{ode!r}",
            reproduce=_reproducer(ode, der.forcing, values, t),
        ) from exc
    found = tuple(
        (c, v.evalf(ROOT_DIGITS) if numerical else tidy(_simpler(v)))
        for c, v in zip(constants, solved, strict=True)
    )
    mapping = dict(found)
    transient = rationalised(transient_general.xreplace(mapping))
    labels = ["$x(0)$", "$\\dot{x}(0)$", "$\\ddot{x}(0)$"] + [f"$x^{{({j})}}(0)$" for j in range(3, n)]
    ic_step = InitialConditionsStep(
        "Constants from the initial state",
        "The total response and its derivatives at t = 0 must equal the initial values "
        + ", ".join(labels[:n])
        + ": one linear equation per value.",
        tuple(equations),
        found,
    )
    total_step = TotalResponseStep(
        "Total response",
        "The total response is the transient (free motion from the initial state) plus the "
        "steady state (the particular solution).",
        transient,
        der.solution,
        transient + der.solution,
        t,
    )
    steps = der.steps + (homogeneous, ic_step, total_step)
    return Response(
        solution=transient + der.solution,
        transient=transient,
        steady_state=der.solution,
        particular=der,
        constants=found,
        initial_values=tuple(values),
        t=t,
        steps=steps,
        conditions=conditions,
    )


def _reproducer(ode: ScalarOperator, forcing, values, t: sp.Symbol) -> str:
    """A line that repeats a total response, for an :class:`~calckit.errors.InternalError`."""
    coefficients = ", ".join(sp.srepr(c) for c in ode.coefficients)
    initial = ", ".join(sp.srepr(sp.sympify(v)) for v in values)
    return (
        f"import calckit as ck; from sympy import *; t = {sp.srepr(t)}; "
        f"ck.LinearODE([{coefficients}]).response({sp.srepr(sp.sympify(forcing))}, [{initial}], t=t)"
    )


def _simpler(value: sp.Expr) -> sp.Expr:
    """A fitted constant in a readable form: ``simplify`` for a small symbolic one; a number stays
    exact as it came (``sympy.simplify`` of a number with ``sin(3/200 sqrt(...))`` in it can run for
    minutes in trigsimp's factoring, and a numeric sheet shows it in decimals anyway)."""
    if value.free_symbols and sp.count_ops(value) < 200:
        return sp.simplify(value)
    return sp.cancel(value) if value.is_number and not value.has(sp.Function) else value
