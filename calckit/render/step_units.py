r"""The units of a derivation's numbers: stated once under its title and on each step that has them.

A derivation with numbers (``Oscillator(1850, 2400, 4.4e7).particular(3300*cos(155*t))``)
is exact arithmetic on plain numbers; the numbers mean something only with the units
they were put in with. :class:`MotionUnits` holds those units, the coordinate ``x``,
the time ``t`` and the forcing ``f``, and derives every other unit from them by
dimensions alone, never by guessing from the model:

* the coefficient of the j-th derivative of ``x`` is in ``[f] [t]^j / [x]``
  (``kg``, ``N s/m``, ``N/m`` for ``x`` in m, ``t`` in s, ``f`` in N);
* ``lambda`` is in ``1/[t]``, and ``p(lambda)`` in ``[f]/[x]``;
* an unknown coefficient of ``t^n`` times an exponential or a cosine in a trial form
  or a homogeneous solution is in ``[x]/[t]^n``;
* each coefficient equation (and the residual of the check) is in ``[f]``.

:func:`units_line` is the line under a derivation's title; :func:`step_units` the
sentence a step gets (``None`` for a step without numbers that carry a unit).
Both write symbols as inline ``$...$`` math and units as plain text.

Examples
--------
>>> u = MotionUnits("m", "s", "N")
>>> u.coefficient(2), u.coefficient(1), u.coefficient(0), u.rate(1)
('kg', 'N·s/m', 'N/m', 'm/s')
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass

import sympy as sp

from calckit.engine.steps import (
    CharacteristicStep,
    CoefficientEquationsStep,
    EquationStep,
    ForcingSplitStep,
    HomogeneousStep,
    InitialConditionsStep,
    IntervalStep,
    MatrixEquationStep,
    ModesStep,
    ParticularSolutionStep,
    PiecewiseSolutionStep,
    ResonanceStep,
    SolvedCoefficientsStep,
    Step,
    SubstitutionStep,
    SwitchingTimesStep,
    TotalResponseStep,
    TrialFormStep,
    VectorCoefficientEquationsStep,
    VectorForcingStep,
    VerificationStep,
)
from calckit.errors import SheetError

__all__ = ["MotionUnits", "derivation_units_line", "motion_units", "step_units", "units_line"]

_KEYS = ("x", "t", "f")
#: the translational SI units, ``units="SI"``
SI = {"x": "m", "t": "s", "f": "N"}


def _unit(text: str, key: str):
    from calckit.core.units import ureg

    try:
        return ureg.Unit(text)
    except Exception as exc:  # pint raises several kinds for a bad unit
        raise SheetError(
            f"{text!r} is not a unit ({type(exc).__name__})",
            where=f"derivation units, {key}",
            do='Give a unit pint reads, e.g. {"x": "m", "t": "s", "f": "N"}',
        ) from None


def _shown(unit) -> str:
    text = f"{unit:~P}"
    return text or "1"


def _times(text: str, unit, power: int) -> str:
    """``text`` times ``unit**power`` as written: ``N·s²``."""
    return text if power == 0 else f"{text}·{_shown(unit**power)}"


def _power(n: int) -> str:
    """``n`` as a superscript: ``²``."""
    return str(n).translate(str.maketrans("0123456789", "⁰¹²³⁴⁵⁶⁷⁸⁹"))


def _per(numerator: str, denominator: str) -> str:
    """``numerator/denominator``, the denominator in brackets when it is itself a product or ratio."""
    if denominator == "1":
        return numerator
    if any(sign in denominator for sign in "·/"):
        denominator = f"({denominator})"
    return f"{numerator}/{denominator}"


@dataclass(frozen=True)
class MotionUnits:
    """The units a derivation's numbers are in: coordinate ``x``, time ``t``, forcing ``f``."""

    x: str
    t: str = "s"
    f: str = "N"

    def _q(self, key: str):
        return _unit(getattr(self, key), key)

    def coefficient(self, j: int) -> str:
        """The unit of the coefficient of the j-th derivative of x: ``[f] [t]^j / [x]``.

        Shown as one named unit when it reduces to one (``N s^2/m`` is ``kg``), else as composed.
        """
        from calckit.core.units import Q_

        composed = self._q("f") * self._q("t") ** j / self._q("x")
        base = Q_(1, composed).to_base_units()
        parts = dict(base.unit_items())
        if abs(base.magnitude - 1) < 1e-12 and len(parts) == 1 and next(iter(parts.values())) == 1:
            return _shown(base.units)
        return _per(_times(_shown(self._q("f")), self._q("t"), j), _shown(self._q("x")))

    def rate(self, n: int) -> str:
        """The unit of ``[x] / [t]^n``: of the coefficient of ``t^n`` in x."""
        return _per(_shown(self._q("x")), _shown(self._q("t") ** n)) if n else _shown(self._q("x"))

    @property
    def per_time(self) -> str:
        """The unit of lambda and of a frequency: ``1/[t]``."""
        return _per("1", _shown(self._q("t")))

    @property
    def polynomial(self) -> str:
        """The unit of ``p(lambda)``: ``[f] / [x]``."""
        return self.coefficient(0)


