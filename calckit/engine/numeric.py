"""Fast numbers from derived expressions.

A derivation gives ``x(t)`` as a sympy expression; a sheet needs it at
thousands of times for a plot, or at a sweep of frequencies for a response
curve. :func:`compile_expr` turns an expression into a numpy function once
(``sympy.lambdify`` with the numpy module and common subexpressions shared),
so that 100,000 points take milliseconds instead of the seconds that
``subs``/``evalf`` would take per point.

Evaluation rules
----------------
- The result has the shape of ``times`` (broadcast with any array parameter
  values); a constant expression is broadcast too.
- The expression is evaluated in real arithmetic first. Where that gives
  ``nan`` (a square root of a negative number inside an expression that is
  real overall, such as the overdamped basis written for values that turn out
  underdamped), it is evaluated again in complex arithmetic, and a complex
  result whose imaginary part is rounding noise (below ``1e-9`` of the
  largest magnitude) is returned as real. Results that are truly complex (a
  receptance) are returned complex.
- Division by zero gives ``inf`` quietly, as in the closed forms of
  :mod:`calckit.physics.harmonic`.

Examples
--------
>>> import sympy as sp
>>> t, w = sp.symbols("t omega", real=True)
>>> f = compile_expr(sp.cos(w * t), t, parameters=(w,))
>>> f([0.0, 0.5], omega=2 * float(sp.pi)).round(12)
array([ 1., -1.])
"""

from __future__ import annotations

import math
import sys
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.errors import ModelError, UnitsError

__all__ = [
    "Compiled",
    "FrequencyResponse",
    "compile_expr",
    "float_matrix",
    "frequency_response",
    "refuse_overflow",
    "time_history",
]

#: imaginary parts below this fraction of the largest magnitude count as rounding
IMAG_TOLERANCE = 1e-9


def _names(symbols: Iterable[sp.Symbol]) -> str:
    return ", ".join(sorted(s.name for s in symbols))


def _is_quantity(value: Any) -> bool:
    return hasattr(value, "magnitude") and hasattr(value, "units")


@dataclass(frozen=True)
class Compiled:
    """An expression compiled for numpy: call it as ``f(times, **parameter_values)``.

    Attributes
    ----------
    expr : sympy.Expr
        The expression compiled.
    t : sympy.Symbol
        The independent variable (time, or frequency for a response curve).
    parameters : tuple of sympy.Symbol
        Symbols whose values are passed by name at each call.

    Examples
    --------
    >>> import sympy as sp
    >>> t = sp.Symbol("t")
    >>> compile_expr(sp.Integer(3), t)([0.0, 1.0, 2.0])
    array([3., 3., 3.])
    """

    expr: sp.Expr
    t: sp.Symbol
    parameters: tuple[sp.Symbol, ...]
    function: Callable[..., Any] = field(repr=False, compare=False)

    @property
    def parameter_names(self) -> tuple[str, ...]:
        """Names of the parameters, the keywords a call takes."""
        return tuple(p.name for p in self.parameters)

    def __call__(self, times, **values) -> np.ndarray:
        """Evaluate at *times* (number, sequence or array; a pint time is taken in s).

        An exponential of the expression growing past the float range is refused, naming it
        (:func:`refuse_overflow`); an inf of a division by zero is given as it is.
        """
        out, args = self._values(times, values)
        if all(np.all(np.isfinite(a)) for a in args):
            refuse_overflow(out, self.expr, self.t, args[0], f"expression {sp.sstr(self.expr)[:60]}", growth_only=True)
        return out

    def _values(self, times, values: dict) -> tuple[np.ndarray, list]:
        """The values at *times*, and the arrays they were computed from (times first)."""
        x = _times_array(times, self.t.name)
        args = [x]
        missing = [name for name in self.parameter_names if name not in values]
        if missing:
            raise ModelError(
                f"no value given for {', '.join(missing)}",
                where=f"evaluating {self.expr}",
                do="Pass every parameter by name, e.g. f(times, "
                + ", ".join(f"{name}=..." for name in missing)
                + ")",
            )
        unknown = sorted(set(values) - set(self.parameter_names))
        if unknown:
            known = ", ".join(self.parameter_names) or "none"
            raise ModelError(
                f"{', '.join(unknown)} is not a parameter of the expression",
                where=f"evaluating {self.expr}",
                do=f"Pass only its parameters ({known})",
            )
        for name in self.parameter_names:
            args.append(_value_array(values[name], name))
        return _evaluate(self.function, args), args


