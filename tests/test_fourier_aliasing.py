"""Aliasing of harmonics sampled near the Nyquist limit (issue 15, item 9).

References: the Fourier coefficients of a square wave of amplitude A, b_n = 4A/(n pi) for odd n
(E. Kreyszig, Advanced Engineering Mathematics, 10th ed., sec. 11.1, Example 1, from memory);
the discrete transform numpy.fft.fft (the full complex transform, not the rfft the code uses).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from calckit.errors import AliasingWarning, CalcError, ForcingError
from calckit.physics.fourier import fourier_series_from_samples


def square(M: int, amp: float = 1.0) -> np.ndarray:
    """One period of a square wave, mid-value at the jumps."""
    k = np.arange(M)
    f = np.where(k < M // 2, amp, -amp)
    f[0] = f[M // 2] = 0.0
    return f


def tones(M: int) -> np.ndarray:
    """A band-limited load: harmonics 1, 5 and 13 only (all below M/2 for M = 32)."""
    x = np.arange(M) / M
    return (
        0.4
        + 2 * np.cos(2 * np.pi * x)
        - 0.7 * np.sin(2 * np.pi * 5 * x)
        + 0.3 * np.cos(2 * np.pi * 13 * x + 0.4)
    )


class TestWhyTheLimit:
    def test_square_wave_error_near_nyquist(self):
        """With 64 samples the transform's b_n of a square wave is off the closed form 4/(n pi) by about
        10 % at n = 11 and over 20 % above M/4: the refusal and the warning are about a real error."""
        M = 64
        F = np.fft.fft(square(M))  # numpy.fft.fft, outside the code under test
        err = {n: abs(-2 * F[n].imag / M / (4 / (n * math.pi)) - 1) for n in (3, 11, 17, 21)}
        assert err[3] < 0.01
        assert 0.08 < err[11] < 0.12
        assert err[17] > 0.2 and err[21] > 0.3


class TestRefusal:
    def test_above_a_quarter_refused(self):
        with pytest.raises(ForcingError) as info:
            fourier_series_from_samples(square(64), 1.0, 17)
        assert isinstance(info.value, CalcError)
        assert info.value.where == "fourier_series_from_samples(n_harmonics)"
        assert "M/4 = 16" in info.value.what
        assert "Ask for at most 16 harmonics" in info.value.do

    def test_a_quarter_taken(self):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AliasingWarning)
            s = fourier_series_from_samples(square(64), 1.0, 16)
        assert len(s.coefficients) == 16

    def test_band_limited_up_to_nyquist(self):
        """band_limited=True takes up to (M-1)//2 harmonics, equal to numpy.fft.fft's coefficients."""
        M = 32
        f = tones(M)
        with warnings.catch_warnings():
            warnings.simplefilter("error")  # a band-limited load raises no aliasing warning
            s = fourier_series_from_samples(f, 2.0, 15, band_limited=True)
        F = np.fft.fft(f)
        assert s.a0 == pytest.approx(F[0].real / M, abs=1e-12)
        for n, a, b in s.coefficients:
            assert a == pytest.approx(2 * F[n].real / M, abs=1e-12)
            assert b == pytest.approx(-2 * F[n].imag / M, abs=1e-12)
        assert s.coefficients[12][1] == pytest.approx(0.3 * math.cos(0.4), abs=1e-12)  # the tone at n = 13
        with pytest.raises(ForcingError):
            fourier_series_from_samples(f, 2.0, 16, band_limited=True)  # Nyquist still refused


class TestWarning:
    def test_coarse_samples_warn_and_note(self):
        """A square wave in 64 samples keeps 4.5 % of its largest harmonic near M/2 (4/(17 pi) over 4/pi
        at n = 17, Kreyszig as above): warned, and the series says so."""
        with pytest.warns(AliasingWarning) as record:
            s = fourier_series_from_samples(square(64), 1.0, 11)
        text = str(record[0].message)
        assert text.startswith("fourier_series_from_samples(values): the samples are coarse")
        assert "harmonic 17 of 64 samples is still 4.5%" in text
        assert any("aliasing" in note for note in s.notes)

    def test_fine_samples_quiet(self):
        """4096 samples of the same square wave: the top of the band is 0.1 % of the largest, no warning."""
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            s = fourier_series_from_samples(square(4096), 1.0, 11)
        assert not any("aliasing" in note for note in s.notes)
        assert s.coefficients[10][2] == pytest.approx(4 / (11 * math.pi), rel=1e-3)

    def test_band_limited_tones_quiet(self):
        """Tones below M/4 only: nothing near the limit, no warning."""
        M = 64
        x = np.arange(M) / M
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            fourier_series_from_samples(1 + np.sin(2 * np.pi * 3 * x), 1.0, 8)
