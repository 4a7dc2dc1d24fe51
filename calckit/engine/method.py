"""The skeleton of the method of undetermined coefficients, shared by scalar and vector models.

For a linear operator with constant coefficients (a scalar ``L(D) x = f`` or a
matrix ``M x'' + C x' + K x = F``) the method runs the same steps:

1. the equation to solve;
2. the forcing split into exponent groups ``lambda = a +/- i b``;
3. the characteristic polynomial (``p(lambda)``, or ``det Z(lambda)``);
4. per group: is the exponent a root, the trial form, its derivatives, the
   substitution, the coefficient equations, the solved coefficients;
5. the particular solution, the sum of the groups' parts;
6. the check by substitution.

:func:`derive` is that skeleton. What differs between a scalar and a vector
operator (how the forcing is split, what the equation and the characteristic
polynomial look like, how one group's coefficients are solved and how the
residual is formed) is a :class:`Strategy`: :class:`calckit.engine.scalar.ScalarStrategy`
and :class:`calckit.engine.vector.VectorStrategy`.

References
----------
Boyce, DiPrima & Meade, *Elementary Differential Equations and Boundary Value
Problems*, 11th ed., sec. 3.5 and 4.3, from memory; Gohberg, Lancaster & Rodman,
*Matrix Polynomials* (1982), ch. 1 and 8, from memory.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass

import sympy as sp

from calckit.engine.algebra import rationalised
from calckit.engine.derivation import Derivation, LinearOperator
from calckit.engine.phase import compact_phases
from calckit.engine.roots import normal_conditions
from calckit.engine.steps import ParticularSolutionStep, Step
from calckit.engine.verify import verification_step
from calckit.errors import InternalError

__all__ = ["GroupSolution", "Strategy", "derive", "particular_step"]


@dataclass(frozen=True, kw_only=True)
class GroupSolution:
    """One exponent group solved: its part of ``x_p``, its steps and the conditions it needs."""

    part: sp.Expr | sp.ImmutableMatrix
    steps: tuple[Step, ...]
    conditions: tuple[sp.Expr, ...] = ()


class Strategy(ABC):
    """What one kind of operator contributes to the method's skeleton (:func:`derive`).

    Parameters
    ----------
    operator : LinearOperator
        The model solved; kept as ``self.operator``.
    """

    #: what the solution is checked against, in the check's sentence
    what: str = "the equation"

    def __init__(self, operator: LinearOperator):
        self.operator = operator

    @abstractmethod
    def split(self, forcing, t: sp.Symbol | None):
        """The forcing split into exponent groups (a ``ForcingSplit`` or a ``VectorForcing``)."""

    @abstractmethod
    def check_constant(self, t: sp.Symbol) -> None:
        """Refuse coefficients that depend on the time variable."""

    @abstractmethod
    def equation_step(self, split, x: sp.Symbol) -> Step:
        """The equation to solve."""

    @abstractmethod
    def forcing_step(self, split) -> Step:
        """The forcing split into exponent groups, as a step."""

    @abstractmethod
    def characteristic_step(self) -> Step:
        """The characteristic polynomial and, where found, its roots."""

    @abstractmethod
    def letters(self, split) -> tuple[str, str]:
        """The letters of the unknown coefficients (cosine, sine), not used by the user."""

    def conditions(self) -> tuple[sp.Expr, ...]:
        """Conditions the whole solution needs (e.g. a non-zero leading coefficient)."""
        return ()

    @abstractmethod
    def solve_group(
        self, group, index: int, many: bool, letters: tuple[str, str], t: sp.Symbol
    ) -> GroupSolution:
        """One exponent group: resonance, trial form, derivatives, substitution, equations, solution."""

    @abstractmethod
    def combine(self, parts: list):
        """The particular solution, the sum of the groups' parts."""

    @abstractmethod
    def check(self, solution, split) -> tuple[bool, sp.Expr | sp.ImmutableMatrix]:
        """``(verified, residual shown)``: does the solution satisfy the equation exactly?"""

    @abstractmethod
    def reproducer(self, split) -> str:
        """A line of Python that repeats this derivation (for an :class:`~calckit.errors.InternalError`)."""

    @abstractmethod
    def forcing_label(self, split) -> str:
        """The forcing as named in messages."""


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


def derive(strategy: Strategy, forcing, t: sp.Symbol | None = None) -> Derivation:
    """Particular solution of the strategy's operator under *forcing*, step by step.

    Raises :class:`~calckit.errors.InternalError` when the result does not pass
    the check by substitution, or a group's coefficient equations come out singular
    (both defects of calckit, never of the input), with a reproducer line.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.operator import LinearODE
    >>> from calckit.engine.scalar import ScalarStrategy
    >>> t = sp.Symbol("t", real=True)
    >>> derive(ScalarStrategy(LinearODE([1, 0, 4])), sp.cos(2 * t), t).solution
    t*sin(2*t)/4
    """
    split = strategy.split(forcing, t)
    t = split.t
    strategy.check_constant(t)
    x = sp.Symbol(strategy.operator.name)
    steps: list[Step] = [
        strategy.equation_step(split, x),
        strategy.forcing_step(split),
        strategy.characteristic_step(),
    ]
    letters = strategy.letters(split)
    many = len(split.groups) > 1
    parts: list = []
    conditions: list[sp.Expr] = list(strategy.conditions())
    for index, group in enumerate(split.groups, start=1):
        try:
            solved = strategy.solve_group(group, index, many, letters, t)
        except InternalError as exc:  # a solver's own check failed: say how to reproduce it
            if exc.reproduce:
                raise
            raise InternalError(exc.what, reproduce=strategy.reproducer(split), where=exc.where) from exc
        parts.append(solved.part)
        steps.extend(solved.steps)
        conditions.extend(c for c in solved.conditions if c not in conditions)
    # sin(t - 2) stays in its phase; no radical left below a numeric coefficient
    solution = rationalised(compact_phases(strategy.combine(parts), split.forcing, t))
    steps.append(particular_step(solution, t, many))
    verified, residual = strategy.check(solution, split)
    steps.append(
        verification_step(
            residual,
            verified,
            strategy.what,
            reproduce=strategy.reproducer(split),
            where=f"forcing {strategy.forcing_label(split)}",
        )
    )
    return Derivation(
        operator=strategy.operator,
        forcing=split.forcing,
        t=t,
        split=split,
        solution=solution,
        steps=tuple(steps),
        verified=verified,
        conditions=normal_conditions(conditions),
    )
