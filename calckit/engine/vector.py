"""The vector strategy: ``M x'' + C x' + K x = F(t)`` by vector undetermined coefficients.

For ``n`` coordinates with constant matrices, the exponents of all rows of the
forcing are pooled (:mod:`calckit.engine.vector_forcing`). For each exponent
``lambda = a + i b`` (forcing terms ``t^j e^{a t} cos|sin(b t)``, ``j <= d``) the
trial form is a vector quasi-polynomial

.. math::

    x_g(t) = e^{a t} \\sum_{k=0}^{d+s} t^k (\\mathbf{A}_k \\cos bt + \\mathbf{B}_k \\sin bt),
    \\qquad Z(\\lambda) = \\lambda^2 M + \\lambda C + K,

where ``s`` is the multiplicity of ``lambda`` as a root of ``det Z``. Away from
resonance (``s = 0``) the coefficient equations have one solution. At a
resonance (``s > 0``) the powers of ``t`` go up by ``s`` and, unlike the scalar
method, the lower powers are kept: a vector free motion ``e^{lambda t} phi``
removes only the direction of the mode shape ``phi``, not whole rows. The
system is then underdetermined (the free motion itself solves the homogeneous
part) and the free unknowns are set to 0. The degree ``d + s`` always suffices:
``x = adj Z(D) y`` with ``det Z(D) y = t^d e^{lambda t}`` is a solution of that
degree. When the forcing is orthogonal to the resonant mode shape the extra
powers of ``t`` come out zero and the mode is not excited.

The model (``calckit.physics.MultiMass``) supplies the matrices, ``det Z`` and,
at a resonance, which of its modes is met (``resonant_modes``).

References
----------
Gohberg, Lancaster & Rodman, *Matrix Polynomials* (1982), ch. 1 and 8
(particular solutions of ``L(D) x = f`` for a matrix polynomial), from memory.
Rao, *Mechanical Vibrations*, 5th ed., ch. 5 and 6, from memory.
"""

from __future__ import annotations

import sympy as sp

from calckit.engine.algebra import LAMBDA, is_zero, real_imag, tidy
from calckit.engine.forcing import COS, SIN
from calckit.engine.method import GroupSolution, Strategy
from calckit.engine.operator import LinearODE
from calckit.engine.roots import numeric_roots
from calckit.engine.steps import (
    CharacteristicStep,
    Deferred,
    DerivativesStep,
    MatrixEquationStep,
    ModeExcitationStep,
    ModeResonanceStep,
    SolvedCoefficientsStep,
    Step,
    SubstitutionStep,
    TrialFormStep,
    VectorCoefficientEquationsStep,
    VectorForcingStep,
)
from calckit.engine.trial import LinearForm, basis_function, unknown_letters
from calckit.engine.vector_forcing import VectorForcing, VectorGroup, split_forcing_vector
from calckit.engine.verify import vanishes
from calckit.errors import InternalError, ModelError

__all__ = ["VECTOR_LETTERS", "VectorStrategy"]

#: letters of the vector unknowns (C and D, K and L would read as matrices)
VECTOR_LETTERS = (("A", "B"), ("P", "Q"), ("U", "V"), ("G", "H"))


