"""Particular solutions by the method of undetermined coefficients.

For a linear operator with constant coefficients

.. math::

    L(D)\\,x = a_n x^{(n)} + \\dots + a_1 x' + a_0 x = f(t),
    \\qquad p(\\lambda) = a_n \\lambda^n + \\dots + a_1 \\lambda + a_0,

and a forcing group ``e^{a t} (P(t) cos bt + Q(t) sin bt)`` with ``deg P, Q <= d``,
the trial form is

.. math::

    x_g(t) = t^s e^{a t} \\sum_{i=0}^{d} t^i (A_i \\cos bt + B_i \\sin bt),

where ``s`` is the multiplicity of ``lambda = a + i b`` as a root of ``p``
(``s = 0`` away from resonance). Substituting and equating the coefficients of
``t^j e^{at} cos bt`` and ``t^j e^{at} sin bt`` gives a linear system that is
block triangular in ``j``: the equations of power ``j`` involve only
``A_i, B_i`` with ``i >= j``, so the system is solved from the top power down,
one 2x2 (or 1x1) block at a time. Groups are independent; the cost grows with
the number of groups and their degree, not with the square of the number of
terms.

References
----------
Boyce, DiPrima & Meade, *Elementary Differential Equations and Boundary Value
Problems*, 11th ed., sec. 3.5 and 4.3 (the modification rule), from memory.
"""

from __future__ import annotations

import re
from collections import defaultdict
from dataclasses import dataclass, field

import sympy as sp

from calckit.core.display import Displayable
from calckit.core.exact import exact
from calckit.engine.forcing import (
    COS,
    SIN,
    ExponentGroup,
    ForcingSplit,
    _add_into,
    quasi_polynomial,
    split_forcing,
)
from calckit.engine.steps import (
    CharacteristicStep,
    CoefficientEquationsStep,
    Deferred,
    DerivativesStep,
    EquationStep,
    ForcingSplitStep,
    ParticularSolutionStep,
    ResonanceStep,
    SolvedCoefficientsStep,
    Step,
    SubstitutionStep,
    TrialFormStep,
    VerificationStep,
)
from calckit.errors import ForcingError, ModelError

__all__ = ["LinearODE", "Derivation", "vanishes", "LAMBDA"]

#: the variable of characteristic polynomials
LAMBDA = sp.Symbol("lambda")

_LETTER_PAIRS = (("A", "B"), ("C", "D"), ("P", "Q"), ("U", "V"), ("G", "H"), ("K", "L"))


@dataclass(frozen=True)
class Derivation(Displayable):
    """A particular solution derived step by step.

    Attributes
    ----------
    solution : sympy.Expr
        ``x_p(t)``.
    steps : tuple of Step
        Ordered step records (forcing split, characteristic roots, per group:
        resonance, trial form, derivatives, substitution, coefficient equations,
        solved coefficients; then the particular solution and the verification).
    verified : bool
        True when ``L[x_p] - f`` simplifies to exactly 0.
    conditions : tuple
        Relations the result needs when parameters are symbolic, e.g.
        ``Ne((k - m*omega**2)**2 + c**2*omega**2, 0)``.
    """

    operator: LinearODE
    forcing: sp.Expr
    t: sp.Symbol
    split: ForcingSplit
    solution: sp.Expr
    steps: tuple[Step, ...]
    verified: bool
    conditions: tuple[sp.Expr, ...] = field(default=())

    def steps_of(self, kind: str) -> tuple[Step, ...]:
        """Steps of one kind, e.g. ``"trial-form"``."""
        return tuple(step for step in self.steps if step.kind == kind)

    def evaluate(self, times, **values):
        """``x_p`` at numeric *times* (numpy array); symbols given as keyword values.

        The expression is compiled once (see :mod:`calckit.engine.numeric`).
        """
        from calckit.engine.numeric import time_history

        return time_history(self, times, **values)


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
        while s < self.order and _is_zero(at):
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
            field = _FreeField([*self.coefficients, real, imag])
            if not field.exact:
                return None
            taylor = _complex_taylor(field, [field(c) for c in self.coefficients], (field(real), field(imag)))
        except _FIELD_ERRORS:
            return None
        s = 0
        while s < self.order and taylor[s][0] == 0 and taylor[s][1] == 0:
            s += 1
        re0, im0 = taylor[0]
        value = sp.expand(re0.as_expr() + sp.I * im0.as_expr())
        return s, value

    def apply(self, x: sp.Expr, t: sp.Symbol) -> sp.Expr:
        """``L[x]`` by differentiation."""
        n = self.order
        return sp.Add(*(c * sp.diff(x, t, n - i) for i, c in enumerate(self.coefficients)))

    def __repr__(self) -> str:
        return f"LinearODE({list(self.coefficients)!r})"

    # ---------------------------------------------------------- the method
    def response(self, f, initial_values, *, t: sp.Symbol | None = None):
        """Total response meeting ``x(0), x'(0), ..., x^(n-1)(0) = initial_values``.

        Returns a :class:`~calckit.response.Response` (``solution``, ``transient``,
        ``steady_state``, ``steps``); see :func:`calckit.response.total_response`.

        Examples
        --------
        >>> t = sp.Symbol("t", real=True)
        >>> LinearODE([1, 0, 0]).response(sp.Integer(2), [1, 0], t=t).solution
        t**2 + 1
        """
        from calckit.engine.response import total_response

        return total_response(self, f, initial_values, t=t)

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
        return _derive(self, f, t)


