"""Excitations an engineer actually has: rotating unbalance and base motion.

Same two paths as :mod:`calckit.physics.harmonic`: any sympy argument gives an exact sympy
result (floats read as the decimals they show), plain numbers and numpy arrays give
numpy results, broadcast together. Bad values raise :class:`~calckit.errors.ModelError`
naming the function and the argument.

Units are SI throughout (kg, m, s, rad/s, N) except the balance quality grade ``G``,
which is quoted in mm/s as the standard quotes it.

References
----------
ISO 21940-11:2016, *Mechanical vibration - Rotor balancing - Part 11: Procedures and
tolerances for rotors with rigid behaviour* (formerly ISO 1940-1:2003), Table 1 and
the relation ``e_per * Omega = G``, from memory.
S. S. Rao, *Mechanical Vibrations*, 5th ed., sec. 3.6 (base motion) and 3.7 (rotating
unbalance), from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from calckit.engine.forcing import split_forcing
from calckit.errors import InputsError
from calckit.physics import harmonic as _h
from calckit.physics.harmonic_values import _args, _out

__all__ = [
    "BALANCE_QUALITY_GRADES",
    "BaseExcitation",
    "base_excitation",
    "eccentricity_from_grade",
    "require_one_harmonic",
    "permissible_unbalance",
    "permissible_unbalance_gmm",
    "residual_unbalance",
    "transmitted_force_amplitude",
    "unbalance_force",
    "unbalance_force_amplitude",
]

#: Balance quality grades G in mm/s, each 2.5 times the one before
#: (ISO 21940-11:2016, Table 1, from memory).
BALANCE_QUALITY_GRADES = (0.4, 1.0, 2.5, 6.3, 16.0, 40.0, 100.0, 250.0, 630.0, 1600.0, 4000.0)


def unbalance_force_amplitude(m_u, e, omega):
    r"""Amplitude of the rotating force from an unbalanced mass.

    .. math:: F_0 = m_u\, e\, \omega^2

    Parameters
    ----------
    m_u : unbalanced mass, kg.
    e : its eccentricity (radius from the shaft axis), m.
    omega : shaft speed, rad/s.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.7, from memory.

    Examples
    --------
    >>> float(unbalance_force_amplitude(0.02, 0.05, 100.0))
    10.0
    """
    is_exact, (m, e, w) = _args("unbalance_force_amplitude", m_u=m_u, e=e, omega=omega)
    return m * e * w**2 if is_exact else _out(m * e * w * w)


def eccentricity_from_grade(G, omega):
    r"""Permissible specific unbalance (mass eccentricity) for a balance quality grade.

    .. math:: e_{per} = \frac{G}{\Omega}

    ``G`` is in mm/s and ``Omega`` in rad/s, so ``G / Omega`` is in mm; the result is
    returned in **metres** (``G / 1000 / Omega``). Multiply by ``1e6`` for
    micrometres, which equal g mm per kg of rotor.

    References
    ----------
    ISO 21940-11:2016 (formerly ISO 1940-1:2003), definition of the balance quality
    grade ``G = e_per * Omega`` and Table 1, from memory.

    Examples
    --------
    >>> eccentricity_from_grade(sp.Rational(63, 10), 100)
    63/1000000
    """
    is_exact, (g, w) = _args("eccentricity_from_grade", ("G", "omega"), G=G, omega=omega)
    return g / 1000 / w if is_exact else _out(g / 1000.0 / w)


def permissible_unbalance(G, rotor_mass, omega):
    r"""Permissible residual unbalance of a rigid rotor, in kg m.

    .. math:: U_{per} = m\, e_{per} = m \frac{G}{\Omega}

    See :func:`eccentricity_from_grade` for units; :func:`permissible_unbalance_gmm`
    gives the same value in g mm, the unit balancing machines report.

    References
    ----------
    ISO 21940-11:2016 (formerly ISO 1940-1:2003), ``U_per = e_per * m``, from memory.

    Examples
    --------
    >>> permissible_unbalance(sp.Rational(63, 10), 100, 100)
    63/10000
    """
    is_exact, (g, m, w) = _args(
        "permissible_unbalance", ("G", "rotor_mass", "omega"), G=G, rotor_mass=rotor_mass, omega=omega
    )
    return m * g / 1000 / w if is_exact else _out(m * g / 1000.0 / w)


def permissible_unbalance_gmm(G, rotor_mass, omega):
    r"""Permissible residual unbalance in g mm (``1 kg m = 10^6 g mm``).

    .. math:: U_{per}\,[\mathrm{g\,mm}] = 10^6\, m \frac{G}{\Omega}

    Examples
    --------
    >>> permissible_unbalance_gmm(sp.Rational(63, 10), 100, 100)
    6300
    """
    u = permissible_unbalance(G, rotor_mass, omega)
    return u * 10**6 if isinstance(u, sp.Basic) else _out(u * 1e6)


def residual_unbalance(rotor_mass, e):
    r"""Residual unbalance of a rotor whose mass centre sits *e* off the shaft axis, in kg m.

    .. math:: U = m_r\, e

    Parameters
    ----------
    rotor_mass : mass of the rotating parts, kg.
    e : mass eccentricity, m (for the largest a grade permits, :func:`eccentricity_from_grade`).

    References
    ----------
    ISO 21940-11:2016 (formerly ISO 1940-1:2003), ``U = e m``, from memory.

    Examples
    --------
    >>> residual_unbalance(sp.Integer(140), sp.Rational(40, 10**6))
    7/1250
    """
    is_exact, (m, e) = _args("residual_unbalance", rotor_mass=rotor_mass, e=e)
    return m * e if is_exact else _out(m * e)


def unbalance_force(U, omega):
    r"""Amplitude of the rotating force from a residual unbalance *U* (kg m) at the speed *omega*.

    .. math:: F_0 = U\, \Omega^2

    The same force as :func:`unbalance_force_amplitude` with ``U = m_u e``, for when the
    unbalance is known as one number (a balancing machine's reading, a grade's limit).

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.7, from memory.

    Examples
    --------
    >>> float(unbalance_force(0.001, 100.0))
    10.0
    """
    is_exact, (u, w) = _args("unbalance_force", U=U, omega=omega)
    return u * w**2 if is_exact else _out(u * w * w)


@dataclass(frozen=True)
class BaseExcitation:
    r"""Steady-state response ratios of a mass on a spring and damper whose base moves
    as ``y = Y sin(omega t)``.

    Attributes
    ----------
    r, zeta : the frequency ratio and damping ratio used.
    relative_ratio : ``Z / Y`` for the deflection ``z = x - y`` across spring and damper,
        ``r^2 / sqrt((1 - r^2)^2 + (2 zeta r)^2)``.
    relative_phase : lag of ``z`` behind ``y``, ``atan2(2 zeta r, 1 - r^2)``.
    absolute_ratio : ``X / Y`` for the mass, the transmissibility.
    absolute_phase : lag of ``x`` behind ``y``, ``atan2(2 zeta r^3, 1 - r^2 + (2 zeta r)^2)``.
    """

    r: _h.Value
    zeta: _h.Value
    relative_ratio: _h.Value
    relative_phase: _h.Value
    absolute_ratio: _h.Value
    absolute_phase: _h.Value


def base_excitation(r, zeta) -> BaseExcitation:
    r"""Response ratios under harmonic base motion.

    For ``m x'' + c (x' - y') + k (x - y) = 0`` with ``y = Y sin(omega t)``:

    .. math::
        \frac{Z}{Y} = \frac{r^2}{\sqrt{(1-r^2)^2 + (2\zeta r)^2}}, \qquad
        \frac{X}{Y} = \sqrt{\frac{1 + (2\zeta r)^2}{(1-r^2)^2 + (2\zeta r)^2}}

    with ``z = Z sin(omega t - phi)`` and ``x = X sin(omega t - psi)``.

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.6.1 (absolute motion) and 3.6.2
    (relative motion), from memory.

    Examples
    --------
    >>> b = base_excitation(sp.Integer(2), sp.Integer(0))
    >>> b.relative_ratio, b.absolute_ratio
    (4/3, 1/3)
    """
    is_exact, (r, z) = _args("base_excitation", r=r, zeta=zeta)
    if not is_exact:
        r, z = _out(r), _out(z)
    return BaseExcitation(
        r=r,
        zeta=z,
        relative_ratio=_h.rotating_unbalance_magnification(r, z),
        relative_phase=_h.phase_angle(r, z),
        absolute_ratio=_h.transmissibility(r, z),
        absolute_phase=_h.transmissibility_phase(r, z),
    )


def transmitted_force_amplitude(k, c, X, omega):
    r"""Amplitude of the force passed through a spring and damper in parallel.

    .. math:: F_T = X \sqrt{k^2 + (c\,\omega)^2}

    ``X`` is the amplitude of the deflection across the mount (the mass amplitude on a
    rigid support, ``Z`` under base motion).

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 9.10, from memory.

    Examples
    --------
    >>> transmitted_force_amplitude(sp.Integer(3000), sp.Integer(40), sp.Rational(1, 1000), 100)
    5
    """
    is_exact, (k, c, x, w) = _args("transmitted_force_amplitude", k=k, c=c, X=X, omega=omega)
    if is_exact:
        return x * sp.sqrt(k**2 + (c * w) ** 2)
    return _out(x * np.hypot(k, c * w))


def require_one_harmonic(f, t, omega, *, text, where: str, taker: str = "This template") -> None:
    """Refuse a forcing *f* (sympy, in *t*) that is not one harmonic at the forcing frequency *omega*.

    Parameters
    ----------
    f : sympy expression, the forcing.
    t, omega : the time symbol and the forcing frequency's symbol.
    text : the forcing as the user wrote it, quoted in the message.
    where : where to point the error (the input's name).
    taker : who takes the force, for the message's advice (``"This template"``, ``"The explorer"``).

    Raises
    ------
    InputsError
        The forcing has more than one frequency, decays or grows, or is at another frequency.

    Examples
    --------
    >>> t, w, F0 = sp.Symbol("t", real=True), sp.Symbol("w", positive=True), sp.Symbol("F0", positive=True)
    >>> require_one_harmonic(F0 * sp.cos(w * t), t, w, text="F0*cos(w*t)", where="forcing")
    >>> require_one_harmonic(F0 * sp.cos(2 * w * t), t, w, text="F0*cos(2*w*t)", where="forcing")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: forcing: "F0*cos(2*w*t)" is not one harmonic at the forcing frequency. ...
    """
    groups = split_forcing(f, t).groups
    if len(groups) != 1 or not groups[0].harmonic or groups[0].decay != 0 or groups[0].frequency != omega:
        raise InputsError(
            f'"{text}" is not one harmonic at the forcing frequency',
            where=where,
            do=f"{taker} takes a force at one frequency, for example F0*cos(w*t) or F0*sin(w*t)",
        )
