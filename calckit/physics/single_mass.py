"""One mass under a harmonic force: the results a single-mass sheet writes out, step by step.

The chain of the ``single_mass_harmonic`` template: the damping coefficient
``c = 2 zeta sqrt(k m)``, the natural frequency ``omega_n = sqrt(k / m)`` and in Hz, the
frequency ratio ``r = omega / omega_n``, the magnification
``M = 1 / sqrt((1 - r^2)^2 + (2 zeta r)^2)``, the deflection under the force amplitude
applied statically ``F_0 / k``, the steady amplitude ``X = F_0 / sqrt((k - m omega^2)^2 +
(c omega)^2)`` and the phase lag ``atan2(c omega, k - m omega^2)``. With ``carry`` each step
takes the results before it *as shown* (:func:`calckit.core.rounding.as_shown`): the
forcing frequency in rad/s (the sheet's conversion step from rpm or Hz), ``c``,
``omega_n`` and ``r``, so that the what-if explorer gives the numbers the built sheet prints.

References
----------
S. S. Rao, *Mechanical Vibrations*, 5th ed., sec. 2.6 (the damping ratio) and sec. 3.4 (a damped
system under a harmonic force), from memory.
"""

from __future__ import annotations

import math

from calckit.core.rounding import as_shown

__all__ = ["single_mass_results"]


def single_mass_results(
    mass: float,
    stiffness: float,
    damping_ratio: float,
    force_amplitude: float,
    forcing_frequency: float,
    *,
    carry: int | None = 4,
) -> dict[str, float]:
    """The single-mass sheet's results, SI (rad/s, N s/m, m, rad), by the template's names.

    ``forcing_frequency`` is in rad/s. ``carry`` significant figures are carried from
    one step to the next (``None``: nothing rounded).

    Examples
    --------
    >>> res = single_mass_results(1850.0, 720e3, 0.05, 900.0, 1480 * 2 * math.pi / 60)
    >>> res["natural_frequency"], res["frequency_ratio"]
    (19.72..., 7.856...)

    (``omega = 154.99 rad/s`` is carried as 155.0, ``omega_n`` as 19.73: ``r = 155 / 19.73``.)
    """

    def shown(x: float) -> float:
        return as_shown(x, carry) if carry else x

    m, k, zeta, F0 = float(mass), float(stiffness), float(damping_ratio), float(force_amplitude)
    w = shown(float(forcing_frequency))
    c = 2 * zeta * math.sqrt(k * m)
    wn = math.sqrt(k / m)
    r = w / shown(wn)
    r_c = shown(r)
    c_c = shown(c)
    dynamic = k - m * w**2
    return {
        "damping_coefficient": c,
        "natural_frequency": wn,
        "natural_frequency_hz": shown(wn) / (2 * math.pi),
        "frequency_ratio": r,
        "magnification": 1 / math.sqrt((1 - r_c**2) ** 2 + (2 * zeta * r_c) ** 2),
        "static_deflection": F0 / k,
        "amplitude": F0 / math.sqrt(dynamic**2 + (c_c * w) ** 2),
        "phase_lag": math.atan2(c_c * w, dynamic),
    }