def motion_units(
    units: Mapping[str, str] | str | MotionUnits | None, where: str = "derivation"
) -> MotionUnits | None:
    """*units* as :class:`MotionUnits`: a mapping with keys ``x``, ``t`` (default s), ``f``, or ``"SI"``.

    >>> motion_units("SI")
    MotionUnits(x='m', t='s', f='N')
    >>> motion_units({"x": "rad", "f": "N*m"}).coefficient(2)
    'm·N·s²/rad'
    """
    if units is None or isinstance(units, MotionUnits):
        return units
    if isinstance(units, str):
        if units != "SI":
            raise SheetError(
                f"units={units!r} is not a set of units",
                where=where,
                do='Give units="SI" (x in m, t in s, f in N) or a mapping such as {"x": "m", "t": "s", "f": "N"}',
            )
        units = SI
    if not isinstance(units, Mapping):
        raise SheetError(
            f"units must be a mapping, got {type(units).__name__}",
            where=where,
            do='Give e.g. units={"x": "m", "t": "s", "f": "N"}',
        )
    unknown = sorted(set(units) - set(_KEYS))
    if unknown or "x" not in units or "f" not in units:
        raise SheetError(
            f"the units of a derivation are given by x, t and f, got {', '.join(map(str, units)) or 'none'}",
            where=where,
            do='Give x (the coordinate), f (the forcing) and, unless it is s, t: {"x": "m", "t": "s", "f": "N"}',
        )
    found = MotionUnits(str(units["x"]), str(units.get("t", "s")), str(units["f"]))
    for key in _KEYS:
        found._q(key)
    if not found._q("t").dimensionality == _unit("s", "t").dimensionality:
        raise SheetError(
            f"t in {found.t} is not a time", where=where, do='Give t in a unit of time, e.g. "s"'
        )
    return found


def _t_power(basis: sp.Expr, t: sp.Symbol | None) -> int:
    """The power n of t in a basis function ``t^n exp(a t) cos(b t)``."""
    if t is None:
        return 0
    for factor in sp.Mul.make_args(basis):
        if factor == t:
            return 1
        if isinstance(factor, sp.Pow) and factor.base == t and factor.exp.is_Integer:
            return int(factor.exp)
    return 0


def _t_of(expr: sp.Expr) -> sp.Symbol | None:
    names = [s for s in expr.free_symbols if s.name in ("t", "tau")]
    return names[0] if len(names) == 1 else None


def _grouped(pairs: Iterable[tuple[str, str]]) -> str:
    """``"$A$, $B$ in m; $C$ in m/s"`` from (symbol LaTeX, unit) pairs, in order of first unit."""
    by_unit: dict[str, list[str]] = {}
    for symbol, unit in pairs:
        by_unit.setdefault(unit, []).append(symbol)
    return "; ".join(
        ", ".join(f"${s}$" for s in symbols) + f" in {unit}" for unit, symbols in by_unit.items()
    )


def _constants(solution: sp.Expr, constants: Iterable[sp.Symbol], t, u: MotionUnits) -> list[tuple[str, str]]:
    out = []
    for c in constants:
        basis = sp.expand(solution).coeff(c)
        out.append((sp.latex(c), u.rate(_t_power(basis, t))))
    return out


def units_line(u: MotionUnits, derivative_latex: Iterable[str]) -> str:
    """The line under a derivation's title: the units of x, t and f and what follows from them.

    *derivative_latex* is the LaTeX of ``x``'s derivatives, highest first, down to ``x``.

    >>> print(units_line(MotionUnits("m"), [r"\\ddot{x}", r"\\dot{x}", "x"]))
    Units: $x$ in m, $t$ in s, $f$ in N, $\\lambda$ in 1/s; coefficients of $\\ddot{x}$, $\\dot{x}$, $x$ in kg, N·s/m, N/m.
    """
    shown = list(derivative_latex)
    order = len(shown) - 1
    coefficients = ", ".join(u.coefficient(order - i) for i in range(order + 1))
    return (
        f"Units: $x$ in {u.x}, $t$ in {u.t}, $f$ in {u.f}, $\\lambda$ in {u.per_time}; coefficients of "
        + ", ".join(f"${d}$" for d in shown)
        + f" in {coefficients}."
    )


