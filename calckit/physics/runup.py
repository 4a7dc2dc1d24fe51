"""A rotor run up from rest, or coasting down to rest: the linear speed ramp in steps of constant speed.

The speed rises linearly from rest, ``Omega(t) = Omega t / t_ru`` (a run-up), or falls
linearly from running speed, ``Omega(t) = Omega (1 - t / t_cd)`` (a coast-down, the same
function with ``direction="down"`` and its own duration). The unbalance ``U`` at the angle
``theta = int_0^t Omega dt`` pushes on the machine with ``U (Omega^2 cos(theta) +
Omega' sin(theta))``: the centripetal term and the tangential term of the angular
acceleration ``Omega' = +/- Omega / t`` (second derivative of ``U cos(theta)``). That chirp is not a
sum of terms the method of undetermined coefficients takes, so the run-up is cut into
``N`` steps of constant speed (the speed at each step's middle). In each step the
engine's total response from the state at the step's start is exact; the phase is
carried from step to step (the midpoint rule integrates the linear ramp exactly). The
approximation is the staircase of speed, which :func:`run_up_results` checks by halving
the step. A hold for six time constants (at most 60 s) follows: at running speed after a
run-up, at rest (free decay) after a coast-down, which starts from the steady state at
running speed.

The total response over one step, from any state, is derived once with symbols
(:func:`run_up_stage`) and compiled; every run-up only evaluates arrays, all steps at
once, with the two-number state carried from step to step.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
import sympy as sp

from calckit.engine.numeric import Compiled, compile_expr
from calckit.errors import InputsError
from calckit.physics.harmonic import forced_amplitude
from calckit.physics.oscillator import Oscillator

__all__ = [
    "DIRECTIONS",
    "STAGE_NAMES",
    "RunUp",
    "RunUpResults",
    "RunUpStage",
    "run_up",
    "run_up_results",
    "run_up_stage",
    "run_up_steps",
]

#: The two speed ramps: a run-up from rest, a coast-down to rest.
DIRECTIONS = ("up", "down")

#: Names of the compiled step response's parameters, in order.
STAGE_NAMES = ("m", "c", "k", "Omega", "F_c", "F_s", "x_0", "v_0")


@dataclass(frozen=True)
class RunUpStage:
    """The total response over one step of constant speed, from any state, derived once and compiled.

    Attributes
    ----------
    response : Response
        ``x(t)`` under ``F_c cos(Omega t) + F_s sin(Omega t)`` from ``x(0) = x_0``, ``x'(0) = v_0``.
    x, v : Compiled
        Displacement and velocity, in ``t`` and :data:`STAGE_NAMES`.
    """

    response: Any
    x: Compiled
    v: Compiled


@lru_cache(maxsize=1)
def run_up_stage() -> RunUpStage:
    """Derive (once) the total response over one step of constant speed from any state.

    Symbols: ``m, c, k, Omega`` positive, ``F_c, F_s, x_0, v_0`` and ``t`` real; the oscillator
    underdamped.
    """
    t = sp.Symbol("t", real=True)
    m, c, k, w = sp.symbols("m c k Omega", positive=True)
    fc, fs, x0, v0 = sp.symbols("F_c F_s x_0 v_0", real=True)
    response = Oscillator(m, c, k, regime="underdamped").response(
        fc * sp.cos(w * t) + fs * sp.sin(w * t), x0, v0, t=t
    )
    return RunUpStage(
        response=response,
        x=compile_expr(response.solution, t, STAGE_NAMES),
        v=compile_expr(sp.diff(response.solution, t), t, STAGE_NAMES),
    )


def run_up_steps(omega: float, omega_n: float, zeta: float) -> int:
    """Steps of constant speed for a run-up to *omega*: the speed moves by at most a quarter of the
    half-power bandwidth ``2 zeta omega_n`` in one step, 100 to 2000 steps (``zeta`` taken as at least
    0.005).

    Examples
    --------
    >>> run_up_steps(155.0, 19.73, 0.05)
    315
    """
    return int(min(2000, max(100, math.ceil(omega / (0.5 * max(zeta, 0.005) * omega_n)))))


@dataclass(frozen=True)
class RunUp:
    """A run-up from rest in steps of constant speed, then the hold at running speed (SI).

    Attributes
    ----------
    steps : int
        Steps of constant speed.
    times, x, v, speed : numpy arrays
        Time (s), displacement (m), velocity (m/s) and the speed held at that time (rad/s).
    envelope : numpy array
        Steady amplitude at the speed held (m): ``U s^2 / |k - m s^2 + i c s|``.
    end : float
        End of the run-up, s.
    """

    steps: int
    times: np.ndarray
    x: np.ndarray
    v: np.ndarray
    speed: np.ndarray
    envelope: np.ndarray
    end: float


def run_up(
    *,
    m: float,
    c: float,
    k: float,
    omega: float,
    unbalance: float,
    run_up_time: float,
    zeta: float,
    steps: int,
    points: int = 12,
    hold_points: int = 4000,
    direction: str = "up",
) -> RunUp:
    """The run-up from rest to *omega* in *steps* steps, then the hold at *omega*, all steps at once.

    Step ``j`` runs at the speed of its middle, ``(j + 1/2) omega / N``, for ``t_ru / N`` under the
    force ``U s^2 cos(theta + s t)`` with the phase ``theta`` carried from step to step. The state at
    each step's end comes from the compiled total response split into its parts in ``x_0``, ``v_0``
    and the force, so only two numbers are carried in a loop.

    Parameters
    ----------
    m, c, k : mass (kg), damping coefficient (N s/m), stiffness (N/m).
    omega : running speed, rad/s.
    unbalance : residual unbalance ``U``, kg m.
    run_up_time : s, from rest to *omega* (a linear ramp).
    zeta : damping ratio (sets the hold: six time constants, at most 60 s).
    steps : steps of constant speed (:func:`run_up_steps`).
    points, hold_points : points per step and in the hold.
    direction : "up" (from rest, then the hold at *omega*) or "down" (a coast-down over
        *run_up_time* from the steady state at *omega*, then the free decay at rest).
    """
    if direction not in DIRECTIONS:
        raise InputsError(
            f"a speed ramp {direction!r} is not one of {', '.join(repr(d) for d in DIRECTIONS)}",
            where="direction",
            do='Give "up" for a run-up from rest or "down" for a coast-down from running speed',
        )
    down = direction == "down"
    stage = run_up_stage()
    h = run_up_time / steps
    middles = (np.arange(steps) + 0.5) * omega / steps
    speeds = omega - middles if down else middles
    accel = (-1.0 if down else 1.0) * omega / run_up_time  # Omega', constant on the ramp
    phase = np.concatenate(([0.0], np.cumsum(speeds * h)))  # summed in order, step after step
    # U (s^2 cos(theta + s tau) + Omega' sin(theta + s tau)) = F_c cos(s tau) + F_s sin(s tau)
    radial, tangential = unbalance * speeds**2, unbalance * accel
    fc = radial * np.cos(phase[:-1]) + tangential * np.sin(phase[:-1])
    fs = -radial * np.sin(phase[:-1]) + tangential * np.cos(phase[:-1])
    base = dict(m=m, c=c, k=k, Omega=speeds)
    parts = []
    for on, x0, v0 in ((1.0, 0.0, 0.0), (0.0, 1.0, 0.0), (0.0, 0.0, 1.0)):  # forced, from x_0, from v_0
        args = dict(base, F_c=fc * on, F_s=fs * on, x_0=x0, v_0=v0)
        parts.append((stage.x(h, **args), stage.v(h, **args)))
    (px, pv), (ax, av), (bx, bv) = parts
    xs, vs = np.empty(steps + 1), np.empty(steps + 1)
    x = v = 0.0
    if down:  # from the steady state at running speed, theta = 0: x = Re(X), v = Re(i Omega X)
        steady = unbalance * omega**2 / complex(k - m * omega**2, c * omega)
        x, v = steady.real, -omega * steady.imag
    for j in range(steps):  # two numbers carried per step
        xs[j], vs[j] = x, v
        x, v = px[j] + ax[j] * x + bx[j] * v, pv[j] + av[j] * x + bv[j] * v
    xs[steps], vs[steps] = x, v
    tau = np.linspace(0.0, h, points + 1)[:-1]
    local = dict(
        m=m,
        c=c,
        k=k,
        Omega=speeds[:, None],
        F_c=fc[:, None],
        F_s=fs[:, None],
        x_0=xs[:-1, None],
        v_0=vs[:-1, None],
    )
    starts = np.concatenate(([0.0], np.cumsum(np.full(steps, h))))  # summed in order, step after step
    wn = math.sqrt(k / m)
    hold = min(6.0 / max(zeta * wn, 1e-9), 60.0)
    held = np.linspace(0.0, hold, hold_points)
    end_speed = 0.0 if down else omega
    f_run = unbalance * end_speed**2
    at_speed = dict(
        m=m,
        c=c,
        k=k,
        Omega=end_speed if not down else omega,  # at rest the force is nil; any speed serves the formula
        F_c=f_run * math.cos(phase[-1]),
        F_s=-f_run * math.sin(phase[-1]),
        x_0=x,
        v_0=v,
    )
    speed = np.concatenate((np.repeat(speeds, points), np.full(hold_points, end_speed)))
    return RunUp(
        steps=steps,
        times=np.concatenate(((starts[:-1, None] + tau[None, :]).ravel(), starts[-1] + held)),
        x=np.concatenate((stage.x(tau[None, :], **local).ravel(), stage.x(held, **at_speed))),
        v=np.concatenate((stage.v(tau[None, :], **local).ravel(), stage.v(held, **at_speed))),
        speed=speed,
        envelope=forced_amplitude(unbalance * speed**2, m, c, k, speed),
        end=float(run_up_time),
    )


@dataclass(frozen=True)
class RunUpResults:
    """What a sheet records of a run-up (SI).

    Attributes
    ----------
    run : RunUp
        The run-up in :attr:`steps` steps, then the hold.
    steps : int
    peak : float
        Largest motion during the run-up, m.
    peak_half_step : float
        The same with twice the steps (half the step), m: the staircase's error.
    peak_force : float
        Largest force into the support during the run-up, ``|k x + c x'|``, N.
    resonance_amplitude : float
        Steady amplitude if the speed stayed at the natural frequency, ``U omega_n^2 / (c omega_n)``, m
        (``inf`` without damping).
    """

    run: RunUp
    steps: int
    peak: float
    peak_half_step: float
    peak_force: float
    resonance_amplitude: float


def run_up_results(
    *,
    m: float,
    c: float,
    k: float,
    omega: float,
    unbalance: float,
    run_up_time: float,
    zeta: float,
    direction: str = "up",
) -> RunUpResults:
    """The run-up (or, with ``direction="down"``, the coast-down over *run_up_time*) in :func:`run_up_steps`
    steps (12 points a step) and in twice as many (6 points a step), with the largest motion, the largest
    force and the resonance amplitude, taken over the ramp.

    Parameters as :func:`run_up`; the results in SI units.
    """
    wn = math.sqrt(k / m)
    steps = run_up_steps(omega, wn, zeta)
    common = dict(
        m=m,
        c=c,
        k=k,
        omega=omega,
        unbalance=unbalance,
        run_up_time=run_up_time,
        zeta=zeta,
        direction=direction,
    )
    run = run_up(steps=steps, points=12, **common)
    half = run_up(steps=2 * steps, points=6, **common)
    during = run.times <= run_up_time
    return RunUpResults(
        run=run,
        steps=steps,
        peak=float(np.max(np.abs(run.x[during]))),
        peak_half_step=float(np.max(np.abs(half.x[half.times <= run_up_time]))),
        peak_force=float(np.max(np.abs(k * run.x[during] + c * run.v[during]))),
        resonance_amplitude=unbalance * wn**2 / (c * wn) if c > 0 else math.inf,
    )