class VectorStrategy(Strategy):
    """The method's vector part, for a multi-mass model with matrices ``M, C, K``.

    The model must offer ``M``, ``C``, ``K``, ``size``, ``name``, ``parameters``,
    ``undamped``, ``characteristic_polynomial()`` and ``resonant_modes(group)``
    (mode numbers, the undamped natural frequency met or None, a vector of the free
    motion), as :class:`calckit.physics.MultiMass` does.
    """

    what = "every row of the equations"

    def __init__(self, operator):
        super().__init__(operator)
        self._det: tuple[sp.Expr, LinearODE] | None = None

    @property
    def determinant(self) -> tuple[sp.Expr, LinearODE]:
        """``det Z(lambda)`` and the scalar operator with its coefficients (built on first use)."""
        if self._det is None:
            det = self.operator.characteristic_polynomial()
            self._det = (det, LinearODE(sp.Poly(det, LAMBDA).all_coeffs()))
        return self._det

    def split(self, forcing, t) -> VectorForcing:
        return split_forcing_vector(forcing, self.operator.size, t)

    def check_constant(self, t: sp.Symbol) -> None:
        model = self.operator
        for label, matrix in (("M", model.M), ("C", model.C), ("K", model.K)):
            if matrix.has(t):
                raise ModelError(
                    f"{label} depends on the time variable {t}",
                    where=label,
                    do="The method needs constant coefficients; freeze the matrix at a value",
                )

    def equation_step(self, split: VectorForcing, x: sp.Symbol) -> Step:
        model = self.operator
        return MatrixEquationStep(
            "Equations of motion",
            f"The {model.size} coupled equations to solve: mass, damping and stiffness matrices acting on the "
            "displacement vector on the left, the forcing vector on the right.",
            model.M,
            model.C,
            model.K,
            split.forcing,
            split.t,
            x,
        )

    def forcing_step(self, split: VectorForcing) -> Step:
        return VectorForcingStep(
            "Forcing split into exponent groups", _split_sentence(split), split.forcing, split.groups, split.t
        )

    def characteristic_step(self) -> Step:
        model = self.operator
        det, _ = self.determinant
        roots = None
        if not model.parameters:
            found = sp.roots(sp.Poly(det, LAMBDA), cubics=False, quartics=False)
            if sum(found.values()) == 2 * model.size:
                roots = tuple(sorted(found.items(), key=lambda item: sp.default_sort_key(item[0])))
            else:  # numeric model: the roots of det Z numerically, as the scalar step shows them
                roots = Deferred(lambda: numeric_roots(det))
        return CharacteristicStep(
            "Characteristic polynomial",
            "Substituting $x = \\phi e^{\\lambda t}$ into the free equations gives $Z(\\lambda) \\phi = 0$ with "
            "$Z(\\lambda) = \\lambda^{2} M + \\lambda C + K$; its determinant $p(\\lambda) = \\det Z(\\lambda)$ "
            "vanishes at the exponents of free motion, which decide where the trial form needs extra powers of $t$.",
            LAMBDA,
            det,
            roots,
        )

    def letters(self, split: VectorForcing) -> tuple[str, str]:
        model = self.operator
        taken = {s.name for s in split.forcing.free_symbols | model.parameters} | {split.t.name, model.name}
        return unknown_letters(taken, VECTOR_LETTERS)

    def solve_group(self, group, index, many, letters, t) -> GroupSolution:
        part, steps, conditions = _solve_group(
            self.operator, self.determinant[1], group, index, many, letters, t
        )
        return GroupSolution(part=part, steps=tuple(steps), conditions=tuple(conditions))

    def combine(self, parts: list) -> sp.ImmutableMatrix:
        solution = sp.ImmutableMatrix.zeros(self.operator.size, 1)
        for part in parts:
            solution = solution + part
        return sp.ImmutableMatrix(solution)

    def check(self, solution, split: VectorForcing):
        model, t = self.operator, split.t
        residual = sp.ImmutableMatrix(
            model.M * solution.diff(t, 2) + model.C * solution.diff(t) + model.K * solution - split.forcing
        )
        verified = all(vanishes(row, t) for row in residual)
        shown = sp.ImmutableMatrix.zeros(model.size, 1) if verified else residual.applyfunc(sp.simplify)
        return verified, shown

    def reproducer(self, split: VectorForcing) -> str:
        model = self.operator
        matrices = ", ".join(sp.srepr(m) for m in (model.M, model.C, model.K))
        rows = ", ".join(sp.srepr(f) for f in split.forcing)
        return (
            "import calckit as ck; from sympy import *; "
            f"t = {sp.srepr(split.t)}; ck.MultiMass({matrices}).particular([{rows}], t=t)"
        )

    def forcing_label(self, split: VectorForcing) -> str:
        return str(list(split.forcing))


def _split_sentence(split: VectorForcing) -> str:
    n = len(split.groups)
    if n == 0:
        return "There is no forcing, so the particular solution is zero."
    if n == 1:
        return (
            "Every term of every row shares one exponent $\\lambda = a + i b$, so one vector trial form covers "
            "the whole forcing vector."
        )
    return (
        f"The terms of all rows are expanded and sorted into {n} groups by their exponent $\\lambda = a + i b$; "
        "each group gets its own vector trial form (one set of unknowns per coordinate) and is solved on its own."
    )


def _unknowns(group: VectorGroup, gi: int, many: bool, top: int, n: int, pair):
    def name(letter: str, r: int, k: int) -> str:
        parts = ([str(gi)] if many else []) + [str(r + 1)] + ([str(k)] if top > 0 else [])
        return f"{letter}_{{{','.join(parts)}}}" if len(parts) > 1 else f"{letter}_{parts[0]}"

    cos_u = [[sp.Symbol(name(pair[0], r, k)) for k in range(top + 1)] for r in range(n)]
    sin_u = (
        [[sp.Symbol(name(pair[1], r, k)) for k in range(top + 1)] for r in range(n)]
        if group.harmonic
        else None
    )
    return cos_u, sin_u


