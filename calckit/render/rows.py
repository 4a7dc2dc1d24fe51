"""Step records to rows: one entry of :func:`step_rows` per kind of step, scalar and vector.

The scalar method's records (equation, forcing split, characteristic polynomial,
resonance, trial form, ...) and the vector method's (matrix equation, vector
forcing, vector coefficient equations, modes) are turned into the rows of
:mod:`calckit.render.tex`; :mod:`calckit.render.latex` prints them.
"""

from __future__ import annotations

import functools

import sympy as sp

from calckit.engine.roots import NROOTS_DIGITS, ROOT_DIGITS
from calckit.engine.steps import (
    CharacteristicStep,
    CoefficientEquationsStep,
    ContinuityStep,
    DerivativesStep,
    EquationStep,
    ForcingSplitStep,
    HomogeneousStep,
    InitialConditionsStep,
    IntervalStep,
    MatrixEquationStep,
    ModeExcitationStep,
    ModeResonanceStep,
    ModesStep,
    ParticularSolutionStep,
    PiecewiseSolutionStep,
    ResonanceStep,
    SolvedCoefficientsStep,
    Step,
    SubstitutionStep,
    SwitchingTimesStep,
    TotalResponseStep,
    TrialFormStep,
    VectorCoefficientEquationsStep,
    VectorForcingStep,
    VerificationStep,
)
from calckit.render.layout import LINE_TEXT, chunk_signed, equation_rows, long_rows, tex_width
from calckit.render.tex import (
    EQ,
    NE,
    Notation,
    Row,
    Tex,
    _call,
    _combination,
    _derivative,
    _e,
    _exponent,
    _group_sub,
    _operator,
    _term,
    _words,
    shown_decimals,
)

__all__ = ["step_rows"]

APPROX = Tex(r"\approx", "~=")


@functools.singledispatch
def step_rows(step: Step, nt: Notation) -> tuple[Row, ...]:
    """The rows of one step's formula (no rows for a step type without one).

    Parameters
    ----------
    step : Step
    nt : Notation
        From :func:`notation`.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import ParticularSolutionStep
    >>> from calckit.render.tex import rows_text
    >>> t = sp.Symbol("t")
    >>> step = ParticularSolutionStep("Particular solution", "It is.", sp.cos(t) / 2, t)
    >>> rows_text(step_rows(step, Notation()))
    'x_p(t) = cos(t)/2'
    """
    return ()


@step_rows.register
def _(step: EquationStep, nt: Notation) -> tuple[Row, ...]:
    n = len(step.coefficients) - 1
    lhs = _combination(((c, _derivative(nt, n - i)) for i, c in enumerate(step.coefficients)), nt)
    f = Tex("f(t)", "f(t)")
    return (Row((lhs,), (EQ, f)), *long_rows((f,), step.forcing, nt))


@step_rows.register
def _(step: ForcingSplitStep, nt: Notation) -> tuple[Row, ...]:
    many = len(step.groups) > 1
    rows = []
    for g, group in enumerate(step.groups, start=1):
        f = Tex(f"f_{{{g}}}(t)", f"f_{g}(t)") if many else Tex("f(t)", "f(t)")
        lam = Tex(rf"\lambda_{{{g}}}", f"lambda_{g}") if many else Tex(r"\lambda", "lambda")
        exponent = _exponent(group, nt)
        rows.extend(long_rows((f,), group.expr(step.t), nt, note=(lam, EQ, exponent)))
    if not rows:
        rows.append(Row((Tex("f(t)", "f(t)"),), (EQ, Tex("0", "0")), (_words("no forcing terms"),)))
    return tuple(rows)


