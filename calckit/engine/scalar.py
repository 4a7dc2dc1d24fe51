"""The scalar strategy: one equation ``L(D) x = f(t)``, solved group by group in small blocks.

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
one 2x2 (or 1x1) block at a time.

References
----------
Boyce, DiPrima & Meade, *Elementary Differential Equations and Boundary Value
Problems*, 11th ed., sec. 3.5 and 4.3 (the modification rule), from memory.
"""

from __future__ import annotations

import sympy as sp

from calckit.engine.algebra import LAMBDA, is_zero, rational_in_symbols, tidy
from calckit.engine.forcing import COS, SIN, ExponentGroup, ForcingSplit, split_forcing
from calckit.engine.method import GroupSolution, Strategy
from calckit.engine.roots import roots_for_response
from calckit.engine.steps import (
    CharacteristicStep,
    CoefficientEquationsStep,
    Deferred,
    DerivativesStep,
    EquationStep,
    ForcingSplitStep,
    ResonanceStep,
    SolvedCoefficientsStep,
    Step,
    SubstitutionStep,
    TrialFormStep,
)
from calckit.engine.trial import LinearForm, basis_function, unknown_letters
from calckit.engine.verify import satisfies
from calckit.errors import InternalError, ModelError

__all__ = ["ScalarStrategy"]


class ScalarStrategy(Strategy):
    """The method's scalar part, for a ``LinearODE`` (or an ``Oscillator``).

    Examples
    --------
    >>> from calckit.engine.method import derive
    >>> from calckit.engine.operator import LinearODE
    >>> t = sp.Symbol("t", real=True)
    >>> derive(ScalarStrategy(LinearODE([1, 3, 2])), sp.exp(-t), t).solution
    t*exp(-t)
    """

    what = "the equation"

    def split(self, forcing, t):
        return split_forcing(forcing, t)

    def check_constant(self, t: sp.Symbol) -> None:
        ode = self.operator
        for index, coef in enumerate(ode.coefficients):
            if coef.has(t):
                raise ModelError(
                    f"the coefficient {coef} depends on the time variable {t}",
                    where=f"coefficient a_{ode.order - index}",
                    do="The method needs constant coefficients; freeze the coefficient at a value",
                )

    def equation_step(self, split: ForcingSplit, x: sp.Symbol) -> Step:
        return EquationStep(
            "Equation of motion",
            "The equation to solve: a linear operator with constant coefficients on the left, "
            "the forcing on the right.",
            self.operator.coefficients,
            split.forcing,
            split.t,
            x,
        )

    def forcing_step(self, split: ForcingSplit) -> Step:
        return ForcingSplitStep(
            "Forcing split into exponent groups", _split_sentence(split), split.forcing, split.groups, split.t
        )

    def characteristic_step(self) -> Step:
        ode = self.operator
        return CharacteristicStep(
            "Characteristic polynomial",
            "Substituting $x = e^{\\lambda t}$ into the homogeneous equation gives the characteristic "
            "polynomial; its roots decide which trial forms need an extra factor $t$.",
            LAMBDA,
            ode.characteristic_polynomial(),
            # closed forms where sympy finds them; for numeric coefficients, numerical roots
            # otherwise (sympy Floats, see calckit.engine.roots); a symbolic model above order 2: none
            Deferred(lambda: roots_for_response(ode)[0] or ())
            if (not ode.parameters or ode.order <= 2)
            else None,
        )

    def letters(self, split: ForcingSplit) -> tuple[str, str]:
        return unknown_letters({s.name for s in split.forcing.free_symbols | self.operator.parameters})

    def conditions(self) -> tuple[sp.Expr, ...]:
        lead = self.operator.coefficients[0]
        if lead.free_symbols and sp.Ne(lead, 0) is not sp.true:
            return (sp.Ne(lead, 0),)
        return ()

    def solve_group(self, group, index, many, letters, t) -> GroupSolution:
        part, steps, conditions = _solve_group(self.operator, group, index, many, letters, t)
        return GroupSolution(part=part, steps=tuple(steps), conditions=tuple(conditions))

    def combine(self, parts: list) -> sp.Expr:
        return sp.Add(*parts)

    def check(self, solution, split: ForcingSplit):
        ode = self.operator
        verified = satisfies(ode, solution, split.forcing, split.t)
        residual = sp.S.Zero if verified else sp.simplify(ode.apply(solution, split.t) - split.forcing)
        return verified, residual

    def reproducer(self, split: ForcingSplit) -> str:
        coefficients = ", ".join(sp.srepr(c) for c in self.operator.coefficients)
        return (
            "import calckit as ck; from sympy import *; "
            f"t = {sp.srepr(split.t)}; ck.LinearODE([{coefficients}]).particular({sp.srepr(split.forcing)}, t=t)"
        )

    def forcing_label(self, split: ForcingSplit) -> str:
        return str(split.forcing)


