"""Acceptance criteria of the trade: their limits and the bases they are judged on, one constant each.

The templates, :meth:`calckit.Sheet.separation_check`'s callers and the what-if explorer
take these constants from here, so that a check reads the same wherever it is made.

Examples
--------
>>> round(speed_separation(1.15, 1.0) * 100, 9)
15.0
>>> SEPARATION_BAND, LEAST_ISOLATION_RATIO
(0.2, 3.0)
"""

from __future__ import annotations

__all__ = [
    "ISOLATION_RATIO_BASIS",
    "LEAST_ISOLATION_RATIO",
    "SEPARATION_BAND",
    "SEPARATION_BASIS",
    "speed_separation",
]

#: Half-width of the band around a natural frequency to keep an operating frequency out of,
#: as a fraction (common practice, no source).
SEPARATION_BAND = 0.20

#: Basis of the speed-separation check (:meth:`calckit.Sheet.separation_check` gives it in these words).
SEPARATION_BASIS = (
    "common practice, no source: keep the operating frequency outside about "
    f"+/-{SEPARATION_BAND * 100:.0f} % of a natural frequency"
)

#: Least frequency ratio ``r = Omega / omega_n`` for isolation (common practice, no source).
LEAST_ISOLATION_RATIO = 3.0

#: Basis of the frequency-ratio check for isolation.
ISOLATION_RATIO_BASIS = "common practice, no source: isolation needs r > sqrt(2), usually r >= 3"


def speed_separation(operating: float, natural: float) -> float:
    """Separation of an operating frequency from a natural frequency, ``|f_op / f_n - 1|``, as a fraction.

    Both frequencies in the same unit; the check compares the result with :data:`SEPARATION_BAND`.

    Examples
    --------
    >>> speed_separation(80.0, 100.0)
    0.19999999999999996
    """
    return abs(operating / natural - 1)