def _solve_group(model, det_ode: LinearODE, group: VectorGroup, gi, many, pair, t):
    n = model.size
    prefix = f"Group {gi}: " if many else ""
    s, value = det_ode.multiplicity(group.exponent)
    d = group.degree
    top = d + s
    modes, natural, shape = model.resonant_modes(group) if s else ((), None, None)
    steps: list[Step] = [
        ModeResonanceStep(
            prefix + "is the exponent a root?" if many else "Is the exponent a root?",
            _resonance_sentence(model, group, s, modes, natural),
            gi,
            group.exponent,
            value,
            s,
            modes,
            natural,
            shape,
        )
    ]
    cos_u, sin_u = _unknowns(group, gi, many, top, n, pair)
    forms = []
    for r in range(n):
        terms: dict = {}
        for k in range(top + 1):
            terms[(COS, k)] = {cos_u[r][k]: sp.S.One}
            if group.harmonic:
                terms[(SIN, k)] = {sin_u[r][k]: sp.S.One}
        forms.append(LinearForm(group.decay, group.frequency, terms))
    first = [form.derivative() for form in forms]
    second = [form.derivative() for form in first]
    unknowns = tuple(
        u
        for k in range(top + 1)
        for r in range(n)
        for u in ((cos_u[r][k], sin_u[r][k]) if group.harmonic else (cos_u[r][k],))
    )
    trial = sp.ImmutableMatrix([form.expr(t) for form in forms])
    steps.append(
        TrialFormStep(
            prefix + "trial form" if many else "Trial form",
            _trial_sentence(group, s, d, n),
            gi,
            trial,
            unknowns,
        )
    )
    steps.append(
        DerivativesStep(
            prefix + "derivatives of the trial form" if many else "Derivatives of the trial form",
            "The trial vector is differentiated twice, entry by entry.",
            gi,
            (
                sp.ImmutableMatrix([f.expr(t) for f in first]),
                sp.ImmutableMatrix([f.expr(t) for f in second]),
            ),
        )
    )
    lhs_forms = []
    for i in range(n):
        pairs = []
        for c in range(n):
            for weight, form in (
                (model.M[i, c], second[c]),
                (model.C[i, c], first[c]),
                (model.K[i, c], forms[c]),
            ):
                if weight != 0:
                    pairs.append((weight, form))
        lhs_forms.append(forms[0].scaled_sum(pairs))
    steps.append(
        SubstitutionStep(
            prefix + "substitution into the equations" if many else "Substitution into the equations",
            "The trial vector and its derivatives are substituted into $M\\ddot{x} + C\\dot{x} + Kx$, row by row, "
            "and collected by basis function.",
            gi,
            sp.ImmutableMatrix([form.expr(t) for form in lhs_forms]),
            group.expr(t),
        )
    )
    rhs = [
        {} if row is None else {(term.kind, term.power): term.coefficient for term in row.terms}
        for row in group.rows
    ]
    kinds = (COS, SIN) if group.harmonic else (COS,)
    keys = [(kind, j) for j in range(top, -1, -1) for kind in kinds]
    index = {u: col for col, u in enumerate(unknowns)}
    a_rows, b_rows, shown, basis = [], [], [], []
    for key in keys:
        lhs_col, rhs_col = [], []
        for i in range(n):
            lin = {u: sp.expand(c) for u, c in lhs_forms[i].terms.get(key, {}).items()}
            row = [sp.S.Zero] * len(unknowns)
            for u, c in lin.items():
                row[index[u]] = c
            r_value = rhs[i].get(key, sp.S.Zero)
            a_rows.append(row)
            b_rows.append(r_value)
            lhs_col.append(sp.Add(*(c * u for u, c in lin.items() if c != 0)))
            rhs_col.append(r_value)
        if all(e == 0 for e in lhs_col) and all(is_zero(e) for e in rhs_col):
            continue
        shown.append((sp.ImmutableMatrix(lhs_col), sp.ImmutableMatrix(rhs_col)))
        basis.append(basis_function(group, key[0], key[1], t))
    steps.append(
        VectorCoefficientEquationsStep(
            prefix + "equating coefficients" if many else "Equating coefficients",
            "Both sides must agree for every t, so in every row the coefficients of each basis function "
            "must be equal: one vector equation (n scalar equations) per basis function.",
            gi,
            tuple(basis),
            tuple(shown),
        )
    )
    values = _solve_linear(sp.Matrix(a_rows), sp.Matrix(b_rows), unknowns, group)
    conds = _conditions(model, group, det_ode, s)
    steps.append(
        SolvedCoefficientsStep(
            prefix + "solved coefficients" if many else "Solved coefficients",
            "The linear system is solved exactly."
            if not s
            else "At a resonance the system is underdetermined: the free motion in the resonant mode solves "
            "its homogeneous part, so the free unknowns are set to 0 and the others solved exactly.",
            gi,
            tuple((u, values[u]) for u in unknowns),
            tuple(conds),
        )
    )
    part = trial.xreplace(values)
    if s:
        extra = [
            k - d
            for k in range(d + 1, top + 1)
            for r in range(n)
            for u in ((cos_u[r][k], sin_u[r][k]) if group.harmonic else (cos_u[r][k],))
            if not is_zero(values[u])
        ]
        growth = max(extra, default=0)
        unbounded = bool(growth) and is_zero(group.decay)
        steps.append(
            ModeExcitationStep(
                prefix + "is the resonant mode excited?" if many else "Is the resonant mode excited?",
                _excitation_sentence(model, modes, natural, growth, unbounded, d),
                gi,
                modes,
                natural,
                bool(growth),
                growth,
                unbounded,
            )
        )
    return part, steps, conds