def _split_sentence(split: ForcingSplit) -> str:
    n = len(split.groups)
    if n == 0:
        return "The forcing is zero here: there is no group of terms, and the particular solution is 0."
    if n == 1:
        return (
            "The forcing is one group of terms sharing the exponent $\\lambda = a + i b$, "
            "so one trial form covers it."
        )
    return (
        f"Products and powers are expanded and the terms sorted into {n} groups by their exponent "
        "$\\lambda = a + i b$; each group gets its own trial form and is solved on its own."
    )


def _resonance_sentence(s: int, group: ExponentGroup) -> str:
    """One plain sentence: is the exponent a root, and what follows."""
    lam = "$" + sp.latex(group.exponent) + "$"  # sheet text: inline LaTeX between $ signs
    p_of = "p(" + sp.latex(group.exponent) + ")"
    if s == 0:
        return (
            f"${p_of}$ is not zero: the exponent is not a root of the characteristic polynomial, "
            "so the trial form needs no extra factor $t$."
        )
    which = {1: "a simple root", 2: "a double root", 3: "a triple root"}.get(s, f"a root of multiplicity {s}")
    if group.harmonic and group.decay == 0:
        what = "resonance: the forcing is at a natural frequency of the undamped system"
    else:
        what = "the forcing has the shape of a free motion of the system"
    factor = "$t$" if s == 1 else f"$t^{{{s}}}$"
    return (
        f"The exponent {lam} is {which} of the characteristic polynomial ({what}), "
        f"so the trial form is multiplied by {factor}."
    )


def _solve_group(ode, group: ExponentGroup, gi: int, many: bool, pair: tuple[str, str], t: sp.Symbol):
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
    form = LinearForm(group.decay, group.frequency, trial_terms)
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
        if not lin and is_zero(r):
            continue
        equations.append(sp.Eq(sp.Add(*(c * u for u, c in lin.items())), r, evaluate=False))
        basis.append(basis_function(group, key[0], key[1], t))
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
            _solved_sentence(group.harmonic, d),
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
    degree = f" multiplied by powers of $t$ up to $t^{{{d}}}$" if d else ""
    text = f"The group holds {shape}{degree}, so {assumed} with unknown coefficients"
    if d:
        text += f" and every power of $t$ up to $t^{{{d}}}$"
    text += " is assumed"
    if s:
        text += f", multiplied by $t{'' if s == 1 else '^{' + str(s) + '}'}$ because the exponent is a root"
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
    if gens and all(rational_in_symbols(e) for e in entries):
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
        if det == 0 or (field is None and is_zero(det)):  # not when s is the true multiplicity
            raise InternalError(
                "the coefficient equations are singular, although the exponent's multiplicity says they are not",
                where=f"exponent {group.exponent}",
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
        return {u: tidy(v) for u, v in values.items()}, conditions
    return {u: _over_power_of(v, shown_det, field) for u, v in values.items()}, conditions


def _over_power_of(value, det_expr: sp.Expr, field) -> sp.Expr:
    """Write a rational function as ``numerator / det**e`` when its denominator is a
    constant times a power of the determinant; otherwise as cancelled."""
    num, den = value.numer, value.denom
    if num == 0:
        return sp.S.Zero
    # the field writes det_expr as det_poly / det_scale with det_poly free of fractions
    # (c - 1/2 is (2c - 1)/2): a division by det_poly**e is one by (det_scale det_expr)**e
    det_field = field.from_expr(det_expr)
    det_poly, det_scale = det_field.numer, det_field.denom
    if not det_scale.is_ground:
        return tidy(value.as_expr())
    power = 0
    if det_poly.is_ground is False:
        while not den.is_ground:
            quotient, remainder = den.div(det_poly)
            if remainder != 0:
                return tidy(value.as_expr())
            den, power = quotient, power + 1
    scale = den.as_expr() * det_scale.as_expr() ** power
    numerator = sp.factor_terms(num.as_expr() / scale)
    return numerator / det_expr**power if power else numerator


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


def _solved_sentence(harmonic: bool, degree: int) -> str:
    """How the coefficient equations are solved, in one sentence: by powers of t only when there are some."""
    if degree == 0:
        return (
            "The two equations are solved for the two unknowns."
            if harmonic
            else "The equation is solved for the unknown."
        )
    per = "two unknowns" if harmonic else "one unknown"
    return f"The equations are solved from the highest power of t down, {per} at a time."
