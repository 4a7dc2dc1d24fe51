"""Equipment on a beam that has mass of its own: Rayleigh's quotient and Dunkerley's estimate.

The beam's stiffness under the equipment comes from :mod:`calckit.physics.support`; here its
mass is added:

* one mass: Rayleigh's quotient with the static deflection shape under the mass, as an effective
  mass ``m_e = M + mu m_b`` (:func:`effective_mass_fraction`, :func:`beam_with_mass_frequency`,
  :data:`BEAM_FREQUENCY_FORMULAS` for the sheet's steps);
* several masses: Rayleigh's quotient with the static deflection shape under every weight, the
  beam's own included (:func:`rayleigh_frequency`), an upper estimate of the fundamental;
* the beam's own fundamental (:func:`beam_alone_frequency`) and Dunkerley's lower estimate
  ``1 / omega^2 = sum 1 / omega_i^2`` (:func:`dunkerley_estimate`, :func:`dunkerley_formula`).

The true fundamental lies between Dunkerley's estimate and Rayleigh's. Euler-Bernoulli beams of one
section and uniform mass, the equipment as point masses (no rotary inertia).

References
----------
W. C. Young, R. G. Budynas, *Roark's Formulas for Stress and Strain*, 7th ed., Table 8.1, cases 1a,
1d, 1e (the deflected shape under a point load) and 2a, 2d, 2e (under a uniform load), from memory.
Rayleigh's quotient and Dunkerley's formula: W. T. Thomson, *Theory of Vibration with
Applications*, 5th ed., ch. 2 (Rayleigh's method, effective mass, ``17/35`` of a simply supported
beam's mass) and ch. 7 (Dunkerley's formula), from memory (section numbers not checked). A beam's own fundamental ``(beta L)^2 sqrt(E I / (m' L^4))``
with ``cos(beta L) cosh(beta L) = 1`` (fixed-fixed) or ``= -1`` (cantilever): R. D. Blevins,
*Formulas for Natural Frequency and Mode Shape*, Table 8-1, from memory.

Examples
--------
>>> kw = dict(E="210 GPa", I="8360 cm**4", L="3 m", beam_mass="127 kg")
>>> low = dunkerley_estimate("simply supported", masses=[("900 kg", "1.5 m")], **kw).omega
>>> high = rayleigh_frequency("simply supported", masses=[("900 kg", "1.5 m")], **kw)
>>> bool(low < high)
True
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np
import pint
import sympy as sp

from calckit.core.units import Q_
from calckit.errors import InputsError
from calckit.physics.support import (
    BEAM_KINDS,
    _beam,
    _evaluate,
    _in_range,
    _inputs,
    _pick,
    _point_shape,
    _position,
    _si,
    _stiffness,
    _where,
)

__all__ = [
    "BEAM_FREQUENCY_FORMULAS",
    "MOST_MASSES",
    "BeamFrequency",
    "DunkerleyEstimate",
    "beam_alone_frequency",
    "beam_with_mass_frequency",
    "dunkerley_estimate",
    "dunkerley_formula",
    "effective_mass_fraction",
    "rayleigh_frequency",
]

_k, _M, _mb, _mu, _me, _wn = sp.symbols("k M m_b mu m_e omega_n", positive=True)

#: The most point masses a beam takes here (more: model the equipment as fewer masses, or as beam mass).
MOST_MASSES = 100


def _guarded(compute, what: str, unit: str, where: str) -> float:
    """*compute()* in floats, refused when a step overflows or underflows (numpy's too)."""
    try:
        with np.errstate(all="raise"):
            value = float(compute())
    except (OverflowError, FloatingPointError, ZeroDivisionError):
        value = math.inf
    return _in_range(value, what, unit, where)


#: Equipment of mass ``M`` on a beam of mass ``m_b`` by Rayleigh's quotient with the static deflection
#: shape under the equipment: the effective mass ``m_e = M + mu m_b`` (``mu`` the effective mass
#: fraction, :func:`effective_mass_fraction`), ``omega_n = sqrt(k / m_e)``, ``k`` the beam's stiffness
#: under the equipment.
BEAM_FREQUENCY_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {"m_e": _M + _mu * _mb, "omega_n": sp.sqrt(_k / _me), "f_n": _wn / (2 * sp.pi)}
)