def _solve_linear(a: sp.Matrix, b: sp.Matrix, unknowns: tuple, group: VectorGroup) -> dict:
    found = sp.linsolve((a, b), list(unknowns))
    if not found:  # cannot happen when s is the true multiplicity
        raise InternalError(
            "the coefficient equations have no solution, although the exponent's multiplicity says they are not",
            where=f"exponent {group.exponent}",
        )
    (solved,) = found
    raw = dict(zip(unknowns, solved, strict=True))
    free = set().union(*(sp.sympify(v).free_symbols for v in raw.values())) & set(unknowns)
    zero = {u: sp.S.Zero for u in free}
    return {u: tidy(sp.sympify(v).xreplace(zero)) for u, v in raw.items()}


def _conditions(model, group: VectorGroup, det_ode: LinearODE, s: int) -> list:
    if s or not (model.parameters or group.exponent.free_symbols):
        return []
    value = sp.expand(det_ode.characteristic_polynomial().subs(LAMBDA, group.exponent))
    real, imag = real_imag(value)
    target = real if is_zero(imag) else real**2 + imag**2
    condition = sp.Ne(tidy(target), 0)
    return [] if condition is sp.true else [condition]


def _modes_text(modes: tuple[int, ...]) -> str:
    if not modes:
        return "a mode"
    if len(modes) == 1:
        return f"mode {modes[0]}"
    return "modes " + " and ".join(map(str, modes))


def _resonance_sentence(model, group, s, modes, natural) -> str:
    lam = sp.latex(group.exponent)  # sheet text: inline LaTeX between $ signs
    if s == 0:
        return (
            f"$\\det Z({lam})$ is not zero: no mode resonates with this group, so the trial form needs no extra "
            "powers of $t$."
        )
    which = {1: "a simple root", 2: "a double root"}.get(s, f"a root of multiplicity {s}")
    factor = "$t$" if s == 1 else f"$t^{{{s}}}$"
    if natural is not None and is_zero(natural):
        what = f"{_modes_text(modes)} is a rigid-body mode (natural frequency 0): the forcing has its shape"
    elif natural is not None:
        what = (
            f"resonance: {_modes_text(modes)} of the undamped model has the natural frequency "
            f"${sp.latex(natural)}$ rad/s, the forcing frequency"
        )
    else:
        what = f"the forcing has the shape of a free motion of the damped model ({_modes_text(modes)})"
    return (
        f"The exponent ${lam}$ is {which} of $\\det Z$ ({what}), so the powers of $t$ in the vector trial form go up "
        f"by {s}: every power up to the forcing's degree plus {s} is kept (factor {factor} on the top term)."
    )


def _trial_sentence(group: VectorGroup, s: int, d: int, n: int) -> str:
    shape = (
        "cosine and sine terms"
        if group.harmonic
        else ("an exponential" if group.decay != 0 else "a polynomial")
    )
    top = d + s
    powers = f" times powers of t up to t^{top}" if top else ""
    return (
        f"Each of the {n} coordinates gets the shape of the forcing group ({shape}{powers}) with its own "
        "unknown coefficients."
    )


def _excitation_sentence(model, modes, natural, growth, unbounded, d) -> str:
    who = _modes_text(modes)
    if not growth:
        return (
            f"The coefficients of the extra powers of t come out zero: the forcing is orthogonal to the shape "
            f"of {who}, so {who} is not excited and the response stays of the forcing's form."
        )
    like = "t" if growth == 1 else f"t^{growth}"
    text = f"The extra powers of t do not vanish: {who} is excited at resonance"
    if unbounded:
        text += (
            f" and, with no damping to limit it, the response grows without bound (like {like} times the forcing's form)"
            if model.undamped
            else f" and the response grows without bound (like {like})"
        )
    return text + "."