def _times_array(times, name: str) -> np.ndarray:
    if _is_quantity(times):
        from calckit.core.units import ureg

        try:
            times = times.to(ureg.second).magnitude
        except Exception as exc:  # pint's DimensionalityError and kin
            raise UnitsError(
                f"expected times, got a quantity in {times.units}",
                where=name,
                do="Give times in s, ms or min, or plain numbers in seconds",
            ) from exc
    return _value_array(times, name)


def _value_array(value, name: str) -> np.ndarray:
    if _is_quantity(value):
        raise UnitsError(
            f"got a quantity with units ({value.units}) for a compiled expression",
            where=name,
            do="Give the value as a plain number in SI units (the expression is in SI)",
        )
    if isinstance(value, sp.Basic):
        if value.free_symbols:
            raise ModelError(
                f"the value {value} still has the symbol(s) {_names(value.free_symbols)}",
                where=name,
                do="Give a number",
            )
        value = complex(value) if value.has(sp.I) else float(value)
    try:
        arr = np.asarray(value)
        if arr.dtype.kind not in "biufc":
            raise TypeError
        return arr if arr.dtype.kind in "fc" else arr.astype(float)
    except (TypeError, ValueError) as exc:
        raise ModelError(
            f"cannot read {value!r} as numbers", where=name, do="Give a number or an array of numbers"
        ) from exc


def _evaluate(function, args) -> np.ndarray:
    shape = np.broadcast_shapes(*(np.shape(a) for a in args))
    with np.errstate(all="ignore"):
        out = np.asarray(function(*args))
        if out.dtype.kind != "c" and np.isnan(out).any() and not any(np.isnan(a).any() for a in args):
            out = np.asarray(function(*(a.astype(complex) for a in args)))
    if out.dtype.kind == "c":
        scale = np.nanmax(np.abs(out), initial=0.0) if out.size else 0.0
        if np.all(np.abs(out.imag) <= IMAG_TOLERANCE * scale):
            out = out.real.copy()
    if out.dtype.kind not in "fc":
        out = out.astype(float)
    return np.array(np.broadcast_to(out, shape))


@lru_cache(maxsize=256)
def _lambdify(expr: sp.Expr, t: sp.Symbol, parameters: tuple[sp.Symbol, ...]):
    return sp.lambdify((t, *parameters), expr, modules="numpy", cse=True)