def _uniform_shape(kind: str, span: float, x: np.ndarray) -> np.ndarray:
    """Deflection at *x* under a unit load per length over the whole beam, times E I (from memory)."""
    if kind == "simply supported":
        return x * (span**3 - 2 * span * x**2 + x**3) / 24
    if kind == "fixed-fixed":
        return x**2 * (span - x) ** 2 / 24
    return x**2 * (6 * span**2 - 4 * span * x + x**2) / 24


def _integral(fn, span: float, breaks: Sequence[float]) -> float:
    """The integral of *fn* over the span, exact for the piecewise polynomials here (Gauss, 6 points a piece)."""
    nodes, weights = np.polynomial.legendre.leggauss(6)
    edges = np.unique(np.clip([0.0, *breaks, span], 0.0, span))
    total = 0.0
    for lo, hi in zip(edges[:-1], edges[1:], strict=False):
        x = (hi - lo) / 2 * nodes + (hi + lo) / 2
        total += (hi - lo) / 2 * float(np.dot(weights, fn(x)))
    return total


def effective_mass_fraction(kind: str, *, L: Any, a: Any = None, names=None) -> float:
    """The fraction of a beam's mass that moves with a mass at *a*, by Rayleigh's quotient with the static
    deflection shape under it: ``mu = int y(x)^2 dx / (L y(a)^2)``.

    ``17/35`` for a simply supported beam and ``13/35`` for a fixed-fixed one with the mass at midspan,
    ``33/140`` for a cantilever with it at the tip (Thomson 5th ed. ch. 2, from memory).

    Examples
    --------
    >>> round(effective_mass_fraction("simply supported", L="2 m") * 35, 9)
    17.0
    """
    kind = _pick(kind, BEAM_KINDS, _where(names, "kind"), "a beam kind")
    span = _si(L, _where(names, "L"), "length", "m")
    x = _position(kind, span, a, names)

    def fraction():  # on a beam of unit length: the fraction depends on a / L only
        r = x / span
        at = float(_point_shape(kind, 1.0, r, np.array([r]))[0])
        return _integral(lambda s: _point_shape(kind, 1.0, r, s) ** 2, 1.0, [r]) / at**2

    return _guarded(fraction, "the effective mass fraction", "", _inputs(names, "L", "a"))


@dataclass(frozen=True)
class BeamFrequency:
    """Equipment on a beam with mass (SI quantities): the beam's stiffness under it ``k``, the effective
    mass fraction ``mu``, the effective mass ``m_e = M + mu m_b``, and ``omega_n``, ``f_n``
    (:data:`BEAM_FREQUENCY_FORMULAS`)."""

    k: pint.Quantity
    mu: float
    m_e: pint.Quantity
    omega_n: pint.Quantity
    f_n: pint.Quantity


def beam_with_mass_frequency(
    kind: str,
    *,
    E: Any,
    I: Any,
    L: Any,
    beam_mass: Any,
    mass: Any,
    a: Any = None,
    names=None,
) -> BeamFrequency:
    """The natural frequency of a mass *mass* at *a* on a beam of mass *beam_mass* (Rayleigh, one mass).

    The textbook effective-mass form: the beam's mass moves in the static shape under the equipment
    alone. An upper estimate, within about 0.1 % of the fundamental for equipment at least as heavy
    as the beam at midspan (the cantilever's tip); for a light mass off midspan it errs high (about 6 % for
    a mass a quarter of the beam's at a fifth of a simply supported span, 40 % on a cantilever; measured
    against a finite-element model in the tests), and :func:`rayleigh_frequency`, whose shape carries
    the beam's own weight too, is the one to use.

    Examples
    --------
    >>> got = beam_with_mass_frequency("simply supported", E="210 GPa", I="8360 cm**4", L="3 m",
    ...                                beam_mass="127 kg", mass="900 kg")
    >>> round(got.mu, 4), round(got.f_n.magnitude, 2)
    (0.4857, 28.67)
    """
    kind, e, i, span, x = _beam(kind, E, I, L, a, names)
    mb = _si(beam_mass, _where(names, "beam_mass"), "mass", "kg")
    big = _si(mass, _where(names, "mass"), "mass", "kg")
    k = _stiffness(kind, e, i, span, x, names)
    mu = effective_mass_fraction(kind, L=Q_(span, "m"), a=Q_(x, "m"), names=names)
    got = {_k: k, _M: big, _mb: mb, _mu: mu}
    where = _inputs(names, "E", "I", "L", "a", "beam_mass", "mass")
    for symbol, name, unit in ((_me, "m_e", "kg"), (_wn, "omega_n", "rad/s"), (None, "f_n", "Hz")):
        value = _evaluate(BEAM_FREQUENCY_FORMULAS[name], got, name, unit, where)
        got[symbol or name] = value
    return BeamFrequency(
        k=Q_(k, "N/m"),
        mu=mu,
        m_e=Q_(got[_me], "kg"),
        omega_n=Q_(got[_wn], "rad/s"),
        f_n=Q_(got["f_n"], "Hz"),
    )


