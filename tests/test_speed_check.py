"""Sheet.speed_range_check (calckit.sheet.speed_check): the table of every mode x order, the worst pair's
steps, one check; at the sheet level, without a kernel.

References: hand arithmetic in the comments, from the values as the sheet shows them (4 significant
figures: its rounding rule); 1 rpm = 2 pi / 60 rad/s (a definition); the separation
|k Omega / omega_n - 1| and the +/- 20 % band are common practice, no source.
"""

from __future__ import annotations

import math

import pytest

import calckit as ck
from calckit.errors import SheetError
from calckit.sheet.blocks import CalcStep, ResultLine, TableBlock, TextBlock


def _sheet():
    sheet = ck.Sheet("Pump P-105 on isolators (invented)", show=False)
    sheet.given("minimum_running_speed", "740 rpm", r"\Omega_{lo}", "Least running speed", "frequency")
    sheet.given("maximum_running_speed", "1480 rpm", r"\Omega_{hi}", "Greatest running speed", "frequency")
    return sheet


def _after(sheet, n):
    return sheet.blocks[n:]


class TestOnTheSheet:
    def test_a_range_that_keeps_clear(self):
        """740 to 1480 rpm, orders 1, 2, 7 against a mode at 19.65 rad/s (shown so). Every order sweeps above
        the mode, so each is least at 740 rpm = 77.49 rad/s (as shown): 1x |77.49 / 19.65 - 1| = 294.4 %."""
        sheet = _sheet()
        speeds = ck.SpeedRange(
            sheet.inputs["minimum_running_speed"].value,
            sheet.inputs["maximum_running_speed"].value,
            orders="1, 2, 7 vane passing",
        )
        start = len(sheet.blocks)
        found = sheet.speed_range_check("speed separation", speeds, ck.Q_(19.65, "rad/s"), modes=("bounce",))
        (table,) = [b for b in _after(sheet, start) if isinstance(b, TableBlock)]
        assert [row[2] for row in table.rows] == ["1x", "2x", "7x vane passing"]
        assert [row[5] for row in table.rows] == ["294.4", "688.7", "2660"]  # hand: 77.49 k / 19.65 - 1
        assert [row[6] for row in table.rows] == ["at 740 rpm (minimum)"] * 3
        assert [row[4] for row in table.rows] == ["187.6", "93.82", "26.81"]  # 19.65 / k rad/s in rpm
        steps = [b for b in _after(sheet, start) if isinstance(b, CalcStep)]
        assert [s.name for s in steps] == ["minimum_running_speed_rad_s", "speed_separation"]
        (check,) = sheet.checks
        assert check.value == pytest.approx((77.49 / 19.65 - 1) * 100, rel=1e-12)
        assert check.met and check.limit == 20.0 and check.relation == ">="
        assert check.basis == found.definition and "over the whole speed range" in check.basis
        assert found.worst.mode == 1 and found.worst.order == 1

    def test_verdict_flips_when_the_range_is_widened_past_a_crossing(self):
        """The same mode with the range widened down to 150 rpm: 1x crosses it at 19.65 rad/s = 187.6 rpm,
        inside the range; the least separation is 0 and the check is not met. The crossing speed is a step,
        omega_n / k = 19.65 rad/s, and the result 0 % carries its working."""
        sheet = ck.Sheet("x", show=False)
        low = sheet.given("minimum_running_speed", "150 rpm", None, "Least", "frequency")
        high = sheet.given("maximum_running_speed", "1480 rpm", None, "Greatest", "frequency")
        start = len(sheet.blocks)
        found = sheet.speed_range_check("speed separation", ck.SpeedRange(low, high, orders=(1, 2)), 19.65)
        check = sheet.checks[-1]
        assert check.value == 0 and not check.met
        assert found.worst.crossed and found.worst.crossing_speed == pytest.approx(19.65, rel=1e-12)
        crossing = sheet.results["speed_separation_crossing"]
        assert float(crossing.to("rad/s").magnitude) == pytest.approx(19.65, rel=1e-12)
        assert sheet.working["speed_separation"].kind == "procedure"
        assert "lies in the speed range 150 rpm to 1480 rpm" in sheet.working["speed_separation"].text
        notes = [b.text for b in _after(sheet, start) if isinstance(b, TextBlock)]
        # 2x crosses at 93.82 rpm, below the range: not listed
        assert notes == [
            "Crossings inside the speed range 150 rpm to 1480 rpm: the natural frequency x 1x at 187.6 rpm."
        ]
        assert [b.name for b in _after(sheet, start) if isinstance(b, ResultLine)] == ["speed_separation"]

    def test_a_fixed_speed_at_1x_reads_as_the_separation_check(self):
        """One speed, one mode, 1x: the same step, value and basis as Sheet.separation_check gives."""
        old, new = ck.Sheet("x", show=False), ck.Sheet("x", show=False)
        for sheet in (old, new):
            sheet.given("running_speed", "1480 rpm", r"\Omega", "Running speed", "frequency")
        old.separation_check("speed separation", old.inputs["running_speed"].value, ck.Q_(19.73, "rad/s"))
        new.speed_range_check(
            "speed separation", ck.SpeedRange(new.inputs["running_speed"].value), ck.Q_(19.73, "rad/s")
        )
        (a,), (b,) = old.checks, new.checks
        assert (a.value, a.limit, a.basis, a.met) == (b.value, b.limit, b.basis, b.met)
        assert a.basis == ck.SEPARATION_BASIS
        # 1480 rpm shown 155.0 rad/s: |155.0 / 19.73 - 1| = 685.6 % (hand arithmetic)
        assert b.value == pytest.approx((155.0 / 19.73 - 1) * 100, rel=1e-12)
        assert set(old.results) == set(new.results) == {"running_speed_rad_s", "speed_separation"}

    def test_multimass_every_mode_and_the_worst_at_the_maximum(self):
        """Both modes of a two-mass model against 1x and 2x over 300 to 900 rpm (31.42 to 94.25 rad/s): the modes
        sqrt(eigenvalues) of K phi = w^2 M phi with M = diag(100, 10) kg, K = [[3e5, -1e4], [-1e4, 1e4]] N/m
        (scipy.linalg.eigh) are about 31.2 and 55.0 rad/s; the worst pair's step is redone from the shown values."""
        import numpy as np
        from scipy import linalg

        M, K = [[100, 0], [0, 10]], [[3e5, -1e4], [-1e4, 1e4]]
        by_eigh = np.sqrt(linalg.eigh(np.array(K), np.array(M), eigvals_only=True))
        sheet = ck.Sheet("x", show=False)
        found = sheet.speed_range_check(
            "separation of the modes",
            ck.SpeedRange("300 rpm", "900 rpm", orders=(1, 2)),
            ck.MultiMass(M, None, K),
        )
        shown = [ck.as_shown(w) for w in by_eigh]
        assert list(found.natural_frequencies) == pytest.approx(shown, rel=1e-12)
        # mode 2 at about 55.0 rad/s lies inside the 1x sweep 31.42 .. 94.25 rad/s: crossed, the worst
        assert found.worst.mode == 2 and found.worst.order == 1 and found.worst.crossed
        assert sheet.checks[-1].value == 0

    def test_waived_pairs_in_the_table(self):
        """Waived pairs show their reason; the worst and the check are of the others."""
        sheet = ck.Sheet("x", show=False)
        found = sheet.speed_range_check(
            "separation of the modes from the other orders",
            ck.SpeedRange(155.0, orders=(1, 2)),
            [135.7, 169.6],
            waived={
                (1, 1): "the absorber's own mode, by design",
                (2, 1): "the absorber's own mode, by design",
            },
            modes=("mode 1", "mode 2"),
        )
        (table,) = sheet.of_type(TableBlock)
        assert [row[7] for row in table.rows] == [
            "waived: the absorber's own mode, by design", "met", "waived: the absorber's own mode, by design", "met",
        ]  # fmt: skip
        # 2x at 155 rad/s against mode 2: |310 / 169.6 - 1| = 82.78 % (hand arithmetic)
        assert sheet.checks[-1].value == pytest.approx((310 / 169.6 - 1) * 100, rel=1e-12)
        assert found.worst.mode == 2


