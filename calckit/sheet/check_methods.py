"""The check methods of a sheet: a check with its margin, and the checks built on it.

:class:`CheckMethods` is the part of :class:`calckit.sheet.sheet.Sheet` that adds acceptance
checks: :meth:`~CheckMethods.check` (value, limit, relation, basis, and where the value comes
from for the tolerance study), :meth:`~CheckMethods.separation_check` (the separation as a
numbered step of its own, then the check), and the methods whose bodies live in their own
modules, :meth:`~CheckMethods.amplitude_check`, :meth:`~CheckMethods.severity_check`,
:meth:`~CheckMethods.band_check` (:mod:`calckit.sheet.amplitudes`) and
:meth:`~CheckMethods.speed_range_check` (:mod:`calckit.sheet.speed_check`). The checks'
arithmetic is in :mod:`calckit.sheet.checking`.
"""

from __future__ import annotations

import re
from typing import Any

import sympy as sp

from calckit.core.rounding import as_shown
from calckit.core.units import quantity
from calckit.errors import SheetError
from calckit.physics.criteria import DEFAULT_SEPARATION_REFERENCE, SEPARATION_BAND, separation_basis
from calckit.sheet.blocks import Check
from calckit.sheet.checking import acceptance_check, separation_percent
from calckit.sheet.working import conversion_formula

__all__ = ["CheckMethods"]


class CheckMethods:
    """Acceptance checks of a sheet (a part of :class:`calckit.sheet.sheet.Sheet`)."""

    def check(
        self,
        name: str,
        value: Any,
        limit: Any,
        *,
        relation: str = "<=",
        basis: str = "",
        unit: str | None = None,
        convention: str | None = None,
        result: str | None = None,
    ) -> Check:
        """Add an acceptance check ``value relation limit`` with its margin and verdict.

        The margin is the distance to the limit in percent of the limit (in
        percentage points when the value is itself a percentage), positive when the
        criterion is met; see :func:`check_margin`. ``basis`` says where the criterion
        comes from (a specification, a standard clause, or "common practice,
        no source"). ``convention`` (peak, peak-to-peak, rms) is shown beside value and
        limit; to convert a result to a limit's convention first, use :meth:`amplitude_check`.
        ``result`` names the result (or input) the value is, for the evaluation over the
        inputs' tolerances; without it the sheet finds it when the value is a result or input
        as returned (by :meth:`calc`, :meth:`carried`, :meth:`given`), and says on the sheet
        when it cannot.
        """
        from dataclasses import replace

        from calckit.sheet.chain import origin_of

        check = acceptance_check(
            name, value, limit, relation=relation, basis=basis, unit=unit, sig=self.sig, convention=convention
        )
        if result is not None and result not in self.results and result not in self.inputs:
            raise SheetError(
                f"there is no result or input named {result!r} on the sheet",
                where=f"check {name}",
                do="Name the result the checked value is, as calc() or result() named it",
            )
        value_from = result or origin_of(self, value) or ""
        return self._add(replace(check, value_from=value_from, limit_from=origin_of(self, limit) or ""))

    def amplitude_check(self, name: str, result: str, limit: Any, **options: Any) -> Check:
        """A result against a limit in its own convention (peak, pk-pk, rms), converted in a shown step.

        See :func:`calckit.sheet.amplitudes.amplitude_check` (``result_convention=``, ``limit_convention=``).
        """
        from calckit.sheet.amplitudes import amplitude_check

        return amplitude_check(self, name, result, limit, **options)

    def severity_check(
        self, name: str, result: str, machine_class: str, acceptable_zone: str = "B", **options: Any
    ):
        """A machine's rms velocity judged by a severity zone; see :func:`calckit.sheet.amplitudes.severity_check`."""
        from calckit.sheet.amplitudes import severity_check

        return severity_check(self, name, result, machine_class, acceptable_zone, **options)

    def band_check(self, name: str, rows: Any, curve: Any, **options: Any) -> Check:
        """Band-by-band table and worst-band check on a criterion curve; see :func:`calckit.sheet.amplitudes.band_check`."""
        from calckit.sheet.amplitudes import band_check

        return band_check(self, name, rows, curve, **options)

    def separation_check(
        self,
        name: str,
        operating: Any,
        natural: Any,
        *,
        band: float = SEPARATION_BAND,
        basis: str | None = None,
        relative_to: str = DEFAULT_SEPARATION_REFERENCE,
    ) -> Check:
        """Check that an operating frequency is at least ``band`` away from a natural frequency.

        The value is ``|omega / omega_n - 1|`` (as a percentage) relative to the natural frequency
        (the default), or ``|omega_n / omega - 1|`` with ``relative_to="operating speed"``; the
        limit ``band``; the basis printed says which (:func:`calckit.physics.criteria.separation_basis`)
        unless given. The
        separation is a numbered step of its own, from the two frequencies as shown (a speed
        in rpm converted to rad/s first), so the percentage in the checks table can be redone
        by hand.
        """
        if basis is None:
            basis = separation_basis(relative_to, band)
        separation_percent(
            name, operating, natural, relative_to=relative_to
        )  # refuses what has no separation (a natural frequency of 0)
        from calckit.core.units import Q_

        def as_value(given):
            if isinstance(given, str) or hasattr(given, "units"):
                q = quantity(given, f"check {name}")
                return q if conversion_formula(q) is not None else as_shown(q, self.sig)
            return Q_(as_shown(float(given), self.sig), "rad/s")  # a bare number is in rad/s

        step = re.sub(r"\W+", "_", name.strip()).strip("_").lower() or "separation"
        step = step if step[0].isalpha() else f"s_{step}"
        while step in self.results:
            step += "_"
        omega, omega_n = sp.Symbol("omega"), sp.Symbol("omega_n")
        ratio = omega / omega_n if relative_to == DEFAULT_SEPARATION_REFERENCE else omega_n / omega
        from calckit.sheet.chain import origin_of

        value = self.calc(
            step,
            sp.Abs(ratio - 1),
            {"omega": as_value(operating), "omega_n": as_value(natural)},
            symbol="Delta", unit="percent",
            title=f"Separation of the operating frequency from the natural frequency ({name})",
            _origins={"omega": origin_of(self, operating), "omega_n": origin_of(self, natural)},
        )  # fmt: skip
        percent = float(value.to("percent").magnitude) if hasattr(value, "units") else float(value) * 100
        return self.check(name, percent, band * 100, relation=">=", basis=basis, unit="percent", result=step)

    def speed_range_check(self, name: str, speeds: Any, natural_frequencies: Any, *, band: float = SEPARATION_BAND,
                          relative_to: str = DEFAULT_SEPARATION_REFERENCE, basis: str | None = None,
                          waived: Any = None, modes: Any = None):  # fmt: skip
        """Check every mode against every excitation order over a speed range; judge the worst pair.

        *speeds* is a :class:`calckit.SpeedRange` (a fixed speed or a range, with its orders);
        *natural_frequencies* a model (``Oscillator``, ``MultiMass``) or the frequencies (rad/s
        numbers, quantities). Adds a table of every mode x order, the worst pair's steps and one
        check (``waived``: ``{(mode, order): reason}`` shown, not judged); returns the
        :class:`~calckit.physics.interference.RangeSeparation`. See :mod:`calckit.sheet.speed_check`.
        """
        from calckit.sheet.speed_check import speed_range_check

        return speed_range_check(self, name, speeds, natural_frequencies, band=band, relative_to=relative_to,
                                 basis=basis, waived=waived, modes=modes)  # fmt: skip
