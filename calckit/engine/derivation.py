"""The record of a derivation: what was solved, the steps, the particular solution and its check.

A :class:`Derivation` is what ``LinearODE.particular``, ``Oscillator.particular``
and ``MultiMass.particular`` return; it is built by keyword by the method's
skeleton (:mod:`calckit.engine.method`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import sympy as sp

from calckit.core.display import Displayable
from calckit.engine.forcing import ForcingSplit
from calckit.engine.steps import Step
from calckit.engine.vector_forcing import VectorForcing

__all__ = ["Derivation", "LinearOperator", "ScalarOperator"]


@runtime_checkable
class LinearOperator(Protocol):
    """What a derivation's operator offers: a scalar ``LinearODE`` (and its ``Oscillator``)
    or a vector ``MultiMass`` of :mod:`calckit.physics`."""

    name: str

    @property
    def parameters(self) -> frozenset:
        """Free symbols of the coefficients."""
        ...

    def characteristic_polynomial(self, variable: sp.Symbol) -> sp.Expr:
        """``p(lambda)`` (scalar) or ``det Z(lambda)`` (vector)."""
        ...


@runtime_checkable
class ScalarOperator(LinearOperator, Protocol):
    """A scalar operator ``a_n D^n + ... + a_0``: a ``LinearODE`` or an ``Oscillator``."""

    coefficients: tuple[sp.Expr, ...]

    @property
    def order(self) -> int:
        """Order of the highest derivative."""
        ...

    def characteristic_roots(self) -> tuple[tuple[sp.Expr, int], ...] | None:
        """Roots of ``p`` with multiplicities, or None when not found in closed form."""
        ...

    def particular(self, f, *, t: sp.Symbol | None = None) -> Derivation:
        """The particular solution, derived step by step."""
        ...


@dataclass(frozen=True, kw_only=True)
class Derivation(Displayable):
    """A particular solution derived step by step.

    Attributes
    ----------
    operator : LinearOperator
        The ``LinearODE`` (or ``Oscillator``) or the ``MultiMass`` solved.
    forcing : sympy.Expr or sympy.ImmutableMatrix
        ``f(t)``, or the forcing column ``F(t)`` of a multi-mass model.
    t : sympy.Symbol
        The time variable.
    split : ForcingSplit or VectorForcing
        The forcing split into exponent groups (row by row for a vector).
    solution : sympy.Expr or sympy.ImmutableMatrix
        ``x_p(t)``; a column for a multi-mass model.
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

    operator: LinearOperator
    forcing: sp.Expr | sp.ImmutableMatrix
    t: sp.Symbol
    split: ForcingSplit | VectorForcing
    solution: sp.Expr | sp.ImmutableMatrix
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
