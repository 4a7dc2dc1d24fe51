"""Checks that compare amplitudes like with like, and checks against published criteria, on a sheet.

- :func:`convention_step`: a result stated as peak, peak-to-peak or rms, restated in another
  convention as a numbered step (``V_rms = V / sqrt(2)``), so a checker sees the factor.
- :func:`amplitude_check`: a result against a limit given in its own convention: the result
  converted to the limit's convention in a shown step when they differ, and the checks table
  printing the convention beside both numbers (``0.34 mm/s rms <= 4.5 mm/s rms``).
- :func:`severity_check`: a machine's rms velocity judged by a severity zone of the ISO 10816 /
  ISO 20816 series (:func:`calckit.physics.criteria_tables.severity_zone`): the zone as a
  result, the check against the upper boundary of the least acceptable zone, the zone, the
  boundaries and the source in its basis.
- :func:`band_check`: the equipment's rms velocity band by band against a criterion curve
  (:func:`calckit.physics.band_response.band_response`): a table of every band, the worst
  band's numbers as steps and the check on it, with the curve and its source in the basis.

The :class:`~calckit.sheet.sheet.Sheet` methods of the same names call these.
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from calckit.core.rounding import as_shown
from calckit.core.units import Q_
from calckit.errors import SheetError
from calckit.physics.amplitude import (
    amplitude_convention,
    convention_formula,
    convention_text,
    harmonic_sum_formula,
    in_convention,
)
from calckit.sheet.blocks import Check

__all__ = ["amplitude_check", "band_check", "convention_step", "severity_check"]

_SUFFIX = {"peak": "peak", "peak-to-peak": "pp", "rms": "rms"}


def convention_step(
    sheet: Any, name: str, source: str, target: str, *, unit: str | None = None, title: str = ""
) -> tuple[str, Any]:
    """Restate the result *name* (one harmonic, stated in *source*) in *target* as a step; (new name, value).

    The new result is named ``{name}_rms``, ``{name}_pp`` or ``{name}_peak``; with *source* equal
    to *target* nothing is added and the result comes back as shown.
    """
    source = amplitude_convention(source, where=f"step {name}")
    target = amplitude_convention(target, where=f"step {name}")
    if source == target:
        return name, sheet.carried(name)
    new = f"{name}_{_SUFFIX[target]}"
    symbol = sp.latex(sp.Symbol(name))
    label = title or f"${symbol}$ ({convention_text(source)}) as {convention_text(target)}"
    value = sheet.calc(
        new,
        convention_formula(source, target, symbol=name),
        {name: sheet.carried(name)},
        unit=unit,
        symbol=_with_subscript(name, convention_text(target)),
        title=f"{label}, one harmonic: " + _rule(source, target),
    )
    return new, value


def _with_subscript(name: str, word: str) -> str:
    """``V`` -> ``V_{rms}``, ``V_f1`` -> ``V_{f1,rms}``: the convention joined to the symbol's own subscript."""
    base, _, sub = name.partition("_")
    head = sp.latex(sp.Symbol(base))
    return f"{head}_{{{sub.replace('_', ',')},{word}}}" if sub else f"{head}_{{{word}}}"


def _rule(source: str, target: str) -> str:
    rules = {
        ("peak", "rms"): r"rms $= $ peak $/\sqrt{2}$",
        ("rms", "peak"): r"peak $= \sqrt{2}\,$rms",
        ("peak", "peak-to-peak"): r"pk-pk $= 2\,$peak",
        ("peak-to-peak", "peak"): r"peak $=$ pk-pk $/ 2$",
        ("rms", "peak-to-peak"): r"pk-pk $= 2\sqrt{2}\,$rms",
        ("peak-to-peak", "rms"): r"rms $=$ pk-pk $/ (2\sqrt{2})$",
    }
    return rules[(source, target)]


