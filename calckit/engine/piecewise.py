"""A forcing that switches, solved exactly interval by interval.

A load written with ``Heaviside(t - a)``, ``Piecewise(...)``, ``Min``/``Max`` (or built
by the pulses of :mod:`calckit.physics.pulses`) is a quasi-polynomial on each interval
between its switching times. On ``[t_i, t_{i+1})`` the local time ``tau = t - t_i`` is
taken, the piece of the forcing is written in ``tau``, its particular solution is derived
by undetermined coefficients (the one skeleton, every step kept), and the homogeneous
part is fitted so that the state ``x, x', ..., x^(n-1)`` (for a multi-mass model the
displacements and velocities) at ``tau = 0`` is the state the interval before ended in.
The first interval starts from the initial state at ``t = 0``. The result is a sympy
``Piecewise`` in ``t`` (a column of them for a multi-mass model).

:func:`split_switching` finds the switching times, orders them and writes each piece;
:func:`piecewise_response` solves interval by interval with a model's own ``response``
(so the scalar and the vector models share this module through a small
:class:`IntervalSolver`); :func:`piecewise_particular` is the response from rest, the
natural particular solution of a load that starts at ``t = 0``.

References
----------
Boyce, DiPrima & Meade, *Elementary Differential Equations and Boundary Value Problems*,
11th ed., sec. 6.3-6.4 (discontinuous forcing, continuity of the state), from memory.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import sympy as sp

from calckit.engine.algebra import is_zero
from calckit.engine.derivation import Derivation
from calckit.engine.response import Response
from calckit.engine.steps import (
    ContinuityStep,
    IntervalStep,
    PiecewiseSolutionStep,
    Step,
    SwitchingTimesStep,
)
from calckit.errors import ForcingError

__all__ = [
    "IntervalSolver",
    "PiecewiseDerivation",
    "SwitchedForcing",
    "is_switching",
    "piecewise_particular",
    "piecewise_response",
    "split_switching",
]

_SWITCHES = (sp.Heaviside, sp.Piecewise, sp.Min, sp.Max)
#: most switching times one forcing may have (each interval is one derivation)
MAX_INTERVALS = 200


def _entries(f) -> list:
    if isinstance(f, sp.MatrixBase):
        return list(f)
    if isinstance(f, (list, tuple)):
        return [e for row in f for e in (row if isinstance(row, (list, tuple)) else [row])]
    return [f]


def is_switching(f, t: sp.Symbol | None = None) -> bool:
    """True when *f* (an expression, or a forcing column) switches in time.

    A switch is a ``Heaviside``, ``Piecewise``, ``Min`` or ``Max`` whose argument holds
    the time symbol (the symbol named ``t`` when *t* is not given).
    """
    for entry in _entries(f):
        if not isinstance(entry, sp.Basic):
            continue
        for atom in entry.atoms(*_SWITCHES):
            names = {s.name for s in atom.free_symbols}
            if (t is not None and atom.has(t)) or (t is None and "t" in names):
                return True
    return False


@dataclass(frozen=True)
class SwitchedForcing:
    """A switching forcing cut into intervals.

    Attributes
    ----------
    forcing : sympy.Expr or sympy.ImmutableMatrix
        As given.
    t : sympy.Symbol
    times : tuple
        Switching times after ``t = 0``, increasing: ``t_1 < t_2 < ... < t_k``.
    pieces : tuple
        The quasi-polynomial forcing on ``[0, t_1), [t_1, t_2), ..., [t_k, oo)``.
    conditions : tuple
        Relations the order of the times needs (``a > 0`` for a symbolic ``a``).
    """

    forcing: sp.Expr | sp.ImmutableMatrix
    t: sp.Symbol
    times: tuple[sp.Expr, ...]
    pieces: tuple[sp.Expr | sp.ImmutableMatrix, ...]
    conditions: tuple[sp.Expr, ...] = ()

    @property
    def starts(self) -> tuple[sp.Expr, ...]:
        """Start of each interval: ``0, t_1, ..., t_k``."""
        return (sp.S.Zero, *self.times)


def _time_of(expr: sp.Expr, t: sp.Symbol, whole: sp.Expr) -> tuple[sp.Expr, sp.Expr]:
    """(rate, switching time) of ``expr = rate * (t - time)``, or refuse."""
    expanded = sp.expand(expr)
    rate = expanded.coeff(t, 1)
    rest = sp.expand(expanded - rate * t)
    if rate == 0 or rate.has(t) or rest.has(t):
        raise ForcingError(
            f"it switches where {expr} changes sign, which is not of the form t - a",
            where=f"forcing term {whole}",
            do="Write each switch with a condition linear in t, such as Heaviside(t - a) or t < a",
        )
    return rate, sp.simplify(-rest / rate)


def _sign(value: sp.Expr) -> int | None:
    if value.is_positive:
        return 1
    if value.is_negative:
        return -1
    if value.is_zero:
        return 0
    return None


def _rewrite_min_max(expr: sp.Expr, t: sp.Symbol) -> sp.Expr:
    return expr.replace(
        lambda e: isinstance(e, (sp.Min, sp.Max)) and e.has(t), lambda e: e.rewrite(sp.Piecewise)
    )


def _switches(expr: sp.Expr, t: sp.Symbol) -> dict[sp.Basic, tuple[sp.Expr, sp.Expr, sp.Basic]]:
    """Every switch of *expr*: Heaviside or relational -> (rate, time, where)."""
    found = {}
    for h in expr.atoms(sp.Heaviside):
        if h.has(t):
            rate, time = _time_of(h.args[0], t, h)
            found[h] = (rate, time, h)
    for pw in expr.atoms(sp.Piecewise):
        for _piece, cond in pw.args:
            for rel in cond.atoms(sp.core.relational.Relational):
                if rel.has(t):
                    rate, time = _time_of(rel.lhs - rel.rhs, t, pw)
                    found[rel] = (rate, time, pw)
    return found


def _order(times: list[tuple[sp.Expr, sp.Basic]], t: sp.Symbol) -> tuple[list[sp.Expr], list[sp.Expr]]:
    """Distinct switching times after 0, in increasing order, and the conditions assumed."""
    conditions: list[sp.Expr] = []
    after: list[tuple[sp.Expr, sp.Basic]] = []
    for time, where in times:
        sign = _sign(time)
        if sign is None:
            cond = sp.Gt(time, 0)
            if cond not in conditions:
                conditions.append(cond)
            after.append((time, where))
        elif sign > 0:
            after.append((time, where))
    ordered: list[tuple[sp.Expr, sp.Basic]] = []
    for time, where in after:
        position = 0
        duplicate = False
        for i, (other, other_where) in enumerate(ordered):
            sign = _sign(sp.simplify(time - other))
            if sign is None:
                raise ForcingError(
                    f"the order of the switching times {other} and {time} cannot be told from the "
                    "symbols' assumptions",
                    where=f"forcing term {where}"
                    if where == other_where
                    else f"forcing terms {other_where} and {where}",
                    do="Declare durations positive (sympy.Symbol('d', positive=True)) and write later times as "
                    "an earlier one plus a duration, e.g. Heaviside(t - a - d)",
                )
            if sign == 0:
                duplicate = True
                break
            if sign > 0:
                position = i + 1
        if not duplicate:
            ordered.insert(position, (time, where))
    return [time for time, _ in ordered], conditions


def _truth(rate: sp.Expr, time: sp.Expr, rel: sp.Basic, index: int, times: list, t: sp.Symbol, where) -> bool:
    """Whether ``rel`` (``rate (t - time) REL 0``) holds inside interval *index*."""
    rate_sign = _sign(rate)
    if rate_sign is None:
        raise ForcingError(
            f"the sign of {rate}, the rate of t in the switch, cannot be told",
            where=f"forcing term {where}",
            do="Declare the symbol positive, or write the switch as t - a",
        )
    if time in times:
        after = times.index(time) < index  # the interval lies after this time
    else:  # a time at or before 0: every interval lies after it
        after = True
    positive = after if rate_sign > 0 else not after  # sign of rate*(t - time) on the interval
    if isinstance(rel, sp.Heaviside):
        return positive
    if isinstance(rel, sp.Eq):
        return False
    if isinstance(rel, sp.Ne):
        return True
    greater = isinstance(rel, (sp.Gt, sp.Ge))  # lhs - rhs > 0
    return positive if greater else not positive


def _refuse_endless(entries: list, t: sp.Symbol) -> None:
    """A load repeated without end (``floor(t/T)``, as ``pulses.repeated`` writes it without a count)."""
    for entry in entries:
        for atom in entry.atoms(sp.floor, sp.ceiling, sp.frac):
            if atom.has(t):
                raise ForcingError(
                    f"the load repeats without end ({atom} of t): it switches infinitely often, so its response "
                    "from rest would need an infinite series of intervals",
                    where=f"forcing term {entry}",
                    do="Give repeated(pulse, period, count=n) for n copies solved exactly from rest, or take the "
                    "periodic load through its Fourier series for the steady state",
                )


def split_switching(f, t: sp.Symbol) -> SwitchedForcing:
    """Cut a switching forcing (or forcing column) into intervals with a quasi-polynomial piece each.

    Raises
    ------
    ForcingError
        A switch not linear in t; switching times whose order cannot be told; a
        ``Piecewise`` piece that is never used (its condition comes after an earlier
        one that covers it); a ``Piecewise`` undefined on an interval; a load repeated
        without end (``floor`` of t, as ``repeated`` without a count writes it).

    Examples
    --------
    >>> t = sp.Symbol("t", real=True)
    >>> cut = split_switching(sp.Heaviside(t - 1) - sp.Heaviside(t - 3), t)
    >>> cut.times, cut.pieces
    ((1, 3), (0, 1, 0))
    """
    vector = isinstance(f, sp.MatrixBase)
    entries = [_rewrite_min_max(sp.sympify(e), t) for e in _entries(f)]
    _refuse_endless(entries, t)
    switches: dict = {}
    for entry in entries:
        switches.update(_switches(entry, t))
    listed = [(time, where) for _rate, time, where in switches.values()]
    times, conditions = _order(listed, t)
    if len(times) > MAX_INTERVALS:
        raise ForcingError(
            f"the forcing switches {len(times)} times, more than {MAX_INTERVALS}",
            where="forcing",
            do="Give a sampled record (piecewise linear) for a load with many switches",
        )
    pieces = []
    used: set = set()
    reachable: set = set()  # pieces whose condition holds on some interval after t = 0
    for index in range(len(times) + 1):
        mapping = {}
        for rel, (rate, time, where) in switches.items():
            truth = _truth(rate, time, rel, index, times, t, where)
            mapping[rel] = (
                sp.S.One
                if isinstance(rel, sp.Heaviside) and truth
                else (sp.S.Zero if isinstance(rel, sp.Heaviside) else sp.true if truth else sp.false)
            )
        row = []
        for entry in entries:
            for pw in entry.atoms(sp.Piecewise):
                first = True
                for k, (_piece, cond) in enumerate(pw.args):
                    if cond.xreplace(mapping) == sp.true:
                        reachable.add((pw, k))
                        if first:
                            used.add((pw, k))
                            first = False
            piece = entry.xreplace(mapping)
            if piece.has(sp.nan) or any(p.has(t) for p in piece.atoms(sp.Piecewise)):
                span = f"{sp.S.Zero if index == 0 else times[index - 1]} <= t" + (
                    f" < {times[index]}" if index < len(times) else ""
                )
                raise ForcingError(
                    f"the Piecewise is not defined by a condition in t on {span}",
                    where=f"forcing {entry}",
                    do="End the Piecewise with a last piece (value, True) covering every other time",
                )
            if piece.atoms(sp.Piecewise):
                raise ForcingError(
                    "which piece applies depends on the parameters, not on t alone",
                    where=f"forcing {entry}",
                    do="Give numbers, or write the load so that its switches are conditions on t",
                )
            row.append(piece)
        pieces.append(sp.ImmutableMatrix(len(row), 1, row) if vector else row[0])
    for entry in entries:
        for pw in entry.atoms(sp.Piecewise):
            for k, (piece, cond) in enumerate(pw.args):
                if (pw, k) in reachable and (pw, k) not in used:
                    raise ForcingError(
                        f"the piece ({piece}, {cond}) is never used: the pieces before it already cover every "
                        "time it would apply",
                        where=f"forcing term {pw}",
                        do="Order the pieces by time, earliest first, each with its end, e.g. (a, t < t1), (b, t < t2)",
                    )
    forcing = sp.ImmutableMatrix(f) if vector else sp.sympify(f)
    return SwitchedForcing(forcing, t, tuple(times), tuple(pieces), tuple(conditions))


@dataclass(frozen=True)
class IntervalSolver:
    """How one model solves one interval and reads its state: what a model gives this module.

    ``respond(piece, state, tau)`` returns the model's :class:`Response` to *piece* (a
    quasi-polynomial in *tau*) from *state* at ``tau = 0``; ``state_of(x, tau)`` the
    state (x, x', ...) of a solution as expressions in *tau*; ``rest`` the state at rest.
    """

    respond: Callable[[sp.Expr, tuple, sp.Symbol], Response]
    state_of: Callable[[sp.Expr, sp.Symbol], tuple]
    rest: tuple
    labels: tuple[str, ...] = ("x", "x'")


@dataclass(frozen=True, kw_only=True)
class PiecewiseDerivation(Derivation):
    """A particular solution of a switching forcing: the response from rest, interval by interval.

    ``solution`` is a sympy ``Piecewise`` in t (a column for a multi-mass model);
    ``switched`` the intervals; ``intervals`` each interval's ``Response`` in its local time.
    """

    switched: SwitchedForcing | None = None
    intervals: tuple[Response, ...] = field(default=())


def _local_time(t: sp.Symbol, f) -> sp.Symbol:
    taken = {s.name for e in _entries(f) if isinstance(e, sp.Basic) for s in e.free_symbols}
    name = "tau"
    while name in taken:
        name += "'"
    return sp.Symbol(name, real=True)


def _assemble(parts: list, starts: tuple, t: sp.Symbol, vector: bool):
    """Piecewise((part_0, t < t_1), (part_1, t < t_2), ..., (part_k, True))."""
    ends = starts[1:]

    def one(values):
        if len(values) == 1:
            return values[0]
        pairs = [(v, sp.Lt(t, end)) for v, end in zip(values, ends, strict=False)]
        pairs.append((values[-1], True))
        return sp.Piecewise(*pairs)

    if not vector:
        return one(parts)
    rows = parts[0].rows
    return sp.ImmutableMatrix([one([p[r] for p in parts]) for r in range(rows)])


def _zero(value) -> bool:
    if isinstance(value, sp.MatrixBase):
        return all(is_zero(v) for v in value)
    return is_zero(value)


def piecewise_response(
    operator,
    f,
    initial_state: tuple,
    solver: IntervalSolver,
    *,
    t: sp.Symbol,
    from_rest: bool = False,
) -> Response:
    """Total response to a switching forcing, interval by interval.

    Parameters
    ----------
    operator : the model (LinearODE, Oscillator or MultiMass)
    f : the switching forcing (expression or column)
    initial_state : tuple
        The state at t = 0 (``(x0, v0)``; ``(x(0), x'(0), ...)`` for a LinearODE).
    solver : IntervalSolver
    t : sympy.Symbol
    from_rest : bool
        Say on the steps that the state at t = 0 is rest (the particular solution).

    Returns
    -------
    Response
        ``solution``, ``transient``, ``steady_state`` are Piecewise in t; ``particular`` a
        :class:`PiecewiseDerivation` whose solution is the steady-state Piecewise;
        ``constants`` every interval's constants, marked with the interval number.
    """
    switched = split_switching(f, t)
    vector = isinstance(switched.forcing, sp.MatrixBase)
    tau = _local_time(t, f)
    starts = switched.starts
    count = len(switched.pieces)
    head = SwitchingTimesStep(
        "Switching times and the pieces of the load",
        f"The load switches {_times(len(switched.times))} after $t = 0$"
        + (", assuming " + ", ".join(f"${sp.latex(c)}$" for c in switched.conditions) if switched.conditions else "")
        + f"; between switches it is one quasi-polynomial, so each of the {count} intervals is solved "
        "by undetermined coefficients, starting from the state the interval before ended in.",
        switched.forcing,
        t,
        switched.times,
        switched.pieces,
        switched.conditions,
    )
    steps: list[Step] = [head]
    state = tuple(initial_state)
    responses: list[Response] = []
    totals, transients, steadies = [], [], []
    constants = []
    end_states = []
    conditions = list(switched.conditions)
    for i, piece in enumerate(switched.pieces):
        start = starts[i]
        end = starts[i + 1] if i + 1 < count else None
        local = piece.xreplace({t: tau + start}) if start != 0 else piece.xreplace({t: tau})
        if vector:
            local = sp.ImmutableMatrix(local.applyfunc(sp.expand))
        else:
            local = sp.expand(local)
        origin = (
            "rest (the particular solution of a load that starts at $t = 0$ is taken as the response from rest)"
            if i == 0 and from_rest
            else "the initial state"
            if i == 0
            else f"the state at the end of interval {i}"
        )
        span = (
            f"${sp.latex(start)} \\le t < {sp.latex(end)}$" if end is not None else f"$t \\ge {sp.latex(start)}$"
        )
        local_time = f"${sp.latex(tau)} = t$" if start == 0 else f"${sp.latex(tau)} = t - {sp.latex(start)}$"
        steps.append(
            IntervalStep(
                f"Interval {i + 1}: {span}",
                f"In the local time {local_time} the load is one quasi-polynomial; the interval starts "
                f"from {origin}.",
                i + 1,
                start,
                end,
                t,
                tau,
                local,
                state,
            )
        )
        try:
            res = solver.respond(local, state, tau)
        except ForcingError as exc:
            raise ForcingError(
                exc.what, where=f"interval {i + 1} ({span}) of the forcing: {exc.where}", do=exc.do
            ) from None
        responses.append(res)
        steps.extend(res.steps)
        conditions.extend(c for c in res.particular.conditions if c not in conditions)
        shift = {tau: t - start}
        totals.append(res.solution.xreplace(shift))
        transients.append(res.transient.xreplace(shift))
        steadies.append(res.steady_state.xreplace(shift))
        constants.extend((sp.Symbol(f"{c.name}^({i + 1})"), v) for c, v in res.constants)
        if end is not None:
            length = sp.simplify(end - start)
            ended = tuple(
                v.xreplace({tau: length}) if not isinstance(v, sp.MatrixBase) else v.xreplace({tau: length})
                for v in solver.state_of(res.solution, tau)
            )
            end_states.append(ended)
            state = ended
    # continuity: the state at each switching time from the Piecewise's two sides
    residuals = []
    for j, time in enumerate(switched.times):
        before = solver.state_of(totals[j], t)
        after = solver.state_of(totals[j + 1], t)
        residuals.append(tuple((b - a).xreplace({t: time}) for b, a in zip(before, after, strict=True)))
    continuous = all(_zero(r) for row in residuals for r in row)
    solution = _assemble(totals, starts, t, vector)
    transient = _assemble(transients, starts, t, vector)
    steady = _assemble(steadies, starts, t, vector)
    steps.append(
        ContinuityStep(
            "Continuity at the switching times",
            "The state from the interval before and from the interval after are subtracted at each switching "
            "time: " + ("every difference is exactly 0." if continuous else "a difference is not 0."),
            switched.times,
            tuple(residuals),
            continuous,
        )
    )
    steps.append(
        PiecewiseSolutionStep(
            "Response over all intervals",
            "Each interval's solution, written back in t, holds from its switching time to the next.",
            solution,
            t,
        )
    )
    verified = continuous and all(res.particular.verified for res in responses)
    particular = PiecewiseDerivation(
        operator=operator,
        forcing=switched.forcing,
        t=t,
        split=responses[0].particular.split,
        solution=steady,
        steps=tuple(steps),
        verified=verified,
        conditions=tuple(conditions),
        switched=switched,
        intervals=tuple(responses),
    )
    return Response(
        solution=solution,
        transient=transient,
        steady_state=steady,
        particular=particular,
        constants=tuple(constants),
        initial_values=tuple(initial_state),
        t=t,
        steps=tuple(steps),
    )


def piecewise_particular(operator, f, solver: IntervalSolver, *, t: sp.Symbol) -> PiecewiseDerivation:
    """The particular solution of a switching load: the response from rest at t = 0.

    A load that switches has no single steady state; the response from rest is the one
    solution fixed without initial values, and what every interval's steps show.
    """
    res = piecewise_response(operator, f, solver.rest, solver, t=t, from_rest=True)
    part = res.particular
    return PiecewiseDerivation(
        operator=operator,
        forcing=part.forcing,
        t=t,
        split=part.split,
        solution=res.solution,
        steps=res.steps,
        verified=part.verified,
        conditions=part.conditions,
        switched=part.switched,
        intervals=part.intervals,
    )


def scalar_solver(respond: Callable, order: int) -> IntervalSolver:
    """The :class:`IntervalSolver` of a scalar model of *order*: its state is x, x', ..., x^(n-1)."""

    def state_of(x, tau):
        out, current = [], x
        for _ in range(order):
            out.append(current)
            current = sp.diff(current, tau)
        return tuple(out)

    return IntervalSolver(respond, state_of, (sp.S.Zero,) * order)


def _times(n: int) -> str:
    """``once``, ``twice``, ``3 times``."""
    return {1: "once", 2: "twice"}.get(n, f"{n} times")
