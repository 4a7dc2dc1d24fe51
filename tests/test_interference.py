"""Tests of calckit.physics.interference: every mode against every order over a speed range.

References, independent of calckit:
- the crossing of order k with a mode: the root of k Omega - omega_n = 0, found by
  scipy.optimize.brentq, and by hand (Omega_c = omega_n / k, plain algebra);
- the least separation over the range: scipy.optimize.minimize_scalar (bounded) of the
  separation written out here from its definition (|k Omega / omega_n - 1|, or
  |omega_n / (k Omega) - 1| relative to the operating frequency; common practice, no source),
  beside the minimum over a dense numpy grid, and hand-worked cases in the comments;
- a multi-mass model's natural frequencies: scipy.linalg.eigh of (K, M).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import linalg, optimize

import calckit as ck
from calckit.core.units import Q_
from calckit.errors import InputsError, UnitsError
from calckit.physics.interference import (
    natural_frequencies_of,
    order_separation_formula,
    range_basis,
    range_separation,
    separation_band_edges,
)
from calckit.physics.speed_range import SpeedRange

RPM = 2 * math.pi / 60  # rad/s in one rpm (a revolution is 2 pi rad, a minute 60 s)


def _separation(excitation, natural, relative_to="natural frequency"):
    """The definition, written out (common practice, no source)."""
    if relative_to == "natural frequency":
        return abs(excitation / natural - 1)
    return abs(natural / excitation - 1)


def _least_by_search(low, high, k, natural, relative_to):
    """The least separation over [low, high]: scipy's bounded minimiser and a dense grid, the smaller."""
    found = optimize.minimize_scalar(
        lambda w: _separation(k * w, natural, relative_to), bounds=(low, high), method="bounded",
        options={"xatol": 1e-12},
    )  # fmt: skip
    grid = np.linspace(low, high, 200001)
    return min(float(found.fun), float(np.min(np.abs(k * grid / natural - 1) if relative_to == "natural frequency"
                                              else np.abs(natural / (k * grid) - 1))))  # fmt: skip


class TestClosedForms:
    def test_hand_worked_range(self):
        """600 to 1200 rpm, a mode at 25 Hz = 1500 rpm. By hand: 1x never reaches it, least at 1200 rpm,
        |1200/1500 - 1| = 20 %; 2x crosses it at 750 rpm, least 0; 3x crosses at 500 rpm, below the range,
        least at 600 rpm, |1800/1500 - 1| = 20 %."""
        found = range_separation(SpeedRange("600 rpm", "1200 rpm", orders=(1, 2, 3)), "25 Hz")
        one, two, three = found.pairs
        assert (one.at, two.at, three.at) == ("maximum", "crossing", "minimum")
        assert one.least == pytest.approx(0.2, rel=1e-12) and three.least == pytest.approx(0.2, rel=1e-12)
        assert two.least == 0 and two.crossed and not one.crossed and not three.crossed
        assert two.speed == pytest.approx(750 * RPM, rel=1e-12)
        assert [p.crossing_speed / RPM for p in found.pairs] == pytest.approx([1500, 750, 500], rel=1e-12)
        assert found.worst is two and not found.met

    @pytest.mark.parametrize("relative_to", ["natural frequency", "operating speed"])
    @pytest.mark.parametrize(
        ("low_rpm", "high_rpm", "natural", "k"),
        [
            (740, 1480, 19.65, 1),  # the whole sweep above the mode: least at the minimum
            (740, 1480, 19.65, 7),
            (300, 900, 250.0, 2),  # below the mode: least at the maximum
            (300, 900, 60.0, 1),  # crossed
            (1480, 1480, 150.0, 1),  # a fixed speed
            (100, 3000, 400.0, 0.5),  # a fractional order, below
        ],
    )
    def test_least_separation_against_a_search(self, low_rpm, high_rpm, natural, k, relative_to):
        """The closed form's least separation is what a bounded minimiser finds, and where."""
        speeds = SpeedRange(f"{low_rpm} rpm", f"{high_rpm} rpm", orders=(k,))
        (pair,) = range_separation(speeds, natural, relative_to=relative_to).pairs
        low, high = low_rpm * RPM, high_rpm * RPM
        by_search = _least_by_search(low, high, k, natural, relative_to) if low < high else _separation(
            k * low, natural, relative_to
        )  # fmt: skip
        # the search meets the kink at a crossing to about 1e-8 (xatol 1e-12 on the speed, a grid of 2e5 points)
        assert pair.least == pytest.approx(by_search, abs=1e-7)
        assert _separation(k * pair.speed, natural, relative_to) == pytest.approx(pair.least, abs=1e-12)

    @pytest.mark.parametrize(("natural", "k"), [(60.0, 1), (125.0, 2), (137.0, 5), (45.0, 0.5)])
    def test_crossings_against_brentq(self, natural, k):
        """The crossing speed is the root of k Omega = omega_n (scipy.optimize.brentq), in range or not."""
        found = range_separation(SpeedRange(10.0, 40.0, orders=(k,)), natural)
        root = optimize.brentq(lambda w: k * w - natural, 1e-6, 1e6, xtol=1e-14)
        ((speed, pair),) = found.crossings
        assert speed == pytest.approx(root, rel=1e-12)
        assert pair.crossed == (10.0 <= root <= 40.0)
        assert found.crossings_in_range == ((pair,) if pair.crossed else ())

    def test_verdict_flips_when_the_range_is_widened_past_a_crossing(self):
        """A mode at 10 Hz = 600 rpm: 900 to 1480 rpm keeps 1x 50 % away (met); widened down to 500 rpm the
        range holds the crossing at 600 rpm (not met). Hand-worked."""
        narrow = range_separation(SpeedRange("900 rpm", "1480 rpm"), "10 Hz")
        wide = range_separation(SpeedRange("500 rpm", "1480 rpm"), "10 Hz")
        assert narrow.worst.least == pytest.approx(0.5, rel=1e-12) and narrow.met
        assert wide.worst.least == 0 and wide.worst.crossed and not wide.met
        assert wide.worst.crossing_speed == pytest.approx(600 * RPM, rel=1e-12)