# ---------------------------------------------------------------------------
# helpers


def _rational_in_symbols(expr: sp.Expr) -> bool:
    """True when *expr* is built from symbols and rationals by + - * / and whole powers."""
    if expr.atoms(sp.Function) or expr.has(sp.pi, sp.E):
        return False
    return all(p.exp.is_Integer for p in expr.atoms(sp.Pow))


def _is_zero(expr: sp.Expr) -> bool:
    """Exact test for zero.

    Rational functions of the parameters are summed in sympy's sparse field of
    fractions (fast); anything else (roots, transcendental constants) goes
    through cancel and, failing that, simplify.
    """
    expr = sp.sympify(expr)
    if expr == 0:
        return True
    if expr.is_Rational:
        return False
    if expr.is_number:
        real, imag = sp.expand(expr).as_real_imag()
        if real.is_Rational and imag.is_Rational:
            return real == 0 and imag == 0
    gens = sorted(expr.free_symbols, key=sp.default_sort_key)
    if gens and _rational_in_symbols(expr):
        domain = sp.QQ_I if expr.has(sp.I) else sp.QQ
        try:
            field = sp.polys.fields.field(gens, domain)[0]
            return field.from_expr(expr) == 0
        except (ValueError, TypeError, sp.PolynomialError, sp.polys.polyerrors.CoercionFailed):
            pass
    reduced = sp.cancel(sp.together(sp.expand(expr)))
    if reduced == 0:
        return True
    if reduced.is_number:
        return sp.nsimplify(reduced) == 0 and sp.simplify(reduced) == 0
    return sp.simplify(reduced) == 0


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
    return all(_is_zero(coef) for coef in parts.values())


#: the generic exponent alpha + i beta of a basis function, for :func:`_satisfies`
_ALPHA, _BETA = sp.Dummy("alpha", real=True), sp.Dummy("beta", positive=True)
#: from this many solution terms of one shape (kind, n) on, L is applied to the generic term
_GENERIC_FROM = 4


