"""The what-if explorer: sliders on a single-mass calculation's inputs, live results and checks.

``explore(...)`` opens a calculation of one mass on springs and viscous dampers
under a harmonic force, ``m x'' + c x' + k x = F0 cos(w t)``, with a slider on each
input that matters (units in the labels; stiffness and frequency on log scales),
the template's key results live, its acceptance checks with their limits, bases
and margins, a frequency-response plot with the operating point marked and a time
history. "Keep these values" writes the current values to an inputs file that
``calckit build`` reads, in the same format as the file it started from.

Supported templates: one entry each
-----------------------------------
What the explorer knows of a template is one :class:`Plan` in :data:`PLANS`, a
small declarative entry: which parameter plays which role (mass, stiffness,
damping, forcing frequency, how the force is formed, limits and their bases),
which results the template records and how it rounds what it carries from step
to step, which checks it makes, and which plots fit it. Adding a template is
adding one entry:

=======================  ====================================================
template                 entry
=======================  ====================================================
``single_mass_harmonic`` force given (``force_amplitude``); results, checks:
                         amplitude against ``amplitude_limit``, speed
                         separation; amplitude curve, steady state and the
                         response from rest
``machine_on_isolators`` force from the rotor: ``F0 = m_r e w^2`` with
                         ``e = G / w`` (ISO 21940-11, from memory); results
                         carried at four significant figures as the template
                         carries them; checks: isolation efficiency,
                         frequency ratio >= 3, speed separation, motion during
                         the run-up; transmissibility curve, run-up history
=======================  ====================================================

A template not in the table is read by parameter names as the single-mass entry
(``mass``/``m``, ``stiffness``/``k``, ``damping_ratio``/``zeta`` or
``damping``/``damping_coefficient``/``c``, ``force_amplitude``/``F0``,
``forcing_frequency``/``running_speed``/``speed``, optional ``amplitude_limit``,
``amplitude_limit_basis`` and ``forcing``, one harmonic in ``F0``, ``w``, ``t``);
other names can be mapped with ``names={"mass": "machine_mass", ...}``.

Symbolic once, numeric on every move
------------------------------------
The steady-state response, its amplitude, phase lag, transmissibility and the
force into the support, and (for a run-up) the total response over one step of
constant speed from any state, are derived once by the engine with symbols
(cached), compiled with :func:`calckit.numeric.compile_expr`, and every slider
move only evaluates arrays: the run-up's steps are evaluated all at once, with
only the two-number state carried from step to step. ``benchmarks/bench_explore.py``
measures a move against re-deriving.

Same numbers as the sheet
-------------------------
:meth:`WhatIf.si` gives the results under the template's own result names, in SI,
as the sheet's JSON record gives them. Where the template carries a result into
the next step rounded to four significant figures (``machine_on_isolators``),
the explorer rounds the same results in the same units, so a sheet built from
the kept file gives the same numbers to floating-point accuracy.

Display
-------
In Jupyter with ipywidgets the explorer shows its sliders; the same display
carries a still (results table, checks and plot as SVG, with a note saying so)
that front ends without widgets, exported notebooks and sheets show instead. In a
plain Python session the explorer prints as a text table. Without ipywidgets the
explorer still computes, moves by :meth:`Explorer.set` and keeps.

Examples
--------
>>> ex = explore(mass="1850 kg", stiffness="720 kN/m", damping_ratio=0.05,
...              force_amplitude="0.9 kN", forcing_frequency="1480 rpm",
...              amplitude_limit="0.05 mm")  # doctest: +SKIP
>>> ex.set(forcing_frequency="200 rpm")  # doctest: +SKIP
>>> ex.results.checks[0].verdict  # doctest: +SKIP
'not met'
>>> ex.keep("p101_kept.toml")  # doctest: +SKIP
>>> iso = explore("examples/harrow_creek_p101_isolators.toml", "machine_on_isolators")  # doctest: +SKIP
>>> iso.set(isolator_stiffness="3000 kN/m").check("isolation efficiency").verdict  # doctest: +SKIP
'not met'
"""

from __future__ import annotations

import html
import io
import json
import math
import os
import re
import tempfile
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import lru_cache
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import sympy as sp

from calckit.core.checks import non_negative, positive
from calckit.core.expressions import parse_expression
from calckit.core.units import Q_, angular_frequency, fmt, fmt_number, quantity, to_si
from calckit.engine.forcing import split_forcing
from calckit.engine.numeric import Compiled, compile_expr
from calckit.errors import CalcError, InputsError, OverwriteError
from calckit.physics.excitation import BALANCE_QUALITY_GRADES
from calckit.physics.oscillator import Oscillator
from calckit.sheet import Check, check_margin, in_kernel
from calckit.workflow import TITLE_FIELDS, check_keys, load_template, read_inputs

__all__ = ["explore", "Explorer", "WhatIf", "Kept", "Plan", "PLANS", "ROLES", "SEPARATION_BASIS"]

#: Basis of the speed-separation check, in the words of :meth:`calckit.Sheet.separation_check`,
#: which both supported templates use.
SEPARATION_BASIS = (
    "common practice, no source: keep the operating frequency outside about +/-20 % of a natural frequency"
)
SHEET_SEPARATION_BASIS = SEPARATION_BASIS
#: Basis of the frequency-ratio check of ``machine_on_isolators`` (the template's words).
RATIO_BASIS = "common practice, no source: isolation needs r > sqrt(2), usually r >= 3"
#: Least frequency ratio for isolation (common practice, no source).
LEAST_RATIO = 3.0
#: Standard gravity, m/s^2, as the template takes it for the static deflection.
STANDARD_GRAVITY = 9.80665
#: Template used when values are given directly.
DEFAULT_TEMPLATE = "single_mass_harmonic"
#: Points on the frequency-response curve and on the time history.
CURVE_POINTS = 2000
#: Significant figures a slider move keeps (at least as many as the starting value shows).
SIGNIFICANT = 4

_NO_WIDGETS_NOTE = (
    "A still of the what-if explorer at the values shown: the sliders need Jupyter with "
    "ipywidgets and a running kernel, which this view does not have."
)


@dataclass(frozen=True)
class _Role:
    """One input of the model: its keyword, kind of quantity and the parameter names it goes by."""

    key: str
    kind: str | None  # units kind (calckit.units.KINDS); None for text
    names: tuple[str, ...]
    label: str
    sign: str = "positive"  # "positive", "non-negative" or "" (text)
    scale: str = "linear"  # slider scale: "linear", "log" or "" (no slider)
    choices: tuple[float, ...] = ()  # a slider over these values only (in choice_unit)
    choice_unit: str = ""


#: The model's inputs, by keyword: the names a template may declare them under.
ROLES: Mapping[str, _Role] = MappingProxyType(
    {
        r.key: r
        for r in (
            _Role("mass", "mass", ("mass", "m"), "mass"),
            _Role("stiffness", "stiffness", ("stiffness", "k"), "stiffness", scale="log"),
            _Role(
                "damping_ratio", "dimensionless", ("damping_ratio", "zeta"), "damping ratio", "non-negative"
            ),
            _Role(
                "damping",
                "damping coefficient",
                ("damping", "damping_coefficient", "c"),
                "damping coefficient",
                "non-negative",
            ),
            _Role("force_amplitude", "force", ("force_amplitude", "F0"), "force amplitude", "non-negative"),
            _Role(
                "forcing_frequency",
                "frequency",
                ("forcing_frequency", "running_speed", "speed"),
                "forcing frequency",
                scale="log",
            ),
            _Role("amplitude_limit", "length", ("amplitude_limit",), "amplitude limit", scale=""),
            _Role("amplitude_limit_basis", None, ("amplitude_limit_basis",), "basis of the limit", "", ""),
            _Role("forcing", None, ("forcing",), "forcing", "", ""),
            _Role("rotor_mass", "mass", ("rotor_mass",), "rotor mass"),
            _Role(
                "balance_grade",
                "velocity",
                ("balance_grade",),
                "balance quality grade",
                choices=BALANCE_QUALITY_GRADES,
                choice_unit="mm/s",
            ),
            _Role("run_up_time", "time", ("run_up_time",), "run-up time"),
            _Role(
                "required_isolation",
                "dimensionless",
                ("required_isolation",),
                "least isolation efficiency",
                scale="",
            ),
            _Role(
                "required_isolation_basis",
                None,
                ("required_isolation_basis",),
                "basis of the isolation",
                "",
                "",
            ),
            _Role("movement_limit", "length", ("movement_limit",), "movement limit", scale=""),
            _Role(
                "movement_limit_basis", None, ("movement_limit_basis",), "basis of the movement limit", "", ""
            ),
        )
    }
)


@dataclass(frozen=True)
class Plan:
    """What the explorer knows of one template: a small declarative entry of :data:`PLANS`.

    Attributes
    ----------
    template : str
        The template's name.
    names : mapping
        Role (a key of :data:`ROLES`) -> the template's parameter name. Empty: the
        parameters are recognised by the names :data:`ROLES` lists.
    required, optional : tuple of str
        Roles the template must declare, and roles it may declare. ``"damping"``
        stands for either ``damping_ratio`` or ``damping`` (a coefficient).
    sliders : tuple of str
        Roles on sliders, in order; other roles with a unit are limits (moved by
        :meth:`Explorer.set`, kept like the others), roles without one are text.
    force : str
        How the force amplitude is formed: ``"given"`` (``force_amplitude``) or
        ``"unbalance"`` (``F0 = m_r e w^2`` with ``e = G / w`` from the rotor mass
        and the balance quality grade, ISO 21940-11, from memory).
    results : str
        Which results the template records (a key of the explorer's result sets):
        ``"single mass"`` or ``"isolators"``.
    carry : int or None
        Significant figures at which the template carries a result into a later
        step (None: results are carried exactly).
    checks : tuple of str
        The template's checks, by the names its sheet gives them, in its order.
    curve : str
        Frequency-response plot: ``"amplitude"`` or ``"transmissibility"``.
    history : str
        Time history: ``"steady"`` (steady state and from rest) or ``"run-up"``
        (linear run-up from rest through resonance, then running speed).
    separation_basis : str
        Basis of the speed-separation check as the template words it.
    """

    template: str
    names: Mapping[str, str]
    required: tuple[str, ...]
    optional: tuple[str, ...]
    sliders: tuple[str, ...]
    force: str
    results: str
    carry: int | None
    checks: tuple[str, ...]
    curve: str
    history: str
    separation_basis: str

    def roles(self) -> tuple[str, ...]:
        """Every role the entry knows, required first."""
        wanted = [r for r in (*self.required, *self.optional) if r != "damping"]
        if "damping" in self.required or "damping" in self.optional:
            wanted += ["damping_ratio", "damping"]
        return tuple(dict.fromkeys(wanted))