def compile_expr(expr, t: sp.Symbol, parameters: Iterable[sp.Symbol | str] = ()) -> Compiled:
    """Compile *expr* in *t* once for fast evaluation on numpy arrays.

    Parameters
    ----------
    expr : sympy expression or number
        Floats are read as the decimals they show (see :func:`calckit.core.exact.exact`).
    t : sympy.Symbol
        The variable the array of the first argument stands for.
    parameters : sequence of sympy.Symbol or str
        Every other free symbol of *expr*, by symbol or by name; their values
        are passed by name at each call.

    Returns
    -------
    Compiled

    Raises
    ------
    ModelError
        A free symbol that is neither *t* nor a parameter, two symbols with one
        name, or an undefined function such as ``f(t)``.

    Examples
    --------
    >>> import sympy as sp
    >>> t, c = sp.symbols("t c", positive=True)
    >>> f = compile_expr(sp.exp(-c * t), t, parameters=["c"])
    >>> f([0.0, 1.0], c=0.0)
    array([1., 1.])
    """
    if not isinstance(t, sp.Symbol):
        raise ModelError(
            f"expected a sympy Symbol for the variable, got {type(t).__name__} {t!r}",
            where="compile_expr(t=...)",
            do='Pass the symbol itself, e.g. t = sympy.Symbol("t", real=True)',
        )
    if isinstance(expr, str):  # text is never run
        raise ModelError(
            f"got text {expr!r}, which is not read here",
            where="compile_expr",
            do="Give a sympy expression, or read the text with calckit.parse_expression first",
        )
    expr = exact(sp.sympify(expr, strict=True), where="compile_expr")
    free = expr.free_symbols - {t}
    by_name: dict[str, sp.Symbol] = {}
    for s in free | {t}:
        if s.name in by_name:
            raise ModelError(
                f"two different symbols are named {s.name} (with different assumptions)",
                where=f"compile_expr({expr})",
                do="Make the symbols with the same assumptions, or give them different names",
            )
        by_name[s.name] = s
    chosen: list[sp.Symbol] = []
    for p in parameters:
        name = p if isinstance(p, str) else getattr(p, "name", None)
        if name is None:
            raise ModelError(
                f"a parameter must be a sympy Symbol or a name, got {p!r}",
                where="compile_expr(parameters=...)",
            )
        if name == t.name:
            raise ModelError(
                f"{name} is the variable of the expression, not a parameter",
                where="compile_expr(parameters=...)",
                do="Leave it out of the parameters",
            )
        symbol = by_name.get(name, p if isinstance(p, sp.Symbol) else sp.Symbol(name))
        if symbol not in chosen:
            chosen.append(symbol)
    left = free - set(chosen)
    if left:
        raise ModelError(
            f"the expression has the free symbol(s) {_names(left)}, which are neither {t.name} nor parameters",
            where=f"compile_expr({expr})",
            do="List them in parameters=(...) and pass their values at each call, or substitute numbers",
        )
    undefined = expr.atoms(sp.core.function.AppliedUndef) | expr.atoms(sp.Derivative, sp.Integral)
    if undefined:
        raise ModelError(
            f"cannot compute numbers from {', '.join(sorted(map(str, undefined)))}",
            where=f"compile_expr({expr})",
            do="Give an explicit expression (solve the derivation first)",
        )
    return Compiled(expr, t, tuple(chosen), _lambdify(expr, t, tuple(chosen)))


def _source(item, part: str):
    """The expression and time symbol of a Response, Derivation or Compiled."""
    if part not in ("solution", "transient", "steady_state"):
        raise ModelError(
            f"unknown part {part!r}",
            where="time_history(part=...)",
            do='Use "solution", "transient" or "steady_state"',
        )
    t = getattr(item, "t", None)
    if part != "solution" and not hasattr(item, part):
        raise ModelError(
            f"a {type(item).__name__} has no {part}",
            where="time_history(part=...)",
            do="Ask a total response (Oscillator.response) for its transient and steady state",
        )
    expr = getattr(item, part, None)
    if not isinstance(t, sp.Symbol) or not isinstance(expr, sp.Basic):
        raise ModelError(
            f"expected a Response or a Derivation, got {type(item).__name__}",
            where="time_history",
            do="Pass the result of Oscillator.response, total_response or particular",
        )
    return expr, t