def _masses(masses: Sequence, kind: str, span: float, names) -> list[tuple[float, float]]:
    where = _where(names, "masses")
    if isinstance(masses, str | bytes) or not isinstance(masses, Sequence):
        raise InputsError(
            f"expected a list of (mass, position) pairs, got {type(masses).__name__}",
            where=where,
            do='Give the masses as pairs, e.g. [("900 kg", "1.2 m"), ("250 kg", "2.1 m")]',
        )
    if len(masses) > MOST_MASSES:
        raise InputsError(
            f"{len(masses):,} point masses are more than the {MOST_MASSES} a beam takes here",
            where=where,
            do="Model the equipment as fewer masses (each at its centre of gravity), or spread the small ones "
            "into the beam's mass",
        )
    out = []
    for n, item in enumerate(masses, 1):
        if not (isinstance(item, Sequence) and not isinstance(item, str) and len(item) == 2):
            raise InputsError(
                f"item {n} is not a (mass, position) pair: {item!r}",
                where=where,
                do='Give each mass with its position, e.g. ("900 kg", "1.2 m")',
            )
        m = _si(item[0], f"{where}[{n}] mass", "mass", "kg")
        out.append((m, _position(kind, span, item[1], {"a": f"{where}[{n}] position"})))
    return out


def rayleigh_frequency(
    kind: str,
    *,
    E: Any,
    I: Any,
    L: Any,
    beam_mass: Any,
    masses: Sequence,
    names=None,
) -> pint.Quantity:
    """The fundamental frequency of masses on a beam with mass, rad/s, by Rayleigh's quotient with the
    static deflection shape under every weight (the masses' and the beam's own):
    ``omega^2 = g (sum M_i y_i + int m' y dx) / (sum M_i y_i^2 + int m' y^2 dx)``.

    An upper estimate of the fundamental (any shape that meets the supports gives one at least as high).
    *masses*: pairs ``(mass, position)``, the position from the left support (the cantilever's fixed end);
    an empty list gives the beam alone.

    Examples
    --------
    >>> w = rayleigh_frequency("simply supported", E="210 GPa", I="8360 cm**4", L="3 m",
    ...                        beam_mass="127 kg", masses=[("900 kg", "1.5 m")])
    >>> round(w.to("rad/s").magnitude, 2)
    180.15
    """
    kind, e, i, span, _ = _beam(kind, E, I, L, None, names)
    per_length = _si(beam_mass, _where(names, "beam_mass"), "mass", "kg") / span
    lumped = _masses(masses, kind, span, names)

    def shape(x):  # the deflection under the weights, times E I / g
        y = per_length * _uniform_shape(kind, span, x)
        for m, at in lumped:
            y = y + m * _point_shape(kind, span, at, x)
        return y

    def quotient():
        breaks = [at for _, at in lumped]
        at_masses = [(m, float(shape(np.array([at]))[0])) for m, at in lumped]
        work = sum(m * y for m, y in at_masses) + per_length * _integral(shape, span, breaks)
        kinetic = sum(m * y**2 for m, y in at_masses) + per_length * _integral(
            lambda x: shape(x) ** 2, span, breaks
        )
        return math.sqrt(e * i * work / kinetic)

    where = _inputs(names, "E", "I", "L", "beam_mass", "masses")
    return Q_(_guarded(quotient, "the fundamental by Rayleigh's quotient", "rad/s", where), "rad/s")


def _beta_l(kind: str) -> float:
    """The first root ``beta L`` of the beam's frequency equation (Blevins Table 8-1, from memory)."""
    if kind == "simply supported":
        return math.pi
    from scipy.optimize import brentq

    sign = 1.0 if kind == "fixed-fixed" else -1.0  # cos x cosh x = 1 (fixed-fixed), = -1 (cantilever)
    lo, hi = (4.0, 5.0) if kind == "fixed-fixed" else (1.0, 2.5)
    return brentq(lambda x: math.cos(x) * math.cosh(x) - sign, lo, hi, xtol=1e-14)


