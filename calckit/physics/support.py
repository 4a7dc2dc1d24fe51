"""The stiffness of the support under a mount, and what a flexible support does to the frequency.

A mount on a steel beam or a frame is a spring on a spring: the support's stiffness at the
mount is in series with the mount's, ``1 / k_e = 1 / k_m + 1 / k_s``, and lowers the natural
frequency by ``sqrt(k_e / k_m) = 1 / sqrt(1 + k_m / k_s)``. This module holds:

* the closed forms of the support's stiffness at a point load (:data:`STIFFNESS_FORMULAS`,
  :func:`beam_stiffness`, :func:`portal_sway_stiffness`): a beam simply supported, fixed at both
  ends, a cantilever, and the sway of a portal frame (two equal columns, a beam between them);
* the flexibility matrix of several mounts that share one beam (:func:`beam_flexibility`);
* the support in series with the mount and the frequency it leaves (:func:`support_effect`),
  and the check that the support is stiff enough (:func:`support_check`, against
  :data:`LEAST_SUPPORT_RATIO` or a ratio an inputs file gives).

:func:`support_stiffness` takes any of :data:`SUPPORT_KINDS` by the name an inputs file gives.
The mount's stiffness in series is the one in the support's direction: a beam's under a vertical
load pairs with the mount's axial (vertical) stiffness, a portal's sway with its shear stiffness
along the sway.

Equipment on a beam that has mass of its own (Rayleigh, Dunkerley) is in
:mod:`calckit.physics.beam_frequency`, which takes its beams from here.

Every formula lives here once, as a sympy expression in plain symbols (``E``, ``I``, ``L``,
``a``, ``b``, ``h``, ``I_c``, ``I_b``, ``rho``, ``k_m``, ``k_s`` ...), so that a sheet shows it
as a step with its numbers put through (``sheet.calc(name, STIFFNESS_FORMULAS[kind], values)``),
and the numeric functions take the same expressions. The numeric functions take quantities (pint,
or text such as ``"210 GPa"``, ``"8360 cm**4"``) and give pint quantities in SI. Euler-Bernoulli
beams of one section, small deflections, no shear deformation; a portal's members do not
stretch.

References
----------
W. C. Young, R. G. Budynas, *Roark's Formulas for Stress and Strain*, 7th ed., McGraw-Hill 2002,
Table 8.1, case 1 (a concentrated intermediate load): 1a (left end free, right end fixed: the
cantilever), 1d (both ends fixed), 1e (both ends simply supported), from memory (the case letters
not checked against the book; the formulas are checked against a finite-element model in the tests).
The portal's sway with a flexible beam: the slope-deflection method for an antisymmetric sway,
joint rotations equal (any text on the stiffness method, e.g. A. K. Chopra, *Dynamics of
Structures*, 4th ed., sec. 1.3, from memory); it gives ``24 E I_c / h^3`` for a rigid beam on
fixed bases and ``6 E I_c / h^3`` on pinned bases.

Examples
--------
>>> k = beam_stiffness("simply supported", E="210 GPa", I="8360 cm**4", L="3 m")
>>> print(f"{k.to('kN/mm').magnitude:.2f} kN/mm")
31.21 kN/mm
>>> check = support_check(k, "1.2 kN/mm")
>>> round(check.ratio, 2), check.met
(26.01, True)
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np
import pint
import sympy as sp

from calckit.core.checks import positive
from calckit.core.units import Q_, fmt, quantity
from calckit.errors import InputsError, ModelError

__all__ = [
    "BEAM_KINDS",
    "LEAST_SUPPORT_RATIO",
    "PORTAL_BASES",
    "PORTAL_FORMULAS",
    "SERIES_FORMULAS",
    "STIFFNESS_FORMULAS",
    "SUPPORT_KINDS",
    "SUPPORT_RATIO_BASIS",
    "SupportCheck",
    "SupportEffect",
    "beam_flexibility",
    "beam_stiffness",
    "portal_sway_stiffness",
    "series_stiffness",
    "stiffness_formula",
    "support_stiffness",
    "support_check",
    "support_effect",
]

_E, _I, _L, _a, _b = sp.symbols("E I L a b", positive=True)
_h, _Ic, _Ib, _rho = sp.symbols("h I_c I_b rho", positive=True)
_km, _ks, _ke, _m = sp.symbols("k_m k_s k_e m", positive=True)

#: The beams a mount may stand on, by the name an inputs file gives.
BEAM_KINDS = ("simply supported", "fixed-fixed", "cantilever")
#: A portal frame's bases.
PORTAL_BASES = ("fixed", "pinned")
#: Every kind :data:`STIFFNESS_FORMULAS` holds.
SUPPORT_KINDS = (*BEAM_KINDS, "portal, fixed bases", "portal, pinned bases")

#: The support's stiffness at the load, kind -> formula. Beams: a point load at ``a`` from the left
#: end (the cantilever: from its fixed end), ``b = L - a`` (Roark 7th ed. Table 8.1 cases 1e, 1d, 1a,
#: from memory: ``k = P / y`` under the load). Portals: the sway of two equal columns of height ``h``
#: under a rigid beam, the force at the beam's level.
STIFFNESS_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {
        "simply supported": 3 * _E * _I * _L / (_a**2 * _b**2),
        "fixed-fixed": 3 * _E * _I * _L**3 / (_a**3 * _b**3),
        "cantilever": 3 * _E * _I / _a**3,
        "portal, fixed bases": 24 * _E * _Ic / _h**3,
        "portal, pinned bases": 6 * _E * _Ic / _h**3,
    }
)

#: A portal's sway with a beam of its own stiffness: ``rho = (I_b / L) / (I_c / h)`` the beam's
#: stiffness against a column's, then the sway stiffness on fixed or pinned bases (slope-deflection,
#: antisymmetric sway; ``rho -> oo`` gives the rigid-beam forms above, ``rho -> 0`` two columns free at
#: the top: ``6 E I_c / h^3`` fixed, a mechanism pinned).
PORTAL_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {
        "rho": (_Ib / _L) / (_Ic / _h),
        "fixed": 12 * _E * _Ic * (1 + 6 * _rho) / (_h**3 * (2 + 3 * _rho)),
        "pinned": 12 * _E * _Ic * _rho / (_h**3 * (1 + 2 * _rho)),
    }
)

with sp.evaluate(False):  # kept as written: sympy would fold the sum of reciprocals into one fraction
    _series = 1 / (1 / _km + 1 / _ks)
    _drop = 1 - 1 / sp.sqrt(1 + _km / _ks)

#: The support in series with the mount, name -> formula: the stiffness they make together, the
#: ratio a check compares, the natural frequency on the rigid and on the flexible support, and the
#: fraction the frequency drops by (``1 - sqrt(k_e / k_m)``).
SERIES_FORMULAS: Mapping[str, sp.Expr] = MappingProxyType(
    {
        "k_e": _series,
        "ratio": _ks / _km,
        "omega_rigid": sp.sqrt(_km / _m),
        "omega_flexible": sp.sqrt(_ke / _m),
        "drop": _drop,
    }
)

#: Least ratio of the support's stiffness to the mount's for the support not to be part of the system.
LEAST_SUPPORT_RATIO = 10.0

#: Basis of the support-stiffness check.
SUPPORT_RATIO_BASIS = (
    "common practice, no source: the support at least about 10 times as stiff as the mount on it "
    r"($k_s / k_m \ge 10$), so that the mount's natural frequency drops by less than about 5 %"
)


def _pick(kind: str, kinds: Sequence[str], where: str, what: str) -> str:
    if isinstance(kind, str) and kind in kinds:
        return kind
    close = difflib.get_close_matches(str(kind), kinds, n=1, cutoff=0.6)
    hint = f'Did you mean "{close[0]}"? ' if close else ""
    raise InputsError(
        f"{kind!r} is not {what} calckit knows",
        where=where,
        do=f"{hint}Give one of {', '.join(repr(k) for k in kinds)}",
    )


def _where(names: Mapping[str, str] | None, key: str) -> str:
    return (names or {}).get(key, key)


def _si(value: Any, where: str, expect: str, unit: str) -> float:
    """A positive quantity (pint or text) of the kind *expect*, in *unit*, as a float."""
    q = positive(quantity(value, where, expect=expect), where)
    return float(q.to(unit).magnitude)


_RANGE_DO = "Check the inputs' units and exponents for a slip (a modulus typed in Pa for GPa, an exponent typed twice)"


def _in_range(value: float, what: str, unit: str, where: str, *, allow_zero: bool = False) -> float:
    """*value* if a float holds it (finite; positive, or zero when allowed), else an InputsError."""
    if math.isfinite(value) and (value > 0 or (allow_zero and value == 0)):
        return value
    shown = f"{value:g} {unit}".strip()
    raise InputsError(
        f"{what} comes out as {shown} with these inputs, beyond what a float holds (about 1e-308 to 1.8e308)",
        where=where,
        do=_RANGE_DO,
    )


def _evaluate(
    expr: sp.Expr, values: dict, what: str, unit: str, where: str, *, allow_zero: bool = False
) -> float:
    """A formula's number at *values*, refused when it overflows or underflows."""
    try:
        value = float(expr.subs(values))
    except (OverflowError, ZeroDivisionError, TypeError):  # float(zoo) is a TypeError
        value = math.inf
    return _in_range(value, what, unit, where, allow_zero=allow_zero)