@step_rows.register
def _(step: CharacteristicStep, nt: Notation) -> tuple[Row, ...]:
    lam = _e(step.variable, nt)
    p = Tex(rf"p({lam.latex})", f"p({lam.text})")
    poly = sp.Poly(step.polynomial, step.variable)
    n = poly.degree()
    power = {
        j: None if j == 0 else (lam if j == 1 else Tex(f"{lam.latex}^{{{j}}}", f"{lam.text}**{j}"))
        for j in range(n + 1)
    }
    terms = [
        x for x in (_term(c, power[n - i], nt) for i, c in enumerate(poly.all_coeffs())) if x is not None
    ]
    lines = chunk_signed(terms, LINE_TEXT - tex_width(p) - 6)
    rows = [Row((p,), (EQ, lines[0]) + ((EQ, Tex("0", "0")) if len(lines) == 1 else ()))]
    rows.extend(Row((), (line,)) for line in lines[1:-1])
    if len(lines) > 1:
        rows.append(Row((), (lines[-1], EQ, Tex("0", "0"))))
    if step.roots is None or len(step.roots) == 0:  # a Deferred search may find none
        rows.append(Row((), (), (_words("roots not found in closed form"),)))
        return tuple(rows)
    which = {1: "simple root", 2: "double root", 3: "triple root"}
    numerical = [bool(root.atoms(sp.Float)) for root, _ in step.roots]
    shown_sig = nt.sig if nt.sig is not None else NUMERICAL_ROOT_SHOWN
    for (root, mult), approx in zip(step.roots, numerical, strict=True):
        kind = which.get(mult, f"root of multiplicity {mult}")
        value = _e(shown_decimals(root, shown_sig), nt) if approx else _e(root, nt)
        words = _words(kind + (", numerical" if approx else ""))
        rows.append(Row((lam,), (APPROX if approx else EQ, value), (words,)))
    if any(numerical):
        rows.extend(Row((), (), (_words(line),)) for line in numerical_roots_note(shown_sig))
    return tuple(rows)


#: significant figures of a numerical root where the display has no figures of its own (exact display)
NUMERICAL_ROOT_SHOWN = 12


def numerical_roots_note(sig: int) -> tuple[str, str]:
    """What a numerical root on the characteristic step is, and its precision, in two short lines.

    The method and its settings are those of :func:`calckit.engine.roots.roots_for_response`
    (the roots are found on the exact irreducible factors, so multiplicities are exact).

    >>> numerical_roots_note(4)
    ('numerical roots: sympy Poly.nroots (mpmath), 30 digits,', 'kept to 15 significant figures, shown to 4')
    """
    return (
        f"numerical roots: sympy Poly.nroots (mpmath), {NROOTS_DIGITS} digits,",
        f"kept to {ROOT_DIGITS} significant figures, shown to {sig}",
    )


@step_rows.register
def _(step: ResonanceStep, nt: Notation) -> tuple[Row, ...]:
    many = nt.groups > 1
    p_of = _call(Tex("p", "p"), step.exponent, nt)
    if many:
        lhs: tuple[Tex, ...] = (Tex(rf"p(\lambda_{{{step.group}}})", f"p(lambda_{step.group})"), EQ, p_of)
        s = Tex(f"s_{{{step.group}}}", f"s_{step.group}")
    else:
        lhs = (p_of,)
        s = Tex("s", "s")
    if step.multiplicity == 0 and tex_width(lhs) + tex_width(_e(step.value, nt)) > LINE_TEXT - 12:
        rows = long_rows(lhs[-1:] if not many else lhs, step.value, nt)
        note = (_words("not a root, multiplicity "), s, EQ, Tex("0", "0"))
        return (*rows, Row((), (NE, Tex("0", "0")), note))
    if step.multiplicity == 0:
        rhs = (EQ, _e(step.value, nt), NE, Tex("0", "0"))
        note = (_words("not a root, multiplicity "), s, EQ, Tex("0", "0"))
    else:
        rhs = (EQ, Tex("0", "0"))
        kind = {1: "simple", 2: "double", 3: "triple"}.get(step.multiplicity, "multiple")
        note = (_words(f"{kind} root (resonance), multiplicity "), s, EQ, _e(step.multiplicity, nt))
    return (Row(lhs, rhs, note),)


@step_rows.register
def _(step: TrialFormStep, nt: Notation) -> tuple[Row, ...]:
    return (Row((_derivative(nt, 0, _group_sub(nt, step.group), "t"),), (EQ, _e(step.trial, nt))),)


@step_rows.register
def _(step: DerivativesStep, nt: Notation) -> tuple[Row, ...]:
    sub = _group_sub(nt, step.group)
    return tuple(
        Row((_derivative(nt, j, sub, "t"),), (EQ, _e(d, nt))) for j, d in enumerate(step.derivatives, start=1)
    )


@step_rows.register
def _(step: SubstitutionStep, nt: Notation) -> tuple[Row, ...]:
    sub = _group_sub(nt, step.group)
    f = Tex(f"f_{{{step.group}}}(t)", f"f_{step.group}(t)") if nt.groups > 1 else Tex("f(t)", "f(t)")
    return (Row((_operator(nt, sub),), (EQ, f)), *equation_rows(step.lhs, step.rhs, nt))


