"""Step records of a derivation.

Each step of a derivation by undetermined coefficients is kept as a frozen
dataclass: the data a careful engineer writes on paper, plus one plain sentence
saying what is done and why. Renderers (``calckit.render``) turn the records
into LaTeX for the notebook and MathML for exported sheets; nothing here knows
how it will be shown.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import sympy as sp

from calckit.core.display import Displayable
from calckit.engine.forcing import ExponentGroup
from calckit.engine.vector_forcing import VectorGroup

__all__ = [
    "Deferred",
    "Step",
    "EquationStep",
    "ForcingSplitStep",
    "CharacteristicStep",
    "ResonanceStep",
    "TrialFormStep",
    "DerivativesStep",
    "SubstitutionStep",
    "CoefficientEquationsStep",
    "SolvedCoefficientsStep",
    "ParticularSolutionStep",
    "VerificationStep",
    "HomogeneousStep",
    "InitialConditionsStep",
    "TotalResponseStep",
    "MatrixEquationStep",
    "VectorForcingStep",
    "ModeResonanceStep",
    "VectorCoefficientEquationsStep",
    "ModeExcitationStep",
    "ModesStep",
    "SwitchingTimesStep",
    "IntervalStep",
    "ContinuityStep",
    "PiecewiseSolutionStep",
    "STEP_KINDS",
]


class Deferred(Sequence):
    """A tuple of expressions built on first use.

    Parts of a step that only a reader needs (the derivatives of a trial form) are
    built when the step is first shown or read, not while deriving; after that
    they behave as the tuple they are.
    """

    __slots__ = ("_build", "_value")

    def __init__(self, build: Callable[[], Sequence[sp.Expr]]):
        self._build = build
        self._value: tuple | None = None

    def _get(self) -> tuple:
        if self._value is None:
            self._value = tuple(self._build())
            self._build = None
        return self._value

    def __getitem__(self, index):
        return self._get()[index]

    def __len__(self) -> int:
        return len(self._get())

    def __iter__(self):
        return iter(self._get())

    def __eq__(self, other) -> bool:
        return self._get() == (tuple(other) if isinstance(other, Sequence) else other)

    def __hash__(self) -> int:
        return hash(self._get())

    def __repr__(self) -> str:
        return repr(self._get())


@dataclass(frozen=True)
class Step(Displayable):
    """Base of every step: a short title and one plain sentence."""

    title: str
    explanation: str

    @property
    def kind(self) -> str:
        """A stable name of the step's type, e.g. ``"trial-form"``."""
        return STEP_KINDS[type(self)]


@dataclass(frozen=True)
class EquationStep(Step):
    """The equation to solve, ``L[x] = f(t)``."""

    coefficients: tuple[sp.Expr, ...]
    forcing: sp.Expr
    t: sp.Symbol
    unknown: sp.Symbol  # the dependent variable's display symbol, x


@dataclass(frozen=True)
class ForcingSplitStep(Step):
    """The forcing as quasi-polynomial terms grouped by exponent."""

    forcing: sp.Expr
    groups: tuple[ExponentGroup, ...]
    t: sp.Symbol


@dataclass(frozen=True)
class CharacteristicStep(Step):
    """The characteristic polynomial and its roots with multiplicities."""

    variable: sp.Symbol
    polynomial: sp.Expr
    # (root, multiplicity) pairs, found on first read; empty or None when not found in closed form
    roots: Sequence[tuple[sp.Expr, int]] | None


@dataclass(frozen=True)
class ResonanceStep(Step):
    """Multiplicity of a group's exponent as a root of the characteristic polynomial."""

    group: int
    exponent: sp.Expr
    value: sp.Expr  # p(lambda)
    multiplicity: int


@dataclass(frozen=True)
class TrialFormStep(Step):
    """The assumed form of the group's particular solution."""

    group: int
    trial: sp.Expr
    unknowns: tuple[sp.Symbol, ...]


@dataclass(frozen=True)
class DerivativesStep(Step):
    """Derivatives of the trial form up to the order of the equation."""

    group: int
    derivatives: Sequence[sp.Expr]  # x', x'', ... (a tuple, or Deferred until first read)


@dataclass(frozen=True)
class SubstitutionStep(Step):
    """The trial form substituted into the equation, collected by basis function."""

    group: int
    lhs: sp.Expr
    rhs: sp.Expr


@dataclass(frozen=True)
class CoefficientEquationsStep(Step):
    """One equation per basis function: a small linear system."""

    group: int
    basis: tuple[sp.Expr, ...]
    equations: tuple[sp.Eq, ...]


@dataclass(frozen=True)
class SolvedCoefficientsStep(Step):
    """The unknown coefficients solved, with the conditions the solution needs."""

    group: int
    values: tuple[tuple[sp.Symbol, sp.Expr], ...]
    conditions: tuple[sp.Expr, ...]  # relations such as Ne(det, 0)


@dataclass(frozen=True)
class ParticularSolutionStep(Step):
    """The particular solution, sum of the groups' parts."""

    solution: sp.Expr
    t: sp.Symbol


@dataclass(frozen=True)
class VerificationStep(Step):
    """Back-substitution: ``L[x_p] - f`` simplified."""

    residual: sp.Expr
    verified: bool


@dataclass(frozen=True)
class HomogeneousStep(Step):
    """The homogeneous (transient) solution with free constants."""

    solution: sp.Expr
    constants: tuple[sp.Symbol, ...]
    regime: str


@dataclass(frozen=True)
class InitialConditionsStep(Step):
    """The constants of the homogeneous solution fixed by the initial state."""

    equations: tuple[sp.Eq, ...]
    values: tuple[tuple[sp.Symbol, sp.Expr], ...]


