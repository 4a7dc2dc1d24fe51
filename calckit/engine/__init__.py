"""The method: forcing split into exponent groups, operators, undetermined coefficients.

Step records, derivations, total responses and compiled numbers live here; the
trade's models (:mod:`calckit.physics`) hand their equations to this layer.
"""

from calckit.engine.forcing import ExponentGroup, ForcingSplit, ForcingTerm, split_forcing
from calckit.engine.numeric import Compiled, FrequencyResponse, compile_expr, frequency_response, time_history
from calckit.engine.response import Response, total_response  # noqa: I001 (after undetermined)
from calckit.engine.undetermined import LAMBDA, Derivation, LinearODE, vanishes

__all__ = [
    "LAMBDA",
    "Compiled",
    "Derivation",
    "ExponentGroup",
    "ForcingSplit",
    "ForcingTerm",
    "FrequencyResponse",
    "LinearODE",
    "Response",
    "compile_expr",
    "frequency_response",
    "split_forcing",
    "time_history",
    "total_response",
    "vanishes",
]