def _inputs(names, *keys: str) -> str:
    return ", ".join(_where(names, key) for key in keys)


def stiffness_formula(kind: str, *, rigid_beam: bool = True) -> sp.Expr:
    """The support's stiffness as a formula for a sheet step; a portal with ``rigid_beam=False`` gives
    :data:`PORTAL_FORMULAS`' form in ``rho`` (its own step first: ``PORTAL_FORMULAS["rho"]``).

    The beams' formulas take ``b = L - a``, the rest of the span, as a step of its own
    (``sheet.calc("b", "L - a", unit="m")``), so that a checker sees both lengths.

    Examples
    --------
    >>> stiffness_formula("cantilever")
    3*E*I/a**3
    >>> stiffness_formula("portal, pinned bases", rigid_beam=False)
    12*E*I_c*rho/(h**3*(2*rho + 1))
    """
    kind = _pick(kind, SUPPORT_KINDS, "support kind", "a support kind")
    if kind.startswith("portal") and not rigid_beam:
        return PORTAL_FORMULAS[kind.split(", ")[1].split()[0]]
    return STIFFNESS_FORMULAS[kind]


def _position(kind: str, L: float, a: Any, names) -> float:
    """The load's distance from the left (cantilever: fixed) end, in m; None: midspan (cantilever: tip)."""
    if a is None:
        return L if kind == "cantilever" else L / 2
    where = _where(names, "a")
    q = quantity(a, where, expect="length")
    x = float(q.to("m").magnitude)
    inside = 0 < x <= L if kind == "cantilever" else 0 < x < L
    if not inside:
        span = fmt(Q_(L, "m"))
        if kind == "cantilever":
            do = f"Give the load's distance from the fixed end, more than 0 and at most the length {span}"
        else:
            do = (
                f"Give the load's distance from the left support, more than 0 and less than the span {span} "
                "(a load at a support does not bend the beam)"
            )
        raise InputsError(
            f"the load at {fmt(q)} is outside the {kind} beam's span of {span}", where=where, do=do
        )
    return x


