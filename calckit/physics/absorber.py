"""A damped vibration absorber on a machine: the equal-peak tuning and the two-mass response at one speed.

The machine (mass ``m_1`` on a support of stiffness ``k_1``, natural frequency
``omega_n = sqrt(k_1 / m_1)``) carries an absorber of mass ``m_2 = mu m_1`` on a spring
``k_2`` and a viscous damper ``c_2``. Den Hartog's equal-peak tuning (undamped machine,
force amplitude independent of speed) sets the absorber's own frequency to
``omega_a = f omega_n`` with ``f = 1 / (1 + mu)``, and its damping to

* ``zeta_n = sqrt(3 mu / (8 (1 + mu)^3))`` against the machine's ``omega_n``
  (``c_2 = 2 zeta_n m_2 omega_n``), which is the same damper as
* ``zeta_a = sqrt(3 mu / (8 (1 + mu)))`` against the absorber's own ``omega_a``
  (``c_2 = 2 zeta_a m_2 omega_a``).

Mixing the two (``zeta_n`` against ``omega_a``) leaves ``c_2`` low by ``1 / (1 + mu)``.
Every formula lives here once, as a sympy expression in plain symbols, so that a sheet
shows it with its numbers put through (:data:`TUNING_FORMULAS`, :data:`RESPONSE_FORMULAS`)
and the numbers come from the same expressions.

References
----------
J. P. Den Hartog, *Mechanical Vibrations*, 4th ed., McGraw-Hill 1956 / Dover 1985, sec. 3.3
(the damped vibration absorber), from memory.

Examples
--------
>>> tuning = equal_peak_tuning(0.05, 155.456, 120.0)
>>> round(tuning.f, 6), round(tuning.c2)
(0.952381, 4748)
>>> round(tuning.zeta_own / tuning.zeta_main, 6)
1.05
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import sympy as sp

from calckit.errors import InputsError

__all__ = [
    "FREQUENCY_FORMULAS",
    "RESPONSE_FORMULAS",
    "TUNING_FORMULAS",
    "AbsorberResponse",
    "AbsorberTuning",
    "absorber_response",
    "equal_peak_tuning",
]

_mu, _wn, _m2, _f, _wa = sp.symbols("mu omega_n m_2 f omega_a")
_zn, _k2, _c2 = sp.symbols("zeta_n k_2 c_2")

with sp.evaluate(False):  # kept as written: sympy would fold 3/8 under the root into sqrt(6)/4
    _zeta_n = sp.sqrt(3 * _mu / (8 * (1 + _mu) ** 3))
    _zeta_a = sp.sqrt(3 * _mu / (8 * (1 + _mu)))

#: The equal-peak tuning, name -> formula in plain symbols (``mu``, ``omega_n``, ``m_2`` and the
#: results before it), in the order a sheet works them (Den Hartog 4th ed. sec. 3.3, from memory).
TUNING_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {
        "f": 1 / (1 + _mu),
        "omega_a": _f * _wn,
        "zeta_n": _zeta_n,
        "zeta_a": _zeta_a,
        "k_2": _m2 * _wa**2,
        "c_2": 2 * _zn * _m2 * _wn,
    }
)

_m1, _c1, _k1, _F0, _W = sp.symbols("m_1 c_1 k_1 F_0 Omega")
_p, _q, _dre, _dim, _xr = sp.symbols("p q D_re D_im X_r")
_d1, _d2, _h2 = sp.symbols("d_1 d_2 h_2")

#: The steady state of the two masses under ``F_0 cos(Omega t)`` on the machine, name -> formula.
#: With ``p = k_1 - m_1 Omega^2``, ``q = k_2 - m_2 Omega^2``, the dampers' ``d_1 = Omega c_1``,
#: ``d_2 = Omega c_2`` and the absorber mass's ``h_2 = m_2 Omega^2`` (each N/m), the determinant of
#: the dynamic stiffness ``[[k_1 + k_2 - m_1 Omega^2 + i Omega (c_1 + c_2), -(k_2 + i Omega c_2)],
#: [-(k_2 + i Omega c_2), k_2 - m_2 Omega^2 + i Omega c_2]]`` is ``D_re + i D_im`` with
#: ``D_re = p q - d_1 d_2 - h_2 k_2`` and ``D_im = p d_2 + q d_1 - h_2 d_2``; the machine's amplitude
#: is ``F_0 |q + i d_2| / |D|`` and the absorber's stroke relative to the machine
#: ``X_r = F_0 h_2 / |D|`` (Cramer's rule on the two equations of motion). The terms of one
#: stiffness each keep a sheet's substitution of ``D`` short enough to print.
RESPONSE_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {
        "p": _k1 - _m1 * _W**2,
        "q": _k2 - _m2 * _W**2,
        "d_1": _W * _c1,
        "d_2": _W * _c2,
        "h_2": _m2 * _W**2,
        "D_re": _p * _q - _d1 * _d2 - _h2 * _k2,
        "D_im": _p * _d2 + _q * _d1 - _h2 * _d2,
        "X_1": _F0 * sp.sqrt(_q**2 + _d2**2) / sp.sqrt(_dre**2 + _dim**2),
        "X_r": _F0 * _h2 / sp.sqrt(_dre**2 + _dim**2),
        "F_s": _k2 * _xr,
        "F_a": _xr * sp.sqrt(_k2**2 + _d2**2),
    }
)


_s = sp.Symbol("s")

#: The two natural frequencies of the undamped two masses, name -> formula: the roots of
#: ``m_1 m_2 omega^4 - (m_1 k_2 + m_2 (k_1 + k_2)) omega^2 + k_1 k_2 = 0`` with
#: ``s = (k_1 + k_2) / m_1 + k_2 / m_2``.
FREQUENCY_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {
        "s": (_k1 + _k2) / _m1 + _k2 / _m2,
        "omega_1": sp.sqrt((_s - sp.sqrt(_s**2 - 4 * _k1 * _k2 / (_m1 * _m2))) / 2),
        "omega_2": sp.sqrt((_s + sp.sqrt(_s**2 - 4 * _k1 * _k2 / (_m1 * _m2))) / 2),
    }
)


def _evaluate(formulas: Mapping[str, sp.Expr], given: dict[str, float]) -> dict[str, float]:
    """Every formula in order, each taking the given values and the results before it (floats)."""
    known = dict(given)
    for name, expr in formulas.items():
        fn = sp.lambdify(sorted(expr.free_symbols, key=str), expr, "math")
        known[name] = float(fn(*(known[s.name] for s in sorted(expr.free_symbols, key=str))))
    return known


@dataclass(frozen=True)
class AbsorberTuning:
    """The equal-peak tuning of an absorber (SI).

    Attributes
    ----------
    mu, omega_n, m2 : the mass ratio, the machine's natural frequency (rad/s), the absorber mass (kg).
    f : frequency ratio ``omega_a / omega_n = 1 / (1 + mu)``.
    omega_a : the absorber's own natural frequency, rad/s.
    zeta_main : damping ratio against the machine's ``omega_n``, ``c_2 / (2 m_2 omega_n)``.
    zeta_own : damping ratio against the absorber's ``omega_a``, ``c_2 / (2 m_2 omega_a)``.
    k2 : spring stiffness, N/m.
    c2 : damping coefficient, N s/m.
    formulas : :data:`TUNING_FORMULAS`.
    """

    mu: float
    omega_n: float
    m2: float
    f: float
    omega_a: float
    zeta_main: float
    zeta_own: float
    k2: float
    c2: float
    formulas: Mapping[str, sp.Expr] = field(default_factory=lambda: TUNING_FORMULAS, compare=False)


def _positive(value: float, name: str) -> float:
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise InputsError(f"{name} = {value!r} is not a positive number", where=name, do=f"Give {name} > 0")
    return value


def equal_peak_tuning(mu: float, omega_n: float, m2: float) -> AbsorberTuning:
    """Den Hartog's equal-peak tuning of an absorber of mass *m2* (kg), mass ratio *mu*, on a machine whose
    natural frequency on its support is *omega_n* (rad/s).

    Examples
    --------
    >>> t = equal_peak_tuning(0.25, 1.0, 0.25)
    >>> round(t.f, 3), round(t.zeta_main, 4), round(t.zeta_own, 4), round(t.c2, 4)
    (0.8, 0.2191, 0.2739, 0.1095)
    """
    got = _evaluate(
        TUNING_FORMULAS,
        {"mu": _positive(mu, "mu"), "omega_n": _positive(omega_n, "omega_n"), "m_2": _positive(m2, "m_2")},
    )
    return AbsorberTuning(
        mu=got["mu"],
        omega_n=got["omega_n"],
        m2=got["m_2"],
        f=got["f"],
        omega_a=got["omega_a"],
        zeta_main=got["zeta_n"],
        zeta_own=got["zeta_a"],
        k2=got["k_2"],
        c2=got["c_2"],
    )


@dataclass(frozen=True)
class AbsorberResponse:
    """The steady state at one speed (SI): the machine's amplitude ``X_1``, the absorber's stroke relative to
    the machine ``X_r``, the force in its spring ``F_s = k_2 X_r`` and the whole force through it
    (spring and damper) ``F_a``, all amplitudes; :data:`RESPONSE_FORMULAS`."""

    X_1: float
    X_r: float
    F_s: float
    F_a: float


def absorber_response(
    *, m1: float, c1: float, k1: float, m2: float, c2: float, k2: float, force: float, omega: float
) -> AbsorberResponse:
    """The two masses' steady state under ``force cos(omega t)`` on the machine, by :data:`RESPONSE_FORMULAS`.

    Examples
    --------
    >>> r = absorber_response(m1=1.0, c1=0.0, k1=1.0, m2=0.1, c2=0.0, k2=0.1, force=1.0, omega=1.0)
    >>> r.X_1, round(r.X_r, 12), round(r.F_s, 12)
    (0.0, 10.0, 1.0)
    """
    got = _evaluate(
        RESPONSE_FORMULAS,
        {"m_1": m1, "c_1": c1, "k_1": k1, "m_2": m2, "c_2": c2, "k_2": k2, "F_0": force, "Omega": omega},
    )
    return AbsorberResponse(X_1=got["X_1"], X_r=got["X_r"], F_s=got["F_s"], F_a=got["F_a"])