def amplitude_check(
    sheet: Any,
    name: str,
    result: str,
    limit: Any,
    *,
    result_convention: str,
    limit_convention: str,
    relation: str = "<=",
    basis: str = "",
    unit: str | None = None,
) -> Check:
    """Check the result *result* (stated in *result_convention*) against *limit* (in *limit_convention*).

    The result is converted to the limit's convention in a step of its own when the two
    differ (:func:`convention_step`); the checks table shows both numbers with the
    convention, and the basis says which convention they were compared in.

    Raises
    ------
    InputsError
        A convention that is not peak, peak-to-peak or rms.
    SheetError
        No result of that name on the sheet (as :meth:`Sheet.carried`), or what ``Sheet.check`` refuses.
    """
    target = amplitude_convention(limit_convention, where=f"check {name} limit convention")
    source = amplitude_convention(result_convention, where=f"check {name} result convention")
    unit = unit or (f"{limit.units:~}" if hasattr(limit, "units") else None)
    new, value = convention_step(sheet, result, source, target, unit=unit)
    how = (
        f"compared as {target}"
        if new == result
        else f"compared as {target}: the {source} result converted in step {new}"
    )
    return sheet.check(
        name, value, limit, relation=relation, basis=f"{basis}; {how}" if basis else how, unit=unit,
        convention=target,
    )  # fmt: skip


def severity_check(
    sheet: Any,
    name: str,
    result: str,
    machine_class: str,
    acceptable_zone: str = "B",
    *,
    where: str = "machine_class",
) -> Check:
    """Judge the rms velocity *result* on the sheet by a severity zone of *machine_class*.

    Adds the zone as a result (``severity_zone``, working: the table and its source) and the
    check ``velocity <= the boundary above acceptable_zone``; the basis names the class, the
    zone found, the boundaries and the source (marked from memory where recalled).

    Raises
    ------
    InputsError
        The tables do not cover *machine_class*, or *acceptable_zone* is not A, B or C
        (zone D has no upper boundary to check against).
    """
    from calckit.errors import InputsError
    from calckit.physics.criteria_tables import severity_zone

    velocity = sheet.carried(result)
    zone = severity_zone(velocity, machine_class, where=where)
    found = zone.machine_class
    upper = found.upper_boundary(acceptable_zone)
    if upper is None:
        raise InputsError(
            "zone D has no upper boundary to check against",
            where="acceptable_zone",
            do='Give the least acceptable zone as "A", "B" or "C" (usually "B")',
        )
    boundary_name, boundary, boundary_text = upper
    sheet.result(
        "severity_zone",
        f"zone {zone.zone}",
        title=f"Evaluation zone of the machine's vibration: {zone.meaning}",
        symbol=r"\mathrm{zone}",
        working=(
            "table",
            f"{found.key} ({found.machines}; {found.foundation} foundation): {zone.boundaries_text}, "
            f"{found.source}",
        ),
    )
    basis = (
        f"{found.key}: zone {acceptable_zone.strip().upper()} or better, up to {boundary_name} {boundary_text} rms; "
        f"zone found: {zone.zone}; {found.source}" + (f"; {found.note}" if found.note else "")
    )
    return sheet.check(
        name, velocity, Q_(boundary * 1000, "mm/s"), basis=basis, unit="mm/s", convention="rms"
    )