class TestModes:
    def test_multimass_modes_from_eigh(self):
        """Every mode of a three-mass chain is checked: its frequencies are scipy.linalg.eigh's of (K, M)."""
        M = [[400, 0, 0], [0, 250, 0], [0, 0, 150]]  # kg: a pump skid, its motor frame, the coupling guard
        K = [[9e6, -4e6, 0], [-4e6, 6e6, -2e6], [0, -2e6, 2e6]]  # N/m
        by_eigh = np.sqrt(linalg.eigh(np.array(K, float), np.array(M, float), eigvals_only=True))
        found = range_separation(SpeedRange("600 rpm", "3000 rpm", orders=(1, 2)), ck.MultiMass(M, None, K))
        assert found.natural_frequencies == pytest.approx(list(by_eigh), rel=1e-9)
        assert len(found.pairs) == 6
        assert [(p.mode, p.order) for p in found.pairs] == [(i, k) for i in (1, 2, 3) for k in (1, 2)]
        # the worst judged against a search over every pair
        least = min(
            _least_by_search(600 * RPM, 3000 * RPM, k, w, "natural frequency")
            for w in by_eigh
            for k in (1, 2)
        )
        assert found.worst.least == pytest.approx(least, abs=1e-7)

    def test_an_oscillator_quantities_and_text(self):
        """An Oscillator's one natural frequency sqrt(k/m); frequencies with units counted with their 2 pi."""
        osc = ck.Oscillator(1850, 0, 720000)
        assert natural_frequencies_of(osc) == pytest.approx((math.sqrt(720000 / 1850),), rel=1e-12)
        assert natural_frequencies_of([Q_(3, "Hz"), "180 rpm", 20.0]) == pytest.approx(
            (6 * math.pi, 6 * math.pi, 20.0), rel=1e-12
        )

    def test_waived_pairs_are_shown_not_judged(self):
        """A waived pair keeps its numbers and verdict 'waived'; the worst is of the others."""
        found = range_separation(
            SpeedRange("1480 rpm", orders=(1, 2)),
            [140.0, 172.0],
            waived={(1, 1): "by design", (2, 1): "by design"},
        )
        assert [p.verdict for p in found.pairs] == ["waived", "met", "waived", "met"]
        assert found.worst.order == 2 and found.worst.mode == 2  # 2 x 155 rad/s is nearer 172 than 140
        assert found.met


