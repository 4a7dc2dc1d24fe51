"""calckit: derive, check and publish forced-vibration calculations.

The public API is listed in ``__all__``; see ``shared/DESIGN.md`` for the contract.

The names load on first use (PEP 562), so that ``python -m calckit`` and
``import calckit.workflow`` start without sympy, pint and matplotlib; every name
in ``__all__`` is there as before (``ck.Sheet``, ``from calckit import Sheet``).
"""

import sys
import types
from typing import TYPE_CHECKING

from ._version import __version__

_MODULES = frozenset({"excitation", "fourier", "harmonic", "units"})

# the module each exported name comes from
_LAZY = {
    **{name: f".{name}" for name in _MODULES},
    "diff_sheets": ".diffing",
    **{
        name: ".errors"
        for name in (
            "BuildError", "CalcError", "ForcingError", "InputsError",
            "ModelError", "OverwriteError", "SheetError", "UnitsError",
        )
    },
    **{
        name: ".excitation"
        for name in (
            "base_excitation", "eccentricity_from_grade",
            "transmitted_force_amplitude", "unbalance_force_amplitude",
        )
    },
    "Explorer": ".explore",
    "explore": ".explore",
    **{name: ".forcing" for name in ("ExponentGroup", "ForcingSplit", "ForcingTerm", "split_forcing")},
    **{
        name: ".fourier"
        for name in ("FourierSeries", "fourier_series", "fourier_series_from_samples")
    },
    **{
        name: ".harmonic"
        for name in (
            "half_power_bandwidth", "isolation_efficiency", "magnification", "peak_frequency_ratio",
            "peak_magnification", "phase_angle", "transmissibility",
        )
    },
    "Modes": ".multimass",
    "MultiMass": ".multimass",
    **{
        name: ".numeric"
        for name in ("Compiled", "FrequencyResponse", "compile_expr", "frequency_response", "time_history")
    },
    **{name: ".oscillator" for name in ("REGIMES", "HarmonicLine", "Oscillator")},
    "show": ".render.display",
    "Substitution": ".render.numbers",
    "put_through": ".render.numbers",
    "Response": ".response",
    **{name: ".sheet" for name in ("DEFAULT_CAUTION", "Check", "Sheet")},
    "Derivation": ".undetermined",
    "LinearODE": ".undetermined",
    **{
        name: ".units"
        for name in ("Q_", "angular_frequency", "cyclic_frequency", "fmt", "quantity", "to_si", "ureg")
    },
    "build_sheet": ".workflow",
    "run_batch": ".workflow",
}  # fmt: skip


def __getattr__(name: str):
    try:
        module = _LAZY[name]
    except KeyError:
        raise AttributeError(f"module 'calckit' has no attribute {name!r}") from None
    import importlib

    loaded = importlib.import_module(module, __name__)
    value = loaded if name in _MODULES else getattr(loaded, name)
    globals()[name] = value
    return value


class _Package(types.ModuleType):
    """calckit's module type: ``calckit.explore`` is the function, though a submodule has that name.

    Importing the submodule ``calckit.explore`` sets the package's attribute of
    that name; this property keeps it the function, as the eager imports did.
    """

    @property
    def explore(self):
        from .explore import explore

        return explore

    @explore.setter
    def explore(self, value) -> None:
        pass


sys.modules[__name__].__class__ = _Package


def __dir__():
    return sorted(set(globals()) | set(__all__))


if TYPE_CHECKING:  # what the lazy loading gives, for type checkers and editors
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