class TestRefusals:
    def test_every_pair_waived(self):
        sheet = ck.Sheet("x", show=False)
        with pytest.raises(SheetError) as info:
            sheet.speed_range_check("s", ck.SpeedRange(155.0), 140.0, waived={(1, 1): "by design"})
        assert str(info.value) == (
            "check s: every mode and order of the check is waived: there is nothing to judge. Waive fewer pairs, "
            "or leave the check out and say why in a note."
        )
        assert not sheet.blocks[1:]  # nothing half added (the first block is the rounding policy)

    def test_mode_names_one_each(self):
        sheet = ck.Sheet("x", show=False)
        with pytest.raises(SheetError) as info:
            sheet.speed_range_check("s", ck.SpeedRange(155.0), [140.0, 170.0], modes=("mode 1",))
        assert str(info.value) == (
            "check s: 1 mode names are given for 2 natural frequencies. Give one name per natural frequency, or "
            "leave modes out."
        )

    def test_not_a_speed_range(self):
        sheet = ck.Sheet("x", show=False)
        with pytest.raises(ck.InputsError) as info:
            sheet.speed_range_check("s", "1480 rpm", 140.0)
        assert str(info.value).startswith("speeds: expected a SpeedRange, got str.")


def test_speeds_in_their_unit():
    """The table's speeds are in the unit given, the 2 pi counted for cycles: 50 pi rad/s is 1500 rpm and 25 Hz."""
    from calckit.sheet.speed_check import speed_in

    assert speed_in(50 * math.pi, "rpm") == pytest.approx(1500, rel=1e-15)
    assert speed_in(50 * math.pi, "Hz") == pytest.approx(25, rel=1e-15)
    assert speed_in(50 * math.pi, "rad/s") == pytest.approx(50 * math.pi, rel=1e-15)
