"""Closed forms for a single-degree-of-freedom oscillator under harmonic load.

Everything here is written in the frequency ratio ``r = omega / omega_n`` and the
damping ratio ``zeta = c / (2 sqrt(k m))`` of ``m x'' + c x' + k x = f(t)``.

Two paths, chosen by the type of the inputs:

* **exact**: if any argument is a sympy object, every argument goes through
  :func:`calckit.core.exact.exact` (``0.1`` becomes ``1/10``) and the result is a sympy
  expression. Symbols are allowed; a result that would be infinite (undamped
  resonance) raises :class:`~calckit.errors.ModelError`, because a calculation sheet
  must not carry an infinite amplitude.
* **numeric**: ints, floats and numpy arrays are broadcast together and the result
  is a numpy float (all inputs scalar) or array. A single value at undamped
  resonance (``r = 1, zeta = 0``) raises :class:`~calckit.errors.ModelError` saying
  "resonance", as the exact path does; in an array it gives ``inf``, so that
  frequency-response curves can be drawn straight through ``r = 1``.

Bad values (negative, NaN, infinite, not a number) raise
:class:`~calckit.errors.ModelError` naming the function and the argument.

References
----------
S. S. Rao, *Mechanical Vibrations*, 5th ed., Pearson, 2011, sec. 3.4-3.7.
W. T. Thomson and M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed.,
Prentice Hall, 1998, ch. 3.
"""

from __future__ import annotations

import numpy as np
import sympy as sp

from calckit.physics.harmonic_values import (
    _RESONANCE,
    _RESONANCE_DO,
    _args,
    _atan2_lag,
    _finite,
    _out,
    _refuse_scalar_resonance,
)
from calckit.physics.resonance_peak import (  # the peak's closed forms, re-exported here
    HalfPowerPoints,
    half_power_bandwidth,
    half_power_points,
    log_decrement,
    peak_frequency_ratio,
    peak_magnification,
    quality_factor,
    zeta_from_log_decrement,
)

__all__ = [
    "HalfPowerPoints",
    "forced_amplitude",
    "frequency_ratio",
    "half_power_bandwidth",
    "half_power_points",
    "isolation_efficiency",
    "log_decrement",
    "magnification",
    "peak_frequency_ratio",
    "peak_magnification",
    "phase_angle",
    "quality_factor",
    "rotating_unbalance_magnification",
    "transmissibility",
    "transmissibility_phase",
    "zeta_from_log_decrement",
]


def frequency_ratio(omega, omega_n):
    r"""Frequency ratio of a forcing frequency to the natural frequency.

    .. math:: r = \frac{\omega}{\omega_n}

    Parameters
    ----------
    omega : number, array or sympy expression
        Forcing frequency, rad/s (>= 0).
    omega_n : number, array or sympy expression
        Undamped natural frequency, rad/s (> 0).

    Examples
    --------
    >>> float(frequency_ratio(150.0, 100.0))
    1.5
    """
    is_exact, (w, wn) = _args("frequency_ratio", ("omega_n",), omega=omega, omega_n=omega_n)
    return w / wn if is_exact else _out(w / wn)


def forced_amplitude(F0, m, c, k, omega):
    r"""Steady-state amplitude of a mass on a spring and damper under a harmonic force ``F0 cos(omega t)``.

    .. math:: X = \frac{F_0}{\sqrt{(k - m\omega^2)^2 + (c\,\omega)^2}}

    Plain numbers and numpy arrays only (broadcast together), SI units; the same as
    ``F0 / k * magnification(r, zeta)``, written in the physical parameters so that a run-up's
    envelope and an isolator's amplitude need no ratios. Undamped resonance (``c = 0``,
    ``k = m omega^2``) raises :class:`ModelError` saying so for single values, and gives
    ``inf`` in an array (a run-up's envelope through resonance).

    References
    ----------
    S. S. Rao, *Mechanical Vibrations*, 5th ed., eq. (3.25), from memory.

    Examples
    --------
    >>> float(forced_amplitude(100.0, 1.0, 0.0, 400.0, 10.0))
    0.3333333333333333
    """
    F0, m, c, k, w = (np.asarray(v, dtype=float) for v in (F0, m, c, k, omega))
    with np.errstate(divide="ignore"):
        return _refuse_scalar_resonance(F0 / np.hypot(k - m * w * w, c * w), "forced_amplitude")


def magnification(r, zeta):
    r"""Dynamic magnification factor under a harmonic force ``F0 cos(omega t)``.

    .. math:: M = \frac{X k}{F_0} = \frac{1}{\sqrt{(1 - r^2)^2 + (2 \zeta r)^2}}

    Parameters
    ----------
    r : number, array or sympy expression
        Frequency ratio ``omega / omega_n`` (>= 0).
    zeta : number, array or sympy expression
        Damping ratio (>= 0).

    Returns
    -------
    sympy.Expr or numpy float/array
        Steady-state amplitude over the deflection under the force amplitude applied statically, ``F0 / k``
        (not the static deflection under the weight, ``m g / k``). At ``r = 1, zeta = 0``
        (undamped resonance) :class:`ModelError` for a single value; ``inf`` in an array of values.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., eq. (3.30), from memory.

    Examples
    --------
    >>> float(magnification(0.5, 0.0))
    1.3333333333333333
    >>> magnification(sp.Integer(1), sp.Rational(1, 10))
    5
    """
    is_exact, (r, z) = _args("magnification", r=r, zeta=zeta)
    if is_exact:
        m = 1 / sp.sqrt((1 - r**2) ** 2 + (2 * z * r) ** 2)
        return _finite(m, "magnification", _RESONANCE, _RESONANCE_DO)
    with np.errstate(divide="ignore"):
        return _refuse_scalar_resonance(
            1.0 / np.sqrt((1.0 - r * r) ** 2 + (2.0 * z * r) ** 2), "magnification"
        )