#: The templates the explorer supports, one entry each (see the module notes).
PLANS: Mapping[str, Plan] = MappingProxyType(
    {
        p.template: p
        for p in (
            Plan(
                template="single_mass_harmonic",
                names=MappingProxyType({}),
                required=("mass", "stiffness", "damping", "force_amplitude", "forcing_frequency"),
                optional=("amplitude_limit", "amplitude_limit_basis", "forcing"),
                sliders=(
                    "mass",
                    "stiffness",
                    "damping_ratio",
                    "damping",
                    "force_amplitude",
                    "forcing_frequency",
                ),
                force="given",
                results="single mass",
                carry=None,
                checks=("amplitude", "speed separation"),
                curve="amplitude",
                history="steady",
                separation_basis=SEPARATION_BASIS,
            ),
            Plan(
                template="machine_on_isolators",
                names=MappingProxyType(
                    {
                        "mass": "machine_mass",
                        "stiffness": "isolator_stiffness",
                        "damping_ratio": "damping_ratio",
                        "forcing_frequency": "running_speed",
                        "rotor_mass": "rotor_mass",
                        "balance_grade": "balance_grade",
                        "run_up_time": "run_up_time",
                        "required_isolation": "required_isolation",
                        "required_isolation_basis": "required_isolation_basis",
                        "movement_limit": "movement_limit",
                        "movement_limit_basis": "movement_limit_basis",
                    }
                ),
                required=(
                    "mass",
                    "stiffness",
                    "damping_ratio",
                    "forcing_frequency",
                    "rotor_mass",
                    "balance_grade",
                    "run_up_time",
                    "required_isolation",
                    "required_isolation_basis",
                    "movement_limit",
                    "movement_limit_basis",
                ),
                optional=(),
                sliders=(
                    "mass",
                    "stiffness",
                    "damping_ratio",
                    "forcing_frequency",
                    "rotor_mass",
                    "balance_grade",
                    "run_up_time",
                ),
                force="unbalance",
                results="isolators",
                carry=4,
                checks=(
                    "isolation efficiency",
                    "frequency ratio for isolation",
                    "speed separation",
                    "motion during run-up",
                ),
                curve="transmissibility",
                history="run-up",
                separation_basis=SHEET_SEPARATION_BASIS,
            ),
        )
    }
)


# ---------------------------------------------------------------------------
# The derivation, once per forcing expression

_m, _c, _k, _F0, _w = sp.symbols("m c k F0 w", positive=True)
_t = sp.Symbol("t", real=True)
_PARAMS = (_m, _c, _k, _F0)


@dataclass(frozen=True)
class _Derived:
    """The solution derived once with symbols and compiled for numpy."""

    forcing: sp.Expr
    derivation: Any  # Derivation: x_p(t)
    response: Any  # Response from rest, or None if it could not be derived
    amplitude: Compiled  # X(w; m, c, k, F0), m
    magnification: Compiled  # X k / F0 (w; m, c, k)
    phase_lag: Compiled  # phi(w; m, c, k), rad
    transmitted: Compiled  # |k x + c x'| amplitude (w; m, c, k, F0), N
    transmissibility: Compiled  # F_T / F0 (w; m, c, k)
    steady: Compiled  # x_p(t; m, c, k, F0, w)
    from_rest: Compiled | None  # x(t) from x(0) = 0, x'(0) = 0


@lru_cache(maxsize=8)
def _derive(forcing: sp.Expr) -> _Derived:
    """Derive the response to *forcing* (in F0, w, t) with symbolic m, c, k, once."""
    osc = Oscillator(_m, _c, _k, regime="underdamped")
    derivation = osc.particular(forcing, t=_t)
    (line,) = osc.harmonics(forcing, t=_t)
    support = sp.sqrt(_k**2 + (_c * _w) ** 2)  # |k + i c w|: the spring and the damper together
    try:
        response = osc.response(forcing, 0, 0, t=_t)
        from_rest = compile_expr(response.solution, _t, (*_PARAMS, _w))
    except CalcError:  # pragma: no cover - the engine derives every harmonic forcing from rest
        response, from_rest = None, None
    return _Derived(
        forcing=forcing,
        derivation=derivation,
        response=response,
        amplitude=compile_expr(line.amplitude, _w, _PARAMS),
        magnification=compile_expr(line.magnification, _w, (_m, _c, _k)),
        phase_lag=compile_expr(line.phase_lag, _w, (_m, _c, _k)),
        transmitted=compile_expr(line.amplitude * support, _w, _PARAMS),
        transmissibility=compile_expr(line.amplitude * support / line.force_amplitude, _w, (_m, _c, _k)),
        steady=compile_expr(derivation.solution, _t, (*_PARAMS, _w)),
        from_rest=from_rest,
    )


_Fc, _Fs, _x0, _v0 = sp.symbols("F_c F_s x_0 v_0", real=True)
_STAGE_NAMES = ("m", "c", "k", "w", "F_c", "F_s", "x_0", "v_0")


@dataclass(frozen=True)
class _Stage:
    """The total response over one step of constant speed, from any state, compiled."""

    response: Any  # Response
    x: Compiled  # x(t; m, c, k, w, F_c, F_s, x_0, v_0)
    v: Compiled  # x'(t; ...)


@lru_cache(maxsize=1)
def _derive_stage() -> _Stage:
    """Derive once the response to ``F_c cos(w t) + F_s sin(w t)`` from ``x(0) = x_0``, ``x'(0) = v_0``."""
    osc = Oscillator(_m, _c, _k, regime="underdamped")
    response = osc.response(_Fc * sp.cos(_w * _t) + _Fs * sp.sin(_w * _t), _x0, _v0, t=_t)
    return _Stage(
        response=response,
        x=compile_expr(response.solution, _t, _STAGE_NAMES),
        v=compile_expr(sp.diff(response.solution, _t), _t, _STAGE_NAMES),
    )


@dataclass(frozen=True)
class _RunUp:
    """A linear run-up from rest to running speed in steps of constant speed, then running speed."""

    steps: int
    times: np.ndarray  # s
    x: np.ndarray  # m
    v: np.ndarray  # m/s
    speed: np.ndarray  # rad/s
    end: float  # s, the end of the run-up


def _run_up(stage: _Stage, *, m, c, k, w, unbalance, run_up_time, zeta, steps, points, hold_points=4000):
    """The run-up as ``machine_on_isolators`` steps it, evaluated for all steps at once.

    Step ``j`` runs at the speed of its middle, ``(j + 1/2) w / N``, for ``t_ru / N``
    under the force ``U s^2 cos(theta + s t)`` with the phase ``theta`` carried
    from step to step; the state at each step's end comes from the compiled total
    response, split into its parts in ``x_0``, ``v_0`` and the force so that only
    two numbers are carried in a loop. A hold at running speed for six time
    constants (at most 60 s) follows.
    """
    h = run_up_time / steps
    speeds = (np.arange(steps) + 0.5) * w / steps
    phase = np.concatenate(([0.0], np.cumsum(speeds * h)))  # summed in order, as the template does
    force = unbalance * speeds**2
    fc, fs = force * np.cos(phase[:-1]), -force * np.sin(phase[:-1])
    base = dict(m=m, c=c, k=k, w=speeds)
    parts = {}
    for name, unit in (("forced", (1.0, 0.0, 0.0)), ("x0", (0.0, 1.0, 0.0)), ("v0", (0.0, 0.0, 1.0))):
        on, x0, v0 = unit
        args = dict(base, F_c=fc * on, F_s=fs * on, x_0=x0, v_0=v0)
        parts[name] = (stage.x(h, **args), stage.v(h, **args))
    (px, pv), (ax, av), (bx, bv) = parts["forced"], parts["x0"], parts["v0"]
    xs, vs = np.empty(steps + 1), np.empty(steps + 1)
    x = v = 0.0
    for j in range(steps):  # two numbers carried per step
        xs[j], vs[j] = x, v
        x, v = px[j] + ax[j] * x + bx[j] * v, pv[j] + av[j] * x + bv[j] * v
    xs[steps], vs[steps] = x, v
    tau = np.linspace(0.0, h, points + 1)[:-1]
    local = dict(
        m=m,
        c=c,
        k=k,
        w=speeds[:, None],
        F_c=fc[:, None],
        F_s=fs[:, None],
        x_0=xs[:-1, None],
        v_0=vs[:-1, None],
    )
    starts = np.concatenate(([0.0], np.cumsum(np.full(steps, h))))  # summed in order, as the template does
    wn = math.sqrt(k / m)
    hold = min(6.0 / max(zeta * wn, 1e-9), 60.0)
    held = np.linspace(0.0, hold, hold_points)
    f_run = unbalance * w**2
    at_speed = dict(
        m=m, c=c, k=k, w=w, F_c=f_run * math.cos(phase[-1]), F_s=-f_run * math.sin(phase[-1]), x_0=x, v_0=v
    )
    return _RunUp(
        steps=steps,
        times=np.concatenate(((starts[:-1, None] + tau[None, :]).ravel(), starts[-1] + held)),
        x=np.concatenate((stage.x(tau[None, :], **local).ravel(), stage.x(held, **at_speed))),
        v=np.concatenate((stage.v(tau[None, :], **local).ravel(), stage.v(held, **at_speed))),
        speed=np.concatenate((np.repeat(speeds, points), np.full(hold_points, w))),
        end=float(run_up_time),
    )


def _run_up_steps(w: float, wn: float, zeta: float) -> int:
    """Steps of the run-up as the template chooses them: the speed moves by at most a quarter of
    the half-power bandwidth ``2 zeta omega_n`` in one step, 100 to 2000 steps."""
    return int(min(2000, max(100, math.ceil(w / (0.5 * max(zeta, 0.005) * wn)))))


def _carried(x: float, sig: int | None) -> float:
    """*x* as a template carries it into a later step: rounded to *sig* significant figures."""
    if sig is None or not math.isfinite(x):
        return x
    return float(f"{x:.{sig}g}")


@dataclass(frozen=True)
class _Move:
    """One set of values, SI, with what the result sets and the checks need."""

    plan: Plan
    model: Any  # _Derived
    stage: _Stage | None
    values: Mapping[str, float]  # role -> SI value (rad/s for frequencies)
    quantities: Mapping[str, Any]  # role -> the value as a quantity in its display unit
    texts: Mapping[str, str]  # role -> text (bases of limits)
    base: Mapping[str, float]  # the oscillator's numbers (WhatIf fields)
    band: float


def _single_mass_results(mv: _Move) -> tuple[dict[str, float], None]:
    """``single_mass_harmonic`` records these results exactly (nothing carried rounded)."""
    names = (
        "damping_coefficient",
        "natural_frequency",
        "natural_frequency_hz",
        "frequency_ratio",
        "magnification",
        "static_deflection",
        "amplitude",
        "phase_lag",
        "transmissibility",
        "transmitted_force",
    )
    return {name: mv.base[name] for name in names}, None


