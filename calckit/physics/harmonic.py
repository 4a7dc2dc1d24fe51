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

from dataclasses import dataclass

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.errors import ModelError

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

_MEANING = {
    "r": "frequency ratio",
    "zeta": "damping ratio",
    "loss_factor": "loss factor",
    "delta": "logarithmic decrement",
    "omega": "forcing frequency",
    "omega_n": "natural frequency",
    # used by calckit.physics.excitation
    "m_u": "unbalanced mass",
    "e": "eccentricity",
    "G": "balance quality grade",
    "rotor_mass": "rotor mass",
    "k": "stiffness",
    "c": "damping coefficient",
    "X": "amplitude",
    "U": "residual unbalance",
}

Value = sp.Expr | np.ndarray | np.floating


# --------------------------------------------------------------------------- input handling
# Shared with calckit.physics.excitation (same layer, same rules).


def _is_exact(*values) -> bool:
    """True when any value is a sympy object: then the exact path is taken."""
    return any(isinstance(v, sp.Basic) for v in values)


def _exact_arg(value, name: str, func: str, *, positive: bool = False) -> sp.Expr:
    where = f"{func}({name})"
    meaning = _MEANING.get(name, name)
    v = exact(value, where=where)
    if v.is_real is False:
        raise ModelError(f"the {meaning} {v} is not a real number", where=where, do=f"Give a real {name}")
    if v.is_negative:
        raise ModelError(f"the {meaning} is negative ({v})", where=where, do=f"Give {name} >= 0")
    if positive and v.is_zero:
        raise ModelError(f"the {meaning} is zero", where=where, do=f"Give {name} > 0")
    return v


def _numeric_arg(value, name: str, func: str, *, positive: bool = False) -> np.ndarray:
    where = f"{func}({name})"
    meaning = _MEANING.get(name, name)
    if isinstance(value, bool | np.bool_):
        raise ModelError(f"got a truth value {value!r}", where=where, do="Give a number")
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ModelError(
            f"expected a number or an array of numbers, got {type(value).__name__}",
            where=where,
            do="Give a float, an int or a numpy array, or a sympy expression for an exact result",
        ) from None
    bad = ~np.isfinite(a)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        at = f" at index {i}" if a.ndim else ""
        raise ModelError(
            f"the {meaning} is not a finite number ({float(a.flat[i])!r}{at})",
            where=where,
            do="Give finite numbers",
        )
    neg = a < 0
    if neg.any():
        i = int(np.flatnonzero(neg)[0])
        at = f" at index {i}" if a.ndim else ""
        raise ModelError(
            f"the {meaning} is negative ({float(a.flat[i])!r}{at})", where=where, do=f"Give {name} >= 0"
        )
    if positive:
        zero = a == 0
        if zero.any():
            i = int(np.flatnonzero(zero)[0])
            at = f" at index {i}" if a.ndim else ""
            raise ModelError(f"the {meaning} is zero{at}", where=where, do=f"Give {name} > 0")
    return a + 0.0  # turns -0.0 into +0.0, so atan2 stays in [0, pi]


def _args(func: str, positive: tuple[str, ...] = (), **values):
    """Validate *values* and return (exact?, converted values in order)."""
    if _is_exact(*values.values()):
        return True, [_exact_arg(v, k, func, positive=k in positive) for k, v in values.items()]
    return False, [_numeric_arg(v, k, func, positive=k in positive) for k, v in values.items()]


def _out(a):
    """A numpy float for 0-d results, the array otherwise."""
    a = np.asarray(a, dtype=float)
    return a[()] if a.ndim == 0 else a


def _finite(expr: sp.Expr, func: str, what: str, do: str) -> sp.Expr:
    if expr.has(sp.zoo, sp.oo, -sp.oo, sp.nan):
        raise ModelError(what, where=func, do=do)
    return expr


_RESONANCE = (
    "undamped at exact resonance (r = 1, zeta = 0) the steady amplitude grows without bound: "
    "there is no steady-state amplitude"
)
_RESONANCE_DO = (
    "Add damping (zeta > 0) or move the speed off the natural frequency; "
    "Oscillator.response gives the growing resonant response"
)


def _refuse_scalar_resonance(result, func: str):
    """A single value at undamped resonance is refused in words; an array keeps its ``inf`` (curves)."""
    out = _out(result)
    if np.ndim(out) == 0 and np.isinf(out):
        raise ModelError(_RESONANCE, where=func, do=_RESONANCE_DO)
    return out


# --------------------------------------------------------------------------- closed forms


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
        return _refuse_scalar_resonance(1.0 / np.sqrt((1.0 - r * r) ** 2 + (2.0 * z * r) ** 2), "magnification")


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


def _atan2_lag(num, den, is_exact: bool):
    """atan2 with the 0/0 point (undamped resonance) given its limit pi/2."""
    if is_exact:
        if num == 0 and den == 0:
            return sp.pi / 2
        return sp.atan2(num, den)
    both_zero = (num == 0) & (den == 0)
    return _out(np.where(both_zero, np.pi / 2, np.arctan2(num, den)))


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