def _linear(expr: sp.Expr, unknowns: tuple[sp.Symbol, ...], nt: Notation) -> Tex:
    """A linear form written coefficient first: ``(k - m r^2) A + c r B``."""
    expr = sp.sympify(expr)
    used = [u for u in unknowns if expr.has(u)]
    if not used:
        return _e(expr, nt)
    poly = sp.Poly(expr, *used)
    if poly.total_degree() > 1:
        return _e(expr, nt)
    pairs = [(poly.coeff_monomial(u), _e(u, nt)) for u in used]
    pairs.append((poly.coeff_monomial(1), None))
    return _combination(pairs, nt)


@step_rows.register
def _(step: CoefficientEquationsStep, nt: Notation) -> tuple[Row, ...]:
    unknowns = nt.unknowns_of(step.group)
    rows: list[Row] = []
    for basis, eq in zip(step.basis, step.equations, strict=True):
        note = (_words("coefficients of "), _e(basis, nt))
        lhs = _linear(eq.lhs, unknowns, nt)
        if tex_width(lhs) + tex_width(_e(eq.rhs, nt)) + tex_width(note) + 6 <= LINE_TEXT:
            rows.append(Row((lhs,), (EQ, _e(eq.rhs, nt)), note))
        else:
            rows.extend(equation_rows(sp.sympify(eq.lhs), eq.rhs, nt, note))
    return tuple(rows)


@step_rows.register
def _(step: SolvedCoefficientsStep, nt: Notation) -> tuple[Row, ...]:
    rows = [row for u, v in step.values for row in long_rows((_e(u, nt),), v, nt)]
    for cond in step.conditions:
        rows.append(Row((), (), (_words("provided "), _e(cond, nt))))
    return tuple(rows)


@step_rows.register
def _(step: ParticularSolutionStep, nt: Notation) -> tuple[Row, ...]:
    return long_rows((_derivative(nt, 0, "p", "t"),), step.solution, nt)


@step_rows.register
def _(step: VerificationStep, nt: Notation) -> tuple[Row, ...]:
    operator = _operator(nt, "p")
    lhs = Tex(f"{operator.latex} - f(t)", f"{operator.text} - f(t)")
    if step.verified:
        return (Row((lhs,), (EQ, Tex("0", "0")), (_words("verified"),)),)
    return (Row((lhs,), (EQ, _e(step.residual, nt), NE, Tex("0", "0")), (_words("not verified"),)),)


@step_rows.register
def _(step: HomogeneousStep, nt: Notation) -> tuple[Row, ...]:
    return long_rows((_derivative(nt, 0, "h", "t"),), step.solution, nt)


@step_rows.register
def _(step: InitialConditionsStep, nt: Notation) -> tuple[Row, ...]:
    rows = [
        Row((_derivative(nt, j, None, "0"),), (EQ, _e(eq.lhs, nt), EQ, _e(eq.rhs, nt)))
        for j, eq in enumerate(step.equations)
    ]
    rows.extend(row for c, v in step.values for row in long_rows((_e(c, nt),), v, nt))
    return tuple(rows)


@step_rows.register
def _(step: TotalResponseStep, nt: Notation) -> tuple[Row, ...]:
    x = _derivative(nt, 0, None, "t")
    xh, xp = _derivative(nt, 0, "h", "t"), _derivative(nt, 0, "p", "t")
    total = long_rows((), step.solution, nt)
    return (
        *long_rows((xh,), step.transient, nt),
        Row((x,), (EQ, Tex(f"{xh.latex} + {xp.latex}", f"{xh.text} + {xp.text}"))),
        *total,
    )


# ------------------------------------------------------------------ printers


# ---------------------------------------------------------------------------
# the vector method's records


def _name(latex: str, text: str | None = None) -> Tex:
    """A fixed name, spelled in LaTeX and (default: the same) in plain text."""
    return Tex(latex, latex if text is None else text)


@step_rows.register
def _(step: MatrixEquationStep, nt: Notation) -> tuple[Row, ...]:
    lhs = Tex(r"M \ddot{x} + C \dot{x} + K x", "M x'' + C x' + K x")
    rows = [Row((lhs,), (EQ, _name("F(t)")))]
    for label, matrix in (("M", step.mass), ("C", step.damping), ("K", step.stiffness)):
        rows.extend(long_rows((_name(label),), matrix, nt))
    rows.extend(long_rows((_name("F(t)"),), step.forcing, nt))
    return tuple(rows)