def _satisfies(ode: LinearODE, x: sp.Expr, f: sp.Expr, t: sp.Symbol) -> bool:
    """True when ``L[x] - f`` vanishes identically (*x*, *f* quasi-polynomials in *t*).

    First by the exponential shift rule (:func:`_shift_rule_satisfies`, fast and
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
    if _shift_rule_satisfies(ode, x_parts, f_parts):
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
                _add_into(acc, key, coef * c)
            continue
        if (kind, n) not in generic:
            generic[(kind, n)] = image(_ALPHA, _BETA, kind, n)
        values = {_ALPHA: a, _BETA: b}
        for (a2, b2, kind2, n2), c in generic[(kind, n)].items():
            _add_into(acc, (a2.xreplace(values), b2.xreplace(values), kind2, n2), coef * c.xreplace(values))
    for key, coef in f_parts.items():
        _add_into(acc, key, -coef)
    return all(_is_zero(c) for c in acc.values())


class _FreeField:
    """Sympy's field of rational functions over the rationals, generated by the plain
    symbols of some expressions and by every other atom in them (``cos(1)``,
    ``sqrt(k/m)``, ``pi``) taken as a free generator.

    Zero in this field is zero under any relation among the atoms; non-zero is
    decisive only when ``exact`` (no atom was freed).
    """

    def __init__(self, exprs):
        self.atoms: dict = {}
        for e in exprs:
            for atom in e.atoms(sp.Function, sp.Pow, sp.NumberSymbol):
                if isinstance(atom, sp.Pow) and atom.exp.is_Integer:
                    continue
                self.atoms.setdefault(atom, sp.Dummy())
        plain = [e.xreplace(self.atoms) if self.atoms else e for e in exprs]
        gens = sorted(set().union(*(e.free_symbols for e in plain)), key=sp.default_sort_key) or [sp.Dummy()]
        self.field = sp.polys.fields.field(gens, sp.QQ)[0]
        self.zero = self.field.zero
        self.exact = not self.atoms

    def __call__(self, e):
        return self.field.from_expr(e.xreplace(self.atoms) if self.atoms else e)


_FIELD_ERRORS = (ValueError, TypeError, sp.PolynomialError, sp.polys.polyerrors.CoercionFailed)


def _complex_taylor(field: _FreeField, coefficients, lam) -> list:
    """(re, im) of ``p^(j)(lam)/j!``, j = 0..n, by repeated synthetic division.

    ``coefficients`` are field elements, highest power first; ``lam`` is a pair.
    """
    zero = field.zero
    coeffs, out = [(c, zero) for c in coefficients], []
    lr, li = lam
    while coeffs:
        ar, ai, quotient = zero, zero, []
        for cr, ci in coeffs:
            ar, ai = ar * lr - ai * li + cr, ar * li + ai * lr + ci
            quotient.append((ar, ai))
        out.append(quotient.pop())
        coeffs = quotient
    return out


def _shift_rule_satisfies(ode: LinearODE, x_parts: dict, f_parts: dict) -> bool:
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
        conv = _FreeField(exprs)
    except _FIELD_ERRORS:
        return False
    zero = conv.zero
    try:
        p = [conv(c) for c in ode.coefficients]
    except _FIELD_ERRORS:
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
            for cr, ci in _complex_taylor(conv, p, (conv(a), conv(b))):
                for n, (ur, ui) in enumerate(derivative):
                    lhs[n][0] += cr * ur - ci * ui
                    lhs[n][1] += cr * ui + ci * ur
                derivative = [(n * derivative[n][0], n * derivative[n][1]) for n in range(1, len(derivative))]
                if not derivative:
                    break
            if any(l_n[0] != f_n[0] or l_n[1] != f_n[1] for l_n, f_n in zip(lhs, target, strict=True)):
                return False
    except _FIELD_ERRORS:
        return False
    return True


def _pick_simplest(*candidates: sp.Expr) -> sp.Expr:
    return min(candidates, key=sp.count_ops)


def _tidy(expr: sp.Expr) -> sp.Expr:
    """A readable form: the smallest of the raw, factored and cancelled forms."""
    if expr.is_number:
        return sp.nsimplify(expr) if expr.has(sp.Float) else expr
    if sp.count_ops(expr) > 400:
        return _pick_simplest(expr, sp.cancel(expr))
    return _pick_simplest(expr, sp.factor(expr), sp.cancel(expr))


def _unknown_letters(taken: set[str]) -> tuple[str, str]:
    """The first pair of letters for unknown coefficients not used by the user."""
    for pair in _LETTER_PAIRS:
        if not any(name == letter or name.startswith(letter + "_") for name in taken for letter in pair):
            return pair
    return ("alpha", "beta")


def _make_unknowns(group: ExponentGroup, index: int, many: bool, pair: tuple[str, str]):
    d = group.degree
    cos_name, sin_name = pair

    def name(letter: str, i: int) -> str:
        if many and d > 0:
            return f"{letter}_{{{index},{i}}}"
        if many:
            return f"{letter}_{index}"
        if d > 0:
            return f"{letter}_{i}"
        return letter

    cos_unknowns = tuple(sp.Symbol(name(cos_name, i)) for i in range(d + 1))
    sin_unknowns = tuple(sp.Symbol(name(sin_name, i)) for i in range(d + 1)) if group.harmonic else ()
    return cos_unknowns, sin_unknowns


class _Form:
    """``e^{at} sum_j t^j (c_j cos bt + s_j sin bt)`` with linear-form coefficients.

    ``terms[(kind, j)]`` maps each unknown (or 1 for a known part) to its factor.
    """

    __slots__ = ("a", "b", "terms")

    def __init__(self, a, b, terms):
        self.a, self.b, self.terms = a, b, terms

    def derivative(self) -> _Form:
        a, b = self.a, self.b
        out: dict = defaultdict(lambda: defaultdict(lambda: sp.S.Zero))
        for (kind, j), lin in self.terms.items():
            for u, coef in lin.items():
                out[(kind, j)][u] += a * coef
                if j:
                    out[(kind, j - 1)][u] += j * coef
                if b != 0:
                    if kind == COS:
                        out[(SIN, j)][u] += -b * coef
                    else:
                        out[(COS, j)][u] += b * coef
        return _Form(a, b, out)

    def scaled_sum(self, others: list[tuple[sp.Expr, _Form]]) -> _Form:
        out: dict = defaultdict(lambda: defaultdict(lambda: sp.S.Zero))
        for weight, form in others:
            for key, lin in form.terms.items():
                for u, coef in lin.items():
                    out[key][u] += weight * coef
        return _Form(self.a, self.b, out)

    def expr(self, t: sp.Symbol) -> sp.Expr:
        parts = []
        for (kind, j), lin in sorted(self.terms.items(), key=lambda kv: (kv[0][1], kv[0][0])):
            # one term per unknown: collected by construction
            coef = sp.Add(*((c if c.is_number else sp.expand(c)) * u for u, c in lin.items()))
            if coef == 0:
                continue
            trig = 1 if self.b == 0 else (sp.cos if kind == COS else sp.sin)(self.b * t)
            parts.append(coef * t**j * trig)
        return sp.exp(self.a * t) * sp.Add(*parts)


def _basis(group: ExponentGroup, kind: str, j: int, t: sp.Symbol) -> sp.Expr:
    trig = 1 if not group.harmonic else (sp.cos if kind == COS else sp.sin)(group.frequency * t)
    return t**j * sp.exp(group.decay * t) * trig


def _derive(ode: LinearODE, f, t) -> Derivation:
    split = split_forcing(f, t)
    t = split.t
    for index, coef in enumerate(ode.coefficients):
        if coef.has(t):
            raise ModelError(
                f"the coefficient {coef} depends on the time variable {t}",
                where=f"coefficient a_{ode.order - index}",
                do="The method needs constant coefficients; freeze the coefficient at a value",
            )
    x = sp.Symbol(ode.name)
    steps: list[Step] = [
        EquationStep(
            "Equation of motion",
            "The equation to solve: a linear operator with constant coefficients on the left, "
            "the forcing on the right.",
            ode.coefficients,
            split.forcing,
            t,
            x,
        ),
        ForcingSplitStep(
            "Forcing split into exponent groups",
            _split_sentence(split),
            split.forcing,
            split.groups,
            t,
        ),
        CharacteristicStep(
            "Characteristic polynomial",
            "Substituting x = e^(lambda t) into the homogeneous equation gives the characteristic "
            "polynomial; its roots decide which trial forms need an extra factor t.",
            LAMBDA,
            ode.characteristic_polynomial(),
            Deferred(lambda: ode.characteristic_roots() or ())
            if (not ode.parameters or ode.order <= 2)
            else None,
        ),
    ]
    taken = {s.name for s in split.forcing.free_symbols | ode.parameters}
    pair = _unknown_letters(taken)
    many = len(split.groups) > 1
    parts: list[sp.Expr] = []
    conditions: list[sp.Expr] = []
    if ode.coefficients[0].free_symbols and sp.Ne(ode.coefficients[0], 0) is not sp.true:
        conditions.append(sp.Ne(ode.coefficients[0], 0))
    for gi, group in enumerate(split.groups, start=1):
        part, group_steps, group_conditions = _solve_group(ode, group, gi, many, pair, t, x)
        parts.append(part)
        steps.extend(group_steps)
        for cond in group_conditions:
            if cond not in conditions:
                conditions.append(cond)
    solution = sp.Add(*parts)
    steps.append(particular_step(solution, t, many))
    verified = _satisfies(ode, solution, split.forcing, t)
    residual = sp.S.Zero if verified else sp.simplify(ode.apply(solution, t) - split.forcing)
    steps.append(verification_step(residual, verified, "the equation", split.forcing))
    return Derivation(ode, split.forcing, t, split, solution, tuple(steps), verified, tuple(conditions))


def particular_step(solution, t: sp.Symbol, many: bool) -> ParticularSolutionStep:
    """The step that states the particular solution (one group, or the sum of several)."""
    return ParticularSolutionStep(
        "Particular solution",
        "The particular solution is the sum of the parts found for each exponent group."
        if many
        else "The solved coefficients put back into the trial form give the particular solution.",
        solution,
        t,
    )


def verification_step(residual, verified: bool, what: str, forcing) -> VerificationStep:
    """The check-by-substitution step; an unverified solution raises, since that is a bug
    in calckit, never the user's. *what* is "the equation" or "every row of the equations"."""
    if not verified:
        raise ForcingError(
            f"the derived particular solution does not satisfy {what} (residual {residual})",
            where=f"forcing {forcing}",
            do="Please report this forcing and model to the calckit maintainers",
        )
    return VerificationStep(
        "Check by substitution",
        f"Substituting the particular solution back into {what} leaves a residual of exactly zero, "
        "so the solution is verified.",
        residual,
        verified,
    )