def band_check(
    sheet: Any,
    name: str,
    rows: Any,
    curve: Any,
    *,
    natural: str,
    damping: str,
    transmissibility: Any,
    convention: str = "peak",
) -> Check:
    """The table of bands, the worst band's numbers as steps, and the check on it against *curve*.

    *rows* come from :func:`calckit.physics.band_response.band_response`; *natural* and *damping*
    name the sheet's natural frequency in rad/s and its damping ratio (an input or result);
    *transmissibility* is the formula of the base-motion transmissibility in the plain symbols
    ``zeta`` and ``r``. Harmonics are in *convention*.

    Raises
    ------
    InputsError
        No band lies within the curve's range.
    """
    from calckit.physics.band_response import worst_band

    worst = worst_band(rows)
    um = lambda v: Q_(v * 1e6, "um/s")  # noqa: E731
    table_rows = [
        (
            f"{row.centre_hz:g}",
            um(row.floor_rms),
            f"{row.ratio:.3g}",
            um(row.equipment_rms),
            um(row.limit) if row.limit is not None else "not covered",
            f"{row.margin_percent:+.1f} %" if row.limit is not None else "",
        )
        for row in rows
    ]
    sheet.table(
        ("band, Hz", "floor, rms", "equipment / floor", "equipment, rms", f"limit {curve.name}, rms", "margin"),
        table_rows,
        caption=f"One-third-octave bands: the floor's and the equipment's velocity, rms, against {curve.name} "
        f"({curve.title}); {curve.source}" + (f"; {curve.note}" if curve.note else "")
        + ". Numbers unrounded; the worst band is worked out below from the values as printed.",
    )  # fmt: skip
    wn = sheet.carried(natural)
    zeta_q = sheet.inputs[damping].value if damping in sheet.inputs else sheet.carried(damping)
    zeta, r = sp.symbols("zeta r")
    band = f"{worst.centre_hz:g} Hz band"
    if worst.harmonics:
        peaks = []
        for i, (f, peak, _) in enumerate(worst.harmonics, start=1):
            given = Q_(in_convention(peak, "peak", convention) * 1000, "mm/s")
            sheet.result(f"V_f{i}", given, title=f"Floor velocity of harmonic {i} in the {band}, {convention_text(convention)}",
                         symbol=f"V_{{f,{i}}}", working=("input", f"the floor's harmonic at {f:.4g} Hz"))  # fmt: skip
            floor, _ = convention_step(sheet, f"V_f{i}", convention, "peak", unit="mm/s")
            sheet.calc(f"r_{i}", sp.Symbol(f"f_{i}") / sp.Symbol("omega_n"), {f"f_{i}": as_shown(Q_(f, "Hz"), sheet.sig), "omega_n": wn},
                       unit="", symbol=f"r_{i}", title=f"Frequency ratio of harmonic {i}")  # fmt: skip
            sheet.calc(f"T_{i}", transmissibility, {"zeta": zeta_q, "r": sheet.carried(f"r_{i}")}, unit="", symbol=f"T_{i}",
                       title=f"Transmissibility at harmonic {i}")  # fmt: skip
            sheet.calc(f"V_{i}", sp.Symbol("T") * sp.Symbol("V_f"), {"T": sheet.carried(f"T_{i}"), "V_f": sheet.carried(floor)},
                       unit="um/s", symbol=f"V_{i}", title=f"Equipment velocity of harmonic {i}, peak")  # fmt: skip
            peaks.append(f"V_{i}")
        value = sheet.calc(
            "V_band", harmonic_sum_formula(len(peaks), symbol="V"), {p: sheet.carried(p) for p in peaks}, unit="um/s",
            symbol=r"V_{band}", title=f"Equipment velocity in the {band}, rms of its harmonics: "
            r"$V_{rms} = \sqrt{\sum V_n^2 / 2}$ (distinct frequencies)",
        )  # fmt: skip
    else:
        sheet.result("V_f_band", um(worst.floor_rms), title=f"Floor velocity in the {band}, rms", symbol=r"V_{f,band}",
                     working=("input", "the floor's one-third-octave band rms velocities"))  # fmt: skip
        sheet.calc("r_band", sp.Symbol("f_c") / sp.Symbol("omega_n"), {"f_c": Q_(worst.centre_hz, "Hz"), "omega_n": wn}, unit="",
                   symbol=r"r_{band}", title=f"Frequency ratio at the {band}'s nominal midband frequency")  # fmt: skip
        sheet.calc("T_band", transmissibility, {"zeta": zeta_q, "r": sheet.carried("r_band")}, unit="",
                   symbol=r"T_{band}", title=f"Transmissibility in the {band}")  # fmt: skip
        value = sheet.calc(
            "V_band", sp.Symbol("T") * sp.Symbol("V_f"), {"T": sheet.carried("T_band"), "V_f": sheet.carried("V_f_band")},
            unit="um/s", symbol=r"V_{band}", title=f"Equipment velocity in the {band}, rms",
        )  # fmt: skip
    if worst.limit is None:  # pragma: no cover - worst_band picks a covered band
        raise SheetError("the worst band has no limit", where=f"check {name}", do="Report this as a defect")
    covered = sum(r.limit is not None for r in rows)
    basis = f"{curve.name}, the worst of {covered} bands: the {band}; {curve.source}"
    return sheet.check(name, value, um(worst.limit), basis=basis, unit="um/s", convention="rms")
