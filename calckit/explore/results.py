"""The results at one set of values: the result sets of the plans, their checks and refusals, ``WhatIf``.

Each function here is named by a :class:`~calckit.explore.plans.Plan` in
:data:`~calckit.explore.plans.PLANS`; none knows a plan's name. What a template
computes is computed by the same function of :mod:`calckit.physics` here and in the
template (:func:`~calckit.physics.isolation.isolator_results`,
:func:`~calckit.physics.runup.run_up_results`, the criteria of
:mod:`calckit.physics.criteria`), with carried results rounded by
:func:`calckit.core.rounding.as_shown`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from calckit.core.rounding import as_shown
from calckit.core.units import Q_, fmt, fmt_number
from calckit.errors import InputsError
from calckit.explore.model import _Derived
from calckit.explore.values import _Input, _unit_text, _written
from calckit.physics.criteria import ISOLATION_RATIO_BASIS, LEAST_ISOLATION_RATIO
from calckit.physics.excitation import eccentricity_from_grade, unbalance_force_amplitude
from calckit.physics.interference import range_separation
from calckit.physics.isolation import isolator_refusal, isolator_results, isolator_run_up
from calckit.physics.runup import RunUp
from calckit.physics.single_mass import single_mass_results
from calckit.physics.speed_range import SpeedRange
from calckit.sheet import Check, check_margin

Row = tuple[str, str, str, str]  # (name, label, shown value, SI value as text)


@dataclass(frozen=True)
class _Move:
    """One set of values, SI, with what the result sets and the checks need."""

    plan: Any  # calckit.explore.plans.Plan (which names the functions here)
    model: _Derived
    values: Mapping[str, float]  # role -> SI value (rad/s for frequencies)
    quantities: Mapping[str, Any]  # role -> the value as a quantity in its display unit
    texts: Mapping[str, str]  # role -> text (bases of limits)
    base: Mapping[str, float]  # the oscillator's numbers (WhatIf fields)
    band: float


# ---------------------------------------------------------------------------
# How the force amplitude is formed (Plan.force)


def _given_force(values: Mapping[str, float]) -> float:
    """The force amplitude as given (``force_amplitude``), N."""
    return values["force_amplitude"]


def _grade_mm_s(values: Mapping[str, float]) -> float:
    """The balance quality grade in mm/s, as the standard quotes it (the values hold m/s)."""
    return values["balance_grade"] * 1000.0


def _unbalance_force(values: Mapping[str, float]) -> float:
    """``F0 = m_r e w^2`` with ``e = G / w`` (ISO 21940-11, from memory), unrounded, N."""
    w = values["forcing_frequency"]
    e = eccentricity_from_grade(_grade_mm_s(values), w)
    return float(unbalance_force_amplitude(values["rotor_mass"], e, w))


# ---------------------------------------------------------------------------
# Result sets (Plan.results): the template's results by its names, SI, and the run-up if any


def _single_mass_results(mv: _Move) -> tuple[dict[str, float], None]:
    """The single-mass results: through :func:`calckit.physics.single_mass.single_mass_results`, the
    chain its template writes out, carrying what the plan says (``Plan.carry``); the
    transmissibility and the force into the support (not on that sheet) exactly."""
    results = {name: mv.base[name] for name in ("transmissibility", "transmitted_force")}
    if mv.plan.carry:
        results.update(
            single_mass_results(
                mv.base["mass"],
                mv.base["stiffness"],
                mv.base["damping_ratio"],
                mv.base["force_amplitude"],
                mv.base["forcing_frequency"],
                carry=mv.plan.carry,
            )
        )
    else:
        names = ("damping_coefficient", "natural_frequency", "natural_frequency_hz", "frequency_ratio",
                 "magnification", "static_deflection", "amplitude", "phase_lag")  # fmt: skip
        results.update({name: mv.base[name] for name in names})
    return results, None


def _isolator_results(mv: _Move) -> tuple[dict[str, float], RunUp]:
    """The results of a machine on isolators, through the physics functions its template calls.

    The results at running speed carry earlier results as shown (``Plan.carry``
    significant figures); the run-up takes the unrounded chain.
    """
    v = mv.values
    machine = dict(
        machine_mass=v["mass"],
        isolator_stiffness=v["stiffness"],
        damping_ratio=v["damping_ratio"],
        rotor_mass=v["rotor_mass"],
        balance_grade=_grade_mm_s(v),
        running_speed=v["forcing_frequency"],
    )
    results = isolator_results(**machine, carry=mv.plan.carry).as_dict()
    run = isolator_run_up(**machine, run_up_time=v["run_up_time"])
    results.update(
        run_up_steps=float(run.steps),
        peak_run_up=run.peak,
        peak_run_up_half_step=run.peak_half_step,
        peak_force_run_up=run.peak_force,
        resonance_amplitude=run.resonance_amplitude,
    )
    if mv.plan.carry:  # the sheet's step U omega_n / c takes the three as it prints them
        shown = {name: as_shown(results[name], mv.plan.carry) for name in ("U", "omega_n", "c")}
        results["resonance_amplitude"] = shown["U"] * shown["omega_n"] / shown["c"]
    return results, run.run


# ---------------------------------------------------------------------------
# Checks (Plan.checks): value, limit, margin and verdict by calckit.sheet's rule (check_margin)


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
    amplitude = results.get("amplitude", mv.base["amplitude"])
    value = Q_(amplitude, "m").to(limit.units).magnitude if math.isfinite(amplitude) else math.inf
    lim = float(limit.magnitude)
    basis = mv.texts.get("amplitude_limit_basis", "")
    check = _judge("amplitude", float(value), lim, "<=", _unit_text(limit), basis)
    return replace(check, shown_value=fmt(Q_(value, limit.units)), shown_limit=fmt(limit))


def _separation_check(mv: _Move, results: Mapping[str, float]) -> Check:
    """``|w / omega_n - 1|`` in percent against the band (common practice, no source)."""
    w, w_n = mv.base["forcing_frequency"], mv.base["natural_frequency"]
    if mv.plan.carry:  # the sheet's separation step takes both frequencies in rad/s as it prints them
        w, w_n = as_shown(w, mv.plan.carry), as_shown(w_n, mv.plan.carry)
    # the templates' one calculation: one speed, one mode, 1x (the least over a range of that one speed)
    separation = range_separation(SpeedRange(w), w_n).worst.least * 100
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
    """``r >= 3`` for isolation (common practice, no source)."""
    return _judge(
        "frequency ratio for isolation", results["r"], LEAST_ISOLATION_RATIO, ">=", "", ISOLATION_RATIO_BASIS
    )


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


# ---------------------------------------------------------------------------
# Refusals (Plan.refuse): what a template refuses, with its own message


def _isolator_refusal(
    values: Mapping[str, float], quantities: Mapping[str, Any], names: Mapping[str, str]
) -> InputsError | None:
    """What the machine-on-isolators template refuses, with its own message (None if it takes the values)."""
    return isolator_refusal(
        machine_mass=values["mass"],
        rotor_mass=values["rotor_mass"],
        damping_ratio=values["damping_ratio"],
        required_isolation=values["required_isolation"],
        shown=(_written(quantities["rotor_mass"]), _written(quantities["mass"])),
        names={
            "machine_mass": names["mass"],
            "rotor_mass": names["rotor_mass"],
            "damping_ratio": names["damping_ratio"],
            "required_isolation": names["required_isolation"],
        },
    )


# ---------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class WhatIf:
    """The key results at one set of values (SI units unless said otherwise).

    The fields are the oscillator's own numbers, unrounded. :meth:`si` gives the
    results under the template's result names, computed by the plan's result
    function (the physics functions the template calls, carrying what its plan says),
    so that they can be compared with a built sheet's JSON record.
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
    static_deflection: (
        float  # m, F0 / k: the deflection under the force amplitude applied statically (not m g / k)
    )
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


