"""An independent check of a derived response: the same equation integrated numerically.

A derived total response ``x(t)`` (undetermined coefficients plus the free motion
meeting the initial conditions) is one route to the motion; integrating
``M x'' + C x' + K x = f(t)`` from the same initial state with a general-purpose
solver (:func:`scipy.integrate.odeint`, LSODA of ODEPACK) is another that shares
nothing with it but the equation; a sampled record is integrated interval by interval
with :func:`scipy.integrate.solve_ivp` (Dormand-Prince 8(5,3), ``DOP853``). :func:`compare_peak` samples
both on one grid of times and compares their largest ``|x|``: two routes that agree
to the tolerance are what let a checker trust the closed form without redoing it.

The integration is told the forcing's switching times (``breaks``), so a step or a
pulse is integrated piece by piece from the state at each break rather than smeared
by a step across it.

Examples
--------
>>> import sympy as sp
>>> t = sp.Symbol("t", real=True)
>>> x = (1 - sp.cos(2 * t)) / 4           # x'' + 4 x = 1 from rest
>>> check = compare_peak(x, 1, 0, 4, sp.Integer(1), t, duration=3.0)
>>> check.agrees, round(check.closed_form_peak, 6)
(True, 0.5)
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import sympy as sp

from calckit.engine.numeric import refuse_overflow
from calckit.errors import ModelError

__all__ = [
    "PeakComparison",
    "compare_peak",
    "compare_sampled_peak",
    "integrate_motion",
    "integrate_sampled",
    "INTEGRATION_METHOD",
    "MOTION_SOLVER",
]

INTEGRATION_METHOD = "DOP853"
"""The solve_ivp method of the record check (:func:`integrate_sampled`): explicit Runge-Kutta of order 8
(Dormand-Prince), error control 5th and 3rd order."""

MOTION_SOLVER = "scipy.integrate.odeint (LSODA of ODEPACK: Adams or BDF, chosen as the equation's stiffness asks)"
"""The solver of :func:`integrate_motion` and so of :func:`compare_peak`. Its steps are taken in compiled code
(only the right-hand side is Python): about a tenth of solve_ivp's time for the same tolerances
(benchmarks/RESULTS_BATCH.md)."""

LARGEST_STEPS = 1_000_000
"""The most solver steps between two sample times before :func:`integrate_motion` gives up (it never runs on)."""

LARGEST_SAMPLES = 200_001
"""The most sample times a comparison takes (memory stays bounded)."""

LARGEST_RECORD = 50_001
"""The most samples of a record :func:`compare_sampled_peak` integrates (one solver call an interval,
about 0.15 ms each: some 8 s at most)."""


@dataclass(frozen=True)
class PeakComparison:
    """The largest ``|x|`` of a derived response and of a numerical integration, side by side.

    Attributes
    ----------
    closed_form_peak, integrated_peak : float
        Largest ``|x(t)|`` on the sample grid, in SI (the derived response, the integration).
    time_of_peak : float
        When the derived response reaches its peak, s.
    agreement : float
        ``|closed_form_peak - integrated_peak| / integrated_peak`` (relative difference).
    tolerance : float
        The relative difference accepted.
    duration : float
        The span integrated, s, from ``t = 0``.
    samples : int
        Sample times on ``[0, duration]``.
    rtol, atol : float
        The solver's relative and absolute tolerances.
    coordinate : int or None
        The coordinate compared (``None``: the largest over all coordinates).
    route : str
        How the integration went, where it is not the whole span at once (said in :attr:`procedure`).
    solver : str
        ``"odeint"`` (:data:`MOTION_SOLVER`, :func:`compare_peak`) or ``"solve_ivp"`` (:data:`INTEGRATION_METHOD`,
        :func:`compare_sampled_peak`).
    """

    closed_form_peak: float
    integrated_peak: float
    time_of_peak: float
    agreement: float
    tolerance: float
    duration: float
    samples: int
    rtol: float
    atol: float
    coordinate: int | None = None
    route: str = ""
    solver: str = "odeint"

    @property
    def agrees(self) -> bool:
        """Whether the two peaks agree within the tolerance."""
        return bool(self.agreement <= self.tolerance)

    @property
    def method(self) -> str:
        """The solver (a ``scipy.integrate`` function) and its method, without the settings that scale with a case."""
        if self.solver == "odeint":
            return f"odeint (LSODA), rtol {self.rtol:g}"
        return f"solve_ivp, method {INTEGRATION_METHOD}, rtol {self.rtol:g}"

    @property
    def procedure(self) -> str:
        """The numerical procedure and its settings, in one line a checker can repeat."""
        return (
            f"scipy.integrate.{self.method}, atol {self.atol:.3g}, "
            f"from the same initial state over $0 \\le t \\le {self.duration:g}$ s{self.route}; both routes sampled at "
            f"{self.samples} equally spaced times"
        )


def _matrix(value: Any, n: int | None, label: str) -> np.ndarray:
    try:
        arr = np.atleast_2d(
            np.asarray(sp.Matrix(value).evalf() if isinstance(value, sp.MatrixBase) else value, float)
        )
    except (TypeError, ValueError):
        raise ModelError(
            f"the {label} is not a number or a matrix of numbers",
            where="independent check",
            do="Substitute numbers for every symbol before the check",
        ) from None
    if arr.shape[0] != arr.shape[1] or (n is not None and arr.shape[0] != n) or not np.all(np.isfinite(arr)):
        raise ModelError(
            f"the {label} is not a finite square matrix of the model's size",
            where="independent check",
            do="Give mass, damping and stiffness of one size, in SI",
        )
    return arr


def _functions(exprs: Sequence[sp.Expr], t: sp.Symbol, label: str):
    out = []
    for expr in exprs:
        expr = sp.sympify(expr)
        extra = expr.free_symbols - {t}
        if extra:
            raise ModelError(
                f"the {label} still holds {', '.join(sorted(s.name for s in extra))}",
                where="independent check",
                do="Substitute numbers for every symbol but t before the check",
            )
        # exact numbers (rationals, sqrt(39), pi) as floats first: numpy has no sqrt of a Python int
        numbers = expr.replace(
            lambda e: e.is_number and e.is_real and not e.is_Float, lambda e: sp.Float(e, 17)
        )
        f = sp.lambdify(t, numbers, modules=["numpy"])
        out.append(lambda tt, f=f: np.broadcast_to(np.asarray(f(tt), dtype=float), np.shape(tt)))
    return out


def _row_function(exprs: Sequence[sp.Expr], t: sp.Symbol):
    """All forcing rows as one compiled function of a scalar time, returning a float array.

    One ``lambdify`` of the list rather than one per row: the solver calls the right-hand
    side with a scalar time thousands of times, and per-row calls with ``broadcast_to`` took
    most of a 6-DOF check (benchmarks/RESULTS_MOUNTS.md). The rows are checked by
    :func:`_functions` first.
    """
    numbers = [
        sp.sympify(e).replace(lambda x: x.is_number and x.is_real and not x.is_Float, lambda x: sp.Float(x, 17))
        for e in exprs
    ]
    f = sp.lambdify(t, numbers, modules=["numpy"])
    return lambda tt: np.asarray(f(tt), dtype=float)


def _scalar_function(expr: sp.Expr, t: sp.Symbol):
    """The forcing as :func:`_functions` compiles it (the same numpy calls), for one time at a time."""
    expr = sp.sympify(expr)
    numbers = expr.replace(lambda e: e.is_number and e.is_real and not e.is_Float, lambda e: sp.Float(e, 17))
    return sp.lambdify(t, numbers, modules=["numpy"])


def integrate_motion(
    mass, damping, stiffness, forcing, t, x0, v0, times, *, breaks=(), rtol=1e-10, atol=None
):
    """``x`` at *times* from integrating ``M x'' + C x' + K x = f(t)`` with ``odeint`` (:data:`MOTION_SOLVER`).

    Parameters are numbers in SI (scalars or square matrices); *forcing* a sympy expression
    in *t* (or one per coordinate); *times* increasing from 0; *breaks* times where the
    forcing switches. Returns an array of shape ``(n, len(times))``.
    """
    from scipy.integrate import odeint

    M = _matrix(mass, None, "mass")
    n = M.shape[0]
    C, K = _matrix(damping, n, "damping"), _matrix(stiffness, n, "stiffness")
    if abs(np.linalg.det(M)) < 1e-300:
        raise ModelError(
            "the mass matrix is singular, so the equation is not of second order in every coordinate",
            where="independent check",
            do="Give a mass to every coordinate",
        )
    m_inv = np.linalg.inv(M)
    rows = list(forcing) if isinstance(forcing, (list, tuple, sp.MatrixBase)) else [forcing]
    if len(rows) != n:
        raise ModelError(
            f"{len(rows)} forcing rows for {n} coordinates",
            where="independent check",
            do="Give one per coordinate",
        )
    _functions(rows, t, "forcing")  # refuses a row that still holds a symbol but t
    f_all = _row_function(rows, t)
    x_start = np.ravel(np.asarray(x0, float)) * np.ones(n)
    v_start = np.ravel(np.asarray(v0, float)) * np.ones(n)
    times = np.asarray(times, float)
    atol = atol if atol is not None else 1e-14

    def rhs(tt, y):
        x, v = y[:n], y[n:]
        f = f_all(tt)
        return np.concatenate([v, m_inv @ (f - C @ v - K @ x)])

    if n == 1:  # one coordinate: the same arithmetic on floats, without the arrays' overhead per call
        m1, c1, k1 = float(m_inv[0, 0]), float(C[0, 0]), float(K[0, 0])
        f1 = _scalar_function(rows[0], t)

        def rhs(tt, y):  # noqa: F811 (the general rhs above, for one coordinate)
            x, v = y[0], y[1]
            return [v, m1 * (float(f1(tt)) - c1 * v - k1 * x)]

    edges = sorted({0.0, float(times[-1])} | {float(b) for b in breaks if 0 < float(b) < times[-1]})
    state = np.concatenate([x_start, v_start])
    out = np.empty((n, times.size))
    for left, right in zip(edges[:-1], edges[1:], strict=True):
        inside = (times > left) & ((times < right) | (right == edges[-1]))
        # the piece's own start and end with the sample times inside it: odeint reports at the times it is given
        asked = np.concatenate([[left], times[inside], [] if right == edges[-1] else [right]])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # a failure is read from the solver's message below
            y, info = odeint(
                rhs, state, asked, tfirst=True, rtol=rtol, atol=atol, full_output=True, mxstep=LARGEST_STEPS
            )
        if info.get("message") != "Integration successful.":
            raise ModelError(
                f"the numerical integration stopped: {info.get('message', 'no message')}",
                where="independent check",
                do="Shorten the duration or check the model for a motion that grows without bound",
            )
        at = times == left
        if at.any():
            out[:, at] = state[:n, None]
        if inside.any():
            out[:, inside] = y[1 : 1 + int(inside.sum()), :n].T
        state = y[-1]
    return out


def compare_peak(
    solution,
    mass,
    damping,
    stiffness,
    forcing,
    t: sp.Symbol,
    *,
    x0=0.0,
    v0=0.0,
    duration: float,
    samples: int = 4001,
    breaks: Sequence[float] = (),
    tolerance: float = 1e-4,
    rtol: float = 1e-10,
    atol: float | None = None,
    coordinate: int | None = None,
) -> PeakComparison:
    """Compare the peak of a derived response with a numerical integration of the same equation.

    Parameters
    ----------
    solution : sympy expression or sequence of them
        The derived total response ``x(t)`` with numbers for every symbol but *t* (SI).
    mass, damping, stiffness : number or square matrix
        The equation's coefficients in SI.
    forcing : sympy expression or sequence
        ``f(t)`` in SI, one row per coordinate.
    t : sympy.Symbol
        The time symbol.
    x0, v0 : number or sequence
        The initial state the derived response meets.
    duration : float
        How long to compare, s (from ``t = 0``).
    samples : int
        Sample times on ``[0, duration]`` for both routes.
    breaks : sequence of float
        Times where the forcing switches (a step, a pulse's end).
    tolerance : float
        The relative difference of the two peaks accepted (``1e-4`` by default).
    coordinate : int, optional
        Compare one coordinate (0-based) of a multi-mass response; by default the largest
        ``|x_i(t)|`` over all coordinates.

    Raises
    ------
    ModelError
        A symbol is left, the coefficients do not fit together, or the integration stops.
    """
    if not (isinstance(duration, (int, float)) and math.isfinite(duration) and duration > 0):
        raise ModelError(
            f"the duration {duration!r} is not a positive time",
            where="independent check",
            do="Give it in s, e.g. duration=2.0",
        )
    if isinstance(samples, bool) or not isinstance(samples, int) or not 3 <= samples <= LARGEST_SAMPLES:
        raise ModelError(
            f"samples={samples!r} is not a usable number of sample times",
            where="independent check",
            do=f"Give a whole number from 3 to {LARGEST_SAMPLES}",
        )
    rows = list(solution) if isinstance(solution, (list, tuple, sp.MatrixBase)) else [solution]
    times = np.linspace(0.0, float(duration), samples)
    with np.errstate(all="ignore"):  # inf and NaN named below, not warned of
        derived = np.vstack([fn(times) for fn in _functions(rows, t, "derived response")])
        refuse_overflow(derived, sum(rows, sp.Integer(0)), t, times, "derived response")
        loads = list(forcing) if isinstance(forcing, (list, tuple, sp.MatrixBase)) else [forcing]
        pushed = np.vstack([fn(times) for fn in _functions(loads, t, "forcing")])
        refuse_overflow(pushed, sum(loads, sp.Integer(0)), t, times, "forcing f(t)")
    atol_used = atol if atol is not None else 1e-12 * max(1e-300, float(np.max(np.abs(derived))) or 1.0)
    integrated = integrate_motion(
        mass, damping, stiffness, forcing, t, x0, v0, times, breaks=breaks, rtol=rtol, atol=atol_used
    )
    if integrated.shape[0] != derived.shape[0]:
        raise ModelError(
            f"the derived response has {derived.shape[0]} rows for {integrated.shape[0]} coordinates",
            where="independent check",
            do="Give one derived row per coordinate",
        )
    if coordinate is not None:
        derived, integrated = derived[coordinate : coordinate + 1], integrated[coordinate : coordinate + 1]
    d_abs, i_abs = np.abs(derived), np.abs(integrated)
    d_peak, i_peak = float(d_abs.max()), float(i_abs.max())
    where_peak = int(np.unravel_index(int(np.argmax(d_abs)), d_abs.shape)[1])
    agreement = abs(d_peak - i_peak) / i_peak if i_peak > 0 else (0.0 if d_peak == 0 else math.inf)
    return PeakComparison(
        d_peak,
        i_peak,
        float(times[where_peak]),
        float(agreement),
        float(tolerance),
        float(duration),
        samples,
        float(rtol),
        float(atol_used),
        coordinate,
    )


def _record_arrays(times, load, where: str) -> tuple[np.ndarray, np.ndarray]:
    t = np.asarray(times, dtype=float)
    p = np.asarray(load, dtype=float)
    if t.ndim != 1 or t.shape != p.shape or t.size < 3:
        raise ModelError(
            f"times of shape {t.shape} and load of shape {p.shape}",
            where=where,
            do="Give one load value for each of at least 3 sample times",
        )
    if t.size > LARGEST_RECORD:
        raise ModelError(
            f"{t.size:,} samples, more than the {LARGEST_RECORD:,} the check integrates one interval at a time",
            where=where,
            do="Check a part of the record that holds its peak",
        )
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(p)) and np.all(np.diff(t) > 0)):
        raise ModelError(
            "the sample times do not increase, or a time or load is not a finite number",
            where=where,
            do="Give increasing finite times and finite loads",
        )
    return t, p


def integrate_sampled(times, load, natural_frequency: float, damping_ratio: float, *, rtol=1e-10, atol=1e-14):
    """``z`` at *times* from ``z'' + 2 zeta omega_n z' + omega_n^2 z = p(t)``, from rest, with ``solve_ivp``.

    *load* is ``p`` at the sample times (a force per unit mass, or minus a base
    acceleration), taken as the straight line between samples; each interval is
    integrated on its own from the state at its start, so the solver never steps across
    a kink of the load. Returns ``z`` at every sample time.
    """
    from scipy.integrate import solve_ivp

    t, p = _record_arrays(times, load, "independent check of a record")
    wn, zeta = float(natural_frequency), float(damping_ratio)
    if not (math.isfinite(wn) and wn > 0 and math.isfinite(zeta) and zeta >= 0):
        raise ModelError(
            f"omega_n = {natural_frequency!r}, zeta = {damping_ratio!r}",
            where="independent check of a record",
            do="Give omega_n > 0 in rad/s and zeta >= 0",
        )
    state = np.zeros(2)
    out = np.zeros(t.size)
    for k in range(t.size - 1):
        left, right, p0 = t[k], t[k + 1], p[k]
        slope = (p[k + 1] - p0) / (right - left)

        def rhs(tt, y, left=left, p0=p0, slope=slope):
            return [y[1], p0 + slope * (tt - left) - 2 * zeta * wn * y[1] - wn * wn * y[0]]

        sol = solve_ivp(rhs, (left, right), state, method=INTEGRATION_METHOD, rtol=rtol, atol=atol)
        if not sol.success:
            raise ModelError(
                f"the numerical integration stopped between samples {k + 1} and {k + 2}: {sol.message}",
                where="independent check of a record",
                do="Check the record and the natural frequency",
            )
        state = sol.y[:, -1]
        out[k + 1] = state[0]
    return out


def compare_sampled_peak(
    derived,
    times,
    load,
    natural_frequency: float,
    damping_ratio: float,
    *,
    tolerance: float = 1e-6,
    rtol: float = 1e-10,
    atol: float | None = None,
) -> PeakComparison:
    """Compare the largest ``|z|`` of a record's response at its samples with ``solve_ivp`` of the same equation.

    *derived* is ``z`` at the sample *times* by the other route (the exact interval rule of
    :mod:`calckit.physics.records`); *load* is ``p`` at the samples, straight between them.
    The integration (:func:`integrate_sampled`) shares nothing with it but the equation.

    Examples
    --------
    >>> t = np.linspace(0.0, 1.0, 1001)
    >>> p = np.where(t > 0, 1.0, 0.0)  # a ramp to 1 over the first step, then held
    >>> z = integrate_sampled(t, p, 10.0, 0.0)
    >>> check = compare_sampled_peak(z, t, p, 10.0, 0.0)
    >>> check.agrees, round(check.integrated_peak, 4)
    (True, 0.02)
    """
    t, p = _record_arrays(times, load, "independent check of a record")
    z = np.asarray(derived, dtype=float)
    if z.shape != t.shape:
        raise ModelError(
            f"the derived response has {z.size} values for {t.size} sample times",
            where="independent check of a record",
            do="Give the derived response at every sample time",
        )
    d_peak = float(np.max(np.abs(z)))
    atol_used = atol if atol is not None else 1e-12 * max(1e-300, d_peak or 1.0)
    integrated = integrate_sampled(t, p, natural_frequency, damping_ratio, rtol=rtol, atol=atol_used)
    i_peak = float(np.max(np.abs(integrated)))
    agreement = abs(d_peak - i_peak) / i_peak if i_peak > 0 else (0.0 if d_peak == 0 else math.inf)
    return PeakComparison(
        d_peak,
        i_peak,
        float(t[int(np.argmax(np.abs(z)))]),
        float(agreement),
        float(tolerance),
        float(t[-1] - t[0]),
        int(t.size),
        float(rtol),
        float(atol_used),
        None,
        ", one interval between samples at a time with the load straight between them, from rest",
        "solve_ivp",
    )