def time_history(response_or_derivation, times, *, part: str = "solution", **values) -> np.ndarray:
    """``x(t)`` of a response or derivation at an array of times, by a compiled function.

    Parameters
    ----------
    response_or_derivation : Response or Derivation
        From :meth:`Oscillator.response`, :func:`calckit.engine.response.total_response`
        or ``particular``.
    times : array-like or pint Quantity
        Times in s.
        The result has the shape of *times*, or ``(n, len(times))`` for the
        column solution of an n-coordinate model (``(n,)`` at one time,
        ``(n, *times.shape)`` in general).
    part : {"solution", "transient", "steady_state"}
        Which part of a Response to evaluate (a Derivation has only its solution).
    **values
        A number (or array broadcasting with *times*) for every parameter symbol
        left in the expression, by name.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit import Oscillator
    >>> t = sp.Symbol("t", real=True)
    >>> res = Oscillator(1, 0, 4).response(0, 1, 0, t=t)
    >>> time_history(res, [0.0, float(sp.pi) / 2]).round(12)
    array([ 1., -1.])
    """
    expr, t = _source(response_or_derivation, part)
    parameters = sorted(expr.free_symbols - {t}, key=lambda s: s.name)
    label = {"solution": "response x(t)", "transient": "transient", "steady_state": "steady state"}[part]
    if isinstance(expr, sp.MatrixBase):  # a multi-mass model: one row per coordinate, shape (n, *times.shape)
        rows = [compile_expr(row, t, parameters=parameters)._values(times, values)[0] for row in expr]
        shape = np.broadcast_shapes(*(np.shape(row) for row in rows))
        out = np.stack([np.broadcast_to(row, shape) for row in rows])
    else:
        out = compile_expr(expr, t, parameters=parameters)._values(times, values)[0]
    moments = _times_array(times, t.name)
    if all(np.all(np.isfinite(_value_array(v, "x"))) for v in (moments, *values.values())):
        refuse_overflow(out, expr, t, moments, label)  # finite in, not finite out: the float range passed
    return out


#: ln of the largest float (sys.float_info.max, about 1.8e308): exp(x) overflows for x above it.
LN_LARGEST_FLOAT = math.log(sys.float_info.max)


def refuse_overflow(
    values: np.ndarray, expr: Any, t: sp.Symbol, times: np.ndarray, label: str, *, growth_only: bool = False
) -> None:
    """Raise :class:`ModelError` naming the overflow if *values* of *expr* at finite *times* passed the float range.

    A time history of the kit's forcings (quasi-polynomials, switched) is finite at every
    finite time; an inf there, or a NaN where an exponential of *expr* passes the largest
    float within *times* (``inf - inf``), means the float range was passed (``exp(a t)``
    with a large ``a``). The message names the fastest growing exponential and the time it
    overflows. A NaN of another cause (a formula's 0/0 at the values given) is left as it is;
    with *growth_only* an inf is too unless such an exponential explains it (a compiled
    receptance is infinite at an undamped resonance, quietly).
    """
    finite = np.isfinite(values)
    if finite.all():
        return
    times = np.asarray(times, dtype=float)
    rates = []
    for term in sp.sympify(expr).atoms(sp.exp):
        rate = sp.diff(term.args[0], t)
        if rate.is_number and sp.re(rate).is_positive:
            rates.append((float(sp.re(rate)), term))
    fastest = max(rates, key=lambda pair: pair[0], default=None)
    passes = fastest is not None and times.size and fastest[0] * float(np.max(times)) > LN_LARGEST_FLOAT
    if not (passes or (np.isinf(values).any() and not growth_only)):
        return
    try:  # the first time at which any coordinate is not finite
        mask = (~finite).reshape(-1, *times.shape).any(axis=0)
        at = f" by t = {float(times[mask].min()):.4g} s"
    except ValueError:  # values broadcast beyond the times: no one time to name
        at = ""
    what = f"the {label} overflows: it passes the largest float (about 1.8e308){at}"
    if fastest is not None:
        what += f"; {sp.sstr(fastest[1])[:60]} passes it once t > {LN_LARGEST_FLOAT / fastest[0]:.3g} s"
    raise ModelError(
        what,
        where=f"evaluating the {label}",
        do="Shorten the time evaluated to before it overflows, or check the forcing's growth rate "
        "(a motion that large is no vibration)",
    )