def _split_sentence(split: ForcingSplit) -> str:
    n = len(split.groups)
    if n == 1:
        return (
            "The forcing is one group of terms sharing the exponent lambda = a + i b, "
            "so one trial form covers it."
        )
    return (
        f"Products and powers are expanded and the terms sorted into {n} groups by their exponent "
        "lambda = a + i b; each group gets its own trial form and is solved on its own."
    )


def _plain(expr: sp.Expr) -> str:
    """A short plain-text form for sentences: 155*I -> 155i, -1 + 4*I -> -1 + 4i."""
    text = sp.sstr(expr)
    text = re.sub(r"(\d)\*I\b", r"\1i", text)  # 155*I -> 155i
    text = re.sub(r"\bI\*", "i ", text)  # I*omega -> i omega
    text = re.sub(r"\bI\b", "i", text)
    return text.replace("*", " ")


def _resonance_sentence(s: int, group: ExponentGroup) -> str:
    """One plain sentence: is the exponent a root, and what follows."""
    lam = _plain(group.exponent)
    if s == 0:
        return (
            f"p({lam}) is not zero: the exponent is not a root of the characteristic polynomial, "
            "so the trial form needs no extra factor t."
        )
    which = {1: "a simple root", 2: "a double root", 3: "a triple root"}.get(s, f"a root of multiplicity {s}")
    if group.harmonic and group.decay == 0:
        what = "resonance: the forcing is at a natural frequency of the undamped system"
    else:
        what = "the forcing has the shape of a free motion of the system"
    factor = "t" if s == 1 else f"t^{s}"
    return (
        f"The exponent {lam} is {which} of the characteristic polynomial ({what}), "
        f"so the trial form is multiplied by {factor}."
    )