def derivation_units_line(u: MotionUnits, derivation) -> str:
    """:func:`units_line` for *derivation*: its order, and its derivatives spelled as its steps spell them."""
    from calckit.render.latex import notation
    from calckit.render.tex import _derivative

    steps = tuple(derivation.steps)
    order = next((len(s.coefficients) - 1 for s in steps if isinstance(s, EquationStep)), 2)
    nt = notation(steps)
    return units_line(u, [_derivative(nt, order - i).latex for i in range(order + 1)])


def step_units(
    step: Step, u: MotionUnits, steps: Iterable[Step] = (), derivative: Callable[[int], str] | None = None
) -> str | None:
    """The sentence that says the units of *step*'s numbers (None for a step without any).

    *steps* are the derivation's steps (a solved-coefficients step takes the units of its
    unknowns from the trial form of its group, the initial conditions from the homogeneous
    solution); *derivative* gives the LaTeX of the j-th derivative of x as the steps show it.
    """
    per_t = u.per_time
    steps = tuple(steps)
    # a multi-mass model's characteristic polynomial is det Z(lambda): the n-th power of [f]/[x]
    size = next((s.mass.shape[0] for s in steps if isinstance(s, MatrixEquationStep)), 1)
    poly = u.polynomial if size == 1 else f"({u.polynomial}){_power(size)}"
    if isinstance(step, EquationStep):
        order = len(step.coefficients) - 1
        shown = derivative or (lambda j: "x" if j == 0 else f"x^{{({j})}}")
        said = [
            (shown(order - i), u.coefficient(order - i)) for i, c in enumerate(step.coefficients) if c != 0
        ]
        words = "; ".join(f"coefficient of ${d}$ in {unit}" for d, unit in said)
        return f"Units: {words}; $f$ in {u.f}, $t$ in {u.t}."
    if isinstance(step, MatrixEquationStep):
        return (
            f"Units: mass matrix in {u.coefficient(2)}, damping in {u.coefficient(1)}, stiffness in "
            f"{u.coefficient(0)}, forces in {u.f}, $t$ in {u.t}."
        )
    if isinstance(step, (ForcingSplitStep, VectorForcingStep)):
        return f"Units: $f$ in {u.f}, $t$ in {u.t}, $\\lambda$ in {per_t}."
    if isinstance(step, CharacteristicStep):
        return f"Units: $\\lambda$ in {per_t}, $p(\\lambda)$ in {poly}."
    if isinstance(step, ResonanceStep):
        return f"Units: $\\lambda$ in {per_t}, $p$ in {poly}."
    if isinstance(step, TrialFormStep):
        t = _t_of(step.trial)
        pairs = _constants(step.trial, step.unknowns, t, u)
        return f"Units: {_grouped(pairs)}; $t$ in {u.t}." if pairs else None
    if isinstance(step, (SubstitutionStep, CoefficientEquationsStep, VectorCoefficientEquationsStep)):
        return f"Units: each side in {u.f}."
    if isinstance(step, SolvedCoefficientsStep):
        trial = next((s for s in steps if isinstance(s, TrialFormStep) and s.group == step.group), None)
        if trial is None:
            return None
        pairs = _constants(trial.trial, [name for name, _ in step.values], _t_of(trial.trial), u)
        return f"Units: {_grouped(pairs)}." if pairs else None
    if isinstance(step, (ParticularSolutionStep, TotalResponseStep, PiecewiseSolutionStep)):
        return f"Units: $x$ in {u.x}, $t$ in {u.t}."
    if isinstance(step, VerificationStep):
        return f"Units: the residual in {u.f}."
    if isinstance(step, HomogeneousStep):
        pairs = _constants(step.solution, step.constants, _t_of(step.solution), u)
        return f"Units: {_grouped(pairs)}; $t$ in {u.t}." if pairs else None
    if isinstance(step, InitialConditionsStep):
        home = next((s for s in steps if isinstance(s, HomogeneousStep)), None)
        if home is None:
            return None
        pairs = _constants(home.solution, [name for name, _ in step.values], _t_of(home.solution), u)
        return f"Units: {_grouped(pairs)}." if pairs else None
    if isinstance(step, ModesStep):
        return f"Units: natural frequencies in rad/{u.t}."
    if isinstance(step, (SwitchingTimesStep, IntervalStep)):
        return f"Units: times in {u.t}, $f$ in {u.f}."
    return None
