"""Tests of calckit.physics.criteria_tables against the standards' own tables (values recalled: from memory)."""

import math

import pytest

from calckit.errors import InputsError
from calckit.physics.criteria_tables import (
    TABLE_FILE,
    criterion_curve,
    load_criteria,
    severity_class,
    severity_zone,
    third_octave_band,
    third_octave_bands,
)

# ISO 10816-3:2009, Annex A, Tables A.1 and A.2: zone boundaries A/B, B/C, C/D in mm/s rms (from memory)
ISO_10816_3 = {
    "ISO 10816-3 group 1 rigid": (2.3, 4.5, 7.1),
    "ISO 10816-3 group 1 flexible": (3.5, 7.1, 11.0),
    "ISO 10816-3 group 2 rigid": (1.4, 2.8, 4.5),
    "ISO 10816-3 group 2 flexible": (2.3, 4.5, 7.1),
}


@pytest.mark.parametrize("key", sorted(ISO_10816_3))
def test_iso_10816_3_boundaries(key):
    found = severity_class(key)
    assert [b[1] * 1000 for b in found.boundaries] == pytest.approx(ISO_10816_3[key])
    assert found.from_memory and found.source.endswith("(from memory)")


def test_zone_boundaries_belong_to_the_zone_below():
    """ISO 10816-3 group 2 rigid (Table A.2, from memory): 2.8 mm/s is still zone B, 2.81 mm/s is C."""
    assert severity_zone("2.8 mm/s", "ISO 10816-3 group 2 rigid").zone == "B"
    assert severity_zone("2.81 mm/s", "ISO 10816-3 group 2 rigid").zone == "C"
    assert severity_zone(0.0, "ISO 10816-3 group 2 rigid").zone == "A"
    assert severity_zone("20 mm/s", "ISO 10816-3 group 2 rigid").zone == "D"


def test_iso_10816_1_classes():
    """ISO 10816-1:1995, Annex B, Table B.1 (from memory): class II is 1.12, 2.8, 7.1 mm/s."""
    assert [b[2] for b in severity_class("ISO 10816-1 class II").boundaries] == [
        "1.12 mm/s",
        "2.8 mm/s",
        "7.1 mm/s",
    ]


def test_unknown_machine_class_is_refused():
    with pytest.raises(InputsError) as err:
        severity_zone("1 mm/s", "ISO 10816-3 group 3 rigid")
    text = str(err.value)
    assert text.startswith(
        "machine_class: the criteria table has no machine class 'ISO 10816-3 group 3 rigid'. "
        'Did you mean "ISO 10816-3 group 2 rigid"? Give one of: ISO 10816-3 group 1 rigid; '
    )
    assert text.endswith('(e.g. machine_class = "ISO 10816-3 group 2 rigid").')


def test_third_octave_bands_against_base_ten_formula():
    """IEC 61260-1:2014, Annex E: nominal midband frequencies within 2 % of 1000 Hz * 10^(n/10) (from memory)."""
    bands = third_octave_bands(1, 1000)
    assert len(bands) == 31
    for n, f in enumerate(bands, start=-30):
        assert f == pytest.approx(1000 * 10 ** (n / 10), rel=0.02)
    centre, lo, hi = third_octave_band(12.33)
    assert (
        centre == 12.5
        and lo == pytest.approx(10**1.05, rel=1e-12)
        and hi == pytest.approx(10**1.15, rel=1e-12)
    )


def test_vc_curves():
    """Gordon (SPIE 1999) / IEST-RP-CC012, from memory: VC-A 50, VC-E 3.12 um/s rms, 1 Hz to 80 Hz."""
    assert criterion_curve("VC-A").velocity_limit(10.0) == pytest.approx(50e-6)
    assert criterion_curve("VC-E").velocity_limit(50.0) == pytest.approx(3.12e-6)
    assert criterion_curve("VC-A").velocity_limit(100.0) is None


def test_iso_base_curve_and_multiples():
    """ISO 2631-2:1989 z-axis base curve (from memory): 5e-3 m/s^2 from 4 to 8 Hz, a ~ f^-1/2 below, a ~ f above
    (constant velocity about 100 um/s, the 'operating theatre' line of the generic VC chart); offices 4 x."""
    base = criterion_curve("ISO base curve")
    assert base.velocity_limit(6.0) * 2 * math.pi * 6.0 == pytest.approx(5e-3)
    assert base.velocity_limit(1.0) * 2 * math.pi * 1.0 == pytest.approx(1e-2)  # 5e-3 * (1/4)^-1/2
    assert base.velocity_limit(40.0) == pytest.approx(100e-6, rel=0.01)
    assert criterion_curve("ISO office").velocity_limit(40.0) == pytest.approx(4 * base.velocity_limit(40.0))


def test_a_broken_table_is_refused(tmp_path):
    """A table entry without its boundaries rising is refused on load, naming the entry."""
    text = TABLE_FILE.read_text(encoding="utf-8").replace('"B/C" = "2.8 mm/s"', '"B/C" = "1.0 mm/s"', 1)
    bad = tmp_path / "criteria.toml"
    bad.write_text(text, encoding="utf-8")
    with pytest.raises(InputsError) as err:
        load_criteria(bad)
    assert str(err.value) == (
        "criteria.toml, severity 'ISO 10816-3 group 2 rigid': the zone boundaries do not rise from A/B to C/D. "
        "Check the values against the table."
    )