def _solve_group(ode, group, gi, many, pair, t, x):
    steps: list[Step] = []
    s, value = ode.multiplicity(group.exponent)
    steps.append(
        ResonanceStep(
            f"Group {gi}: is the exponent a root?" if many else "Is the exponent a root?",
            _resonance_sentence(s, group),
            gi,
            group.exponent,
            value,
            s,
        )
    )
    d = group.degree
    cos_u, sin_u = _make_unknowns(group, gi, many, pair)
    unknowns = cos_u + sin_u
    trial_terms: dict = {}
    for i in range(d + 1):
        trial_terms[(COS, i + s)] = {cos_u[i]: sp.S.One}
        if group.harmonic:
            trial_terms[(SIN, i + s)] = {sin_u[i]: sp.S.One}
    form = _Form(group.decay, group.frequency, trial_terms)
    trial = form.expr(t)
    prefix = f"Group {gi}: " if many else ""
    steps.append(
        TrialFormStep(
            prefix + "trial form" if many else "Trial form",
            _trial_sentence(group, s, d),
            gi,
            trial,
            unknowns,
        )
    )
    derivs = [form]
    for _ in range(ode.order):
        derivs.append(derivs[-1].derivative())
    steps.append(
        DerivativesStep(
            prefix + "derivatives of the trial form" if many else "Derivatives of the trial form",
            "The trial form is differentiated as many times as the equation needs.",
            gi,
            Deferred(lambda: [d_.expr(t) for d_ in derivs[1:]]),
        )
    )
    n = ode.order
    lhs_form = form.scaled_sum([(c, derivs[n - i]) for i, c in enumerate(ode.coefficients)])
    steps.append(
        SubstitutionStep(
            prefix + "substitution into the equation" if many else "Substitution into the equation",
            "The trial form and its derivatives are substituted into the left side and collected "
            "by basis function.",
            gi,
            lhs_form.expr(t),
            group.expr(t),
        )
    )
    rhs = {(term.kind, term.power): term.coefficient for term in group.terms}
    # one equation per basis function, as linear forms {unknown: factor}
    system: dict = {}
    keys = set(rhs) | {key for key, lin in lhs_form.terms.items()}
    for key in keys:
        lin = {u: sp.expand(c) for u, c in lhs_form.terms.get(key, {}).items()}
        lin = {u: c for u, c in lin.items() if c != 0}
        system[key] = (lin, rhs.get(key, sp.S.Zero))
    order_key = sorted(system, key=lambda k: (-k[1], k[0] != COS))
    equations, basis = [], []
    for key in order_key:
        lin, r = system[key]
        if not lin and _is_zero(r):
            continue
        equations.append(sp.Eq(sp.Add(*(c * u for u, c in lin.items())), r, evaluate=False))
        basis.append(_basis(group, key[0], key[1], t))
    steps.append(
        CoefficientEquationsStep(
            prefix + "equating coefficients" if many else "Equating coefficients",
            "Both sides must agree for every t, so the coefficients of each basis function "
            "must be equal: one linear equation per basis function.",
            gi,
            tuple(basis),
            tuple(equations),
        )
    )
    values, conds = _back_substitute(system, cos_u, sin_u, d, s, group)
    steps.append(
        SolvedCoefficientsStep(
            prefix + "solved coefficients" if many else "Solved coefficients",
            "The equations are solved from the highest power of t down, two unknowns at a time."
            if group.harmonic
            else "The equations are solved from the highest power of t down, one unknown at a time.",
            gi,
            tuple((u, values[u]) for u in unknowns),
            tuple(conds),
        )
    )
    part = trial.xreplace(values)
    return part, steps, conds


