"""Tests of calckit.sheet.amplitudes: a limit in each convention gives the same verdict; conversions shown."""

import math

import pytest

import calckit as ck
from calckit.errors import InputsError


def _sheet(value_mm_s):
    sheet = ck.Sheet("P-102 check", show=False)
    sheet.result("V", ck.Q_(value_mm_s, "mm/s"), working=("input", "Harrow Creek survey (invented)"))
    return sheet


@pytest.mark.parametrize("peak_mm_s", [0.9, 1.1])
def test_limit_in_each_convention_gives_one_verdict(peak_mm_s):
    """1 mm/s peak = 1/sqrt(2) mm/s rms = 2 mm/s pk-pk for one harmonic (closed form): one verdict for all three."""
    limits = {"peak": 1.0, "rms": 1 / math.sqrt(2), "peak-to-peak": 2.0}
    verdicts = set()
    for convention, limit in limits.items():
        sheet = _sheet(peak_mm_s)
        check = sheet.amplitude_check(
            "velocity", "V", ck.Q_(limit, "mm/s"), result_convention="peak", limit_convention=convention
        )
        verdicts.add(check.met)
        word = {"peak": "peak", "rms": "rms", "peak-to-peak": "pk-pk"}[convention]
        assert check.shown_value.endswith(f" {word}") and check.shown_limit.endswith(f" {word}")
        if convention != "peak":
            assert sheet.results  # the conversion is a step of its own
            assert any(name.startswith("V_") for name in sheet.results)
    assert verdicts == {peak_mm_s < 1.0}


def test_unknown_convention_in_a_check():
    with pytest.raises(InputsError) as err:
        _sheet(1.0).amplitude_check(
            "velocity", "V", "1 mm/s", result_convention="peak", limit_convention="mean"
        )
    assert str(err.value) == (
        'check velocity limit convention: "mean" is not an amplitude convention. Give "peak", "peak-to-peak" or '
        '"rms", e.g. velocity_limit = { value = "4.5 mm/s", convention = "rms" }.'
    )


def test_severity_check_prints_zone_and_source():
    sheet = _sheet(3.0)
    check = sheet.severity_check("severity", "V", "ISO 10816-3 group 2 rigid", "B")
    assert not check.met and check.shown_limit == "2.8 mm/s rms"  # ISO 10816-3:2009 Table A.2, from memory
    assert (
        "zone found: C" in check.basis and "ISO 10816-3:2009, Annex A, Table A.2 (from memory)" in check.basis
    )
    assert sheet.results["severity_zone"] == "zone C"


def test_zone_d_has_no_boundary_to_check():
    with pytest.raises(InputsError) as err:
        _sheet(3.0).severity_check("severity", "V", "ISO 10816-3 group 2 rigid", "D")
    assert str(err.value) == (
        'acceptable_zone: zone D has no upper boundary to check against. Give the least acceptable zone as "A", '
        '"B" or "C" (usually "B").'
    )