class TestDefinition:
    def test_basis_prints_the_margin_definition(self):
        """One speed, one mode, 1x reads as the plain separation basis; otherwise the order is in the formula."""
        assert range_basis("natural frequency", 0.2, fixed=True, single=True) == ck.SEPARATION_BASIS
        assert range_basis("operating speed", 0.2, fixed=False, single=False) == (
            "common practice, no source: keep every excitation frequency $k \\Omega$ (order $k$ at speed $\\Omega$) "
            "outside about $\\pm 20$ % of every natural frequency; separation measured relative to the operating "
            "speed, $|\\omega_n / (k \\Omega) - 1|$; the value is the least over the whole speed range, 0 where an "
            "order crosses a mode, of every mode against every order"
        )
        assert range_separation(SpeedRange("1480 rpm"), 20.0).definition == ck.SEPARATION_BASIS

    def test_formula_and_band_edges(self):
        """The step's formula, and the band in excitation frequency: omega_n (1 -/+ b), or omega_n / (1 +/- b)."""
        import sympy as sp

        k, w, wn = sp.symbols("k Omega omega_n")
        assert order_separation_formula(order=3) == sp.Abs(k * w / wn - 1)
        assert order_separation_formula("operating speed", order=3) == sp.Abs(wn / (k * w) - 1)
        assert separation_band_edges(100.0, 0.2) == pytest.approx((80.0, 120.0), rel=1e-15)
        lo, hi = separation_band_edges(100.0, 0.2, "operating speed")
        # at the edges the separation relative to the operating frequency is the band itself
        assert _separation(lo, 100.0, "operating speed") == pytest.approx(0.2, rel=1e-12)
        assert _separation(hi, 100.0, "operating speed") == pytest.approx(0.2, rel=1e-12)


class TestRefusals:
    def test_not_a_speed_range(self):
        with pytest.raises(InputsError) as info:
            range_separation("1480 rpm", 10.0)
        assert str(info.value) == (
            "speeds: expected a SpeedRange, got str. Describe the machine's speeds as "
            'calckit.SpeedRange("900 rpm", "1480 rpm", orders=(1, 2)).'
        )

    def test_natural_frequencies(self):
        """A mode at 0, a mass as a frequency, a value that is not a number."""
        speeds = SpeedRange("1480 rpm")
        with pytest.raises(InputsError) as info:
            range_separation(speeds, [20.0, 0.0])
        assert str(info.value) == (
            "natural frequencies: the natural frequency of mode 2, 0.0, is not above zero. Give the natural "
            "frequencies above zero (a rigid-body mode at 0 has no separation: leave it out)."
        )
        with pytest.raises(UnitsError) as info:
            range_separation(speeds, "3 kg")
        assert str(info.value) == (
            "natural frequencies: expected a frequency (Hz, rpm, rad/s, cpm, ...), got 3 kg, which is a mass. "
            'Give a frequency, for example "1480 rpm".'
        )
        with pytest.raises(InputsError) as info:
            range_separation(speeds, [20.0, None])
        assert str(info.value) == (
            "natural frequencies: the natural frequency of mode 2, None, is not a number. Give numbers in rad/s "
            "or frequencies with a unit."
        )
        with pytest.raises(InputsError) as info:
            range_separation(speeds, [])
        assert (
            str(info.value)
            == "natural frequencies: no natural frequency is given. Give at least one natural frequency."
        )

    def test_band_reference_and_waived(self):
        speeds = SpeedRange("1480 rpm")
        with pytest.raises(InputsError) as info:
            range_separation(speeds, 20.0, band=1.5)
        assert str(info.value) == (
            "band: a separation band of 1.5 is not a fraction between 0 and 1. Give the band's half-width as a "
            "fraction, e.g. 0.2 for +/- 20 %."
        )
        with pytest.raises(InputsError) as info:
            range_separation(speeds, 20.0, relative_to="speed")
        assert str(info.value) == (
            "relative_to: a separation relative to 'speed' is not defined. Give one of 'natural frequency', "
            "'operating speed'."
        )
        with pytest.raises(InputsError) as info:
            range_separation(speeds, 20.0, waived={(2, 1): "by design"})
        assert str(info.value) == (
            "waived: the waived pair (2, 1) is not a (mode, order) of the check. Give pairs (mode from 1 to 1, "
            "one of the orders 1)."
        )