def _trial_sentence(group: ExponentGroup, s: int, d: int) -> str:
    """One plain sentence: why the trial form has the shape it has."""
    if group.harmonic:
        shape = "cosine and sine terms" + (" times an exponential" if group.decay != 0 else "")
        assumed = "both a cosine and a sine"
    else:
        shape = "an exponential term" if group.decay != 0 else "a polynomial term"
        assumed = "the same shape"
    degree = f" multiplied by powers of t up to t^{d}" if d else ""
    text = f"The group holds {shape}{degree}, so {assumed} with unknown coefficients"
    if d:
        text += f" and every power of t up to t^{d}"
    text += " is assumed"
    if s:
        text += f", multiplied by t{'' if s == 1 else '^' + str(s)} because the exponent is a root"
    return text + "."


def _back_substitute(system, cos_u, sin_u, d, s, group):
    """Solve the block-triangular system from the top power down.

    Each block is 2x2 (cosine and sine unknowns of one power of t) or 1x1, solved
    by Cramer's rule. With symbolic parameters the arithmetic runs in sympy's
    sparse field of rational functions, and every result is written over a power
    of the block determinant in its readable form, e.g.
    ``A (k - m w^2) / ((k - m w^2)^2 + c^2 w^2)``.
    """
    entries = [c for lin, r in system.values() for c in (*lin.values(), r)]
    gens = sorted(set().union(*(e.free_symbols for e in entries)), key=sp.default_sort_key)
    field = None
    if gens and all(_rational_in_symbols(e) for e in entries):
        domain = sp.QQ_I if any(e.has(sp.I) for e in entries) else sp.QQ
        field = sp.polys.fields.field(gens, domain)[0]
    conv = field.from_expr if field is not None else (lambda e: e)
    values: dict = {}
    conditions: list[sp.Expr] = []
    shown_det = None
    for j in range(d, -1, -1):
        eq_keys = [(COS, j)] + ([(SIN, j)] if group.harmonic else [])
        block = [cos_u[j]] + ([sin_u[j]] if group.harmonic else [])
        rows = []
        for key in eq_keys:
            lin, r = system.get(key, ({}, sp.S.Zero))
            rhs = conv(r) - sum((conv(c) * values[u] for u, c in lin.items() if u in values), conv(sp.S.Zero))
            rows.append(([lin.get(u, sp.S.Zero) for u in block], rhs))
        if len(block) == 1:
            (alpha,), r1 = rows[0]
            det_expr = sp.factor(alpha)
            det = conv(alpha)
            sol = [r1 / det]
        else:
            (alpha, beta), r1 = rows[0]
            (gamma, delta), r2 = rows[1]
            shown = [sp.factor(v) for v in (alpha, beta, gamma, delta)]
            det_expr = shown[0] * shown[3] - shown[1] * shown[2]
            a_, b_, g_, d_ = (conv(v) for v in (alpha, beta, gamma, delta))
            det = a_ * d_ - b_ * g_
            sol = [(r1 * d_ - b_ * r2) / det, (a_ * r2 - g_ * r1) / det]
        if det == 0 or (field is None and _is_zero(det)):  # not when s is the true multiplicity
            raise ModelError(
                "the coefficient equations are singular",
                where=f"exponent {group.exponent}",
                do="Please report this forcing and model to the calckit maintainers",
            )
        if j == d:
            # the determinant's numerator in readable form (a 1/tau**2 factor is not part of it)
            shown_det = sp.fraction(sp.together(det_expr))[0]
            if det_expr.free_symbols:
                condition = sp.Ne(det_expr, 0)
                if condition is not sp.true:
                    conditions.append(condition)
        for u, v in zip(block, sol, strict=True):
            values[u] = v
    if field is None:
        return {u: _tidy(v) for u, v in values.items()}, conditions
    return {u: _over_power_of(v, shown_det, field) for u, v in values.items()}, conditions


def _over_power_of(value, det_expr: sp.Expr, field) -> sp.Expr:
    """Write a rational function as ``numerator / det**e`` when its denominator is a
    constant times a power of the determinant; otherwise as cancelled."""
    num, den = value.numer, value.denom
    if num == 0:
        return sp.S.Zero
    det_poly = field.from_expr(det_expr).numer
    power = 0
    if det_poly.is_ground is False:
        while not den.is_ground:
            quotient, remainder = den.div(det_poly)
            if remainder != 0:
                return _tidy(value.as_expr())
            den, power = quotient, power + 1
    scale = den.as_expr()
    numerator = sp.factor_terms(num.as_expr() / scale)
    return numerator / det_expr**power if power else numerator