def _beam(kind, E, I, L, a, names) -> tuple[str, float, float, float, float]:
    kind = _pick(kind, BEAM_KINDS, _where(names, "kind"), "a beam kind")
    e = _si(E, _where(names, "E"), "pressure", "Pa")
    i = _si(I, _where(names, "I"), "second moment of area", "m**4")
    span = _si(L, _where(names, "L"), "length", "m")
    return kind, e, i, span, _position(kind, span, a, names)


def _stiffness(kind: str, e: float, i: float, span: float, x: float, names=None) -> float:
    values = {_E: e, _I: i, _L: span, _a: x, _b: span - x}
    where = _inputs(names, "E", "I", "L", "a")
    return _evaluate(STIFFNESS_FORMULAS[kind], values, f"the {kind} beam's stiffness", "N/m", where)


def beam_stiffness(kind: str, *, E: Any, I: Any, L: Any, a: Any = None, names=None) -> pint.Quantity:
    """The stiffness of a beam under a point load at *a*, N/m: :data:`STIFFNESS_FORMULAS` [kind].

    Parameters
    ----------
    kind : one of :data:`BEAM_KINDS`.
    E, I, L : the beam's modulus, second moment of area about the bending axis, and span (length).
    a : the load's distance from the left support (the cantilever's fixed end); None: midspan
        (the cantilever's tip).
    names : the inputs' names, keys ``kind``, ``E``, ``I``, ``L``, ``a``, for the messages.

    Examples
    --------
    >>> beam_stiffness("cantilever", E="200 GPa", I="1e6 mm**4", L="1 m").to("N/mm")
    <Quantity(600.0, 'newton / millimeter')>
    """
    kind, e, i, span, x = _beam(kind, E, I, L, a, names)
    return Q_(_stiffness(kind, e, i, span, x, names), "N/m")


