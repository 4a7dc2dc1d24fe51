"""A defect of calckit is an InternalError (exit 1, with a reproducer), never the user's "bad input".

Each test breaks one internal step on purpose (monkeypatch) and checks that the
failure is reported as calckit's own, with a line that reproduces it. The
reference for "the right answer" does not matter here: the point is the kind of
error, its message, and that the reproducer line runs.
"""

from __future__ import annotations

import pytest
import sympy as sp

import calckit as ck
from calckit.engine.operator import LinearODE
from calckit.errors import InternalError, ModelError

T = sp.Symbol("t", real=True)


def _wrong_multiplicity(monkeypatch):
    """Make LinearODE.multiplicity say 0 (not a root) even at a resonance."""
    real = LinearODE.multiplicity

    def lying(self, exponent):
        s, value = real(self, exponent)
        return 0, value

    monkeypatch.setattr(LinearODE, "multiplicity", lying)


class TestScalarBlockSolve:
    def test_singular_block_is_internal(self, monkeypatch):
        """Forced at resonance with the multiplicity mis-counted, the block is singular: InternalError."""
        _wrong_multiplicity(monkeypatch)
        with pytest.raises(InternalError) as caught:
            ck.LinearODE([1, 0, 4]).particular(sp.cos(2 * T), t=T)
        error = caught.value
        assert not isinstance(error, ModelError)
        assert isinstance(error, RuntimeError) and isinstance(error, ck.CalcError)
        assert error.what == (
            "the coefficient equations are singular, although the exponent's multiplicity says they are not"
        )
        assert error.where == "exponent 2*I"
        assert error.reproduce.startswith(
            "import calckit as ck; from sympy import *; t = Symbol('t', real=True"
        )
        assert (
            "ck.LinearODE([Integer(1), Integer(0), Integer(4)]).particular(cos(Mul(Integer(2), Symbol('t'"
            in (error.reproduce)
        )
        assert "defect of calckit, not of your input" in str(error)

    def test_reproducer_runs(self, monkeypatch):
        """The reproducer line fails the same way while the defect is there, and solves once it is gone."""
        _wrong_multiplicity(monkeypatch)
        with pytest.raises(InternalError) as caught:
            ck.LinearODE([1, 0, 4]).particular(sp.cos(2 * T), t=T)
        line = caught.value.reproduce
        with pytest.raises(InternalError):
            exec(line, {})  # noqa: S102 - our own reproducer line
        monkeypatch.undo()
        namespace: dict = {}
        exec(line.replace("ck.LinearODE", "result = ck.LinearODE"), namespace)  # noqa: S102
        x = namespace["result"].solution
        # hand-worked: x'' + 4x = cos 2t at resonance has x_p = t sin(2t)/4 (Kreyszig, 10th ed., sec. 2.7)
        assert sp.simplify(x - T * sp.sin(2 * T) / 4) == 0


class TestVectorSolve:
    def test_no_solution_is_internal(self, monkeypatch):
        """A two-mass model forced at a natural frequency with the multiplicity mis-counted: InternalError."""
        _wrong_multiplicity(monkeypatch)
        model = ck.MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]])  # natural frequencies 1 and sqrt(3)
        with pytest.raises(InternalError) as caught:
            model.particular([sp.cos(T), 0], t=T)
        error = caught.value
        assert error.what == (
            "the coefficient equations have no solution, although the exponent's multiplicity says they are not"
        )
        assert error.where == "exponent I"
        assert "ck.MultiMass(" in error.reproduce
