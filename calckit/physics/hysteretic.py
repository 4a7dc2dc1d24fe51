r"""Hysteretic (structural) damping: the steady state under a harmonic load with a loss factor.

Elastomer mounts dissipate per cycle an energy nearly independent of frequency; their
stiffness is written complex, ``k (1 + i eta)``, with the loss factor ``eta``, in

.. math:: m\ddot{x} + k(1 + i\eta)\,x = F_0 e^{i\omega t},

valid for the harmonic steady state only (it is not an equation in time: for a transient,
such as a run-up, an equivalent viscous damping stands in). With ``r = omega / omega_n``:

.. math::
    \frac{X k}{F_0} = \frac{1}{\sqrt{(1 - r^2)^2 + \eta^2}}, \qquad
    \phi = \operatorname{atan2}(\eta,\; 1 - r^2), \qquad
    T = \sqrt{\frac{1 + \eta^2}{(1 - r^2)^2 + \eta^2}}.

At resonance the peak is ``1/eta``, as a viscous model's ``1/(2 zeta)`` with ``zeta = eta/2``;
far above it the hysteretic transmissibility falls as ``sqrt(1 + eta^2) / r^2``, the
viscous one only as ``2 zeta / r``: the two models agree at resonance and part above it.
At one frequency ``omega`` the hysteretic model is the viscous one with ``c_eq = eta k / omega``.

Inputs and the exact / numeric paths as :mod:`calckit.physics.harmonic` (sympy in, sympy out;
floats and arrays in, numpy out); a negative or non-finite value raises
:class:`~calckit.errors.ModelError`.

References
----------
S. S. Rao, *Mechanical Vibrations*, 5th ed., Pearson, 2011, sec. 2.7 (hysteretic damping, complex
stiffness) and sec. 3.9 (response of a system with hysteretic damping), from memory.
C. M. Harris and A. G. Piersol, *Harris' Shock and Vibration Handbook*, 5th ed., McGraw-Hill,
2002, ch. 30 and ch. 32 (isolators with structural damping), from memory.
"""

from __future__ import annotations

import numpy as np
import sympy as sp

from calckit.errors import ModelError
from calckit.physics.harmonic_values import _RESONANCE_DO, _args, _atan2_lag, _finite, _out

__all__ = [
    "DAMPING_MODELS",
    "damping_model",
    "equivalent_damping_ratio",
    "equivalent_viscous_damping",
    "hysteretic_magnification",
    "hysteretic_phase",
    "hysteretic_transmissibility",
    "hysteretic_transmissibility_phase",
]

#: The damping models a steady-state harmonic result can take.
DAMPING_MODELS = ("viscous", "hysteretic")

_NO_LOSS = "resonance with no loss (r = 1, eta = 0): the steady-state amplitude is unbounded"


def damping_model(name, where: str = "damping_model") -> str:
    """The damping model *name* checked against :data:`DAMPING_MODELS`.

    Examples
    --------
    >>> damping_model("Hysteretic ")
    'hysteretic'
    """
    text = str(name).strip().lower() if isinstance(name, str) else None
    if text not in DAMPING_MODELS:
        raise ModelError(
            f"unknown damping model {name!r}",
            where=where,
            do='Give "viscous" (a damping ratio) or "hysteretic" (a loss factor, for elastomer mounts)',
        )
    return text


def hysteretic_magnification(r, loss_factor):
    r"""``X k / F_0`` with complex stiffness ``k (1 + i eta)``: ``1 / sqrt((1 - r^2)^2 + eta^2)``.

    Examples
    --------
    >>> hysteretic_magnification(sp.Integer(1), sp.Rational(1, 10))
    10
    >>> round(float(hysteretic_magnification(0.0, 0.1)), 6)
    0.995037
    """
    is_exact, (r, eta) = _args("hysteretic_magnification", r=r, loss_factor=loss_factor)
    if is_exact:
        return _finite(
            1 / sp.sqrt((1 - r**2) ** 2 + eta**2), "hysteretic_magnification", _NO_LOSS, _RESONANCE_DO
        )
    with np.errstate(divide="ignore"):
        return _out(1.0 / np.sqrt((1.0 - r * r) ** 2 + eta * eta))


def hysteretic_phase(r, loss_factor):
    r"""Phase lag of the displacement behind the force, ``atan2(eta, 1 - r^2)``, in ``[0, pi]``.

    Unlike the viscous lag it is not zero at ``r = 0``: ``atan(eta)``.

    Examples
    --------
    >>> hysteretic_phase(sp.Integer(1), sp.Rational(1, 10))
    pi/2
    """
    is_exact, (r, eta) = _args("hysteretic_phase", r=r, loss_factor=loss_factor)
    return _atan2_lag(eta + 0 * r, 1 - r**2, is_exact)


def hysteretic_transmissibility(r, loss_factor):
    r"""``|F_T / F_0|`` (or ``|X / Y|`` under base motion) through a mount ``k (1 + i eta)``.

    .. math:: T = \sqrt{\frac{1 + \eta^2}{(1 - r^2)^2 + \eta^2}}

    Examples
    --------
    >>> hysteretic_transmissibility(sp.Integer(3), sp.Integer(0))
    1/8
    >>> round(float(hysteretic_transmissibility(10.0, 0.1)), 6)
    0.010151
    """
    is_exact, (r, eta) = _args("hysteretic_transmissibility", r=r, loss_factor=loss_factor)
    if is_exact:
        tr = sp.sqrt(1 + eta**2) / sp.sqrt((1 - r**2) ** 2 + eta**2)
        return _finite(tr, "hysteretic_transmissibility", _NO_LOSS, _RESONANCE_DO)
    with np.errstate(divide="ignore"):
        return _out(np.sqrt((1.0 + eta * eta) / ((1.0 - r * r) ** 2 + eta * eta)))


def hysteretic_transmissibility_phase(r, loss_factor):
    r"""Phase lag of the transmitted force behind the excitation, ``atan2(eta r^2, 1 - r^2 + eta^2)``.

    From ``(1 + i eta) / (1 - r^2 + i eta)``.

    Examples
    --------
    >>> hysteretic_transmissibility_phase(sp.Integer(0), sp.Rational(1, 10))
    0
    """
    is_exact, (r, eta) = _args("hysteretic_transmissibility_phase", r=r, loss_factor=loss_factor)
    return _atan2_lag(eta * r**2, 1 - r**2 + eta**2, is_exact)


def equivalent_viscous_damping(loss_factor, k, omega):
    r"""The viscous coefficient that dissipates as much per cycle at *omega*: ``c_eq = eta k / omega``.

    Equal to the hysteretic model at that one frequency only.

    Examples
    --------
    >>> equivalent_viscous_damping(sp.Rational(1, 10), 720000, 155)
    14400/31
    """
    is_exact, (eta, k, w) = _args(
        "equivalent_viscous_damping", positive=("omega",), loss_factor=loss_factor, k=k, omega=omega
    )
    return eta * k / w if is_exact else _out(eta * k / w)


def equivalent_damping_ratio(loss_factor):
    r"""The damping ratio with the same resonant peak, ``zeta = eta / 2`` (``c_eq`` at ``omega = omega_n``).

    Examples
    --------
    >>> equivalent_damping_ratio(0.1)
    0.05
    """
    is_exact, (eta,) = _args("equivalent_damping_ratio", loss_factor=loss_factor)
    return eta / 2 if is_exact else float(eta / 2)