def phase_angle(r, zeta):
    r"""Phase lag of the displacement behind a harmonic force, in ``[0, pi]``.

    .. math:: \phi = \operatorname{atan2}(2 \zeta r,\; 1 - r^2)

    The response is ``X cos(omega t - phi)`` for a force ``F0 cos(omega t)``. With
    ``zeta = 0`` the lag is 0 below resonance and ``pi`` above; at ``r = 1`` it is
    ``pi/2`` for every damping, including the undamped limit.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., eq. (3.31), from memory.

    Examples
    --------
    >>> phase_angle(sp.Integer(1), sp.Rational(1, 20))
    pi/2
    >>> float(phase_angle(2.0, 0.0))
    3.141592653589793
    """
    is_exact, (r, z) = _args("phase_angle", r=r, zeta=zeta)
    return _atan2_lag(2 * z * r, 1 - r**2, is_exact)


def transmissibility(r, zeta):
    r"""Transmissibility: ``|X / Y|`` under base motion, ``|F_T / F_0|`` under a force.

    .. math:: T = \sqrt{\frac{1 + (2 \zeta r)^2}{(1 - r^2)^2 + (2 \zeta r)^2}}

    ``T = 1`` at ``r = sqrt(2)`` for every damping; isolation (``T < 1``) needs
    ``r > sqrt(2)``, and there more damping raises ``T``.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.6 (base motion) and sec. 9.10
    (vibration isolation), from memory.

    Examples
    --------
    >>> transmissibility(sp.sqrt(2), sp.Rational(3, 10))
    1
    >>> round(float(transmissibility(3.0, 0.0)), 6)
    0.125
    """
    is_exact, (r, z) = _args("transmissibility", r=r, zeta=zeta)
    if is_exact:
        tr = sp.sqrt(1 + (2 * z * r) ** 2) / sp.sqrt((1 - r**2) ** 2 + (2 * z * r) ** 2)
        return _finite(tr, "transmissibility", _RESONANCE, _RESONANCE_DO)
    q = (2.0 * z * r) ** 2
    with np.errstate(divide="ignore"):
        return _refuse_scalar_resonance(np.sqrt((1.0 + q) / ((1.0 - r * r) ** 2 + q)), "transmissibility")


def transmissibility_phase(r, zeta):
    r"""Phase lag of the transmitted force (or absolute motion) behind the excitation.

    .. math:: \psi = \operatorname{atan2}\left(2 \zeta r^3,\; 1 - r^2 + (2 \zeta r)^2\right)

    From ``X / Y = (1 + i 2 zeta r) / (1 - r^2 + i 2 zeta r)``; in ``[0, pi]``, with
    ``pi/2`` at undamped resonance (its limit).

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.6, from memory.

    Examples
    --------
    >>> transmissibility_phase(sp.Integer(0), sp.Rational(1, 5))
    0
    >>> float(transmissibility_phase(3.0, 0.0))
    3.141592653589793
    """
    is_exact, (r, z) = _args("transmissibility_phase", r=r, zeta=zeta)
    return _atan2_lag(2 * z * r**3, 1 - r**2 + (2 * z * r) ** 2, is_exact)


def isolation_efficiency(r, zeta):
    r"""Fraction of the excitation kept out of the support: ``1 - T``.

    .. math:: \eta = 1 - T(r, \zeta)

    A fraction, not a percentage; negative means the mount amplifies.

    Examples
    --------
    >>> isolation_efficiency(sp.Integer(3), sp.Integer(0))
    7/8
    """
    is_exact, (r, z) = _args("isolation_efficiency", r=r, zeta=zeta)
    if is_exact:
        return 1 - transmissibility(r, z)
    with np.errstate(invalid="ignore"):  # 1 - inf at undamped resonance is -inf, no NaN
        return _out(1.0 - transmissibility(r, z))


def rotating_unbalance_magnification(r, zeta):
    r"""Amplitude ratio under a rotating unbalance ``m_u e omega^2``.

    .. math:: \frac{m X}{m_u e} = r^2 M(r, \zeta) = \frac{r^2}{\sqrt{(1 - r^2)^2 + (2 \zeta r)^2}}

    ``m`` is the total vibrating mass, ``m_u e`` the unbalance. Tends to 1 for large r.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.7, from memory.

    Examples
    --------
    >>> rotating_unbalance_magnification(sp.Integer(2), sp.Integer(0))
    4/3
    """
    is_exact, (r, z) = _args("rotating_unbalance_magnification", r=r, zeta=zeta)
    if is_exact:
        return r**2 * magnification(r, z)
    with np.errstate(invalid="ignore"):
        return _out(r * r * magnification(r, z))


# --------------------------------------------------------------------------- peak and damping
