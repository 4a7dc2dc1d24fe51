"""The exact periodic steady state under a load that repeats with period ``T``.

One period of the load is given on ``[0, T)`` as a ``Piecewise`` (or ``Heaviside``,
``Min``/``Max``) of quasi-polynomial pieces, and the load repeats it. The periodic
response is the solution whose state ``s = (x, x', ..., x^(n-1))`` at ``t = T`` is the
state it started from at ``t = 0``. The equation is linear, so over one period

.. math::
    s(T) = \\Phi(T)\\, s(0) + r,

where ``r`` is the state at ``T`` of the response from rest (solved exactly interval by
interval, :func:`calckit.engine.piecewise.piecewise_response`) and the columns of
``Phi(T)`` are the states at ``T`` of the free motions that start from the unit states
``e_j``. Periodicity ``s(T) = s(0)`` is the linear system ``(I - Phi(T)) s(0) = r`` in
the ``n`` numbers of the initial state. ``r`` and ``Phi(T)`` are exact; the system is
solved with 40-digit arithmetic (mpmath) and the state kept as exact 30-digit decimals
(an exact closed form of it swells past what sympy evaluates quickly), which gives the
periodic response

.. math::
    x(t) = x_{rest}(t) + \\sum_j s_j(0)\\, h_j(t), \\qquad 0 \\le t < T,

the response from rest plus the free motions ``h_j`` weighted by the initial state.

Everything is exact: the switching times, the period and the coefficients are numbers
(rationals, ``sqrt``, ``pi``), never symbols, and the unknown state is never a symbol
either; the response from the 30-digit state is exact and periodic to about 1e-30. The work is bounded: at most :data:`MAX_ORDER` states and the switching times
:func:`calckit.engine.piecewise.split_switching` allows; the periodicity is checked by
evaluating ``s(T) - s(0)`` to 30 digits, not by simplifying it.

References
----------
The monodromy (period) map of a linear equation with periodic forcing: E. A. Coddington and
N. Levinson, *Theory of Ordinary Differential Equations*, McGraw-Hill, 1955, ch. 3, from
memory. The continuity of the state at a switch: Boyce, DiPrima & Meade, *Elementary
Differential Equations and Boundary Value Problems*, 11th ed., sec. 6.3-6.4, from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.engine.piecewise import IntervalSolver, piecewise_response, split_switching
from calckit.engine.response import Response
from calckit.errors import ForcingError, ModelError

__all__ = ["MAX_ORDER", "PeriodicSteadyState", "periodic_steady_state"]

MAX_ORDER = 8
"""The most states (equation order) a periodic steady state is solved for."""

_DIGITS = 30
"""Digits to which the periodicity and the determinant are evaluated."""


@dataclass(frozen=True)
class PeriodicSteadyState:
    """The periodic response to a load repeating with period ``T``, exact on ``[0, T)``.

    Attributes
    ----------
    solution : sympy.Piecewise
        ``x(t)`` on ``0 <= t < T``, one piece per interval of the load; outside that span the
        load repeats and so does ``x`` (:meth:`evaluate` takes ``t`` modulo ``T``).
    t : sympy.Symbol
    period : sympy number
    starts : tuple
        The start of each interval in ``[0, T)``: ``0, t_1, ...``.
    pieces : tuple
        ``x(t)`` on each interval, expressions in ``t``.
    initial_state : tuple
        The periodic state ``(x(0), x'(0), ...)``, exact decimals of 30 digits.
    from_rest : Response
        The response from rest interval by interval, every interval's steps kept.
    free_motion : sympy.Expr
        ``sum_j s_j(0) h_j(t)``, added to the response from rest.
    transition : sympy.ImmutableMatrix
        ``Phi(T)``: the free motions' states at ``T``, column by column.
    residual : float
        ``max |s(T) - s(0)|`` over ``max |s(0)|`` (1 when the state is 0), to 30 digits.
    """

    solution: sp.Expr
    t: sp.Symbol
    period: sp.Expr
    starts: tuple
    pieces: tuple
    initial_state: tuple
    from_rest: Response
    free_motion: sp.Expr
    transition: sp.ImmutableMatrix
    residual: float

    @property
    def verified(self) -> bool:
        """Every interval verified by substitution, the state continuous, and ``s(T) = s(0)`` to 1e-20."""
        return bool(self.from_rest.particular.verified and self.residual < 1e-20)

    @property
    def procedure(self) -> str:
        """How the periodic response was found, in one line a checker can follow."""
        n = len(self.initial_state)
        return (
            f"exact periodic solution: the response from rest over one period, solved interval by interval "
            f"({len(self.starts)} {'interval' if len(self.starts) == 1 else 'intervals'}, undetermined coefficients, the state continuous at each switch), "
            f"plus the free motions from the {n} unit states, weighted by the initial state that solves "
            f"$(I - \\Phi(T))\\,s(0) = s_{{rest}}(T)$ (40-digit LU, the state kept to 30 digits); $s(T) = s(0)$ to "
            f"{self.residual:.1e}"
        )

    def evaluate(self, times, derivative: int = 0) -> np.ndarray:
        """``x`` (or its *derivative*-th derivative) at *times* in floats, the period repeated."""
        times = np.asarray(times, dtype=float)
        T = float(self.period)
        phase = np.mod(times, T)
        out = np.empty_like(phase)
        ends = (*self.starts[1:], self.period)
        for start, end, piece in zip(self.starts, ends, self.pieces, strict=True):
            inside = (phase >= float(start)) & (phase < float(end))
            if not inside.any():
                continue
            expr = sp.diff(piece, self.t, derivative) if derivative else piece
            f = sp.lambdify(self.t, sp.N(expr, 17), modules=["numpy"])
            out[inside] = np.broadcast_to(np.asarray(f(phase[inside]), dtype=float), phase[inside].shape)
        return out


def _digits(value: sp.Expr) -> sp.Float:
    """*value* to 30 digits, with evalf's own precision bounded (a value that is 0 gives 0, not a hang)."""
    got = sp.N(value, _DIGITS, maxn=4 * _DIGITS)
    if not got.is_Number:
        raise ModelError(
            f"a state of the periodic solution did not evaluate to a number ({str(got)[:80]})",
            where="periodic steady state",
            do="Give numbers for every coefficient, switching time and the period",
        )
    return sp.Float(got, _DIGITS)


def _number(value, where: str) -> sp.Expr:
    number = exact(value, where=where)
    if not isinstance(number, sp.Expr) or number.free_symbols or not number.is_real:
        raise ModelError(
            f"the {where} {value!r} is not a real number",
            where=where,
            do="Give a number (the exact periodic solution needs numbers, not symbols)",
        )
    return number


def _numeric_model(operator, f, t: sp.Symbol) -> None:
    left = {s for c in getattr(operator, "coefficients", ()) for s in sp.sympify(c).free_symbols}
    left |= sp.sympify(f).free_symbols - {t}
    if left:
        raise ModelError(
            f"the model or the load still holds {', '.join(sorted(s.name for s in left))}",
            where="periodic steady state",
            do="Substitute numbers for every symbol but t: the exact periodic solution is found with numbers",
        )


def periodic_steady_state(
    operator, f, period, solver: IntervalSolver, *, t: sp.Symbol
) -> PeriodicSteadyState:
    """The periodic response to *f* repeated with *period*, exact on ``[0, period)``.

    Parameters
    ----------
    operator : the model (``LinearODE`` or ``Oscillator``) with numbers for its coefficients
    f : sympy expression
        One period of the load on ``[0, period)``: a ``Piecewise`` (or ``Heaviside``) of
        quasi-polynomial pieces, or one quasi-polynomial; switching times are numbers.
    period : number
        ``T`` in the time unit of the model, positive.
    solver : IntervalSolver
        The model's :meth:`interval_solver`.
    t : sympy.Symbol

    Raises
    ------
    ModelError
        A symbol is left; the period is not positive; the order is above :data:`MAX_ORDER`;
        the free motion itself repeats with the period (no damping at a natural frequency
        that is a multiple of ``2 pi / T``, or a free mass), so no single periodic response exists.
    ForcingError
        The load switches after the period, or cannot be cut into quasi-polynomial pieces.

    Examples
    --------
    >>> from calckit.engine.operator import LinearODE
    >>> t = sp.Symbol("t", real=True)
    >>> ode = LinearODE([1, 1])                       # x' + x = square wave, 1 then 0
    >>> per = periodic_steady_state(ode, sp.Piecewise((1, t < 1), (0, True)), 2, ode.interval_solver(), t=t)
    >>> abs(float(per.initial_state[0]) - float(1 / (1 + sp.E))) < 1e-15   # the period map by hand
    True
    """
    T = _number(period, "period")
    if not T.is_positive:
        raise ModelError(
            f"the period {period!r} is not positive", where="period", do="Give a period above 0, e.g. 1.5"
        )
    _numeric_model(operator, f, t)
    n = len(solver.rest)
    if n > MAX_ORDER:
        raise ModelError(
            f"the equation has {n} states, more than {MAX_ORDER}",
            where="periodic steady state",
            do=f"Reduce the model to at most {MAX_ORDER} states",
        )
    switched = split_switching(f, t)
    late = [time for time in switched.times if (time - T).is_positive]
    if late:
        raise ForcingError(
            f"the load switches at {late[0]}, after the period {T}",
            where="periodic load",
            do="Give one period of the load on 0 <= t < T; the repetition is taken care of",
        )
    rest = piecewise_response(operator, f, solver.rest, solver, t=t, from_rest=True)
    intervals = rest.particular.intervals
    starts = tuple(s for s in switched.starts if (s - T).is_negative)
    last = len(starts) - 1
    local = intervals[last].t
    at_T = {local: T - starts[last]}
    r = sp.Matrix([v.xreplace(at_T) for v in solver.state_of(intervals[last].solution, local)])

    free = []  # h_j(t): the free motion from the unit state e_j at t = 0, for every t
    for j in range(n):
        unit = tuple(sp.S.One if i == j else sp.S.Zero for i in range(n))
        motion = solver.respond(sp.S.Zero, unit, local)
        free.append(motion.solution)
    phi = sp.Matrix(n, n, lambda i, j: solver.state_of(free[j], local)[i].xreplace({local: T}))
    import mpmath

    with mpmath.workdps(_DIGITS + 10):
        system = mpmath.matrix(
            [[mpmath.mpf(str(_digits((1 if i == j else 0) - phi[i, j]))) for j in range(n)] for i in range(n)]
        )
        rhs = mpmath.matrix([mpmath.mpf(str(_digits(v))) for v in r])
        size = max(mpmath.mpf(1), max(abs(v) for v in system))
        if abs(mpmath.det(system)) <= mpmath.mpf("1e-20") * size**n:
            raise ModelError(
                f"the free motion repeats with the period {T}: I - Phi(T) is singular, so there is no single "
                "periodic response (an undamped natural frequency at a multiple of 2 pi / T, or a mass free to drift)",
                where="periodic steady state",
                do="Add damping or a spring, or change the period",
            )
        solved = mpmath.lu_solve(system, rhs)
        # the initial state as exact decimals of 30 digits: the response from it is exact, and periodic to
        # the 30th digit (an exact closed form of the state swells beyond what evalf handles quickly)
        state = tuple(sp.Rational(mpmath.nstr(solved[i], _DIGITS, strip_zeros=False)) for i in range(n))
    free_motion = sp.Add(*(s * h.xreplace({local: t}) for s, h in zip(state, free, strict=True)))
    pieces = tuple(
        res.solution.xreplace({res.t: t - start}) + free_motion
        for res, start in zip(intervals, starts, strict=False)
    )
    ends = (*starts[1:], T)
    solution = sp.Piecewise(*((p, sp.Lt(t, end)) for p, end in zip(pieces, ends, strict=True)))

    # the periodicity, evaluated (not simplified): the state at T against the state at 0, each side to 30
    # digits on its own (evalf of the difference, exactly 0, would raise its precision without bound)
    at_end = [_digits(v.xreplace({t: T})) for v in solver.state_of(pieces[-1], t)]
    start = [_digits(s) for s in state]
    gap = float(max(abs(a - s) for a, s in zip(at_end, start, strict=True)))
    scale = float(max(abs(s) for s in start)) or 1.0
    return PeriodicSteadyState(
        solution=solution,
        t=t,
        period=T,
        starts=starts,
        pieces=pieces,
        initial_state=state,
        from_rest=rest,
        free_motion=free_motion,
        transition=sp.ImmutableMatrix(phi),
        residual=gap / scale,
    )
