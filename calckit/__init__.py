"""calckit: derive, check and publish forced-vibration calculations.

The public API is the one table below (``_PUBLIC``: module -> the names it gives);
``__all__`` is made from it. See ``shared/DESIGN.md`` for the contract and
``DEVELOPERS.md`` for the layer folders.

The names load on first use (PEP 562), so that ``python -m calckit`` and the
command line start without sympy, pint and matplotlib; every name in ``__all__``
is there as before (``ck.Sheet``, ``from calckit import Sheet``).
"""

import importlib

from calckit._version import __version__

# where each public name is defined
_PUBLIC = {
    "calckit.errors": (
        "AliasingWarning", "BuildError", "CalcError", "CellError", "ForcingError", "InputsError", "InternalError", "ModelError",
        "OverwriteError", "SheetError", "StorageError", "UnitsError",
    ),
    "calckit.core.exact": ("exact",),
    "calckit.core.checks": ("finite", "non_negative", "positive"),
    "calckit.core.tolerances": ("Tolerance", "tolerance_band"),
    "calckit.core.expressions": ("parse_expression", "parse_parameters"),
    "calckit.core.rounding": ("as_shown",),
    "calckit.core": ("units",),  # modules exported by name (``ck.units.fmt``)
    "calckit.core.units": ("angular_frequency", "cyclic_frequency", "fmt", "Q_", "quantity", "to_si", "ureg"),
    "calckit.engine": (
        "compare_peak", "compare_sampled_peak", "Compiled", "compile_expr", "Derivation", "ExponentGroup", "ForcingSplit",
        "ForcingTerm", "frequency_response", "FrequencyResponse", "LinearODE", "PeakComparison", "PeriodicSteadyState",
        "periodic_steady_state", "Response", "split_forcing", "time_history",
    ),
    "calckit.physics": (
        "base_excitation", "eccentricity_from_grade", "fourier_series", "fourier_series_from_samples",
        "FourierSeries", "half_power_bandwidth", "HarmonicLine", "isolation_efficiency", "magnification",
        "Modes", "MultiMass", "Oscillator", "peak_frequency_ratio", "peak_magnification", "phase_angle",
        "REGIMES", "transmissibility", "transmitted_force_amplitude", "unbalance_force_amplitude",
        "ISOLATION_RATIO_BASIS", "isolator_refusal", "isolator_results", "isolator_run_up", "LEAST_ISOLATION_RATIO", "require_one_harmonic",
        "residual_unbalance", "run_up_results", "run_up_stage", "SEPARATION_BAND", "SEPARATION_BASIS",
        "speed_separation", "STANDARD_GRAVITY", "static_deflection",
        "DEFAULT_SEPARATION_REFERENCE", "SEPARATION_REFERENCES", "separation_basis", "separation_formula",
        "AbsorberResponse", "absorber_response", "AbsorberTuning", "equal_peak_tuning",
        "DAMPING_MODELS", "equivalent_damping_ratio", "equivalent_viscous_damping", "hysteretic_magnification",
        "hysteretic_phase", "hysteretic_transmissibility", "hysteretic_transmissibility_phase",
        "excitation", "fourier", "harmonic", "hysteretic", "pulses",  # modules exported by name (``ck.harmonic.magnification``)
    ),
    "calckit.physics.absorber": ("equal_peak_tuning",),
    "calckit.physics.interference": ("PairSeparation", "RangeSeparation", "range_separation"),
    "calckit.physics.speed_range": ("SpeedRange",),
    "calckit.physics.amplitude": (
        "AMPLITUDE_CONVENTIONS", "amplitude_convention", "convention_factor", "convention_formula", "convention_text",
        "harmonic_sum_formula", "harmonic_sum_rms", "in_convention", "motion_formula", "sum_in_convention",
    ),
    "calckit.physics.criteria_tables": (
        "CriterionCurve", "criterion_curve", "criterion_curves", "load_criteria", "SeverityClass", "SeverityZone",
        "severity_class", "severity_classes", "severity_zone", "third_octave_band", "third_octave_bands",
    ),
    "calckit.physics.band_response": ("BandRow", "band_response", "read_spectrum", "worst_band"),
    "calckit.physics.rigid_body": ("Mount", "RigidBody"),
    "calckit.physics.mounts": (
        "describe_mode", "MountedBody", "mount_forces", "point_motion", "steady_amplitudes", "Unbalance",
    ),
    "calckit.physics.records": ("history_response", "load_time_history", "TimeHistory"),
    "calckit.physics.shock": ("record_spectrum",),
    "calckit.physics.support": (
        "BEAM_KINDS", "beam_flexibility", "beam_stiffness", "LEAST_SUPPORT_RATIO", "PORTAL_BASES", "PORTAL_FORMULAS", "portal_sway_stiffness",
        "SERIES_FORMULAS", "series_stiffness", "STIFFNESS_FORMULAS", "stiffness_formula", "support_check",
        "support_effect", "SUPPORT_KINDS", "support_stiffness", "SUPPORT_RATIO_BASIS", "SupportCheck", "SupportEffect",
    ),
    "calckit.physics.beam_frequency": (
        "beam_alone_frequency", "BEAM_FREQUENCY_FORMULAS", "beam_with_mass_frequency", "BeamFrequency",
        "dunkerley_estimate", "dunkerley_formula", "DunkerleyEstimate", "effective_mass_fraction", "rayleigh_frequency",
    ),
    "calckit.physics.pulse_spectrum": ("pulse_spectrum",),
    "calckit.physics.spectrum": ("log_frequencies", "ShockSpectrum"),
    "calckit.physics.pulses": (
        "half_sine", "initial_peak_sawtooth", "ramp_and_hold", "rectangular", "repeated", "terminal_peak_sawtooth",
        "trapezoid", "triangle", "versed_sine",
    ),
    "calckit.render.display": ("show",),
    "calckit.render.spectrum_plot": ("spectrum_figure",),
    "calckit.render.interference_plot": ("interference_figure",),
    "calckit.render.numbers": ("put_through", "Substitution"),
    "calckit.sheet.working": ("conversion_formula",),
    "calckit.sheet": (
        "Check", "DEFAULT_CAUTION", "OutputUnits", "read_record", "RECORD_VERSION", "Sheet", "SheetRecord",
    ),  # fmt: skip
    "calckit.workflow": ("build_sheet", "diff_sheets", "run_batch"),
    "calckit.explore.explorer": ("Explorer",),
}  # fmt: skip

_HOME = {name: module for module, names in _PUBLIC.items() for name in names}

# ``explore`` is the function, although the folder calckit/explore has that name:
# importing it here binds the function after the package (whose import is light).
from calckit.explore import explore  # noqa: E402


def __getattr__(name: str):
    if name not in _HOME:
        raise AttributeError(f"module 'calckit' has no attribute {name!r}")
    home = importlib.import_module(_HOME[name])
    try:
        value = getattr(home, name)
    except AttributeError:  # a module exported by name, not yet imported by its folder
        value = importlib.import_module(f"{_HOME[name]}.{name}")
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))


__all__ = ["__version__", "explore", *_HOME]
