"""The shock response spectrum as data: one record type for every route that makes one.

A shock response spectrum answers: for a single-degree-of-freedom oscillator of
natural frequency ``omega_n`` and damping ratio ``zeta``, put under this pulse or
record, what is the largest response? Three maxima are kept for each frequency:

* ``maximax``: the largest absolute value over the whole time, during and after;
* ``primary``: the largest during the pulse (while the load or base motion acts);
* ``residual``: the largest after it (free vibration from the state at its end).

and each for three responses:

* ``relative_displacement`` ``z`` (m): deflection of the mount or support;
* ``pseudo_velocity`` ``omega_n z`` (m/s);
* ``absolute_acceleration`` (m/s^2): what the equipment feels, ``-(2 zeta omega_n z' +
  omega_n^2 z)`` under base acceleration, ``f/m - ...`` under a force.

Two routes fill this record: the closed-form pulses (their piecewise solution derived
by undetermined coefficients, maxima at the roots of its derivative) and sampled
records (the exact interval recursion). Plotting lives in the render layer.

References
----------
C. M. Harris and A. G. Piersol (eds.), *Harris' Shock and Vibration Handbook*, 5th ed.,
McGraw-Hill, 2002, ch. 8 (definitions of maximax, primary and residual spectra), from memory.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from calckit.errors import ModelError

__all__ = ["RESPONSES", "SPECTRUM_KINDS", "ShockSpectrum", "log_frequencies"]

RESPONSES = ("relative_displacement", "pseudo_velocity", "absolute_acceleration")
SPECTRUM_KINDS = ("maximax", "primary", "residual")

# SI units of each response, for tables and axes
RESPONSE_UNITS = {
    "relative_displacement": "m",
    "pseudo_velocity": "m/s",
    "absolute_acceleration": "m/s**2",
}


@dataclass(frozen=True)
class ShockSpectrum:
    """Maxima of an oscillator's response to one pulse or record, per natural frequency.

    Attributes
    ----------
    natural_frequencies : numpy.ndarray
        ``omega_n`` in rad/s, increasing, shape ``(n,)``.
    damping_ratio : float
        ``zeta`` shared by every oscillator of the spectrum.
    excitation : str
        ``"force"`` (a force on a mass, per unit mass) or ``"base acceleration"``.
    values : dict
        ``values[kind][response]`` is an array of shape ``(n,)`` in SI units, for kind in
        :data:`SPECTRUM_KINDS` and response in :data:`RESPONSES`.
    method : str
        How the maxima were found, in one sentence (for the sheet's working).
    duration : float
        Length of the pulse or record in seconds (where primary ends and residual begins).
    """

    natural_frequencies: np.ndarray
    damping_ratio: float
    excitation: str
    values: dict
    method: str
    duration: float
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self):
        w = np.asarray(self.natural_frequencies, dtype=float)
        if w.ndim != 1 or w.size == 0 or not np.all(np.isfinite(w)) or np.any(w <= 0):
            raise ModelError(
                "natural frequencies must be a non-empty list of positive finite numbers (rad/s)",
                where="ShockSpectrum",
                do="give omega_n > 0 in rad/s",
            )
        for kind in SPECTRUM_KINDS:
            for response in RESPONSES:
                arr = np.asarray(self.values[kind][response], dtype=float)
                if arr.shape != w.shape:
                    raise ModelError(
                        f"values[{kind!r}][{response!r}] has shape {arr.shape}, expected {w.shape}",
                        where="ShockSpectrum",
                    )

    def at(self, natural_frequency: float, kind: str = "maximax", response: str = "absolute_acceleration") -> float:
        """The spectrum value at one natural frequency (rad/s), interpolated on log axes."""
        w = np.asarray(self.natural_frequencies, dtype=float)
        y = np.asarray(self.values[kind][response], dtype=float)
        if not w[0] <= natural_frequency <= w[-1]:
            raise ModelError(
                f"omega_n = {natural_frequency:g} rad/s lies outside the spectrum's range "
                f"{w[0]:g} to {w[-1]:g} rad/s",
                where="ShockSpectrum.at",
                do="compute the spectrum over a range that includes the equipment's natural frequency",
            )
        positive = y > 0
        if np.all(positive):
            return float(np.exp(np.interp(np.log(natural_frequency), np.log(w), np.log(y))))
        return float(np.interp(natural_frequency, w, y))


def log_frequencies(lowest: float, highest: float, count: int = 100) -> np.ndarray:
    """``count`` natural frequencies (rad/s) spaced evenly on a log axis, both ends included."""
    if not (np.isfinite(lowest) and np.isfinite(highest)) or lowest <= 0 or highest <= lowest:
        raise ModelError(
            f"the frequency range {lowest!r} to {highest!r} rad/s is not usable",
            where="log_frequencies",
            do="give 0 < lowest < highest",
        )
    if not 2 <= int(count) <= 10_000:
        raise ModelError(f"count = {count!r} natural frequencies", where="log_frequencies", do="ask for 2 to 10,000")
    return np.geomspace(lowest, highest, int(count))
