"""The arguments of a record's response and spectrum, checked: damping, natural frequencies, mass.

:func:`calckit.physics.records.history_response`, :func:`calckit.physics.shock.record_spectrum`
and :func:`calckit.physics.pulse_spectrum.pulse_spectrum` take their damping ratio, natural
frequencies (against the record's time step) and the mass a force acts on through these
functions, so that each is refused in one set of words. (``history`` is a
:class:`calckit.physics.records.TimeHistory`; not imported here, so the two modules form no circle.)
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from calckit.core.units import fmt_number, quantity
from calckit.errors import InputsError, ModelError

__all__ = ["STEPS_PER_PERIOD", "check_damping", "check_frequencies", "load_per_mass", "mass_in_kg"]

#: Shortest natural period asked for, in time steps (common practice, no source: ten
#: samples a period keep the peak read from the samples within about 5 % before refining).
STEPS_PER_PERIOD = 10


def check_damping(zeta, where: str) -> float:
    """The damping ratio as a float in ``[0, 1)``, or a ModelError."""
    try:
        z = float(zeta)
    except (TypeError, ValueError):
        raise ModelError(
            f"cannot read the damping ratio {zeta!r}", where=where, do="Give a number, e.g. 0.05"
        ) from None
    if not math.isfinite(z) or not 0 <= z < 1:
        raise ModelError(
            f"a damping ratio of {zeta!r} is outside 0 <= zeta < 1",
            where=where,
            do="Give the damping ratio of an underdamped oscillator (spectra are usually for 0.05, that is Q = 10)",
        )
    return z


def check_frequencies(omega, history: Any, where: str) -> np.ndarray:
    """Natural frequencies as a positive increasing array, the record's step short enough for the highest."""
    w = np.atleast_1d(np.asarray(omega, dtype=float))
    if w.ndim != 1 or w.size == 0 or not np.all(np.isfinite(w)) or np.any(w <= 0):
        raise ModelError(
            "natural frequencies must be positive finite numbers (rad/s)",
            where=where,
            do="Give omega_n > 0 in rad/s (calckit.physics.spectrum.log_frequencies makes a range)",
        )
    shortest = 2 * math.pi / float(w.max())
    if history.step > shortest / STEPS_PER_PERIOD * (1 + 1e-9):
        fastest = 2 * math.pi / (STEPS_PER_PERIOD * history.step)
        raise InputsError(
            f"the record's time step {fmt_number(history.step * 1000)} ms is longer than a tenth of the shortest "
            f"natural period asked for ({fmt_number(shortest * 1000)} ms, at {fmt_number(w.max() / (2 * math.pi))} Hz)",
            where=f"{history.source}: {where}",
            do=f"Give a record sampled at {fmt_number(shortest / STEPS_PER_PERIOD * 1000)} ms or finer, or ask for "
            f"natural frequencies up to {fmt_number(fastest / (2 * math.pi))} Hz",
        )
    return w


def mass_in_kg(mass, what: str, where: str) -> float:
    """The mass a force acts on, in kg (a number is taken in kg; a quantity is converted), refused
    when missing or not positive; *what* names the load ("a force record") in the message."""
    if mass is None:
        raise ModelError(
            f"{what} needs the mass it acts on",
            where=where,
            do="Give mass= in kg (the spectrum of a force is taken per unit mass, p = f/m)",
        )
    m = (
        float(mass)
        if isinstance(mass, int | float) and not isinstance(mass, bool)
        else float(quantity(mass, "mass", expect="mass").to("kg").magnitude)
    )
    if not math.isfinite(m) or m <= 0:
        raise ModelError(f"the mass {mass!r} is not positive", where=where, do="Give the mass in kg")
    return m


def load_per_mass(history: Any, mass, where: str) -> np.ndarray:
    """``p`` of the interval rule: ``f/m`` for a force, ``-a_g`` for a base acceleration (SI)."""
    if history.kind == "force":
        return np.asarray(history.values, dtype=float) / mass_in_kg(mass, "a force record", where)
    return -np.asarray(history.values, dtype=float)