@dataclass(frozen=True, kw_only=True)
class FrequencyResponse:
    """Steady-state response to a unit harmonic force at each frequency.

    The one return type of ``calckit.frequency_response``,
    ``Oscillator.frequency_response`` and ``MultiMass.frequency_response``. It
    reads as its receptance array (``H[0]``, ``H[:, 0, 0]``, ``np.abs(H)``,
    ``H.shape``), so code written for the bare array keeps working.

    Attributes
    ----------
    omega : numpy.ndarray
        Forcing frequencies, rad/s.
    receptance : numpy.ndarray (complex)
        ``H(omega) = X / F = 1 / p(i omega)``, m/N: for the oscillator
        ``1 / (k - m omega^2 + i c omega)``; for a multi-mass model the matrices
        ``(K - omega^2 M + i omega C)^{-1}``, shape ``(len(omega), n, n)``.
    static_stiffness : numpy.ndarray or None
        ``a_0`` (``k`` for the oscillator), N/m, broadcast to the shape of omega;
        None for a multi-mass model (its static stiffness is the matrix K).
    """

    omega: np.ndarray
    receptance: np.ndarray
    static_stiffness: np.ndarray | None = None

    def __array__(self, dtype=None, copy=None) -> np.ndarray:
        return self.receptance if dtype is None else self.receptance.astype(dtype)

    def __getitem__(self, index):
        return self.receptance[index]

    def __len__(self) -> int:
        return len(self.receptance)

    @property
    def shape(self) -> tuple[int, ...]:
        """The receptance array's shape."""
        return self.receptance.shape

    @property
    def amplitude(self) -> np.ndarray:
        """``|H|``, m/N: amplitude per unit force amplitude."""
        return np.abs(self.receptance)

    @property
    def phase_lag(self) -> np.ndarray:
        """Lag of the displacement behind the force, rad (in ``[0, pi]`` for c >= 0).

        ``atan2(-Im H, Re H)`` with the sign of a zero imaginary part dropped, so
        that an undamped system lags by exactly 0 below resonance and pi above;
        at an undamped resonance (``|H|`` infinite) the lag is its limit pi/2.
        """
        h = self.receptance
        with np.errstate(invalid="ignore"):
            lag = np.arctan2(0.0 - h.imag, h.real)  # 0.0 - (+/-0.0) is +0.0
        return np.where(np.isinf(np.abs(h)), np.pi / 2, lag)

    @property
    def magnification(self) -> np.ndarray:
        """``k |H|``: amplitude over the deflection under the force amplitude applied statically, ``F / k``."""
        if self.static_stiffness is None:
            raise ModelError(
                "a receptance matrix has no single static deflection to compare with",
                where="FrequencyResponse.magnification",
                do="Use the amplitude |H| (m/N), or multiply a column by the stiffness you compare with",
            )
        if np.any(self.static_stiffness == 0):
            raise ModelError(
                "with no spring (k = 0) there is no static deflection to compare with",
                where="FrequencyResponse.magnification",
                do="Use the amplitude |H| (m/N) instead",
            )
        return self.static_stiffness * self.amplitude


@lru_cache(maxsize=64)
def _receptance_compiled(coefficients: tuple[sp.Expr, ...], omega: sp.Symbol, parameters):
    n = len(coefficients) - 1
    p = sp.Add(*(a * (sp.I * omega) ** (n - i) for i, a in enumerate(coefficients)))
    receptance = compile_expr(1 / sp.expand(p), omega, parameters)
    stiffness = compile_expr(coefficients[-1], omega, parameters)
    return receptance, stiffness


