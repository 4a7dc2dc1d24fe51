"""The separation of every mode from every excitation order over a speed range, as a sheet shows it.

:func:`speed_range_check` is the body of :meth:`calckit.Sheet.speed_range_check`. Its numbers
come from :func:`calckit.physics.interference.range_separation` (the least separation of each
mode x order over the range, in closed form); the sheet shows

1. a table of every mode x order: the natural frequency, the band the order sweeps, the
   crossing speed ``omega_n / k``, the least separation, where it is least, the verdict;
2. the worst pair's working as numbered steps: the separation at the end of the range nearer
   the crossing, ``|k Omega / omega_n - 1|`` from the speed as given, or, when the range holds
   the crossing, the crossing speed ``omega_n / k`` and the separation 0 there;
3. one check, of the worst pair, whose basis prints the margin definition.

The natural frequencies are taken as the sheet shows them (its significant figures), so
that the table, the step and the check agree with what a checker reads.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace
from typing import Any

import sympy as sp

from calckit.core.rounding import as_shown
from calckit.core.units import Q_, angular_frequency, fmt, fmt_number
from calckit.errors import SheetError
from calckit.physics.interference import (
    RangeSeparation,
    natural_frequencies_of,
    order_separation_formula,
    range_separation,
)
from calckit.physics.speed_range import SpeedRange
from calckit.sheet.working import conversion_formula

__all__ = ["speed_range_check", "speed_in"]


def speed_in(omega: float, unit: str) -> float:
    """A speed or frequency in rad/s expressed in *unit* (rpm, Hz, rad/s ...), the 2 pi counted for cycles.

    >>> round(speed_in(157.07963, "rpm"), 3), round(speed_in(157.07963, "Hz"), 4)
    (1500.0, 25.0)
    """
    return omega / angular_frequency(Q_(1, unit), "unit")


def _step_name(sheet, name: str) -> str:
    step = re.sub(r"\W+", "_", name.strip()).strip("_").lower() or "separation"
    step = step if step[0].isalpha() else f"s_{step}"
    while step in sheet.results:
        step += "_"
    return step


def _natural_quantity(value: Any, sig: int):
    """A natural frequency as the sheet shows it, a quantity in rad/s (its own unit when it has one)."""
    if isinstance(value, str) or hasattr(value, "units"):
        from calckit.core.units import quantity

        q = quantity(value, "natural frequencies", expect="frequency")
        return Q_(as_shown(angular_frequency(q, "natural frequencies"), sig), "rad/s")
    return Q_(as_shown(float(value), sig), "rad/s")  # a bare number is in rad/s


def _where(pair, speeds: SpeedRange) -> str:
    if pair.crossed:
        return f"crossed at {fmt_number(speed_in(pair.crossing_speed, speeds.unit))} {speeds.unit}"
    given = fmt(speeds.maximum if pair.at == "maximum" else speeds.minimum)
    return f"at {given}" if speeds.fixed else f"at {given} ({pair.at})"


def _table(sheet, found: RangeSeparation, modes) -> None:
    speeds, unit = found.speeds, found.speeds.unit
    rows = []
    for p in found.pairs:
        low, high = (fmt_number(p.order * w / (2 * math.pi)) for w in (speeds.low, speeds.high))
        sweep = low if speeds.fixed else f"{low} to {high}"
        verdict = f"waived: {p.waived}" if p.waived else p.verdict
        rows.append((modes[p.mode - 1], p.natural_frequency / (2 * math.pi), p.label, sweep,
                     speed_in(p.crossing_speed, unit), 100 * p.least, _where(p, speeds), verdict))  # fmt: skip
    over = f"at {speeds.text()}" if speeds.fixed else f"over {speeds.text()}"
    sheet.table(
        ["mode", r"$\omega_n$, Hz", "order", r"$k \Omega$, Hz", rf"crossing $\omega_n / k$, {unit}",
         "least separation, %", "where least", "verdict"],
        rows,
        f"Separation of every mode from every excitation order $k$ {over}, relative to the {found.relative_to} "
        f"(band $\\pm {100 * found.band:g}$ %): the least over the range, 0 where the crossing speed "
        r"$\Omega_c = \omega_n / k$ lies in it (closed form: the separation falls towards the crossing on either side).",
    )  # fmt: skip


def speed_range_check(
    sheet,
    name: str,
    speeds: SpeedRange,
    natural_frequencies: Any,
    *,
    band: float,
    relative_to: str,
    basis: str | None = None,
    waived: Any = None,
    modes: Any = None,
) -> RangeSeparation:
    """Table, worst pair's steps and one check; returns what :func:`range_separation` found."""
    given = natural_frequencies
    if hasattr(given, "natural_frequencies") or hasattr(given, "natural_frequency"):
        given = natural_frequencies_of(given)
    elif isinstance(given, str) or hasattr(given, "units") or not isinstance(given, list | tuple):
        given = [given]
    natural_frequencies_of(given)  # refuses what is not a positive frequency, before rounding
    shown = [_natural_quantity(w, sheet.sig) for w in given]
    if not isinstance(speeds, SpeedRange):
        range_separation(speeds, 1.0)  # refuses with the physics' message
    # the numbers from the speeds as the steps carry them, in rad/s to the sheet's figures
    as_carried = SpeedRange(Q_(as_shown(speeds.low, sheet.sig), "rad/s"), Q_(as_shown(speeds.high, sheet.sig), "rad/s"),
                            orders=dict(zip(speeds.labels, speeds.orders, strict=True)))  # fmt: skip
    found = range_separation(
        as_carried, [float(q.magnitude) for q in shown], band=band, relative_to=relative_to, waived=waived
    )
    found = replace(found, speeds=speeds)  # shown in the unit they were given in
    names = tuple(modes) if modes is not None else tuple(
        f"mode {i}" if len(shown) > 1 else "the natural frequency" for i in range(1, len(shown) + 1)
    )  # fmt: skip
    if len(names) != len(shown):
        raise SheetError(
            f"{len(names)} mode names are given for {len(shown)} natural frequencies",
            where=f"check {name}",
            do="Give one name per natural frequency, or leave modes out",
        )
    worst = found.worst
    if worst is None:
        raise SheetError(
            "every mode and order of the check is waived: there is nothing to judge",
            where=f"check {name}",
            do="Waive fewer pairs, or leave the check out and say why in a note",
        )
    _table(sheet, found, names)
    step = _step_name(sheet, name)
    omega_n = shown[worst.mode - 1]
    who = f"{names[worst.mode - 1]} against order {worst.label}"
    k = worst.order
    if worst.crossed:
        sheet.calc(
            f"{step}_crossing", sp.Symbol("omega_n") / sp.Symbol("k"), {"omega_n": omega_n, "k": Q_(k, "")},
            unit="rad/s", symbol=r"\Omega_c",
            title=f"Crossing speed of {who}, where $k \\Omega = \\omega_n$ ({name})",
        )  # fmt: skip
        low, high = (fmt_number(speeds.low), fmt_number(speeds.high))
        crossing = fmt_number(float(sheet.carried(f"{step}_crossing").to("rad/s").magnitude))
        sheet.result(
            step, Q_(0, "percent"), symbol=r"\Delta",
            title=f"Least separation over the speed range: {who} crosses the band ({name})",
            working=("procedure",
                     f"the crossing speed $\\Omega_c$ = {crossing} rad/s lies in the speed range {speeds.text()} "
                     f"({low} to {high} rad/s), where $k \\Omega = \\omega_n$: the separation there is 0"),
        )  # fmt: skip
        percent = 0.0
    else:
        endpoint = speeds.maximum if worst.at == "maximum" else speeds.minimum
        if conversion_formula(endpoint) is None:  # in rad/s already: to the sheet's figures, as in the table
            endpoint = Q_(as_shown(angular_frequency(endpoint, f"check {name}"), sheet.sig), "rad/s")
        title = (
            f"Least separation of every mode from every order: {who} ({name})"
            if speeds.fixed
            else f"Least separation over the speed range: {who}, at the {worst.at} speed, the end nearer the "
            f"crossing ({name})"
        )
        values = {"Omega": endpoint, "omega_n": omega_n}
        if k != 1:
            values["k"] = Q_(k, "")
        value = sheet.calc(
            step, order_separation_formula(relative_to, k), values, symbol="Delta", unit="percent",
            title=f"Separation of the operating frequency from the natural frequency ({name})" if found.single else title,
        )  # fmt: skip
        percent = float(value.to("percent").magnitude) if hasattr(value, "units") else float(value) * 100
    crossed = found.crossings_in_range
    if crossed and len(found.judged) > 1:
        unit = speeds.unit
        listed = "; ".join(
            f"{names[p.mode - 1]} x {p.label} at {fmt_number(speed_in(p.crossing_speed, unit))} {unit}"
            + (" (waived)" if p.waived else "")
            for p in crossed
        )
        sheet.note(f"Crossings inside the speed range {speeds.text()}: {listed}.")
    if basis is None:
        basis = found.definition
    sheet.check(name, percent, band * 100, relation=">=", basis=basis, unit="percent")
    return found
