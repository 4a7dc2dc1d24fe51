"""The method: forcing split into exponent groups, operators, undetermined coefficients.

One skeleton (:mod:`calckit.engine.method`) with a scalar and a vector strategy
(:mod:`~calckit.engine.scalar`, :mod:`~calckit.engine.vector`); the operator
``LinearODE`` (:mod:`~calckit.engine.operator`); step records
(:mod:`~calckit.engine.steps`); the ``Derivation`` and ``Response`` records;
the check by substitution (:mod:`~calckit.engine.verify`); total responses and
compiled numbers. The trade's models (:mod:`calckit.physics`) hand their
equations to this layer.
"""

from calckit.engine.algebra import LAMBDA, is_zero, plain, polynomial_determinant, real_imag, tidy
from calckit.engine.crosscheck import PeakComparison, compare_peak, compare_sampled_peak
from calckit.engine.derivation import Derivation, LinearOperator, ScalarOperator
from calckit.engine.forcing import ExponentGroup, ForcingSplit, ForcingTerm, resolve_time, split_forcing
from calckit.engine.method import GroupSolution, Strategy, derive, particular_step
from calckit.engine.numeric import (
    Compiled,
    FrequencyResponse,
    compile_expr,
    float_matrix,
    frequency_response,
    time_history,
)
from calckit.engine.operator import LinearODE
from calckit.engine.periodic import PeriodicSteadyState, periodic_steady_state
from calckit.engine.piecewise import (
    IntervalSolver,
    PiecewiseDerivation,
    SwitchedForcing,
    is_switching,
    piecewise_particular,
    piecewise_response,
    scalar_solver,
    split_switching,
)
from calckit.engine.response import Response, homogeneous_basis, total_response
from calckit.engine.scalar import ScalarStrategy
from calckit.engine.vector import VectorStrategy
from calckit.engine.vector_forcing import VectorForcing, VectorGroup, forcing_entries, split_forcing_vector
from calckit.engine.verify import vanishes, verification_step

__all__ = [
    "LAMBDA",
    "Compiled",
    "Derivation",
    "ExponentGroup",
    "ForcingSplit",
    "ForcingTerm",
    "FrequencyResponse",
    "GroupSolution",
    "IntervalSolver",
    "LinearODE",
    "PeakComparison",
    "PeriodicSteadyState",
    "LinearOperator",
    "PiecewiseDerivation",
    "Response",
    "ScalarOperator",
    "ScalarStrategy",
    "Strategy",
    "SwitchedForcing",
    "VectorForcing",
    "VectorGroup",
    "VectorStrategy",
    "compare_peak",
    "compare_sampled_peak",
    "compile_expr",
    "derive",
    "float_matrix",
    "forcing_entries",
    "frequency_response",
    "homogeneous_basis",
    "is_switching",
    "is_zero",
    "particular_step",
    "periodic_steady_state",
    "piecewise_particular",
    "piecewise_response",
    "plain",
    "polynomial_determinant",
    "real_imag",
    "resolve_time",
    "scalar_solver",
    "split_forcing",
    "split_forcing_vector",
    "split_switching",
    "tidy",
    "time_history",
    "total_response",
    "vanishes",
    "verification_step",
]