def beam_alone_frequency(kind: str, *, E: Any, I: Any, L: Any, beam_mass: Any, names=None) -> pint.Quantity:
    """The beam's own fundamental, rad/s: ``(beta L)^2 sqrt(E I / (m' L^4))``, ``m' = m_b / L``.

    Examples
    --------
    >>> w = beam_alone_frequency("simply supported", E="210 GPa", I="8360 cm**4", L="3 m", beam_mass="127 kg")
    >>> round(w.magnitude / (2 * math.pi), 1)
    112.4
    """
    kind, e, i, span, _ = _beam(kind, E, I, L, None, names)
    mb = _si(beam_mass, _where(names, "beam_mass"), "mass", "kg")
    where = _inputs(names, "E", "I", "L", "beam_mass")
    omega = _guarded(
        lambda: _beta_l(kind) ** 2 * math.sqrt(e * i / (mb / span * span**4)),
        "the beam's own fundamental",
        "rad/s",
        where,
    )
    return Q_(omega, "rad/s")


def dunkerley_formula(count: int) -> sp.Expr:
    """Dunkerley's estimate for the beam and *count* masses, in ``omega_0`` (the beam alone) and
    ``omega_1`` ... (each mass alone on the beam without mass), for a sheet step.

    Examples
    --------
    >>> dunkerley_formula(1)
    1/sqrt(omega_1**(-2) + omega_0**(-2))
    """
    if isinstance(count, bool) or not isinstance(count, int) or not 0 <= count <= MOST_MASSES:
        raise InputsError(
            f"expected a number of masses from 0 to {MOST_MASSES}, got {count!r}",
            where="dunkerley_formula",
            do="Give how many masses the beam carries, besides its own",
        )
    parts = sp.symbols(f"omega_0:{count + 1}", positive=True)
    return 1 / sp.sqrt(sum(w**-2 for w in parts))


@dataclass(frozen=True)
class DunkerleyEstimate:
    """Dunkerley's estimate (rad/s quantities): ``omega_0`` the beam alone, ``parts`` each mass alone on the
    beam without mass (``sqrt(k(a_i) / M_i)``), ``omega`` from ``1 / omega^2 = sum 1 / omega_i^2``: a lower
    estimate of the fundamental."""

    omega_0: pint.Quantity
    parts: tuple[pint.Quantity, ...]
    omega: pint.Quantity


def dunkerley_estimate(
    kind: str,
    *,
    E: Any,
    I: Any,
    L: Any,
    beam_mass: Any,
    masses: Sequence,
    names=None,
) -> DunkerleyEstimate:
    """Dunkerley's lower estimate of the fundamental of masses on a beam with mass.

    Examples
    --------
    >>> got = dunkerley_estimate("simply supported", E="210 GPa", I="8360 cm**4", L="3 m",
    ...                          beam_mass="127 kg", masses=[("900 kg", "1.5 m")])
    >>> round(got.omega.magnitude, 2), round(got.omega_0.magnitude, 1)
    (180.07, 706.2)
    """
    kind, e, i, span, _ = _beam(kind, E, I, L, None, names)
    w0 = beam_alone_frequency(
        kind, E=Q_(e, "Pa"), I=Q_(i, "m**4"), L=Q_(span, "m"), beam_mass=beam_mass, names=names
    )
    where = _inputs(names, "E", "I", "L", "beam_mass", "masses")
    parts = []
    for n, (m, at) in enumerate(_masses(masses, kind, span, names), 1):
        k = _stiffness(kind, e, i, span, at, names)
        parts.append(Q_(_guarded(lambda k=k, m=m: math.sqrt(k / m), f"omega_{n}", "rad/s", where), "rad/s"))
    parts = tuple(parts)
    values = dict(zip(sp.symbols(f"omega_0:{len(parts) + 1}", positive=True), (w0, *parts), strict=True))
    formula = dunkerley_formula(len(parts))
    omega = _evaluate(
        formula, {s: w.magnitude for s, w in values.items()}, "Dunkerley's estimate", "rad/s", where
    )
    return DunkerleyEstimate(omega_0=w0, parts=parts, omega=Q_(omega, "rad/s"))
