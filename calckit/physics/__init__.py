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
