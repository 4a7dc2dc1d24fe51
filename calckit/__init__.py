"""calckit: derive, check and publish forced-vibration calculations.

The public API is listed in ``__all__``; see ``shared/DESIGN.md`` for the contract.
"""

from . import units
from ._version import __version__
from .errors import (
    BuildError,
    CalcError,
    ForcingError,
    InputsError,
    ModelError,
    OverwriteError,
    SheetError,
    UnitsError,
)
from .forcing import ExponentGroup, ForcingSplit, ForcingTerm, split_forcing
from .numeric import Compiled, FrequencyResponse, compile_expr, frequency_response, time_history
from .oscillator import REGIMES, HarmonicLine, Oscillator
from .render.display import show
from .render.numbers import Substitution, put_through
from .response import Response
from .sheet import DEFAULT_CAUTION, Check, Sheet
from .undetermined import Derivation, LinearODE
from .units import Q_, angular_frequency, cyclic_frequency, fmt, quantity, to_si, ureg

__all__ = [
    "__version__",
    "BuildError",
    "CalcError",
    "Derivation",
    "ExponentGroup",
    "ForcingError",
    "ForcingSplit",
    "ForcingTerm",
    "InputsError",
    "HarmonicLine",
    "LinearODE",
    "Oscillator",
    "REGIMES",
    "Response",
    "show",
    "put_through",
    "Substitution",
    "Sheet",
    "Check",
    "DEFAULT_CAUTION",
    "ModelError",
    "OverwriteError",
    "SheetError",
    "UnitsError",
    "split_forcing",
    "units",
    "compile_expr",
    "Compiled",
    "time_history",
    "frequency_response",
    "FrequencyResponse",
    "ureg",
    "Q_",
    "quantity",
    "to_si",
    "angular_frequency",
    "cyclic_frequency",
    "fmt",
]