def portal_sway_stiffness(
    bases: str, *, E: Any, I_c: Any, h: Any, I_b: Any = None, L: Any = None, names=None
) -> pint.Quantity:
    """The sway stiffness of a portal frame (two equal columns of height *h*, a beam of span *L*), N/m.

    With *I_b* None the beam is rigid (:data:`STIFFNESS_FORMULAS`: ``24 E I_c / h^3`` on fixed bases,
    ``6 E I_c / h^3`` on pinned); with *I_b* and *L*, :data:`PORTAL_FORMULAS`.

    Examples
    --------
    >>> k = portal_sway_stiffness("fixed", E="210 GPa", I_c="2770 cm**4", h="2.5 m")
    >>> round(k.to("kN/mm").magnitude, 3)
    8.935
    """
    bases = _pick(bases, PORTAL_BASES, _where(names, "bases"), "a kind of portal base")
    e = _si(E, _where(names, "E"), "pressure", "Pa")
    ic = _si(I_c, _where(names, "I_c"), "second moment of area", "m**4")
    height = _si(h, _where(names, "h"), "length", "m")
    values = {_E: e, _Ic: ic, _h: height}
    if I_b is None:
        formula = STIFFNESS_FORMULAS[f"portal, {bases} bases"]
        return Q_(
            _evaluate(formula, values, "the portal's sway stiffness", "N/m", _inputs(names, "E", "I_c", "h")),
            "N/m",
        )
    if L is None:
        raise InputsError(
            "a portal's beam stiffness needs the beam's span",
            where=_where(names, "L"),
            do="Give the span L with the beam's second moment of area I_b, or leave I_b out for a rigid beam",
        )
    ib = _si(I_b, _where(names, "I_b"), "second moment of area", "m**4")
    span = _si(L, _where(names, "L"), "length", "m")
    where = _inputs(names, "E", "I_c", "h", "I_b", "L")
    values[_rho] = _evaluate(
        PORTAL_FORMULAS["rho"], {_Ib: ib, _L: span, _Ic: ic, _h: height}, "rho", "", where
    )
    return Q_(_evaluate(PORTAL_FORMULAS[bases], values, "the portal's sway stiffness", "N/m", where), "N/m")


def support_stiffness(
    kind: str,
    *,
    E: Any,
    I: Any = None,
    L: Any = None,
    a: Any = None,
    I_c: Any = None,
    h: Any = None,
    I_b: Any = None,
    names=None,
) -> pint.Quantity:
    """The support's stiffness for any of :data:`SUPPORT_KINDS`, N/m, as an inputs file names it: a beam
    (:func:`beam_stiffness`: *E*, *I*, *L*, *a*) or a portal's sway (:func:`portal_sway_stiffness`:
    *E*, *I_c*, *h*, and *I_b* with *L* for a beam that is not rigid).

    Examples
    --------
    >>> support_stiffness("portal, pinned bases", E="210 GPa", I_c="2770 cm**4", h="2.5 m").to("kN/mm")
    <Quantity(2.233728, 'kilonewton / millimeter')>
    """
    kind = _pick(kind, SUPPORT_KINDS, _where(names, "kind"), "a support kind")
    if kind in BEAM_KINDS:
        for key, value in (("I", I), ("L", L)):
            if value is None:
                raise InputsError(
                    f"a {kind} beam's stiffness needs {key}",
                    where=_where(names, key),
                    do="Give the beam's modulus E, second moment of area I, span L and the load's position a",
                )
        return beam_stiffness(kind, E=E, I=I, L=L, a=a, names=names)
    for key, value in (("I_c", I_c), ("h", h)):
        if value is None:
            raise InputsError(
                f"a portal's sway stiffness needs {key}",
                where=_where(names, key),
                do="Give the columns' second moment of area I_c and height h (and the beam's I_b and span L)",
            )
    bases = kind.split(", ")[1].split()[0]
    return portal_sway_stiffness(bases, E=E, I_c=I_c, h=h, I_b=I_b, L=L, names=names)