@dataclass(frozen=True)
class TotalResponseStep(Step):
    """Total response = transient + steady state."""

    transient: sp.Expr
    steady_state: sp.Expr
    solution: sp.Expr
    t: sp.Symbol


# ---------------------------------------------------------------------------
# records of the vector method (the scalar records are reused where they fit)


@dataclass(frozen=True)
class MatrixEquationStep(Step):
    """The equations of motion ``M x'' + C x' + K x = F(t)``."""

    mass: sp.ImmutableMatrix
    damping: sp.ImmutableMatrix
    stiffness: sp.ImmutableMatrix
    forcing: sp.ImmutableMatrix
    t: sp.Symbol
    unknown: sp.Symbol


@dataclass(frozen=True)
class VectorForcingStep(Step):
    """The forcing vector's terms pooled into exponent groups over all rows."""

    forcing: sp.ImmutableMatrix
    groups: tuple[VectorGroup, ...]
    t: sp.Symbol


@dataclass(frozen=True)
class ModeResonanceStep(ResonanceStep):
    """Multiplicity of the exponent as a root of ``det Z``, and the mode(s) it meets.

    ``modes`` are 1-based mode numbers (empty when not identified),
    ``natural_frequency`` the undamped natural frequency met (None when the
    exponent is not a pure harmonic of the undamped model), ``mode_shape`` a
    vector spanning the free motion (None when not resonant).
    """

    modes: tuple[int, ...] = ()
    natural_frequency: sp.Expr | None = None
    mode_shape: sp.ImmutableMatrix | None = None


@dataclass(frozen=True)
class VectorCoefficientEquationsStep(Step):
    """One vector equation per basis function: ``lhs[r] = rhs[r]`` for every row r."""

    group: int
    basis: tuple[sp.Expr, ...]
    equations: tuple[tuple[sp.ImmutableMatrix, sp.ImmutableMatrix], ...]


@dataclass(frozen=True)
class ModeExcitationStep(Step):
    """At a resonance: whether the resonant mode is excited, and whether x grows without bound."""

    group: int
    modes: tuple[int, ...]
    natural_frequency: sp.Expr | None
    excited: bool
    growth_power: int  # highest extra power of t that survives (0 when not excited)
    unbounded: bool


@dataclass(frozen=True)
class ModesStep(Step):
    """Natural frequencies, mass-normalised mode shapes and modal damping ratios."""

    frequencies: tuple
    shapes: sp.ImmutableMatrix
    damping_ratios: tuple


# ---------------------------------------------------------------------------
# records of a forcing that switches, solved interval by interval (engine/piecewise.py)


@dataclass(frozen=True)
class SwitchingTimesStep(Step):
    """The switching times of the forcing, in order, and the quasi-polynomial piece on each interval."""

    forcing: sp.Expr | sp.ImmutableMatrix
    t: sp.Symbol
    times: tuple[sp.Expr, ...]  # t_1 < t_2 < ... (t_0 = 0 is the start)
    pieces: tuple[sp.Expr | sp.ImmutableMatrix, ...]  # f on [t_0, t_1), [t_1, t_2), ..., [t_k, oo)
    conditions: tuple[sp.Expr, ...]  # relations the order needs, e.g. a > 0


@dataclass(frozen=True)
class IntervalStep(Step):
    """One interval: its piece of the forcing in the local time, and the state it starts from."""

    index: int  # 1-based
    start: sp.Expr
    end: sp.Expr | None  # None for the last interval (no end)
    t: sp.Symbol
    local_time: sp.Symbol  # tau = t - start
    forcing: sp.Expr | sp.ImmutableMatrix  # the piece written in tau
    state: tuple[sp.Expr | sp.ImmutableMatrix, ...]  # x, x', ... at tau = 0


@dataclass(frozen=True)
class ContinuityStep(Step):
    """The state at each switching time from the interval before and the interval after: their differences."""

    times: tuple[sp.Expr, ...]
    residuals: tuple[tuple[sp.Expr | sp.ImmutableMatrix, ...], ...]  # per switching time, x, x', ...
    verified: bool


@dataclass(frozen=True)
class PiecewiseSolutionStep(Step):
    """The solution assembled from the intervals: a Piecewise in t."""

    solution: sp.Expr | sp.ImmutableMatrix
    t: sp.Symbol


#: the one table of kinds: each record type and its stable name
STEP_KINDS = {
    Step: "step",
    EquationStep: "equation",
    ForcingSplitStep: "forcing-split",
    CharacteristicStep: "characteristic",
    ResonanceStep: "resonance",
    TrialFormStep: "trial-form",
    DerivativesStep: "derivatives",
    SubstitutionStep: "substitution",
    CoefficientEquationsStep: "coefficient-equations",
    SolvedCoefficientsStep: "solved-coefficients",
    ParticularSolutionStep: "particular-solution",
    VerificationStep: "verification",
    HomogeneousStep: "homogeneous",
    InitialConditionsStep: "initial-conditions",
    TotalResponseStep: "total-response",
    MatrixEquationStep: "equation",
    VectorForcingStep: "forcing-split",
    ModeResonanceStep: "resonance",
    VectorCoefficientEquationsStep: "coefficient-equations",
    ModeExcitationStep: "mode-excitation",
    ModesStep: "modes",
    SwitchingTimesStep: "switching-times",
    IntervalStep: "interval",
    ContinuityStep: "continuity",
    PiecewiseSolutionStep: "piecewise-solution",
}