def frequency_response(osc, omegas, **values) -> FrequencyResponse:
    """Receptance, amplitude, phase lag and magnification over an array of frequencies.

    Works for numeric and symbolic coefficients alike: the receptance
    ``1 / p(i omega)`` is compiled once per model and the parameter values are
    passed at each call.

    Parameters
    ----------
    osc : Oscillator, LinearODE or MultiMass
        For a multi-mass model the receptance is the matrix
        ``(K - omega^2 M + i omega C)^{-1}`` at each frequency.
    omegas : array-like
        Forcing frequencies, rad/s.
    **values
        Numbers for the symbols of a symbolic model, by name (``m=250, c=..``).

    Examples
    --------
    >>> import numpy as np
    >>> from calckit import Oscillator
    >>> fr = frequency_response(Oscillator(1, 0, 4), np.array([0.0, 1.0]))
    >>> fr.magnification
    array([1.        , 1.33333333])
    """
    if all(hasattr(osc, name) for name in ("M", "C", "K")):
        return _matrix_response(osc, omegas, values)
    coefficients = getattr(osc, "coefficients", None)
    if coefficients is None:
        raise ModelError(
            f"expected an Oscillator or LinearODE, got {type(osc).__name__}",
            where="frequency_response",
            do="Pass the model, e.g. Oscillator(m, c, k)",
        )
    params = tuple(sorted(frozenset().union(*(a.free_symbols for a in coefficients)), key=lambda s: s.name))
    omega = sp.Dummy("omega", real=True)
    receptance, stiffness = _receptance_compiled(tuple(coefficients), omega, params)
    w = _times_array(omegas, "omega") if not _is_quantity(omegas) else _omega_array(omegas)
    h = receptance(w, **values)
    if h.dtype.kind != "c":
        h = h.astype(complex)
    k = stiffness(w, **values)
    shape = np.broadcast_shapes(h.shape, np.shape(w))
    return FrequencyResponse(
        omega=np.array(np.broadcast_to(w, shape)),
        receptance=h,
        static_stiffness=np.array(np.broadcast_to(k, shape)),
    )


def _omega_array(omegas) -> np.ndarray:
    from calckit.core.units import ureg

    if omegas.check("[frequency]") and "hertz" in str(omegas.units):
        raise UnitsError(
            f"frequencies in {omegas.units} count cycles, not radians",
            where="omega",
            do="Give rad/s or rpm, or multiply Hz by 2 pi",
        )
    try:
        return np.asarray(omegas.to(ureg.radian / ureg.second).magnitude, dtype=float)
    except Exception as exc:  # pint's DimensionalityError
        raise UnitsError(
            f"expected frequencies, got a quantity in {omegas.units}",
            where="omega",
            do="Give rad/s or rpm",
        ) from exc


def float_matrix(matrix: sp.ImmutableMatrix, label: str) -> np.ndarray:
    """*matrix* as a numpy float array; ModelError naming *label* when it has symbols."""
    if matrix.free_symbols:
        raise ModelError(
            f"{label} has symbols ({', '.join(sorted(map(str, matrix.free_symbols)))}); this needs numbers",
            where=label,
            do="Substitute numbers first, e.g. MultiMass(M.subs(values), C.subs(values), K.subs(values))",
        )
    return np.array(matrix.tolist(), dtype=float)


def _matrix_response(model, omegas, values: dict) -> FrequencyResponse:
    """Receptance matrices ``(K - omega^2 M + i omega C)^{-1}`` of a multi-mass model."""
    given = {
        s: values[s.name] for m in (model.M, model.C, model.K) for s in m.free_symbols if s.name in values
    }
    mass, damping, stiffness = (
        float_matrix(m.subs(given) if given else m, label)
        for m, label in ((model.M, "M"), (model.C, "C"), (model.K, "K"))
    )
    w = _times_array(omegas, "omega") if not _is_quantity(omegas) else _omega_array(omegas)
    w = np.atleast_1d(w)
    if w.ndim != 1:
        raise ModelError(
            f"expected a list of frequencies, got an array of shape {w.shape}",
            where="frequency_response",
            do="Give a one-dimensional sequence of angular frequencies in rad/s",
        )
    z = stiffness[None] - (w**2)[:, None, None] * mass[None] + 1j * w[:, None, None] * damping[None]
    try:
        receptance = np.linalg.inv(z)
    except np.linalg.LinAlgError as exc:
        dets = np.abs(np.linalg.det(z))
        where = float(w[int(np.argmin(dets))])
        raise ModelError(
            f"the receptance is unbounded at omega = {where:g} rad/s (undamped resonance)",
            where="frequency_response",
            do="Leave the natural frequencies out of the list, or add damping",
        ) from exc
    return FrequencyResponse(omega=w, receptance=receptance)
