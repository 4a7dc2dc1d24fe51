"""The resonant peak and the damping it reveals: peak ratio and height, half-power points, Q, log decrement.

Closed forms of the damped single-degree-of-freedom oscillator in the damping ratio
``zeta``, on the two paths of :mod:`calckit.physics.harmonic` (exact for sympy arguments,
numeric for numbers and arrays).

References
----------
S. S. Rao, *Mechanical Vibrations*, 5th ed., Pearson, 2011, sec. 2.6 (logarithmic decrement) and
sec. 3.4 (the peak and the half-power points), from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from calckit.errors import ModelError
from calckit.physics.harmonic_values import Value, _args, _finite, _out, _refuse_scalar_resonance

__all__ = [
    "HalfPowerPoints",
    "half_power_bandwidth",
    "half_power_points",
    "log_decrement",
    "peak_frequency_ratio",
    "peak_magnification",
    "quality_factor",
    "zeta_from_log_decrement",
]

_NO_PEAK_DO = "The magnification falls steadily from 1 at r = 0 when zeta >= 1/sqrt(2) (about 0.7071)"


def _no_peak(z, is_exact: bool, func: str):
    if is_exact:
        no_peak = sp.Ge(2 * z**2, 1) == sp.true
    else:
        no_peak = bool(np.any(2.0 * z * z >= 1.0))
    if no_peak:
        shown = z if is_exact else (z if np.ndim(z) == 0 else z[2.0 * z * z >= 1.0][0])
        raise ModelError(
            f"no resonant peak: zeta = {shown} is at least 1/sqrt(2)",
            where=f"{func}(zeta)",
            do=_NO_PEAK_DO,
        )


def peak_frequency_ratio(zeta):
    r"""Frequency ratio at which the magnification is largest.

    .. math:: r_{peak} = \sqrt{1 - 2 \zeta^2}, \qquad 0 \le \zeta < 1/\sqrt{2}

    Raises :class:`ModelError` for ``zeta >= 1/sqrt(2)``: no resonant peak.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.4, from memory.

    Examples
    --------
    >>> peak_frequency_ratio(sp.Rational(1, 2))
    sqrt(2)/2
    """
    is_exact, (z,) = _args("peak_frequency_ratio", zeta=zeta)
    _no_peak(z, is_exact, "peak_frequency_ratio")
    return sp.sqrt(1 - 2 * z**2) if is_exact else _out(np.sqrt(1.0 - 2.0 * z * z))


def peak_magnification(zeta):
    r"""Largest magnification, reached at :func:`peak_frequency_ratio`.

    .. math:: M_{max} = \frac{1}{2 \zeta \sqrt{1 - \zeta^2}}, \qquad 0 \le \zeta < 1/\sqrt{2}

    ``zeta = 0`` (undamped: the peak is a resonance without bound) raises for a single
    value, exact or not; an array gives ``inf`` there.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.4, from memory.

    Examples
    --------
    >>> peak_magnification(sp.Rational(3, 5))
    25/24
    """
    is_exact, (z,) = _args("peak_magnification", zeta=zeta)
    _no_peak(z, is_exact, "peak_magnification")
    if is_exact:
        m = 1 / (2 * z * sp.sqrt(1 - z**2))
        return _finite(m, "peak_magnification", "zeta = 0: the resonant peak is unbounded", "Give zeta > 0")
    with np.errstate(divide="ignore"):
        return _refuse_scalar_resonance(1.0 / (2.0 * z * np.sqrt(1.0 - z * z)), "peak_magnification")


def quality_factor(zeta):
    r"""Quality factor: the magnification at ``r = 1``.

    .. math:: Q = \frac{1}{2 \zeta} \approx \frac{1}{\Delta r}

    where the approximation (half-power bandwidth) holds for small damping.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.4, from memory.

    Examples
    --------
    >>> quality_factor(sp.Rational(1, 40))
    20
    """
    is_exact, (z,) = _args("quality_factor", ("zeta",), zeta=zeta)
    return 1 / (2 * z) if is_exact else _out(1.0 / (2.0 * z))


@dataclass(frozen=True)
class HalfPowerPoints:
    """Frequency ratios where the magnification is its peak over ``sqrt(2)``.

    Attributes
    ----------
    zeta : damping ratio the points belong to.
    r_lower, r_upper : the two half-power frequency ratios.
    bandwidth : ``r_upper - r_lower``, exact for this definition.
    small_damping_bandwidth : ``2 zeta``, the usual small-damping approximation.
    """

    zeta: Value
    r_lower: Value
    r_upper: Value
    bandwidth: Value
    small_damping_bandwidth: Value


_HALF_POWER_LIMIT = sp.sqrt(2 - sp.sqrt(2)) / 2  # = sin(pi/8), about 0.3827


def half_power_points(zeta) -> HalfPowerPoints:
    r"""Half-power points of the magnification curve, exactly.

    Setting :math:`M(r)^2 = M_{max}^2 / 2` with :math:`M_{max}` from
    :func:`peak_magnification` gives a quadratic in :math:`r^2`:

    .. math:: r_{1,2}^2 = 1 - 2 \zeta^2 \mp 2 \zeta \sqrt{1 - \zeta^2}

    The lower point exists only for ``zeta <= sin(pi/8)`` (about 0.3827); above that
    the curve at ``r = 0`` is already below ``M_max / sqrt(2)`` and
    :class:`ModelError` is raised. For small damping ``r_2 - r_1 = 2 zeta + O(zeta^3)``.

    Some books (e.g. Rao, 5th ed., sec. 3.4, from memory) refer the half-power level to
    ``M(1) = 1/(2 zeta)`` instead of the true peak, which gives
    ``r^2 = 1 - 2 zeta^2 -/+ 2 zeta sqrt(1 + zeta^2)``; the two agree to ``O(zeta^3)``.

    Examples
    --------
    >>> hp = half_power_points(0.05)
    >>> round(float(hp.bandwidth), 6), float(hp.small_damping_bandwidth)
    (0.100252, 0.1)
    """
    func = "half_power_points"
    is_exact, (z,) = _args(func, zeta=zeta)
    if is_exact:
        if sp.Gt(z, _HALF_POWER_LIMIT) == sp.true:
            raise ModelError(
                f"no lower half-power point: zeta = {z} exceeds sin(pi/8) (about 0.3827)",
                where=f"{func}(zeta)",
                do="Use the half-power method only for light damping; measure zeta another way",
            )
        s = 2 * z * sp.sqrt(1 - z**2)
        r1, r2 = sp.sqrt(1 - 2 * z**2 - s), sp.sqrt(1 - 2 * z**2 + s)
        return HalfPowerPoints(z, r1, r2, r2 - r1, 2 * z)
    too_high = z > float(_HALF_POWER_LIMIT)
    if np.any(too_high):
        shown = z if np.ndim(z) == 0 else z[too_high][0]
        raise ModelError(
            f"no lower half-power point: zeta = {shown} exceeds sin(pi/8) (about 0.3827)",
            where=f"{func}(zeta)",
            do="Use the half-power method only for light damping; measure zeta another way",
        )
    s = 2.0 * z * np.sqrt(1.0 - z * z)
    base = 1.0 - 2.0 * z * z
    r1 = np.sqrt(np.maximum(base - s, 0.0))  # rounding at the limit must not give NaN
    r2 = np.sqrt(base + s)
    return HalfPowerPoints(_out(z), _out(r1), _out(r2), _out(r2 - r1), _out(2.0 * z))


def half_power_bandwidth(zeta):
    r"""Exact half-power bandwidth ``r_2 - r_1`` (see :func:`half_power_points`).

    .. math:: \Delta r = \sqrt{1 - 2\zeta^2 + 2\zeta\sqrt{1-\zeta^2}}
                       - \sqrt{1 - 2\zeta^2 - 2\zeta\sqrt{1-\zeta^2}} \approx 2 \zeta

    This returns the exact width; ``half_power_points(zeta).small_damping_bandwidth``
    is the ``2 zeta`` approximation.

    Examples
    --------
    >>> half_power_bandwidth(sp.Integer(0))
    0
    """
    hp = half_power_points(zeta)
    return hp.bandwidth


def log_decrement(zeta):
    r"""Logarithmic decrement of free vibration, ``ln(x_i / x_{i+1})``.

    .. math:: \delta = \frac{2 \pi \zeta}{\sqrt{1 - \zeta^2}}, \qquad 0 \le \zeta < 1

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 2.6, from memory.

    Examples
    --------
    >>> log_decrement(sp.Rational(3, 5))
    3*pi/2
    """
    func = "log_decrement"
    is_exact, (z,) = _args(func, zeta=zeta)
    if (sp.Ge(z, 1) == sp.true) if is_exact else bool(np.any(z >= 1.0)):
        shown = z if is_exact or np.ndim(z) == 0 else z[z >= 1.0][0]
        raise ModelError(
            f"zeta = {shown} is not below 1: critically damped and overdamped motion does not oscillate",
            where=f"{func}(zeta)",
            do="Give 0 <= zeta < 1",
        )
    if is_exact:
        return 2 * sp.pi * z / sp.sqrt(1 - z**2)
    return _out(2.0 * np.pi * z / np.sqrt(1.0 - z * z))


def zeta_from_log_decrement(delta):
    r"""Damping ratio from a measured logarithmic decrement (inverse of :func:`log_decrement`).

    .. math:: \zeta = \frac{\delta}{\sqrt{4 \pi^2 + \delta^2}}

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 2.6, from memory.

    Examples
    --------
    >>> zeta_from_log_decrement(3 * sp.pi / 2)
    3/5
    """
    is_exact, (d,) = _args("zeta_from_log_decrement", delta=delta)
    if is_exact:
        return sp.simplify(d / sp.sqrt(4 * sp.pi**2 + d**2))
    return _out(d / np.sqrt(4.0 * np.pi**2 + d * d))
