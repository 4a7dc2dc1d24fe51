"""Tests of calckit.physics.band_response: band by band against sampled signals (numpy) and the book form."""

import math

import numpy as np
import pytest

from calckit.errors import InputsError
from calckit.physics.band_response import band_response, read_spectrum, worst_band
from calckit.physics.criteria_tables import criterion_curve


def _book_T(r, zeta):
    """Base-motion transmissibility, Rao, Mechanical Vibrations, 5th ed., sec. 3.6 (from memory)."""
    return math.sqrt((1 + (2 * zeta * r) ** 2) / ((1 - r**2) ** 2 + (2 * zeta * r) ** 2))


def test_two_harmonics_in_one_band_against_a_sampled_signal():
    """12 Hz and 13.5 Hz both fall in the 12.5 Hz band (11.2 Hz to 14.1 Hz, IEC 61260-1): the band's rms is
    the rms of the equipment's sampled velocity (numpy) through the book transmissibility at each frequency."""
    f_n, zeta = 4.0, 0.05
    rows = band_response(criterion_curve("VC-B"), f_n, zeta, harmonics=[(12.0, 1e-3), (13.5, 0.5e-3)])
    assert [row.centre_hz for row in rows] == [12.5]
    t = np.linspace(0.0, 20.0, 2_000_001)  # 240 and 270 periods
    v = _book_T(12 / f_n, zeta) * 1e-3 * np.sin(2 * np.pi * 12 * t) + _book_T(
        13.5 / f_n, zeta
    ) * 0.5e-3 * np.cos(2 * np.pi * 13.5 * t + 0.7)
    assert rows[0].equipment_rms == pytest.approx(np.sqrt(np.mean(v**2)), rel=1e-4)
    assert rows[0].limit == pytest.approx(25e-6)  # VC-B, Gordon / IEST-RP-CC012 (from memory)


def test_rms_harmonics_and_bands():
    """A harmonic given as rms is the same band value as its peak / sqrt(2); a measured band passes with T at
    its nominal midband frequency (the book form)."""
    curve = criterion_curve("ISO workshop")
    as_peak = band_response(curve, 5.0, 0.1, harmonics=[(25.0, 2e-3)])
    as_rms = band_response(curve, 5.0, 0.1, harmonics=[(25.0, 2e-3 / math.sqrt(2))], convention="rms")
    assert as_rms[0].equipment_rms == pytest.approx(as_peak[0].equipment_rms, rel=1e-12)
    bands = band_response(curve, 5.0, 0.1, bands=[(25.0, 300e-6), (31.5, 100e-6)])
    assert bands[0].equipment_rms == pytest.approx(_book_T(25 / 5, 0.1) * 300e-6, rel=1e-12)
    assert worst_band(bands).centre_hz == 25.0


def test_refusals():
    with pytest.raises(InputsError) as err:
        read_spectrum("8 Hz 30 um/s", where="floor_bands")
    assert str(err.value) == (
        'floor_bands: entry 1, "8 Hz 30 um/s", is not "frequency: value". Write each entry as frequency: value, '
        'separated by semicolons, like floor_bands = "8 Hz: 30 um/s; 10 Hz: 45 um/s".'
    )
    with pytest.raises(InputsError) as err:
        band_response(criterion_curve("VC-A"), 5.0, 0.1, harmonics=[(12.0, 1e-3), (12.0, 2e-3)])
    assert str(err.value).startswith("floor_harmonics: two of the floor's harmonics are at 12 Hz.")
    rows = band_response(criterion_curve("VC-A"), 5.0, 0.1, harmonics=[(200.0, 1e-3)])
    assert rows[0].limit is None  # VC-A stops at 80 Hz
    with pytest.raises(InputsError) as err:
        worst_band(rows)
    assert str(err.value) == (
        "criterion_curve: none of the floor's bands lies within the criterion curve's frequency range. Give the "
        "floor's motion in the bands the curve covers, or choose a curve that covers them."
    )
