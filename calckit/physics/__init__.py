"""The trade: oscillators, several masses, harmonic closed forms, excitations, periodic loads."""

from calckit.physics.excitation import (
    BALANCE_QUALITY_GRADES,
    base_excitation,
    eccentricity_from_grade,
    transmitted_force_amplitude,
    unbalance_force_amplitude,
)
from calckit.physics.fourier import FourierSeries, fourier_series, fourier_series_from_samples
from calckit.physics.harmonic import (
    half_power_bandwidth,
    isolation_efficiency,
    magnification,
    peak_frequency_ratio,
    peak_magnification,
    phase_angle,
    transmissibility,
)
from calckit.physics.multimass import Modes, MultiMass
from calckit.physics.oscillator import REGIMES, HarmonicLine, Oscillator

__all__ = [
    "BALANCE_QUALITY_GRADES",
    "REGIMES",
    "FourierSeries",
    "HarmonicLine",
    "Modes",
    "MultiMass",
    "Oscillator",
    "base_excitation",
    "eccentricity_from_grade",
    "fourier_series",
    "fourier_series_from_samples",
    "half_power_bandwidth",
    "isolation_efficiency",
    "magnification",
    "peak_frequency_ratio",
    "peak_magnification",
    "phase_angle",
    "transmissibility",
    "transmitted_force_amplitude",
    "unbalance_force_amplitude",
]

# Criteria, isolation, run-up: one place for what the templates and the explorer both compute.
from calckit.physics.absorber import (  # noqa: E402
    FREQUENCY_FORMULAS,
    RESPONSE_FORMULAS,
    TUNING_FORMULAS,
    AbsorberResponse,
    AbsorberTuning,
    absorber_response,
    equal_peak_tuning,
)
from calckit.physics.criteria import (  # noqa: E402
    DEFAULT_SEPARATION_REFERENCE,
    ISOLATION_RATIO_BASIS,
    LEAST_ISOLATION_RATIO,
    SEPARATION_BAND,
    SEPARATION_BASIS,
    SEPARATION_REFERENCES,
    separation_basis,
    separation_formula,
    speed_separation,
)
from calckit.physics.excitation import require_one_harmonic, residual_unbalance, unbalance_force  # noqa: E402
from calckit.physics.harmonic import forced_amplitude  # noqa: E402
from calckit.physics.hysteretic import (  # noqa: E402
    DAMPING_MODELS,
    equivalent_damping_ratio,
    equivalent_viscous_damping,
    hysteretic_magnification,
    hysteretic_phase,
    hysteretic_transmissibility,
    hysteretic_transmissibility_phase,
)
from calckit.physics.isolation import (  # noqa: E402
    STANDARD_GRAVITY,
    IsolatorResults,
    isolator_refusal,
    isolator_results,
    isolator_run_up,
    static_deflection,
)
from calckit.physics.runup import RunUp, RunUpResults, run_up, run_up_results, run_up_stage, run_up_steps  # noqa: E402

__all__ += [
    "DAMPING_MODELS",
    "equivalent_damping_ratio",
    "equivalent_viscous_damping",
    "hysteretic_magnification",
    "hysteretic_phase",
    "hysteretic_transmissibility",
    "hysteretic_transmissibility_phase",
    "FREQUENCY_FORMULAS",
    "DEFAULT_SEPARATION_REFERENCE",
    "SEPARATION_REFERENCES",
    "separation_basis",
    "separation_formula",
    "RESPONSE_FORMULAS",
    "TUNING_FORMULAS",
    "AbsorberResponse",
    "AbsorberTuning",
    "absorber_response",
    "equal_peak_tuning",
    "ISOLATION_RATIO_BASIS",
    "LEAST_ISOLATION_RATIO",
    "SEPARATION_BAND",
    "SEPARATION_BASIS",
    "STANDARD_GRAVITY",
    "IsolatorResults",
    "RunUp",
    "RunUpResults",
    "forced_amplitude",
    "isolator_refusal",
    "isolator_results",
    "isolator_run_up",
    "require_one_harmonic",
    "residual_unbalance",
    "run_up",
    "run_up_results",
    "run_up_stage",
    "run_up_steps",
    "speed_separation",
    "static_deflection",
    "unbalance_force",
]

# Speed ranges and excitation orders: every mode against every order (the interference diagram's numbers).
from calckit.physics.interference import PairSeparation, RangeSeparation, range_separation  # noqa: E402
from calckit.physics.speed_range import SpeedRange  # noqa: E402

__all__ += ["PairSeparation", "RangeSeparation", "SpeedRange", "range_separation"]

from calckit.physics.mounts import (  # noqa: E402
    MOMENT_FORMULAS,
    MountedBody,
    MountLoad,
    Unbalance,
    describe_mode,
    harmonic_state,
    mount_forces,
    mounted_skid,
    point_motion,
    skid_results,
    steady_amplitudes,
)
from calckit.physics.rigid_body import BOX_INERTIA_FORMULAS, Mount, RigidBody, read_point  # noqa: E402

__all__ += [
    "BOX_INERTIA_FORMULAS",
    "read_point",
    "MOMENT_FORMULAS",
    "Mount",
    "MountLoad",
    "MountedBody",
    "RigidBody",
    "Unbalance",
    "describe_mode",
    "harmonic_state",
    "mount_forces",
    "mounted_skid",
    "skid_results",
    "point_motion",
    "steady_amplitudes",
]