def _isolator_results(mv: _Move) -> tuple[dict[str, float], _RunUp]:
    """``machine_on_isolators``'s results, step by step as its sheet computes them.

    Each step takes the earlier results as the sheet shows them (``carried``: four
    significant figures in the unit the sheet gives them in: um, g mm, N, rad/s,
    N s/m, a pure number); the run-up uses the unrounded chain, as the template does.
    """
    v, d, sig = mv.values, mv.model, mv.plan.carry
    m, k, zeta, w = v["mass"], v["stiffness"], v["damping_ratio"], v["forcing_frequency"]
    mr, grade, t_ru = v["rotor_mass"], v["balance_grade"], v["run_up_time"]
    at = np.array([w])
    e_um = grade / w * 1e6  # e_per = G / Omega, ISO 21940-11, from memory; in um
    u_gmm = mr * _carried(e_um, sig)  # kg um = g mm
    f0 = _carried(u_gmm, sig) * 1e-6 * w**2  # F_0 = U Omega^2
    wn = math.sqrt(k / m)
    c = 2 * zeta * math.sqrt(k * m)
    f0_c, c_c = _carried(f0, sig), _carried(c, sig)
    x = float(d.amplitude(at, m=m, c=c_c, k=k, F0=f0_c)[0])
    f_t = float(d.transmitted(at, m=m, c=c_c, k=k, F0=f0_c)[0])
    t_ratio = _carried(f_t, sig) / f0_c if f0_c else math.nan
    results = {
        "e_per": e_um * 1e-6,
        "U": u_gmm * 1e-6,
        "F_0": f0,
        "omega_n": wn,
        "f_n": _carried(wn, sig) / (2 * math.pi),
        "delta_st": m * STANDARD_GRAVITY / k,
        "c": c,
        "r": w / _carried(wn, sig),
        "X": x,
        "F_T": f_t,
        "T": t_ratio,
        "eta": 1 - _carried(t_ratio, sig),
    }
    unbalance = mr * grade / w  # kg m, the unrounded chain
    steps = _run_up_steps(w, wn, zeta)
    common = dict(m=m, c=c, k=k, w=w, unbalance=unbalance, run_up_time=t_ru, zeta=zeta)
    run = _run_up(mv.stage, steps=steps, points=12, **common)
    half = _run_up(mv.stage, steps=2 * steps, points=6, **common)
    during = run.times <= t_ru
    results.update(
        run_up_steps=float(steps),
        peak_run_up=float(np.max(np.abs(run.x[during]))),
        peak_run_up_half_step=float(np.max(np.abs(half.x[: np.count_nonzero(during) // 2]))),
        peak_force_run_up=float(np.max(np.abs(k * run.x[during] + c * run.v[during]))),
        resonance_amplitude=unbalance * wn**2 / (c * wn) if c > 0 else math.inf,
    )
    return results, run


#: Result sets by the name a plan gives (``Plan.results``).
_RESULT_SETS = {"single mass": _single_mass_results, "isolators": _isolator_results}


def _judge(name: str, value: float, limit: float, relation: str, unit: str, basis: str) -> Check:
    """A check made as :meth:`calckit.Sheet.check` makes it: margin in percent of the limit."""
    margin = check_margin(value, limit, relation, unit)
    met = value <= limit if relation == "<=" else value >= limit
    shown = (lambda x: fmt(Q_(x, unit))) if unit else fmt_number
    return Check(
        name, float(value), float(limit), relation, unit, margin, bool(met), basis, shown(value), shown(limit)
    )


def _amplitude_check(mv: _Move, results: Mapping[str, float]) -> Check | None:
    limit = mv.quantities.get("amplitude_limit")
    if limit is None:
        return None
    amplitude = mv.base["amplitude"]
    value = Q_(amplitude, "m").to(limit.units).magnitude if math.isfinite(amplitude) else math.inf
    lim = float(limit.magnitude)
    basis = mv.texts.get("amplitude_limit_basis", "")
    check = _judge("amplitude", float(value), lim, "<=", _unit_text(limit), basis)
    return replace(check, shown_value=fmt(Q_(value, limit.units)), shown_limit=fmt(limit))


def _separation_check(mv: _Move, results: Mapping[str, float]) -> Check:
    """``|w / omega_n - 1|`` in percent against the band (common practice, no source)."""
    separation = abs(mv.base["forcing_frequency"] / mv.base["natural_frequency"] - 1) * 100
    check = _judge("speed separation", separation, mv.band * 100, ">=", "percent", mv.plan.separation_basis)
    return replace(
        check, shown_value=f"{fmt_number(separation)} %", shown_limit=f"{fmt_number(mv.band * 100)} %"
    )


def _isolation_check(mv: _Move, results: Mapping[str, float]) -> Check:
    return _judge(
        "isolation efficiency",
        results["eta"] * 100,
        float(mv.quantities["required_isolation"].to("percent").magnitude),
        ">=",
        "percent",
        mv.texts.get("required_isolation_basis", ""),
    )


def _ratio_check(mv: _Move, results: Mapping[str, float]) -> Check:
    return _judge("frequency ratio for isolation", results["r"], LEAST_RATIO, ">=", "", RATIO_BASIS)


def _run_up_check(mv: _Move, results: Mapping[str, float]) -> Check:
    limit = float(mv.quantities["movement_limit"].to("mm").magnitude)
    return _judge(
        "motion during run-up",
        results["peak_run_up"] * 1000,
        limit,
        "<=",
        "mm",
        mv.texts.get("movement_limit_basis", ""),
    )


#: Checks by the name the sheet gives them (``Plan.checks``).
_CHECKS = {
    "amplitude": _amplitude_check,
    "speed separation": _separation_check,
    "isolation efficiency": _isolation_check,
    "frequency ratio for isolation": _ratio_check,
    "motion during run-up": _run_up_check,
}


def _isolator_refusal(
    values: Mapping[str, float], quantities: Mapping[str, Any], names: Mapping[str, str]
) -> InputsError | None:
    """What ``machine_on_isolators`` refuses, with its own message (None if it takes the values)."""
    if values["rotor_mass"] > values["mass"]:
        return InputsError(
            f"the rotor ({_written(quantities['rotor_mass'])}) is heavier than everything on the isolators "
            f"({_written(quantities['mass'])})",
            where=names["rotor_mass"],
            do=f"Give the rotating parts only in {names['rotor_mass']} and the whole machine in {names['mass']}",
        )
    if not values["damping_ratio"] < 1:
        return InputsError(
            f"a damping ratio of {values['damping_ratio']:g} is not underdamped",
            where=names["damping_ratio"],
            do="Isolators are lightly damped; give a damping ratio below 1 (steel springs about 0.01 to 0.05)",
        )
    if not values["required_isolation"] < 1:
        return InputsError(
            f"an isolation efficiency of {values['required_isolation']:.0%} cannot be reached",
            where=names["required_isolation"],
            do="Give an efficiency below 100 %, e.g. 90 %",
        )
    return None


def _written(q) -> str:
    """A quantity as an inputs file writes it: ``"2000 kg"``, not ``"2000.0 kg"``."""
    return f"{_number_text(q.magnitude)} {q.units:~P}".strip()


#: The values a template refuses, by result set (``Plan.results``).
_RULES = {"isolators": _isolator_refusal}


def _forcing_expr(text: Any, where: str) -> sp.Expr:
    """The forcing text read in F0, w and t; refused unless one harmonic at w."""
    expr = parse_expression(text, {"F0": _F0, "w": _w}, where=where, t=_t)
    groups = split_forcing(expr, _t).groups
    if len(groups) != 1 or not groups[0].harmonic or groups[0].decay != 0 or groups[0].frequency != _w:
        raise InputsError(
            f'"{text}" is not one harmonic at the forcing frequency',
            where=where,
            do="The explorer takes a force at one frequency, for example F0*cos(w*t) or F0*sin(w*t)",
        )
    return expr


# ---------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class WhatIf:
    """The key results at one set of values (SI units unless said otherwise).

    The fields are the oscillator's own numbers, unrounded. :meth:`si` gives the
    results under the template's result names, computed as the template computes
    them (rounding what it carries, as its plan says), so that they can be compared
    with a built sheet's JSON record.
    """

    mass: float  # kg
    stiffness: float  # N/m
    damping_coefficient: float  # N s/m
    damping_ratio: float
    force_amplitude: float  # N
    forcing_frequency: float  # rad/s
    natural_frequency: float  # rad/s
    natural_frequency_hz: float  # Hz
    frequency_ratio: float
    magnification: float
    static_deflection: float  # m, F0 / k
    amplitude: float  # m
    phase_lag: float  # rad
    transmissibility: float
    transmitted_force: float  # N, amplitude of k x + c x'
    checks: tuple[Check, ...] = ()
    sheet: Mapping[str, float] = field(default_factory=dict)  # the template's results, SI

    def si(self) -> dict[str, float]:
        """The results by the template's names, SI values (the sheet's JSON record gives results the same way)."""
        return dict(self.sheet)

    def check(self, name: str) -> Check:
        """The check called *name* (``"amplitude"``, ``"speed separation"``)."""
        for item in self.checks:
            if item.name == name:
                return item
        known = ", ".join(c.name for c in self.checks) or "none"
        raise InputsError(f"no check named {name!r}", where="WhatIf.check", do=f"The checks are: {known}")


@dataclass(frozen=True)
class Kept:
    """What :meth:`Explorer.keep` wrote: the file and the values changed from the start.

    ``changes`` holds ``(name, starting text, kept text)`` for each value that moved.
    """

    path: Path
    changes: tuple[tuple[str, str, str], ...]
    template: str

    def summary(self) -> str:
        """One sentence: what was written and what changed."""
        if not self.changes:
            moved = "no value changed from the start"
        else:
            moved = "; ".join(f"{name} {old} -> {new}" for name, old, new in self.changes)
        return f"Wrote {self.path}: {moved}."


# ---------------------------------------------------------------------------
# Small helpers


def _round_sig(x: float, sig: int) -> float:
    if x == 0 or not math.isfinite(x):
        return float(x)
    return float(f"{x:.{sig - 1}e}")


def _digits(number: float) -> int:
    """Significant digits a starting value shows (``1850`` -> 4, ``0.05`` -> 1, ``1234.56`` -> 6)."""
    mantissa = repr(abs(float(number))).split("e")[0]
    if mantissa.endswith(".0"):
        mantissa = mantissa[:-2]
    return max(len(mantissa.replace(".", "").lstrip("0")), 1)


def _number_text(x: float) -> str:
    """The shortest text of a float, without a trailing ``.0`` (``1923.0`` -> ``"1923"``)."""
    text = repr(float(x))
    return text[:-2] if text.endswith(".0") else text


def _nice_step(span: float, count: int = 400) -> float:
    """A 1-2-5 step near ``span / count``."""
    raw = span / count
    if raw <= 0 or not math.isfinite(raw):
        return 0.01
    power = 10 ** math.floor(math.log10(raw))
    for factor in (1, 2, 5, 10):
        if factor * power >= raw:
            return factor * power
    return 10 * power  # pragma: no cover


def _nice_ceiling(x: float) -> float:
    """The 1-2-5 number at or above *x* (``0.031`` -> ``0.05``)."""
    power = 10 ** math.floor(math.log10(x))
    for factor in (1, 2, 5, 10):
        if factor * power >= x * (1 - 1e-12):
            return factor * power
    return 10 * power  # pragma: no cover


def _unit_text(q) -> str:
    return f"{q.units:~P}"


_NUMBER_AT_START = re.compile(r"\s*[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*(.*)$", re.DOTALL)


def _written_unit(raw: Any, q) -> str:
    """The unit as the user wrote it (``"720 kN/m"`` -> ``"kN/m"``), for writing values back."""
    if isinstance(raw, str):
        found = _NUMBER_AT_START.match(raw)
        if found:
            return found.group(1).strip()
    return f"{q.units:~}" if not q.unitless else ""


def _si_factor(role: _Role, unit: str, where: str) -> float:
    """SI value of one display unit (rad/s for frequencies)."""
    one = Q_(1, unit)
    if role.kind == "frequency":
        return angular_frequency(one, where)
    return float(to_si(one, where).magnitude)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return _number_text(value) if isinstance(value, float) and not value.is_integer() else repr(value)
    if isinstance(value, tuple | list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return json.dumps(str(value), ensure_ascii=False)


def _widgets_module():
    """ipywidgets, or None where it cannot be imported."""
    try:
        import ipywidgets
    except ImportError:
        return None
    return ipywidgets


# ---------------------------------------------------------------------------
# One input of the explorer


@dataclass
class _Input:
    """An input on a slider: its parameter name, starting value and current value (display unit)."""

    role: _Role
    name: str  # the template's parameter name
    raw: Any  # the starting value as given (text, number)
    unit: str  # display unit ("kg", "kN/m", "rpm", "" for a pure number)
    written_unit: str  # the unit as written in the inputs
    factor: float  # SI value of one display unit
    start: float  # starting value in the display unit
    value: float  # current value in the display unit
    sig: int  # significant figures kept on a move
    from_text: bool  # the starting value was text ("1850 kg"), not a bare number
    where: str  # where to point an error about it

    @property
    def si(self) -> float:
        return self.value * self.factor

    @property
    def label(self) -> str:
        shown = self.name.replace("_", " ")
        return f"{shown} ({self.unit})" if self.unit else shown

    def text(self, value: float | None = None) -> str:
        """The value as an inputs file holds it: ``"1923 kg"`` (text) or ``0.065`` (a number)."""
        v = self.value if value is None else value
        if self.from_text:
            return f"{_number_text(v)} {self.written_unit}".strip()
        return _number_text(v)

    def toml(self) -> str:
        """The value as TOML text: a quoted string with its unit, or a bare number."""
        return json.dumps(self.text(), ensure_ascii=False) if self.from_text else _number_text(self.value)

    @property
    def changed(self) -> bool:
        return self.value != self.start


# ---------------------------------------------------------------------------
# The explorer


class Explorer:
    """Sliders over one mass on springs and dampers under a harmonic force; see :func:`explore`.

    Attributes
    ----------
    results : WhatIf
        The key results and checks at the current values.
    derivation : Derivation
        The steady-state solution derived once with symbols (``ck.show`` renders it).
    widget : ipywidgets.VBox or None
        The sliders, results, plot and keep controls; None without ipywidgets.
    template : str
        The template the kept inputs file is for.
    plan : Plan
        What the explorer knows of that template.
    """

    def __init__(
        self,
        inputs: dict[str, _Input],
        texts: dict[str, Any],
        *,
        plan: Plan,
        template: Any,
        values: Mapping[str, Any],
        file: Any,
        forcing: sp.Expr,
        band: float,
        points: int,
        widgets: bool,
    ):
        self._inputs = inputs  # role -> input (sliders and limits)
        self._fixed = texts  # role -> text for roles without a unit (bases, forcing)
        self.plan = plan
        self._template = template
        self._values = dict(values)  # every template parameter's starting value, raw
        self._file = file
        self._band = band
        self._points = points
        self._model = _derive(forcing)
        self._stage = _derive_stage() if plan.history == "run-up" else None
        self._run: _RunUp | None = None
        self._hold = False
        refusal = self._refusal({})
        if refusal is not None:
            raise refusal
        freq = inputs["forcing_frequency"]
        lo, hi = self._frequency_range()
        self._grid = np.logspace(math.log10(lo), math.log10(hi), points)  # display unit
        self._omega = self._grid * freq.factor  # rad/s
        self.results = self._evaluate()
        self._figure = None
        self._artists: dict[str, Any] = {}
        self.widget = None
        self._controls: dict[str, Any] = {}
        self._ipywidgets = _widgets_module() if widgets else None
        if self._ipywidgets is not None:
            self._build_widgets()
            self._draw()

    # ------------------------------------------------------------ reading
    @property
    def template(self) -> str:
        return self._template.name

    @property
    def derivation(self):
        return self._model.derivation

    @property
    def controls(self) -> Mapping[str, Any]:
        """Every widget by name: the sliders (by parameter name), ``results``, ``plot``,
        ``path``, ``replace``, ``keep``, ``status`` and ``back``. Empty without ipywidgets."""
        return MappingProxyType(self._controls)

    @property
    def sliders(self) -> dict[str, Any]:
        """The sliders by parameter name (empty without ipywidgets)."""
        return {i.name: self._controls[i.name] for i in self._inputs.values() if i.name in self._controls}

    @property
    def values(self) -> dict[str, Any]:
        """Current values by parameter name, as quantities in the slider units."""
        return {i.name: Q_(i.value, i.unit) if i.unit else i.value for i in self._inputs.values()}

    @property
    def starting_values(self) -> dict[str, Any]:
        return {i.name: Q_(i.start, i.unit) if i.unit else i.start for i in self._inputs.values()}

    def changes(self) -> tuple[tuple[str, str, str], ...]:
        """``(name, starting text, current text)`` for each value moved from the start."""
        return tuple((i.name, i.text(i.start), i.text()) for i in self._inputs.values() if i.changed)

    def _frequency_range(self) -> tuple[float, float]:
        freq = self._inputs["forcing_frequency"]
        m, k = self._inputs["mass"], self._inputs["stiffness"]
        wn = math.sqrt(k.si / m.si) / freq.factor  # display unit
        lo = 0.1 * min(freq.start, wn)
        hi = 3.0 * max(freq.start, wn)
        return lo, hi

    # ------------------------------------------------------------ numbers
    def _si_values(self, moved: Mapping[str, float]) -> dict[str, float]:
        """Role -> SI value, with *moved* (parameter name -> display value) in place."""
        return {key: moved.get(item.name, item.value) * item.factor for key, item in self._inputs.items()}

    def _quantities(self, moved: Mapping[str, float] | None = None) -> dict[str, Any]:
        moved = moved or {}
        out = {}
        for key, item in self._inputs.items():
            number = moved.get(item.name, item.value)
            out[key] = Q_(number, item.unit) if item.unit else Q_(number, "")
        return out

    def _refusal(self, moved: Mapping[str, float]) -> InputsError | None:
        """The template's own refusal of these values (None if it takes them)."""
        rule = _RULES.get(self.plan.results)
        if rule is None:
            return None
        names = {key: item.name for key, item in self._inputs.items()}
        return rule(self._si_values(moved), self._quantities(moved), names)

    def _evaluate(self) -> WhatIf:
        """The key results at the current values: compiled functions only, no sympy."""
        values = self._si_values({})
        m, k, w = values["mass"], values["stiffness"], values["forcing_frequency"]
        if "damping_ratio" in values:
            zeta = values["damping_ratio"]
            c = 2.0 * zeta * math.sqrt(k * m)
        else:
            c = values["damping"]
            zeta = c / (2.0 * math.sqrt(k * m))
        if self.plan.force == "unbalance":
            eccentricity = values["balance_grade"] / w  # e_per = G / w, ISO 21940-11, from memory
            f0 = values["rotor_mass"] * eccentricity * w**2  # F0 = m_u e w^2
        else:
            f0 = values["force_amplitude"]
        d = self._model
        at = np.array([w])
        wn = math.sqrt(k / m)
        base = dict(
            mass=m,
            stiffness=k,
            damping_coefficient=c,
            damping_ratio=zeta,
            force_amplitude=f0,
            forcing_frequency=w,
            natural_frequency=wn,
            natural_frequency_hz=wn / (2 * math.pi),
            frequency_ratio=w / wn,
            magnification=float(d.magnification(at, m=m, c=c, k=k)[0]),
            static_deflection=f0 / k,
            amplitude=float(d.amplitude(at, m=m, c=c, k=k, F0=f0)[0]),
            phase_lag=float(d.phase_lag(at, m=m, c=c, k=k)[0]),
            transmissibility=float(d.transmissibility(at, m=m, c=c, k=k)[0]),
            transmitted_force=float(d.transmitted(at, m=m, c=c, k=k, F0=f0)[0]),
        )
        texts = {key: str(value or "") for key, value in self._fixed.items()}
        move = _Move(self.plan, d, self._stage, values, self._quantities(), texts, base, self._band)
        sheet, self._run = _RESULT_SETS[self.plan.results](move)
        checks = (_CHECKS[name](move, sheet) for name in self.plan.checks)
        return WhatIf(**base, checks=tuple(c for c in checks if c is not None), sheet=sheet)

    def _curves(self) -> dict[str, np.ndarray]:
        """The frequency-response curve and the time histories at the current values."""
        r = self.results
        m, c, k, F0, w = r.mass, r.damping_coefficient, r.stiffness, r.force_amplitude, r.forcing_frequency
        d = self._model
        if self.plan.curve == "transmissibility":
            curve = d.transmissibility(self._omega, m=m, c=c, k=k)
        else:
            curve = d.amplitude(self._omega, m=m, c=c, k=k, F0=F0)
        if self.plan.history == "run-up":
            run = self._run
            unbalance = F0 / w**2  # m_u e, kg m
            envelope = d.amplitude(run.speed, m=m, c=c, k=k, F0=unbalance * run.speed**2)
            return {"curve": curve, "times": run.times, "run": run.x, "envelope": envelope}
        period = 2 * math.pi / w
        span = min(max(4 * period, 3 * 2 * math.pi / r.natural_frequency), 60 * period)
        times = np.linspace(0.0, _nice_ceiling(span * 1000) / 1000, self._points)  # a 1-2-5 span in ms
        steady = d.steady(times, m=m, c=c, k=k, F0=F0, w=w)
        rest = None
        if d.from_rest is not None and r.damping_ratio < 1:
            rest = d.from_rest(times, m=m, c=c, k=k, F0=F0, w=w)
        return {"curve": curve, "times": times, "steady": steady, "from_rest": rest}

    # ------------------------------------------------------------ moving
    def set(self, **values: Any) -> WhatIf:
        """Move inputs, by parameter name or model keyword: ``set(stiffness="900 kN/m")``.

        Values are text with a unit, pint quantities, or plain numbers in the
        slider's unit (the unit in its label). Limits (``amplitude_limit``,
        ``movement_limit`` ...) move the same way and are kept like the others.
        Values the template would refuse (a rotor heavier than the machine, a
        damping ratio of 1 or more ...) are refused with its message, and
        nothing moves. Returns the new results.
        """
        moved = {}
        for key, value in values.items():
            item = self._lookup(key)
            if item is None:
                raise self._not_an_input(key)
            if isinstance(value, int | float) and not isinstance(value, bool):
                number = float(value)
            else:
                q = quantity(value, item.name, expect=item.role.kind)
                number = float(q.to(item.unit).magnitude) if item.unit else float(q.to("").magnitude)
            self._check_sign(item, number)
            moved[item.name] = number
        refusal = self._refusal(moved)
        if refusal is not None:
            raise refusal
        self._hold = True
        try:
            for name, number in moved.items():
                item = self._inputs_by_name()[name]
                item.value = number
                slider = self._controls.get(name)
                if slider is not None:
                    self._fit_slider(slider, number)
                    slider.value = number
        finally:
            self._hold = False
        self.refresh()
        return self.results

    def reset(self) -> WhatIf:
        """Back to the starting values."""
        return self.set(**{i.name: i.start for i in self._inputs.values()})

    def _inputs_by_name(self) -> dict[str, _Input]:
        return {i.name: i for i in self._inputs.values()}

    def _lookup(self, key: str) -> _Input | None:
        if key in self._inputs:
            return self._inputs[key]
        return self._inputs_by_name().get(key)

    def _not_an_input(self, key: str) -> InputsError:
        known = ", ".join(i.name for i in self._inputs.values())
        return InputsError(
            f'"{key}" is not an input the explorer moves',
            where=f"Explorer.set({key}=...)",
            do=f"Move one of: {known}",
        )

    @staticmethod
    def _check_sign(item: _Input, number: float) -> None:
        if not math.isfinite(number):
            raise InputsError(f"{number} is not a finite number", where=item.name, do="Give a finite number")
        if number < 0 or (number == 0 and item.role.sign == "positive"):
            bound = "greater than zero" if item.role.sign == "positive" else "zero or more"
            raise InputsError(
                f"must be {bound}, got {_number_text(number)} {item.unit}".rstrip(),
                where=item.name,
                do="Check the value and its sign",
            )

    def _on_move(self, change) -> None:
        if self._hold:
            return
        item = self._inputs_by_name()[change["owner"]._calckit_name]
        number = float(change["new"])
        number = item.start if number == item.start else _round_sig(number, item.sig)
        refusal = self._refusal({item.name: number})
        if refusal is not None:  # the template would refuse it: the slider goes back, the message shows
            self._hold = True
            try:
                change["owner"].value = item.value
            finally:
                self._hold = False
            self._controls["status"].value = f"<p>Not moved: {html.escape(str(refusal))}</p>"
            return
        item.value = number
        self.refresh()

    def refresh(self) -> None:
        """Recompute the results and update the displayed table and plot."""
        self.results = self._evaluate()
        if self.widget is not None:
            self._controls["results"].value = self._results_html()
            self._draw()

    # ------------------------------------------------------------ widgets
    def _slider(self, item: _Input):
        w = self._ipywidgets
        style = {"description_width": "180px"}
        layout = w.Layout(width="480px")
        readout = ".4g"
        if item.role.choices:
            return w.SelectionSlider(
                options=self._choices(item),
                value=item.start,
                description=item.label,
                continuous_update=True,
                style=style,
                layout=layout,
            )
        if item.role.key == "forcing_frequency":
            lo, hi = self._frequency_range()
            return w.FloatLogSlider(
                value=item.start,
                base=10,
                min=math.log10(lo),
                max=math.log10(hi),
                step=(math.log10(hi) - math.log10(lo)) / 400,
                description=item.label,
                readout_format=readout,
                continuous_update=True,
                style=style,
                layout=layout,
            )
        if item.role.scale == "log":
            centre = math.log10(item.start)
            return w.FloatLogSlider(
                value=item.start,
                base=10,
                min=centre - 1,
                max=centre + 1,
                step=0.005,
                description=item.label,
                readout_format=readout,
                style=style,
                layout=layout,
            )
        if item.role.key == "damping_ratio":
            per_one = 1 / item.factor  # display units in a ratio of 1 (100 for percent)
            hi = max(0.5 * per_one, min(0.95 * per_one, 2 * item.start))
            lo = 0.0
        elif item.role.key == "damping":
            m, k = self._inputs["mass"].si, self._inputs["stiffness"].si
            critical = 2 * math.sqrt(k * m) / item.factor
            hi, lo = max(0.5 * critical, 2 * item.start), 0.0
        elif item.role.key == "force_amplitude":
            hi, lo = 3 * item.start if item.start > 0 else 1.0, 0.0
        else:  # a mass, a time
            hi, lo = 3 * item.start, 0.25 * item.start
        return w.FloatSlider(
            value=item.start,
            min=lo,
            max=hi,
            step=_nice_step(hi - lo),
            description=item.label,
            readout_format=readout,
            style=style,
            layout=layout,
        )

    @staticmethod
    def _choices(item: _Input, also: float | None = None) -> list[tuple[str, float]]:
        """The slider's stops: the role's choices in the display unit, with the starting value
        (and *also*) among them: ``[("G 2.5", 2.5), ("G 6.3", 6.3), ...]``."""
        to_display = Q_(1, item.role.choice_unit).to(item.unit).magnitude if item.unit else 1.0
        stops = {_round_sig(c * to_display, 12) for c in item.role.choices}
        stops |= {item.start, item.value} | ({also} if also is not None else set())
        prefix = "G " if item.role.key == "balance_grade" else ""
        return [(f"{prefix}{_number_text(v)}", v) for v in sorted(stops)]

    def _fit_slider(self, slider, number: float) -> None:
        """Widen a slider's range (or add a stop) so that a value set by :meth:`set` is not clipped."""
        if hasattr(slider, "options"):
            if number not in [v for _, v in slider.options]:
                item = self._inputs_by_name()[slider._calckit_name]
                slider.options = self._choices(item, number)
            return
        if hasattr(slider, "base"):
            exponent = math.log(number, slider.base) if number > 0 else slider.min
            if exponent < slider.min:
                slider.min = math.floor(exponent * 10) / 10
            if exponent > slider.max:
                slider.max = math.ceil(exponent * 10) / 10
        else:
            if number < slider.min:
                slider.min = number
            if number > slider.max:
                slider.max = number

    def _build_widgets(self) -> None:
        w = self._ipywidgets
        sliders = []
        for key, item in self._inputs.items():
            if key not in self.plan.sliders:
                continue  # a limit: moved by set(), kept like the others
            slider = self._slider(item)
            slider._calckit_name = item.name
            slider.observe(self._on_move, names="value")
            self._controls[item.name] = slider
            sliders.append(slider)
        back = w.Button(description="Back to the starting values", layout=w.Layout(width="240px"))
        back.on_click(lambda _: self.reset())
        results = w.HTML(self._results_html())
        plot = w.Image(format="png", layout=w.Layout(width="100%", max_width="960px"))
        name = w.Text(
            value=str(self._default_keep_path()),
            description="inputs file",
            style={"description_width": "80px"},
            layout=w.Layout(width="420px"),
        )
        replace = w.Checkbox(value=False, description="replace it if it exists", indent=False)
        keep = w.Button(description="Keep these values", button_style="", layout=w.Layout(width="180px"))
        status = w.HTML("")
        keep.on_click(lambda _: self._keep_clicked())
        self._controls.update(
            back=back, results=results, plot=plot, path=name, replace=replace, keep=keep, status=status
        )
        title = self._values.get("subject") or "One mass on springs and dampers under a harmonic force"
        self.widget = w.VBox(
            [
                w.HTML(f"<b>What if: {html.escape(str(title))}</b>"),
                w.HBox([w.VBox([*sliders, back]), results]),
                plot,
                w.HBox([name, replace, keep]),
                status,
            ]
        )

    def _default_keep_path(self) -> Path:
        stem = self._file.path.stem if self._file is not None else self.template
        candidate = Path(f"{stem}_kept.toml")
        return _free_name(candidate)

    def _keep_clicked(self) -> None:
        status = self._controls["status"]
        path = Path(self._controls["path"].value.strip() or self._default_keep_path())
        try:
            kept = self.keep(path, overwrite=self._controls["replace"].value)
        except OverwriteError as exc:
            alongside = _free_name(path)
            self._controls["path"].value = str(alongside)
            status.value = (
                f"<p>{html.escape(str(exc))}</p><p>Nothing was written. Press the button again to write "
                f"<code>{html.escape(str(alongside))}</code> alongside it instead, or tick "
                "&ldquo;replace it if it exists&rdquo;.</p>"
            )
            return
        except (CalcError, OSError) as exc:
            status.value = f"<p>Nothing was written: {html.escape(str(exc))}</p>"
            return
        status.value = _kept_html(kept)

    # ------------------------------------------------------------ figure
    # Dynamic artists are drawn over a cached frame (axes, ticks, labels, legend): a move
    # redraws only them. The frame is redrawn when an axis range changes, and the ranges
    # move in steps (decades, 1-2-5) so that most moves keep the frame.
    _LEFT = {
        "amplitude": ("band", "natural", "curve", "point", "legend1"),
        "transmissibility": ("band", "natural", "sqrt2", "required", "curve", "point", "legend1"),
    }
    _RIGHT = {
        "steady": ("from_rest", "steady", "legend2"),
        "run-up": ("envelope_up", "envelope_down", "end", "run", "legend2"),
    }

    @property
    def _dynamic(self) -> tuple[str, ...]:
        return self._LEFT[self.plan.curve] + self._RIGHT[self.plan.history]

    def _limit(self, role: str) -> tuple[float, str] | None:
        """A limit's current value and unit, or None when the template has none."""
        item = self._inputs.get(role)
        return (item.value, item.unit) if item is not None else None

    def _make_figure(self):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure
        from matplotlib.ticker import NullLocator

        freq = self._inputs["forcing_frequency"]
        fig = Figure(figsize=(9.6, 3.4), dpi=80)
        FigureCanvasAgg(fig)
        fig.subplots_adjust(left=0.075, right=0.985, bottom=0.16, top=0.90, wspace=0.28)
        ax1, ax2 = fig.subplots(1, 2)
        a = {}
        band = f"within {fmt_number(self._band * 100)} % of the natural frequency"
        a["band"] = ax1.axvspan(1, 1, color="0.85", label=band)
        a["natural"] = ax1.axvline(1, color="0.4", lw=0.8, ls=":")
        (a["curve"],) = ax1.plot([], [], color="black", lw=1.2)
        (a["point"],) = ax1.plot([], [], "o", color="black", ms=6, label="operating point")
        if self.plan.curve == "transmissibility":
            a["sqrt2"] = ax1.axvline(1, color="0.5", lw=0.8, ls="-.", label="√2 ω_n: T = 1")
            a["required"] = ax1.axhline(
                1, color="0.3", lw=0.9, ls="--", label="T allowed by the required isolation"
            )
            ax1.set_ylabel("transmissibility T = F_T / F_0")
            ax1.set_title("Transmissibility", fontsize=10)
        else:
            unit = self._amplitude_unit()
            if "amplitude_limit" in self._inputs:
                a["limit"] = ax1.axhline(1, color="0.3", lw=0.9, ls="--", label="amplitude limit")
            ax1.set_ylabel(f"amplitude X, {unit}")
            ax1.set_title("Frequency response", fontsize=10)
        ax1.set_xscale("log")
        ax1.set_yscale("log")
        ax1.yaxis.set_minor_locator(NullLocator())
        ax1.set_xlim(self._grid[0], self._grid[-1])
        ax1.set_xlabel(f"{freq.name.replace('_', ' ')}, {freq.unit or 'rad/s'}")
        a["legend1"] = ax1.legend(loc="lower left", fontsize=7, framealpha=0.9)
        if self.plan.history == "run-up":
            movement = self._limit("movement_limit")
            (a["envelope_up"],) = ax2.plot(
                [], [], color="0.5", lw=1.0, ls="--", label="steady amplitude at the current speed"
            )
            (a["envelope_down"],) = ax2.plot([], [], color="0.5", lw=1.0, ls="--")
            a["end"] = ax2.axvline(1, color="0.4", lw=0.8, ls=":", label="end of the run-up")
            (a["run"],) = ax2.plot([], [], color="black", lw=0.5, label="x(t): run-up, then running speed")
            if movement is not None:
                label = f"movement limit ±{fmt(Q_(*movement))}"
                a["limit_up"] = ax2.axhline(1, color="0.3", lw=0.9, ls="-.", label=label)
                a["limit_down"] = ax2.axhline(-1, color="0.3", lw=0.9, ls="-.")
            ax2.set_xlabel("time, s")
            ax2.set_ylabel("displacement x, mm")
            ax2.set_title("Run-up from rest through resonance", fontsize=10)
        else:
            unit = self._amplitude_unit()
            (a["from_rest"],) = ax2.plot([], [], color="0.6", lw=0.8, label="from rest")
            (a["steady"],) = ax2.plot([], [], color="black", lw=1.2, label="steady state")
            if "amplitude_limit" in self._inputs:
                a["limit_up"] = ax2.axhline(1, color="0.3", lw=0.9, ls="--")
                a["limit_down"] = ax2.axhline(-1, color="0.3", lw=0.9, ls="--")
            ax2.set_xlabel("time, ms")
            ax2.set_ylabel(f"displacement x, {unit}")
            ax2.set_title("Time history at the operating point", fontsize=10)
        a["legend2"] = ax2.legend(loc="upper right", fontsize=7, framealpha=0.9)
        for name in self._dynamic:
            a[name].set_animated(True)
        a["ax1"], a["ax2"] = ax1, ax2
        self._figure, self._artists = fig, a
        self._frame = None  # (limits, cached background)

    def _amplitude_unit(self) -> str:
        limit = self._inputs.get("amplitude_limit")
        return limit.unit if limit is not None and limit.unit else "mm"

    @staticmethod
    def _decades(y: np.ndarray, *also: float) -> tuple[float, float]:
        """A log axis range in whole decades around the finite positive values."""
        finite = y[np.isfinite(y) & (y > 0)]
        top = float(finite.max()) if finite.size else 1.0
        bottom = float(finite.min()) if finite.size else 1e-6
        for value in also:
            if value is not None and math.isfinite(value) and value > 0:
                top, bottom = max(top, value), min(bottom, value)
        return (10.0 ** math.floor(math.log10(bottom / 2)), 10.0 ** math.ceil(math.log10(top * 2)))

    def _update_figure(self) -> tuple:
        """Put the current curves into the existing artists (no new figure, no new lines).

        Returns the axis ranges, which change in steps."""
        if self._figure is None:
            self._make_figure()
        a, r = self._artists, self.results
        freq = self._inputs["forcing_frequency"]
        curves = self._curves()
        x_op = r.forcing_frequency / freq.factor
        wn = r.natural_frequency / freq.factor
        a["natural"].set_xdata([wn, wn])
        _set_span(a["band"], (1 - self._band) * wn, (1 + self._band) * wn)
        if self.plan.curve == "transmissibility":
            y = curves["curve"]
            a["curve"].set_data(self._grid, y)
            a["point"].set_data([x_op], [r.transmissibility])
            a["sqrt2"].set_xdata([math.sqrt(2) * wn] * 2)
            allowed = 1 - float(self._quantities()["required_isolation"].to("").magnitude)
            a["required"].set_ydata([allowed, allowed])
            y_range = self._decades(y, allowed)
            lim = None
        else:
            unit = self._amplitude_unit()
            to_unit = Q_(1, "m").to(unit).magnitude
            y = curves["curve"] * to_unit
            a["curve"].set_data(self._grid, y)
            a["point"].set_data([x_op], [r.amplitude * to_unit])
            limit = self._limit("amplitude_limit")
            lim = float(limit[0]) if limit is not None else None
            y_range = self._decades(y, lim)
        if self.plan.history == "run-up":
            seconds = curves["times"]
            run_mm = curves["run"] * 1000
            envelope = curves["envelope"] * 1000
            a["run"].set_data(seconds, run_mm)
            a["envelope_up"].set_data(seconds, envelope)
            a["envelope_down"].set_data(seconds, -envelope)
            a["end"].set_xdata([self._run.end] * 2)
            finite = np.abs(run_mm[np.isfinite(run_mm)])
            peak = float(finite.max()) if finite.size else 0.0
            peak = _nice_ceiling(1.1 * peak) if peak > 0 and math.isfinite(peak) else 1.0
            step = _nice_step(float(seconds[-1]), 8)
            span = math.ceil(float(seconds[-1]) / step) * step  # a whole number of 1-2-5 steps
            movement = self._limit("movement_limit")
            lim = float(Q_(*movement).to("mm").magnitude) if movement is not None else None
            ranges = (y_range, span, peak, lim)
        else:
            unit = self._amplitude_unit()
            to_unit = Q_(1, "m").to(unit).magnitude
            ms = curves["times"] * 1000
            steady = curves["steady"] * to_unit
            rest = curves["from_rest"]
            a["steady"].set_data(ms, steady)
            a["from_rest"].set_data(ms, rest * to_unit if rest is not None else np.full_like(ms, np.nan))
            peak = 0.0
            for v in (steady, rest * to_unit if rest is not None else None):
                if v is not None and np.isfinite(v).any():
                    peak = max(peak, float(np.max(np.abs(v[np.isfinite(v)]))))
            peak = max(peak, lim or 0.0)
            peak = _nice_ceiling(1.1 * peak) if peak > 0 and math.isfinite(peak) else 1.0
            span = float(ms[-1])
            ranges = (y_range, span, peak, lim)
        if ranges != getattr(self, "_ranges", None):
            a["ax1"].set_ylim(*y_range)
            a["ax2"].set_xlim(0, span)
            a["ax2"].set_ylim(-peak, peak)
            if lim is not None:
                if "limit" in a:
                    a["limit"].set_ydata([lim, lim])
                a["limit_up"].set_ydata([lim, lim])
                a["limit_down"].set_ydata([-lim, -lim])
            self._ranges = ranges
        return ranges

    def _png(self) -> bytes:
        """The figure as PNG: the cached frame with the dynamic artists drawn over it."""
        from PIL import Image

        ranges = self._update_figure()
        canvas = self._figure.canvas
        if self._frame is None or self._frame[0] != ranges:
            canvas.draw()  # animated artists are left out of a full draw
            self._frame = (ranges, canvas.copy_from_bbox(self._figure.bbox))
        else:
            canvas.restore_region(self._frame[1])
        for name in self._dynamic:
            artist = self._artists[name]
            artist.axes.draw_artist(artist)
        width, height = canvas.get_width_height()
        image = Image.frombuffer("RGBA", (width, height), canvas.buffer_rgba(), "raw", "RGBA", 0, 1)
        buffer = io.BytesIO()
        image.save(buffer, format="png", compress_level=1)
        return buffer.getvalue()

    def _svg(self) -> str:
        import matplotlib

        self._update_figure()
        for name in self._dynamic:  # a saved figure leaves animated artists out
            self._artists[name].set_animated(False)
        try:
            buffer = io.StringIO()
            with matplotlib.rc_context({"svg.hashsalt": "calckit", "svg.fonttype": "path"}):
                self._figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
        finally:
            for name in self._dynamic:
                self._artists[name].set_animated(True)
            self._frame = None
        svg = buffer.getvalue()
        svg = svg[svg.index("<svg") :]
        return re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.DOTALL)

    def _draw(self) -> None:
        self._controls["plot"].value = self._png()

    # ------------------------------------------------------------ text
    def _rows(self) -> list[tuple[str, str, str, str]]:
        """``(name, symbol, shown value, SI value)`` for each key result."""
        if self.plan.results == "isolators":
            return self._isolator_rows()
        return self._single_mass_rows()

    def _isolator_rows(self) -> list[tuple[str, str, str, str]]:
        """The results of ``machine_on_isolators`` under its names, shown as its sheet shows them."""
        got = self.results.si()
        freq = self._inputs["forcing_frequency"]

        def row(name, label, unit=None, shown_unit=None, extra=""):
            value = got[name]
            if unit is None:
                text = fmt_number(value)
            elif not math.isfinite(value):
                text = "unbounded"
            else:
                text = fmt(Q_(value, unit).to(shown_unit or unit))
            return (name, label, text + extra, repr(value))

        wn_alt = f" = {fmt(Q_(got['f_n'], 'Hz'))}"
        if freq.unit and freq.unit not in ("Hz", "rad/s"):
            wn_alt += f" = {fmt_number(got['omega_n'] / freq.factor)} {freq.unit}"
        return [
            row("omega_n", "natural frequency ω<sub>n</sub>", "rad/s", extra=wn_alt),
            row("delta_st", "static deflection δ<sub>st</sub>", "m", "mm"),
            row("r", "frequency ratio r = Ω/ω<sub>n</sub>"),
            row("e_per", "permissible eccentricity e<sub>per</sub> = G/Ω", "m", "um"),
            row("U", "residual unbalance U", "kg*m", "g*mm"),
            row("F_0", "unbalance force F<sub>0</sub> = UΩ²", "N"),
            row("X", "amplitude X", "m", "um"),
            row("T", "transmissibility T"),
            row("F_T", "force into the floor F<sub>T</sub>", "N"),
            row("eta", "isolation efficiency η = 1 − T", "", "percent"),
            row("peak_run_up", "largest motion during the run-up", "m", "mm"),
            row("peak_force_run_up", "largest force into the floor during the run-up", "N"),
        ]

    def _single_mass_rows(self) -> list[tuple[str, str, str, str]]:
        r = self.results
        freq = self._inputs["forcing_frequency"]
        force_unit = self._inputs["force_amplitude"].unit or "N"
        amp_unit = self._amplitude_unit()
        wn_alt = f" = {fmt(Q_(r.natural_frequency_hz, 'Hz'))}"
        if freq.unit and freq.unit not in ("Hz", "rad/s"):
            wn_alt += f" = {fmt_number(r.natural_frequency / freq.factor)} {freq.unit}"
        amplitude = (
            fmt(Q_(r.amplitude, "m").to(amp_unit))
            if math.isfinite(r.amplitude)
            else "unbounded (undamped resonance)"
        )
        return [
            (
                "natural_frequency",
                "natural frequency ω<sub>n</sub>",
                f"{fmt(Q_(r.natural_frequency, 'rad/s'))}{wn_alt}",
                repr(r.natural_frequency),
            ),
            (
                "frequency_ratio",
                "frequency ratio r = ω/ω<sub>n</sub>",
                fmt_number(r.frequency_ratio),
                repr(r.frequency_ratio),
            ),
            ("damping_ratio", "damping ratio ζ", fmt_number(r.damping_ratio), repr(r.damping_ratio)),
            ("amplitude", "amplitude X", amplitude, repr(r.amplitude)),
            (
                "magnification",
                "magnification X k/F<sub>0</sub>",
                fmt_number(r.magnification),
                repr(r.magnification),
            ),
            ("phase_lag", "phase lag φ", fmt(Q_(r.phase_lag, "rad").to("deg")), repr(r.phase_lag)),
            (
                "transmissibility",
                "transmissibility T",
                fmt_number(r.transmissibility),
                repr(r.transmissibility),
            ),
            (
                "transmitted_force",
                "force into the support F<sub>T</sub>",
                fmt(Q_(r.transmitted_force, "N").to(force_unit)),
                repr(r.transmitted_force),
            ),
        ]

    def _results_html(self) -> str:
        rows = "".join(
            f'<tr data-name="{name}" data-si="{si}"><td>{label}</td><td style="text-align:right">'
            f"{html.escape(shown)}</td></tr>"
            for name, label, shown, si in self._rows()
        )
        checks = "".join(_check_row(c) for c in self.results.checks)
        moved = self.changes()
        changed = (
            "<p>Changed from the start: "
            + "; ".join(f"{html.escape(n)} {html.escape(o)} &rarr; {html.escape(v)}" for n, o, v in moved)
            + "</p>"
            if moved
            else "<p>At the starting values.</p>"
        )
        return (
            '<div class="calckit-explore">'
            f"<table><tbody>{rows}</tbody></table>"
            f"<table><thead><tr><th>check</th><th>value</th><th>limit</th><th>verdict</th><th>margin</th></tr>"
            f"</thead><tbody>{checks}</tbody></table>{changed}</div>"
        )

    def static_html(self, note: str = _NO_WIDGETS_NOTE) -> str:
        """A still: the note, the inputs, results and checks, and the plot as SVG."""
        inputs = "".join(
            f"<tr><td>{html.escape(i.name)}</td><td>{html.escape(i.text())}</td></tr>"
            for i in self._inputs.values()
        )
        return (
            f'<div class="calckit-explore-still"><p><em>{html.escape(note)}</em></p>'
            f"<table><tbody>{inputs}</tbody></table>{self._results_html()}"
            f"<figure>{self._svg()}</figure></div>"
        )

    def text(self) -> str:
        """The values, results and checks as plain text."""
        lines = ["What-if explorer (" + self.template + ")", "inputs:"]
        lines += [f"  {i.name} = {i.text()}" for i in self._inputs.values()]
        lines.append("results:")
        for _, label, shown, _ in self._rows():
            plain = re.sub(r"<sub>(.*?)</sub>", r"_\1", label)
            lines.append(f"  {plain}: {shown}")
        lines.append("checks:")
        for c in self.results.checks:
            lines.append(
                f"  {c.name}: {c.shown_value} {c.relation} {c.shown_limit}: {c.verdict} "
                f"(margin {c.margin_text})"
            )
        return "\n".join(lines)

    def __repr__(self) -> str:
        text = self.text()
        if not in_kernel():  # a plain Python session: say how to move the values here
            text += (
                "\n(The sliders need Jupyter with ipywidgets. Here, move values with "
                ".set(name=value) and write them with .keep(path).)"
            )
        return text

    def _repr_mimebundle_(self, include=None, exclude=None):
        if self.widget is not None and in_kernel():
            data = dict(self.widget._repr_mimebundle_())
            data["text/html"] = self.static_html()
        else:
            note = _NO_WIDGETS_NOTE
            if self._ipywidgets is None:
                note = (
                    "ipywidgets is not available here, so the what-if explorer shows a still at the "
                    "values given; install ipywidgets and run it in Jupyter for the sliders."
                )
            data = {"text/html": self.static_html(note)}
        data["text/plain"] = self.text()
        return data

    # ------------------------------------------------------------ keep
    def keep(self, path: str | os.PathLike | None = None, *, overwrite: bool = False) -> Kept:
        """Write the current values to an inputs file that ``calckit build`` reads.

        The starting inputs file is copied line for line (comments, tables and
        the ``[sheet]`` table kept) with only the moved values replaced, in the
        units they were written in. Without a starting file, the template's own
        values are written with the explorer's in their place.

        Parameters
        ----------
        path : str or path, optional
            The file to write; ``<inputs stem>_kept.toml`` in the working folder
            by default.
        overwrite : bool
            Replace an existing file. Without it an existing file is refused.

        Returns
        -------
        Kept

        Raises
        ------
        OverwriteError
            The file exists and *overwrite* is false; nothing is written.
        """
        path = Path(path) if path is not None else self._default_keep_path()
        if path.exists() and not overwrite:
            raise OverwriteError(
                "the file exists already",
                where=str(path),
                do=f"Keep to another name (for example {_free_name(path).name} alongside it), "
                "or pass overwrite=True to replace it",
            )
        if path.is_dir():
            raise OverwriteError(
                "the path is a folder", where=str(path), do="Give a file name ending in .toml"
            )
        text = self._kept_text()
        _write(path, text, overwrite=overwrite)
        written = read_inputs(path)  # read back as calckit build will
        check_keys(written, self._template.parameters, path=path)
        for item in self._inputs.values():
            got = written.values.get(item.name)
            if _as_display(item, got) != item.value:  # pragma: no cover - guards the writer itself
                raise InputsError(
                    f"the kept value {got!r} reads back differently from {item.text()!r}",
                    where=str(path),
                    do="Report this; the file was written and may be edited by hand",
                )
        return Kept(path, self.changes(), self.template)

    def _kept_text(self) -> str:
        moved = [i for i in self._inputs.values() if i.changed]
        header = "# Kept from the what-if explorer (calckit.explore)"
        header += (
            ": " + "; ".join(f"{i.name} was {i.text(i.start)}" for i in moved) + ".\n"
            if moved
            else "; no value moved from the start.\n"
        )
        if self._file is not None:
            text = _replace_lines(self._file, {i.name: i.toml() for i in moved})
            if text is not None:
                return header + text
            values = dict(self._file.values)
            groups = dict(self._file.groups)
            title = self._file.sheet.present()
        else:
            values = {n: v for n, v in self._values.items() if n not in TITLE_FIELDS}
            groups = {}
            title = {n: v for n, v in self._values.items() if n in TITLE_FIELDS}
        for item in self._inputs.values():
            values[item.name] = item.text() if item.from_text else float(item.value)
        sources = dict(getattr(self._file, "sources", {}) or {}) if self._file is not None else {}
        return header + _document(values, groups, title, self.template, sources)


def _as_display(item: _Input, raw: Any) -> float | None:
    if raw is None:
        return None
    q = quantity(raw, item.name, expect=item.role.kind)
    return float(q.to(item.unit).magnitude) if item.unit else float(q.to("").magnitude)


def _set_span(patch, x0: float, x1: float) -> None:
    """Move an ``axvspan`` (a Rectangle in newer matplotlib, a Polygon in older)."""
    if hasattr(patch, "set_width") and hasattr(patch, "set_x"):
        patch.set_x(x0)
        patch.set_width(x1 - x0)
    else:  # pragma: no cover - matplotlib before 3.9
        patch.set_xy([[x0, 0], [x0, 1], [x1, 1], [x1, 0], [x0, 0]])


def _check_row(c: Check) -> str:
    verdict = "met" if c.met else "<b>NOT MET</b>"
    return (
        f'<tr data-check="{html.escape(c.name)}" data-verdict="{c.verdict}" data-margin="{c.margin_percent!r}">'
        f"<td>{html.escape(c.name)}</td><td>{html.escape(c.shown_value)}</td>"
        f"<td>{c.relation} {html.escape(c.shown_limit)}</td><td>{verdict}</td>"
        f"<td>{html.escape(c.margin_text)}</td></tr>"
    )


def _kept_html(kept: Kept) -> str:
    if kept.changes:
        rows = "".join(
            f"<tr><td>{html.escape(n)}</td><td>{html.escape(o)}</td><td>{html.escape(v)}</td></tr>"
            for n, o, v in kept.changes
        )
        moved = (
            f"<table><thead><tr><th>input</th><th>at the start</th><th>kept</th></tr></thead>{rows}</table>"
        )
    else:
        moved = "<p>No value moved from the start.</p>"
    command = f"calckit build {kept.template} --inputs {kept.path} --out built/"
    return (
        f"<p>Wrote <code>{html.escape(str(kept.path))}</code>.</p>{moved}"
        f"<p>Build its sheet with <code>{html.escape(command)}</code></p>"
    )


def _free_name(path: Path) -> Path:
    """*path* if it does not exist, else ``<stem>_2<suffix>``, ``_3`` ... beside it."""
    if not path.exists():
        return path
    stem = re.sub(r"_\d+$", "", path.stem)
    number = 2
    while True:
        candidate = path.with_name(f"{stem}_{number}{path.suffix}")
        if not candidate.exists():
            return candidate
        number += 1


def _write(path: Path, text: str, *, overwrite: bool) -> None:
    """Write *text* whole or not at all; without *overwrite* never replace a file."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".calckit-keep-", suffix=".toml", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        if overwrite:
            os.replace(tmp, path)
        else:
            try:
                os.link(tmp, path)  # fails if the file appeared meanwhile
            except FileExistsError:
                raise OverwriteError(
                    "the file exists already",
                    where=str(path),
                    do="Keep to another name, or pass overwrite=True to replace it",
                ) from None
            except OSError:  # pragma: no cover - file systems without hard links
                with open(path, "x", encoding="utf-8") as handle:
                    handle.write(text)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


_HEADER = re.compile(r"\s*\[\s*([^\[\]]*?)\s*\]\s*(#.*)?$")
_VALUE = re.compile(
    r"""^(?P<lead>\s*(?P<key>[A-Za-z0-9_-]+|"[^"]*"|'[^']*')\s*=\s*)"""
    r"""(?P<value>"(?:[^"\\]|\\.)*"|'[^']*'|[^\s#"']+)(?P<tail>\s*(?:#.*)?)$"""
)


_INLINE = re.compile(
    r"""^(?P<lead>\s*(?P<key>[A-Za-z0-9_-]+|"[^"]*"|'[^']*')\s*=\s*)\{(?P<body>[^{}]*)\}(?P<tail>\s*(?:#.*)?)$"""
)


def _replace_lines(file: Any, new: Mapping[str, str]) -> str | None:
    """The inputs file's text with the values of *new* replaced in place, or None if a line
    cannot be placed safely (then the caller writes the file afresh)."""
    lines = file.text.splitlines(keepends=True)
    for name, toml in new.items():
        number = file.line_of(name)
        if number is None:
            return None
        line = lines[number - 1]
        ending = line[len(line.rstrip("\r\n")) :]
        found = _VALUE.match(line.rstrip("\r\n"))
        inline = _INLINE.match(line.rstrip("\r\n")) if not found else None
        if found and found.group("key").strip("\"'") == name:
            lines[number - 1] = found.group("lead") + toml + found.group("tail") + ending
        elif inline and inline.group("key").strip("\"'") == name:
            # { value = ..., source = ... }: the new value keeps its provenance in the source
            try:
                old = tomllib.loads(f"x = {{{inline.group('body')}}}")["x"]
            except tomllib.TOMLDecodeError:
                return None
            source = f"{old.get('source', '')}; moved in the what-if explorer from {old.get('value', '')}"
            lines[number - 1] = (
                inline.group("lead")
                + f"{{ value = {toml}, source = {_toml_value(source.lstrip('; '))} }}"
                + inline.group("tail")
                + ending
            )
        else:
            return None
    text = "".join(lines)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError:  # pragma: no cover - a value the pattern misread
        return None
    for name, toml in new.items():
        group = file.groups.get(name, "")
        table = data.get(group, {}) if group else data
        got = table.get(name)
        if isinstance(got, dict):
            got = got.get("value")
        if got != tomllib.loads(f"x = {toml}")["x"]:  # pragma: no cover
            return None
    return text


def _document(
    values: Mapping[str, Any],
    groups: Mapping[str, str],
    title: Mapping[str, Any],
    template: str,
    sources: Mapping[str, str] | None = None,
) -> str:
    """An inputs file written afresh: top-level inputs, then each table, then ``[sheet]``;
    inputs with a source are written ``{ value = ..., source = ... }``."""
    lines = [f"# Inputs for the template {template}.", ""]
    tables: dict[str, list[str]] = {}
    sources = sources or {}
    for name, value in values.items():
        group = groups.get(name, "")
        entry = f"{name} = {_toml_value(value)}"
        if name in sources:
            entry = f"{name} = {{ value = {_toml_value(value)}, source = {_toml_value(sources[name])} }}"
        if group:
            tables.setdefault(group, []).append(entry)
        else:
            lines.append(entry)
    for group, entries in tables.items():
        lines += ["", f"[{group}]", *entries]
    if title:
        lines += ["", "[sheet]"] + [f"{n} = {_toml_value(v)}" for n, v in title.items()]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------
# Opening an explorer


def _roles_of(
    plan: Plan, parameters: Mapping[str, Any], names: Mapping[str, str] | None, where: str
) -> dict[str, str]:
    """Role -> the template's parameter name, for the roles of *plan*."""
    found: dict[str, str] = {}
    names = dict(names or {})
    for key, name in names.items():
        if key not in ROLES:
            raise InputsError(
                f'"{key}" is not an input of the explorer\'s model',
                where="explore(names=...)",
                do=f"Map these keywords to the template's names: {', '.join(plan.roles())}",
            )
        if name not in parameters:
            raise InputsError(
                f'the template declares no parameter "{name}"',
                where=f"explore(names={{{key!r}: {name!r}}})",
                do=f"The template's parameters are {', '.join(parameters)}",
            )
        found[key] = name
    for key in plan.roles():
        if key in found:
            continue
        candidates = ((plan.names[key],) if key in plan.names else ()) if plan.names else ROLES[key].names
        for name in candidates:
            if name in parameters:
                found[key] = name
                break
    if "damping_ratio" in found and "damping" in found and "damping" not in names:
        del found["damping"]
    missing = [k for k in plan.required if k != "damping" and k not in found]
    if "damping" in plan.required and "damping_ratio" not in found and "damping" not in found:
        missing.append("damping")
    if missing:

        def wanted(key: str) -> str:
            if key == "damping":
                return "the damping (damping_ratio, zeta, damping, damping_coefficient or c)"
            known = (plan.names[key],) if key in plan.names else ROLES[key].names
            return f"the {ROLES[key].label} ({', '.join(known)})"

        raise InputsError(
            f"the template declares no input for {'; '.join(wanted(k) for k in missing)}",
            where=where,
            do="Explore a template of one mass on a spring and damper under a harmonic force "
            f"(such as {DEFAULT_TEMPLATE}), map its names with names={{'mass': '...'}}, "
            "or give the values directly",
        )
    return found


def _plan_of(plan: str | Plan | None, template: str) -> Plan:
    """The entry of :data:`PLANS` for *template* (or the one asked for)."""
    if isinstance(plan, Plan):
        return plan
    if plan is None:
        return PLANS.get(template, PLANS[DEFAULT_TEMPLATE])
    if plan not in PLANS:
        raise InputsError(
            f"the explorer has no entry called {plan!r}",
            where="explore(plan=...)",
            do=f"Give one of {', '.join(PLANS)}, or a Plan",
        )
    return PLANS[plan]


def explore(
    inputs: str | os.PathLike | None = None,
    template: str | os.PathLike | None = None,
    *,
    mass: Any = None,
    stiffness: Any = None,
    damping_ratio: Any = None,
    damping: Any = None,
    force_amplitude: Any = None,
    forcing_frequency: Any = None,
    amplitude_limit: Any = None,
    values: Mapping[str, Any] | None = None,
    names: Mapping[str, str] | None = None,
    plan: str | Plan | None = None,
    band: float = 0.20,
    points: int = CURVE_POINTS,
    widgets: bool = True,
) -> Explorer:
    """Open the what-if explorer on a template's calculation of one mass under a harmonic force.

    Parameters
    ----------
    inputs : str or path, optional
        An inputs file (TOML) for *template*; checked against the template's
        parameters as ``calckit build`` checks it.
    template : str or path, optional
        A template notebook or a bundled template's name; ``single_mass_harmonic``
        by default. Its entry in :data:`PLANS` (or its parameter names) says which
        inputs, results and checks there are (see the module notes).
    mass, stiffness, damping_ratio, damping, force_amplitude, forcing_frequency, amplitude_limit
        Values given directly, by role: text with a unit (``"1850 kg"``), a pint
        quantity, or a number for the damping ratio. They replace the file's (or
        the template's) starting values.
    values : mapping, optional
        More values given directly, by the template's parameter name or by role
        (``{"rotor_mass": "200 kg", "balance_grade": "2.5 mm/s"}``).
    names : mapping, optional
        Role -> the template's parameter name, for names not recognised.
    plan : str or Plan, optional
        The entry to explore the template by (a key of :data:`PLANS`, or a
        :class:`Plan`); by default the template's own entry, else the single-mass one.
    band : float
        Half-width of the speed-separation band as a fraction (0.20: +/-20 %).
    points : int
        Points on the frequency-response curve and the time history.
    widgets : bool
        Build the sliders (when ipywidgets is importable). With False, or without
        ipywidgets, the explorer shows a still and moves by :meth:`Explorer.set`.

    Returns
    -------
    Explorer

    Raises
    ------
    InputsError, UnitsError
        A template without the inputs of the model, an inputs file that does not
        match its template, a value of the wrong kind or sign, values the template
        refuses, a forcing that is not one harmonic at the forcing frequency.
    BuildError
        No such template.
    """
    tmpl = load_template(template if template is not None else DEFAULT_TEMPLATE)
    plan = _plan_of(plan, tmpl.name)
    file = None
    start: dict[str, Any] = dict(tmpl.parameters)
    wheres = {name: name for name in start}
    roles = _roles_of(plan, tmpl.parameters, names, where=str(tmpl.path))
    if inputs is not None:
        file = read_inputs(inputs)
        check_keys(file, tmpl.parameters, path=file.path)
        start.update(file.assignments(tmpl.parameters))
        wheres.update({name: file.where(name) for name in file.values})
    given = {
        "mass": mass,
        "stiffness": stiffness,
        "damping_ratio": damping_ratio,
        "damping": damping,
        "force_amplitude": force_amplitude,
        "forcing_frequency": forcing_frequency,
        "amplitude_limit": amplitude_limit,
    }
    for key, value in given.items():
        if value is None:
            continue
        if key not in roles:
            raise _not_declared(key, value, roles, start, tmpl.name)
        start[roles[key]] = value
        wheres[roles[key]] = f"explore({key}=...)"
    by_name = {name: key for key, name in roles.items()}
    for key, value in (values or {}).items():
        name = roles.get(key, key)
        if name not in by_name:
            raise InputsError(
                f'"{key}" is not an input the explorer moves on {tmpl.name}',
                where=f"explore(values={{{key!r}: ...}})",
                do=f"Give one of: {', '.join(roles.values())}",
            )
        start[name] = value
        wheres[name] = f"explore(values={{{key!r}: ...}})"
    if not isinstance(points, int) or isinstance(points, bool) or points < 10:
        raise InputsError(
            f"expected 10 or more points, got {points!r}", where="explore(points=...)", do="Give an int"
        )
    if not (isinstance(band, int | float) and 0 < band < 1):
        raise InputsError(
            f"expected a fraction between 0 and 1, got {band!r}",
            where="explore(band=...)",
            do="Give, for example, 0.2 for +/-20 %",
        )

    items: dict[str, _Input] = {}
    texts: dict[str, Any] = {}
    for key in dict.fromkeys((*plan.sliders, *plan.roles())):  # sliders in their order, then the rest
        if key not in roles or key == "forcing":
            continue
        name = roles[key]
        if ROLES[key].kind is None:
            texts[key] = start[name]
        else:
            items[key] = _input(ROLES[key], name, start[name], wheres.get(name, name))
    forcing = _F0 * sp.cos(_w * _t)
    if "forcing" in roles:
        name = roles["forcing"]
        forcing = _forcing_expr(start[name], wheres.get(name, name))
    return Explorer(
        items,
        texts,
        plan=plan,
        template=tmpl,
        values=start,
        file=file,
        forcing=forcing,
        band=float(band),
        points=points,
        widgets=widgets,
    )


def _not_declared(
    key: str, value: Any, roles: Mapping[str, str], values: Mapping[str, Any], template: str
) -> InputsError:
    if key == "damping" and "damping_ratio" in roles:
        hint = "Give damping_ratio=c/(2*sqrt(k*m))"
        try:
            c = float(to_si(quantity(value, "damping", expect="damping coefficient"), "damping").magnitude)
            m = float(to_si(quantity(values[roles["mass"]], "mass", expect="mass"), "mass").magnitude)
            k = float(
                to_si(quantity(values[roles["stiffness"]], "stiffness", expect="stiffness"), "k").magnitude
            )
            hint += f", here {fmt_number(c / (2 * math.sqrt(k * m)))}"
        except (CalcError, ValueError, ZeroDivisionError):
            pass
        return InputsError(
            f"the template {template} takes the damping as a ratio ({roles['damping_ratio']}), not as a coefficient",
            where="explore(damping=...)",
            do=hint,
        )
    if key == "damping_ratio" and "damping" in roles:
        return InputsError(
            f"the template {template} takes the damping as a coefficient ({roles['damping']}), not as a ratio",
            where="explore(damping_ratio=...)",
            do="Give damping=c with a unit, c = 2 zeta sqrt(k m)",
        )
    return InputsError(
        f"the template {template} declares no input for the {ROLES[key].label}",
        where=f"explore({key}=...)",
        do="Leave it out, or explore a template that has it",
    )


def _checked(role: _Role, raw: Any, where: str):
    """The starting value as a quantity of the role's kind, finite and of the right sign."""
    try:
        q = quantity(raw, role.key, expect=role.kind)
        q = positive(q, role.key) if role.sign == "positive" else non_negative(q, role.key)
    except CalcError as exc:
        raise type(exc)(exc.what, where=where if where != role.key else exc.where, do=exc.do) from None
    return q


def _input(role: _Role, name: str, raw: Any, where: str) -> _Input:
    q = _checked(role, raw, where)
    unit = _unit_text(q)  # "" for a bare number; "%" for a percentage
    start = float(q.magnitude)
    factor = _si_factor(role, unit, where) if unit else 1.0
    return _Input(
        role=role,
        name=name,
        raw=raw,
        unit=unit,
        written_unit=_written_unit(raw, q),
        factor=factor,
        start=start,
        value=start,
        sig=max(SIGNIFICANT, _digits(start)),
        from_text=isinstance(raw, str),
        where=where,
    )