@step_rows.register
def _(step: VectorForcingStep, nt: Notation) -> tuple[Row, ...]:
    many = len(step.groups) > 1
    rows = []
    for g, group in enumerate(step.groups, start=1):
        f = _name(f"F_{{{g}}}(t)", f"F_{g}(t)") if many else _name("F(t)")
        lam = _name(rf"\lambda_{{{g}}}", f"lambda_{g}") if many else _name(r"\lambda", "lambda")
        exponent = _e(group.exponent, nt)
        rows.extend(long_rows((f,), group.expr(step.t), nt, note=(lam, EQ, exponent)))
    return tuple(rows)


@step_rows.register
def _(step: VectorCoefficientEquationsStep, nt: Notation) -> tuple[Row, ...]:
    words = Tex(r"\text{coefficients of }", "coefficients of ")
    return tuple(
        row
        for basis, (lhs, rhs) in zip(step.basis, step.equations, strict=True)
        for row in equation_rows(lhs, rhs, nt, (words, _e(basis, nt)))
    )


@step_rows.register
def _(step: ModesStep, nt: Notation) -> tuple[Row, ...]:
    rows = [
        Row((_name(rf"\omega_{{{i}}}", f"omega_{i}"),), (EQ, _e(sp.sympify(w), nt)))
        for i, w in enumerate(step.frequencies, start=1)
    ]
    rows.extend(long_rows((_name(r"\Phi", "Phi"),), step.shapes, nt))
    rows.extend(
        Row((_name(rf"\zeta_{{{i}}}", f"zeta_{i}"),), (EQ, _e(sp.sympify(z), nt)))
        for i, z in enumerate(step.damping_ratios, start=1)
        if z is not None
    )
    return tuple(rows)


# a mode resonance shows as a resonance; whether the mode is excited is said in its sentence
step_rows.register(ModeResonanceStep, step_rows.registry[ResonanceStep])


@step_rows.register
def _(step: ModeExcitationStep, nt: Notation) -> tuple[Row, ...]:
    return ()  # the finding is the step's sentence, it has no formula of its own


# ---------------------------------------------------------------------------
# a forcing that switches, solved interval by interval


def _t_name(i: int) -> Tex:
    return _name(f"t_{{{i}}}", f"t_{i}")


@step_rows.register
def _(step: SwitchingTimesStep, nt: Notation) -> tuple[Row, ...]:
    rows = [Row((_t_name(i),), (EQ, _e(time, nt))) for i, time in enumerate(step.times, start=1)]
    ends = (sp.S.Zero, *step.times)
    for i, piece in enumerate(step.pieces):
        span = (
            Tex(
                rf"{_e(ends[i], nt).latex} \le t < {_e(step.times[i], nt).latex}",
                f"{_e(ends[i], nt).text} <= t < {_e(step.times[i], nt).text}",
            )
            if i < len(step.times)
            else Tex(rf"t \ge {_e(ends[i], nt).latex}", f"t >= {_e(ends[i], nt).text}")
        )
        rows.append(Row((_name("f(t)"),), (EQ, _e(piece, nt)), (span,)))
    rows.extend(Row((), (), (_words("provided "), _e(cond, nt))) for cond in step.conditions)
    return tuple(rows)


@step_rows.register
def _(step: IntervalStep, nt: Notation) -> tuple[Row, ...]:
    tau = _e(step.local_time, nt)
    rows = [Row((tau,), (EQ, _e(step.t - step.start, nt)))]
    rows.append(Row((Tex(f"f({tau.latex})", f"f({tau.text})"),), (EQ, _e(step.forcing, nt))))
    rows.extend(
        Row((_derivative(nt, j, None, "0"),), (EQ, _e(value, nt))) for j, value in enumerate(step.state)
    )
    return tuple(rows)


@step_rows.register
def _(step: ContinuityStep, nt: Notation) -> tuple[Row, ...]:
    word = _words("continuous" if step.verified else "not continuous")
    return tuple(
        Row((_t_name(i),), (EQ, _e(time, nt)), (word,)) for i, time in enumerate(step.times, start=1)
    )


@step_rows.register
def _(step: PiecewiseSolutionStep, nt: Notation) -> tuple[Row, ...]:
    return long_rows((_derivative(nt, 0, None, "t"),), step.solution, nt)
