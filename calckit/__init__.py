"""calckit: derive, check and publish forced-vibration calculations.

The public API is listed in ``__all__``; see ``shared/DESIGN.md`` for the contract.
"""

from . import excitation, fourier, harmonic, units
from ._version import __version__
from .diffing import diff_sheets
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
from .excitation import (
    base_excitation,
    eccentricity_from_grade,
    transmitted_force_amplitude,
    unbalance_force_amplitude,
)
from .explore import Explorer, explore
from .forcing import ExponentGroup, ForcingSplit, ForcingTerm, split_forcing
from .fourier import FourierSeries, fourier_series, fourier_series_from_samples
from .harmonic import (
    half_power_bandwidth,
    isolation_efficiency,
    magnification,
    peak_frequency_ratio,
    peak_magnification,
    phase_angle,
    transmissibility,
)
from .multimass import Modes, MultiMass
from .numeric import Compiled, FrequencyResponse, compile_expr, frequency_response, time_history
from .oscillator import REGIMES, HarmonicLine, Oscillator
from .render.display import show
from .render.numbers import Substitution, put_through
from .response import Response
from .sheet import DEFAULT_CAUTION, Check, Sheet
from .undetermined import Derivation, LinearODE
from .units import Q_, angular_frequency, cyclic_frequency, fmt, quantity, to_si, ureg
from .workflow import build_sheet, run_batch

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
    "MultiMass",
    "Modes",
    "REGIMES",
    "Response",
    "show",
    "put_through",
    "Substitution",
    "Sheet",
    "build_sheet",
    "run_batch",
    "diff_sheets",
    "explore",
    "Explorer",
    "Check",
    "DEFAULT_CAUTION",
    "ModelError",
    "OverwriteError",
    "SheetError",
    "UnitsError",
    "split_forcing",
    "units",
    "harmonic",
    "excitation",
    "fourier",
    "magnification",
    "transmissibility",
    "phase_angle",
    "peak_frequency_ratio",
    "peak_magnification",
    "half_power_bandwidth",
    "isolation_efficiency",
    "unbalance_force_amplitude",
    "eccentricity_from_grade",
    "base_excitation",
    "transmitted_force_amplitude",
    "FourierSeries",
    "fourier_series",
    "fourier_series_from_samples",
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