# ---------------------------------------------------------------------------
# Rows of the results table (Plan.rows): (name, label, shown value, SI value)


def _amplitude_unit(inputs: Mapping[str, _Input]) -> str:
    """The unit amplitudes are shown in: the amplitude limit's, else mm."""
    limit = inputs.get("amplitude_limit")
    return limit.unit if limit is not None and limit.unit else "mm"


def _isolator_rows(results: WhatIf, inputs: Mapping[str, _Input]) -> list[Row]:
    """The isolator results under the template's names, each in the unit its sheet gives it."""
    got = results.si()
    freq = inputs["forcing_frequency"]

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
        row("delta_st", "static deflection under the weight δ<sub>st</sub> = mg/k", "m", "mm"),
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


_SHEET_ROWS = ("natural_frequency", "natural_frequency_hz", "frequency_ratio", "amplitude", "magnification", "phase_lag")


def _single_mass_rows(results: WhatIf, inputs: Mapping[str, _Input]) -> list[Row]:
    """The single-mass results, shown in the units of the inputs: the numbers the sheet prints
    (its carried chain) where the sheet has them; the transmissibility and the force into the
    support (not on that sheet) exactly."""
    r = replace(results, **{k: v for k, v in results.sheet.items() if k in _SHEET_ROWS})
    freq = inputs["forcing_frequency"]
    force_unit = inputs["force_amplitude"].unit or "N"
    amp_unit = _amplitude_unit(inputs)
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