def _point_shape(kind: str, span: float, a: float, x: np.ndarray) -> np.ndarray:
    """Deflection at *x* under a unit force at *a*, times E I (Roark 7th ed. Table 8.1, from memory)."""
    b = span - a
    left = x <= a
    if kind == "simply supported":
        y_left = b * x * (span**2 - b**2 - x**2) / (6 * span)
        y_right = a * (span - x) * (2 * span * x - x**2 - a**2) / (6 * span)
    elif kind == "fixed-fixed":
        r = span - x
        y_left = b**2 * x**2 * (3 * a * span - (3 * a + b) * x) / (6 * span**3)
        y_right = a**2 * r**2 * (3 * b * span - (3 * b + a) * r) / (6 * span**3)
    else:  # cantilever, fixed at x = 0
        y_left = x**2 * (3 * a - x) / 6
        y_right = a**2 * (3 * x - a) / 6
    return np.where(left, y_left, y_right)


def beam_flexibility(kind: str, *, E: Any, I: Any, L: Any, positions: Sequence, names=None) -> pint.Quantity:
    """The flexibility matrix of a beam carrying several mounts, m/N: entry ``(i, j)`` is the deflection at
    mount *i* under a unit force at mount *j* (Roark 7th ed. Table 8.1 cases 1a, 1d, 1e, the deflection
    anywhere, from memory). Its diagonal is ``1 / k`` of :func:`beam_stiffness` at each mount; the rest
    couples mounts that share the beam, which a stiffness per mount leaves out.

    Examples
    --------
    >>> f = beam_flexibility("simply supported", E="210 GPa", I="8360 cm**4", L="3 m", positions=["1 m", "2 m"])
    >>> f.to("um/kN").magnitude.round(3).tolist()
    [[25.316, 22.151], [22.151, 25.316]]
    """
    kind, e, i, span, _ = _beam(kind, E, I, L, None, names)
    where = _where(names, "positions")
    if isinstance(positions, str | bytes) or not isinstance(positions, Sequence) or not positions:
        raise InputsError(
            f"expected a list of the mounts' positions along the beam, got {positions!r}",
            where=where,
            do="Give each mount's distance from the left support (the cantilever's fixed end), "
            'e.g. ["0.8 m", "2.2 m"]',
        )
    if len(positions) > 100:
        raise InputsError(
            f"{len(positions):,} mounts on one beam are more than the 100 taken here",
            where=where,
            do="Give the mounts that stand on this beam",
        )
    xs = np.array([_position(kind, span, x, {"a": f"{where}[{n}]"}) for n, x in enumerate(positions, 1)])
    with np.errstate(all="ignore"):
        matrix = np.array([_point_shape(kind, span, at, xs) for at in xs]) / (e * i)
    if not (np.all(np.isfinite(matrix)) and np.all(np.diag(matrix) > 0)):
        raise InputsError(
            "the beam's flexibility comes out beyond what a float holds (about 1e-308 to 1.8e308) with these inputs",
            where=_inputs(names, "E", "I", "L", "positions"),
            do=_RANGE_DO,
        )
    return Q_(matrix, "m/N")


def series_stiffness(*springs: Any, names: Sequence[str] | None = None) -> pint.Quantity:
    """Springs in series (a mount on its support), N/m: ``1 / k_e = sum 1 / k_i``.

    Examples
    --------
    >>> series_stiffness("1 kN/mm", "9 kN/mm").to("kN/mm")
    <Quantity(0.9, 'kilonewton / millimeter')>
    """
    if not springs:
        raise ModelError("no springs were given", where="series_stiffness", do="Give at least one stiffness")
    labels = list(names) if names else [f"spring {n + 1}" for n in range(len(springs))]
    values = [_si(k, label, "stiffness", "N/m") for k, label in zip(springs, labels, strict=True)]
    total = math.fsum(1 / k for k in values)
    return Q_(
        _in_range(1 / total if total > 0 else math.inf, "the springs' stiffness", "N/m", ", ".join(labels)),
        "N/m",
    )


@dataclass(frozen=True)
class SupportEffect:
    """A mount on a flexible support (SI quantities): the stiffness they make together ``k_e``, the ratio
    ``k_s / k_m``, the natural frequency on a rigid support and on this one (rad/s), and the fraction the
    frequency drops by, ``1 - sqrt(k_e / k_m)`` (:data:`SERIES_FORMULAS`)."""

    k_mount: pint.Quantity
    k_support: pint.Quantity
    k_e: pint.Quantity
    ratio: float
    omega_rigid: pint.Quantity
    omega_flexible: pint.Quantity
    drop: float


def support_effect(mass: Any, k_mount: Any, k_support: Any, *, names=None) -> SupportEffect:
    """What the support does to a mass on a mount: :data:`SERIES_FORMULAS` in order.

    *mass* is the mass the mount carries (its share of the machine).

    Examples
    --------
    >>> got = support_effect("450 kg", "0.9 kN/mm", "9 kN/mm")
    >>> round(got.drop, 4), round(got.omega_flexible.magnitude, 3)
    (0.0465, 42.64)
    """
    m = _si(mass, _where(names, "mass"), "mass", "kg")
    km = _si(k_mount, _where(names, "k_mount"), "stiffness", "N/m")
    ks = _si(k_support, _where(names, "k_support"), "stiffness", "N/m")
    got = {_km: km, _ks: ks, _m: m}
    where = _inputs(names, "mass", "k_mount", "k_support")
    units = {"k_e": "N/m", "ratio": "", "omega_rigid": "rad/s", "omega_flexible": "rad/s", "drop": ""}
    out = {}
    for name, expr in SERIES_FORMULAS.items():  # in order: k_e first, then the formulas that take it
        out[name] = _evaluate(expr, got, name, units[name], where, allow_zero=name == "drop")
        got.setdefault(_ke, out[name])
    return SupportEffect(
        k_mount=Q_(km, "N/m"),
        k_support=Q_(ks, "N/m"),
        k_e=Q_(out["k_e"], "N/m"),
        ratio=out["ratio"],
        omega_rigid=Q_(out["omega_rigid"], "rad/s"),
        omega_flexible=Q_(out["omega_flexible"], "rad/s"),
        drop=out["drop"],
    )


@dataclass(frozen=True)
class SupportCheck:
    """The check that a support is stiff enough: ``ratio = k_s / k_m`` against ``required``, met when
    ``ratio >= required``; ``basis`` says where the required ratio comes from."""

    ratio: float
    required: float
    met: bool
    basis: str


def support_check(
    k_support: Any,
    k_mount: Any,
    required_ratio: Any = LEAST_SUPPORT_RATIO,
    *,
    basis: str = SUPPORT_RATIO_BASIS,
    names=None,
) -> SupportCheck:
    """Whether the support is at least *required_ratio* times as stiff as the mount on it.

    *required_ratio* and *basis* come from the inputs file when it gives them (a specification's
    clause); the defaults are :data:`LEAST_SUPPORT_RATIO` and :data:`SUPPORT_RATIO_BASIS`.

    Examples
    --------
    >>> support_check("5 kN/mm", "1 kN/mm").met
    False
    """
    ks = _si(k_support, _where(names, "k_support"), "stiffness", "N/m")
    km = _si(k_mount, _where(names, "k_mount"), "stiffness", "N/m")
    where = _where(names, "required_ratio")
    required = float(
        positive(quantity(required_ratio, where, expect="dimensionless"), where).to("").magnitude
    )
    if required < 1:
        raise InputsError(
            f"a required stiffness ratio of {required:g} lets the support be softer than the mount",
            where=where,
            do="Give the least ratio k_s / k_m the support must reach, at least 1 (common practice about 10)",
        )
    ratio = _evaluate(
        SERIES_FORMULAS["ratio"],
        {_ks: ks, _km: km},
        "the ratio k_s / k_m",
        "",
        _inputs(names, "k_support", "k_mount"),
    )
    return SupportCheck(ratio=ratio, required=required, met=ratio >= required, basis=basis)
