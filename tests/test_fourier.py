"""Tests for calckit.physics.fourier: periodic loads as Fourier series."""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import quad

from calckit import fourier
from calckit.errors import CalcError, ForcingError
from calckit.physics.fourier import FourierSeries, Harmonic, fourier_series, fourier_series_from_samples

t = sp.Symbol("t", real=True)
A = sp.Symbol("A", positive=True)
T_sym = sp.Symbol("T", positive=True)


def square(amplitude, period):
    """+amplitude on the first half period, -amplitude on the second."""
    return sp.Piecewise((amplitude, t < period / 2), (-amplitude, True))


def sawtooth(amplitude, period):
    """f = A t / (T/2) on (-T/2, T/2), written over [0, T) (shifted by one period on the second half)."""
    return sp.Piecewise(
        (2 * amplitude * t / period, t < period / 2), (2 * amplitude * (t - period) / period, True)
    )


# Invented scenario: the screenings compactor C-401 at Harrow Creek water-treatment works
# strokes every 4 s; its ram pushes with a half-sine pulse of 12 kN lasting 1.5 s.
STROKE_PERIOD = 4
PULSE_PEAK = 12_000
PULSE_LENGTH = sp.Rational(3, 2)
PRESS = sp.Piecewise((PULSE_PEAK * sp.sin(sp.pi * t / PULSE_LENGTH), t < PULSE_LENGTH), (0, True))


@functools.cache
def press_series():
    """The press load with 30 harmonics, built once for the tests that only read it."""
    return fourier_series(PRESS, t, STROKE_PERIOD, 30)


def press_numpy(tt):
    tt = np.mod(tt, STROKE_PERIOD)
    return np.where(tt < 1.5, PULSE_PEAK * np.sin(np.pi * tt / 1.5), 0.0)


class TestSquareWave:
    def test_coefficients(self):
        """b_n = 4A/(n pi) for odd n, 0 for even, no cosines, zero mean
        (Kreyszig, Advanced Engineering Mathematics, 10th ed., sec. 11.1, Example 1, from memory)."""
        s = fourier_series(square(A, 4), t, 4, 9)
        assert isinstance(s, FourierSeries) and s.is_exact and s.notes == ()
        assert s.a0 == 0
        for n, a, b in s.coefficients:
            assert a == 0
            assert b == (4 * A / (n * sp.pi) if n % 2 else 0)

    def test_symbolic_period(self):
        """The same series with the period left as a positive symbol; omega = 2 pi / T."""
        s = fourier_series(square(A, T_sym), t, T_sym, 5)
        assert s.omega == 2 * sp.pi / T_sym
        assert [b for _, _, b in s.coefficients] == [
            4 * A / sp.pi,
            0,
            4 * A / (3 * sp.pi),
            0,
            4 * A / (5 * sp.pi),
        ]

    def test_general_formula(self):
        """sympy's general-n formula reduces to 4A/(n pi) on odd n, 0 on even."""
        s = fourier_series(square(A, 4), t, 4, 1)
        n = s.n_symbol
        assert n == sp.Symbol("n", integer=True, positive=True)
        assert s.a_n_formula == 0
        for k in range(1, 12):
            assert s.b_n_formula.subs(n, k) == (4 * A / (k * sp.pi) if k % 2 else 0)

    @pytest.mark.parametrize("N", [1, 3, 8])
    def test_captured_fraction(self, N):
        """Parseval: captured fraction = 8/pi^2 * sum over odd n <= N of 1/n^2
        (Kreyszig, 10th ed., sec. 11.6, Parseval's identity, from memory)."""
        s = fourier_series(square(A, 2), t, 2, N)
        expected = sp.Rational(8) / sp.pi**2 * sum(sp.Rational(1, n**2) for n in range(1, N + 1, 2))
        assert s.mean_square == A**2
        assert sp.simplify(s.captured_fraction - expected) == 0

    def test_method_numeric_agrees(self):
        """Quadrature (method="numeric") gives the same numbers as floats, with notes."""
        exact_s = fourier_series(square(3, 4), t, 4, 5)
        num_s = fourier_series(square(3, 4), t, 4, 5, method="numeric")
        assert not num_s.is_exact and len(num_s.notes) == 2
        for (_, a, b), (_, an, bn) in zip(exact_s.coefficients, num_s.coefficients, strict=True):
            assert float(an) == pytest.approx(float(a), abs=1e-12)
            assert float(bn) == pytest.approx(float(b), abs=1e-12)

    def test_expression_feeds_engine(self):
        """.expression(t) is a plain sum of sines with exact coefficients and omega = 2 pi / T."""
        s = fourier_series(square(2, 4), t, 4, 3)
        assert s.expression(t) == 8 * sp.sin(sp.pi * t / 2) / sp.pi + 8 * sp.sin(3 * sp.pi * t / 2) / (
            3 * sp.pi
        )


class TestGeneralFormula:
    def test_load_with_its_own_n(self):
        """A load that uses a symbol n keeps it apart from the harmonic number."""
        n_user = sp.Symbol("n", integer=True, positive=True)
        s = fourier_series(square(n_user, 2), t, 2, 1)
        assert s.n_symbol != n_user
        assert s.coefficients[0][2] == 4 * n_user / sp.pi
        assert s.b_n_formula.subs(s.n_symbol, 3) == 4 * n_user / (3 * sp.pi)

    def test_resonant_harmonic(self):
        """A pulse whose own frequency is a harmonic of the period (n = 3 here): the value at
        that n equals scipy.integrate.quad, with or without sympy's Piecewise guard."""
        f = sp.Piecewise((sp.sin(3 * sp.pi * t / 2), t < sp.Rational(2, 3)), (0, True))
        s = fourier_series(f, t, 4, 4)
        assert s.coefficients[2][1:] == (0, sp.Rational(1, 6))
        for n, a, b in s.coefficients:
            an = (
                0.5
                * quad(lambda x, n=n: math.sin(1.5 * math.pi * x) * math.cos(n * math.pi * x / 2), 0, 2 / 3)[
                    0
                ]
            )
            bn = (
                0.5
                * quad(lambda x, n=n: math.sin(1.5 * math.pi * x) * math.sin(n * math.pi * x / 2), 0, 2 / 3)[
                    0
                ]
            )
            assert float(a) == pytest.approx(an, abs=1e-13)
            assert float(b) == pytest.approx(bn, abs=1e-13)

    def test_formula_exception_noted(self, monkeypatch):
        """If the general formula gives no finite value at some n (here forced by dropping sympy's
        Piecewise guard), that coefficient is integrated directly and a note names the n."""
        real = fourier._integrate_exact

        def unguarded(integrand, t_, lo, hi):
            out = real(integrand, t_, lo, hi)
            return out.args[0][0] if isinstance(out, sp.Piecewise) else out

        monkeypatch.setattr(fourier, "_integrate_exact", unguarded)
        f = sp.Piecewise((sp.sin(3 * sp.pi * t / 2), t < sp.Rational(2, 3)), (0, True))
        s = fourier_series(f, t, 4, 4)
        assert s.notes == (
            "the general formula for sin(3*pi*t/2) on [0, 2/3) does not hold at n = 3; "
            "those coefficients were integrated directly",
        )
        assert s.coefficients[2][1:] == (0, sp.Rational(1, 6))


class TestSawtooth:
    def test_coefficients(self):
        """b_n = 2A(-1)^(n+1)/(n pi), a_n = 0 for f = A t/(T/2) on (-T/2, T/2)
        (Kreyszig, Advanced Engineering Mathematics, 10th ed., sec. 11.2, sawtooth wave, from memory)."""
        s = fourier_series(sawtooth(A, 4), t, 4, 7)
        assert s.a0 == 0
        for n, a, b in s.coefficients:
            assert a == 0
            assert b == 2 * A * (-1) ** (n + 1) / (n * sp.pi)

    def test_mean_square(self):
        """Mean square of a sawtooth of peak A is A^2/3 (common practice, no source)."""
        assert fourier_series(sawtooth(A, 4), t, 4, 1).mean_square == A**2 / 3


class TestHalfWaveRectifier:
    def test_coefficients(self):
        """u = E sin(w t) on the first half period, 0 on the second:
        a0 = E/pi, b1 = E/2, a_n = -2E/((n-1)(n+1) pi) for even n, all else 0
        (Kreyszig, Advanced Engineering Mathematics, 10th ed., sec. 11.2, half-wave rectifier, from memory)."""
        E = sp.Symbol("E", positive=True)
        s = fourier_series(sp.Piecewise((E * sp.sin(sp.pi * t), t < 1), (0, True)), t, 2, 6)
        assert s.a0 == E / sp.pi
        for n, a, b in s.coefficients:
            assert b == (E / 2 if n == 1 else 0)
            assert sp.simplify(a - (-2 * E / ((n - 1) * (n + 1) * sp.pi) if n % 2 == 0 else 0)) == 0


class TestPressPulse:
    def test_against_scipy_quad(self):
        """Coefficients equal the Euler integrals done by scipy.integrate.quad."""
        s = press_series().truncated(6)
        w = 2 * math.pi / STROKE_PERIOD
        a0 = quad(press_numpy, 0, 1.5)[0] / STROKE_PERIOD
        assert float(s.a0) == pytest.approx(a0, rel=1e-12)
        for n, a, b in s.coefficients:
            an = 2 / STROKE_PERIOD * quad(lambda x, n=n: press_numpy(x) * math.cos(n * w * x), 0, 1.5)[0]
            bn = 2 / STROKE_PERIOD * quad(lambda x, n=n: press_numpy(x) * math.sin(n * w * x), 0, 1.5)[0]
            assert float(a) == pytest.approx(an, abs=1e-9 * PULSE_PEAK)
            assert float(b) == pytest.approx(bn, abs=1e-9 * PULSE_PEAK)

    def test_mean_is_pulse_area_over_period(self):
        """a0 = 12 kN * (2/pi) * 1.5 s / 4 s = 9000/pi N (hand arithmetic)."""
        assert press_series().truncated(1).a0 == 9000 / sp.pi

    def test_reproduces_pulse(self):
        """30 harmonics match the pulse within 0.5 % of peak away from the kinks at 0 and 1.5 s,
        and do better than 8 harmonics."""
        tt = np.linspace(0, 4, 4001)
        away = (np.abs(tt - 1.5) > 0.05) & (tt > 0.05) & (tt < 3.95)
        err = {}
        for N in (8, 30):
            s = press_series().truncated(N)
            err[N] = np.abs(s.evaluate(tt) - press_numpy(tt))[away].max() / PULSE_PEAK
        assert err[30] < 0.005
        assert err[30] < err[8] / 3

    def test_samples_agree_with_closed_form(self):
        """rfft of 2048 samples gives the closed-form coefficients to 1e-5 of peak."""
        M = 2048
        s_exact = press_series().truncated(10)
        s_samp = fourier_series_from_samples(press_numpy(np.arange(M) * STROKE_PERIOD / M), 4.0, 10)
        assert s_samp.a0 == pytest.approx(float(s_exact.a0), abs=1e-5 * PULSE_PEAK)
        for (_, a, b), (_, ae, be) in zip(s_samp.coefficients, s_exact.coefficients, strict=True):
            assert a == pytest.approx(float(ae), abs=1e-5 * PULSE_PEAK)
            assert b == pytest.approx(float(be), abs=1e-5 * PULSE_PEAK)
        assert s_samp.captured_fraction == pytest.approx(float(s_exact.captured_fraction), abs=1e-6)

    def test_harmonic_table(self):
        """Each row satisfies a cos + b sin = amplitude cos(n w t - phase)."""
        s = press_series().truncated(4)
        rows = s.harmonics
        assert all(isinstance(h, Harmonic) for h in rows) and [h.n for h in rows] == [1, 2, 3, 4]
        x = np.linspace(0, 4, 50)
        for h in rows:
            w = float(h.frequency)
            lhs = float(h.a) * np.cos(w * x) + float(h.b) * np.sin(w * x)
            rhs = float(h.amplitude) * np.cos(w * x - float(h.phase))
            assert np.allclose(lhs, rhs, atol=1e-9)
        assert rows[3].amplitude == 0 and rows[3].phase == 0  # the pulse's 4th harmonic vanishes
        assert s.amplitudes == tuple(h.amplitude for h in rows)

    def test_expression_matches_evaluate(self):
        """The sympy expression, lambdified, equals .evaluate()."""
        s = press_series().truncated(5)
        f = sp.lambdify(t, s.expression(t), "numpy")
        x = np.linspace(0, 8, 101)
        assert np.allclose(f(x), s.evaluate(x), rtol=1e-12, atol=1e-9)

    def test_truncated(self):
        """truncated(N) keeps the first N rows; asking for more than the series holds is refused."""
        s = press_series()
        assert s.truncated(3).coefficients == s.coefficients[:3] and s.truncated(3).a0 == s.a0
        with pytest.raises(ForcingError) as info:
            s.truncated(31)
        assert str(info.value) == (
            "FourierSeries.truncated(n_harmonics): the series holds 30 harmonics, cannot keep 31. "
            "Give at most 30, or build the series with more harmonics."
        )


class TestOtherInputs:
    def test_heaviside(self):
        """A Heaviside step is read as a Piecewise: 3 H(t - 1) over [0, 2) is a square wave about 3/2."""
        s = fourier_series(3 * sp.Heaviside(t - 1), t, 2, 3)
        assert s.a0 == sp.Rational(3, 2)
        assert [b for _, _, b in s.coefficients] == [-6 / sp.pi, 0, -2 / sp.pi]

    def test_smooth_expression_single_harmonic(self):
        """A load that is already harmonic has exactly one harmonic and captures everything."""
        s = fourier_series(5 + 2 * sp.cos(3 * sp.pi * t), t, 2, 4)
        assert s.a0 == 5
        assert s.coefficients == ((1, 0, 0), (2, 0, 0), (3, 2, 0), (4, 0, 0))
        assert s.captured_fraction == 1 and s.alternating_captured_fraction == 1

    def test_quadrature_fallback(self):
        """A piece outside polynomial/exponential/trig terms is integrated numerically, with a note;
        values checked against scipy.integrate.quad."""
        f = sp.Piecewise((sp.exp(sp.sin(t)), t < 1), (0, True))
        s = fourier_series(f, t, 2, 3)
        assert not s.is_exact and s.a_n_formula is None
        assert s.notes == (
            "exp(sin(t)) on [0, 1): coefficients by 14-panel 16-point Gauss-Legendre quadrature (floats, not exact)",
        )
        for n, a, b in s.coefficients:
            an = quad(lambda x, n=n: math.exp(math.sin(x)) * math.cos(n * math.pi * x), 0, 1)[0]
            bn = quad(lambda x, n=n: math.exp(math.sin(x)) * math.sin(n * math.pi * x), 0, 1)[0]
            assert float(a) == pytest.approx(an, abs=1e-13)
            assert float(b) == pytest.approx(bn, abs=1e-13)

    def test_float_period_and_boundaries(self):
        """Floats are read as the decimals they show: period 0.04 s gives omega = 50 pi exactly."""
        s = fourier_series(sp.Piecewise((1.5, t < 0.02), (-1.5, True)), t, 0.04, 1)
        assert s.omega == 50 * sp.pi
        assert s.coefficients[0][2] == 6 / sp.pi


class TestSamples:
    def test_square_wave_samples(self):
        """rfft of a sampled square wave (mid-value at the jumps) gives b_n = 4A/(n pi) to 1e-4
        (Kreyszig, 10th ed., sec. 11.1, Example 1, from memory)."""
        M, amp = 4096, 2.5
        k = np.arange(M)
        f = np.where(k < M // 2, amp, -amp)
        f[0] = f[M // 2] = 0.0
        s = fourier_series_from_samples(f, 0.5, 9)
        assert s.omega == pytest.approx(4 * math.pi)
        assert abs(s.a0) < 1e-12
        for n, a, b in s.coefficients:
            assert abs(a) < 1e-12
            assert b == pytest.approx(4 * amp / (n * math.pi) if n % 2 else 0.0, rel=1e-4, abs=1e-12)
        expected = 8 / math.pi**2 * sum(1 / n**2 for n in range(1, 10, 2))
        assert s.captured_fraction == pytest.approx(expected, rel=1e-3)

    def test_pure_tones_exact_scaling(self):
        """a0 = mean, a_n and b_n come back at their full amplitude (numpy.fft.rfft scaling)."""
        M = 16
        x = np.arange(M) / M
        f = 1.25 + 3 * np.cos(2 * np.pi * x) - 0.5 * np.sin(2 * np.pi * 3 * x)
        s = fourier_series_from_samples(f, 2.0, 4)
        assert s.a0 == pytest.approx(1.25)
        got = np.array([[a, b] for _, a, b in s.coefficients])
        assert np.allclose(got, [[3, 0], [0, 0], [0, -0.5], [0, 0]], atol=1e-12)
        assert s.captured_fraction == pytest.approx(1.0)

    def test_expression_from_samples(self):
        """Float coefficients become exact decimals; round-off terms are dropped."""
        M = 16
        x = np.arange(M) / M
        s = fourier_series_from_samples(0.5 + 3 * np.cos(2 * np.pi * x), 2.0, 3)
        assert s.expression(t) == sp.Rational(1, 2) + 3 * sp.cos(sp.pi * t)

    def test_nyquist(self):
        """More harmonics than the samples can resolve is refused."""
        with pytest.raises(ForcingError) as info:
            fourier_series_from_samples(np.zeros(10), 1.0, 5)
        assert str(info.value) == (
            "fourier_series_from_samples(values): 10 samples cannot resolve 5 harmonics (Nyquist): "
            "at least 11 are needed. Sample more finely or ask for at most 4 harmonics."
        )

    def test_not_one_dimensional(self):
        """A 2-D array is refused."""
        with pytest.raises(ForcingError, match=r"expected a 1-D array of samples, got shape \(2, 8\)"):
            fourier_series_from_samples(np.zeros((2, 8)), 1.0, 2)

    def test_nan_sample(self):
        """A NaN sample is named by index."""
        f = np.ones(9)
        f[4] = np.nan
        with pytest.raises(ForcingError) as info:
            fourier_series_from_samples(f, 1.0, 2)
        assert (
            str(info.value)
            == "fourier_series_from_samples(values): sample 4 is not a finite number (nan). Give finite samples."
        )


class TestValidation:
    def test_period_not_positive(self):
        """A zero or negative period is refused with what/where/do."""
        with pytest.raises(ForcingError) as info:
            fourier_series(square(1, 2), t, 0, 3)
        assert (
            str(info.value)
            == "fourier_series(period): the period must be positive, got 0. Give a positive number of seconds."
        )
        with pytest.raises(CalcError, match="the period must be positive, got -1/2"):
            fourier_series_from_samples(np.zeros(9), -0.5, 2)

    def test_period_symbol_without_sign(self):
        """A period symbol not declared positive is refused with a fix."""
        with pytest.raises(ForcingError) as info:
            fourier_series(square(1, 2), t, sp.Symbol("T"), 3)
        assert str(info.value) == (
            "fourier_series(period): cannot tell whether the period T is positive. "
            'Declare symbols as positive, e.g. sympy.Symbol("T", positive=True).'
        )

    def test_period_nan(self):
        """A NaN period is a ForcingError too (from calckit.core.exact)."""
        with pytest.raises(
            ForcingError, match=r"fourier_series\(period\): the value nan is not a finite number"
        ):
            fourier_series(square(1, 2), t, float("nan"), 3)

    @pytest.mark.parametrize("bad", [0, -2])
    def test_too_few_harmonics(self, bad):
        """n_harmonics below 1 is refused."""
        with pytest.raises(ForcingError) as info:
            fourier_series(square(1, 2), t, 2, bad)
        assert str(info.value) == (
            f"fourier_series(n_harmonics): the number of harmonics must be at least 1, got {bad}. Give an int of at least 1."
        )

    def test_harmonics_not_int(self):
        """A float count is refused rather than rounded."""
        with pytest.raises(ForcingError, match=r"expected a whole number of harmonics, got float 3.0"):
            fourier_series(square(1, 2), t, 2, 3.0)

    def test_piecewise_gap(self):
        """A Piecewise that leaves part of the period undefined is refused, naming the gap."""
        with pytest.raises(ForcingError) as info:
            fourier_series(sp.Piecewise((1, t < 1)), t, 2, 3)
        assert str(info.value) == (
            "fourier_series(f): the Piecewise does not define the load on Interval.Ropen(1, 2). "
            "Cover the whole period [0, T), e.g. end with (value, True)."
        )

    def test_quadrature_with_symbols(self):
        """Numeric quadrature cannot take a symbol."""
        with pytest.raises(ForcingError) as info:
            fourier_series(A * sp.exp(sp.sin(t)), t, 2, 1)
        assert str(info.value) == (
            "fourier_series(f): the piece A*exp(sin(t)) needs numeric quadrature but holds symbols (A). "
            "Substitute numbers for the symbols, or rewrite the piece with polynomials, exponentials, sines and cosines."
        )

    def test_time_not_symbol(self):
        """t must be a sympy Symbol."""
        with pytest.raises(
            ForcingError, match=r"fourier_series\(t\): expected a sympy Symbol for the time, got str"
        ):
            fourier_series(square(1, 2), "t", 2, 1)

    def test_unknown_method(self):
        """Only the three methods exist."""
        with pytest.raises(ForcingError, match=r"unknown method 'fast'"):
            fourier_series(square(1, 2), t, 2, 1, method="fast")

    def test_evaluate_with_symbols(self):
        """evaluate() needs numbers and says which symbols are in the way."""
        s = fourier_series(square(A, 2), t, 2, 1)
        with pytest.raises(ForcingError) as info:
            s.evaluate([0.1])
        assert str(info.value) == (
            "FourierSeries.evaluate: the coefficients hold symbols (A), so they have no numeric value. "
            "Substitute numbers into .expression(t) and evaluate that, or build the series from numbers."
        )


class TestWithOscillator:
    def test_series_feeds_the_derivation_engine(self):
        """The press series, fed to Oscillator.particular, is verified by back substitution, and each
        harmonic's steady amplitude is |c_n| M(n r_1, zeta) / k with calckit.physics.harmonic.magnification."""
        from calckit.physics.harmonic import magnification
        from calckit.physics.oscillator import Oscillator

        m, c, k = 800, 2400, 320_000  # invented compactor frame: omega_n = 20 rad/s, zeta = 3/40
        s = press_series().truncated(3)
        der = Oscillator(m, c, k).particular(s.expression(t), t=t)
        assert der.verified
        wn, zeta = math.sqrt(k / m), c / (2 * math.sqrt(k * m))
        x = sp.lambdify(t, der.solution, "numpy")
        tt = np.linspace(0, 4, 2001)
        expected = float(s.a0) / k + sum(
            float(h.amplitude)
            * float(magnification(float(h.frequency) / wn, zeta))
            / k
            * np.cos(
                float(h.frequency) * tt
                - float(h.phase)
                - np.arctan2(2 * zeta * float(h.frequency) / wn, 1 - (float(h.frequency) / wn) ** 2)
            )
            for h in s.harmonics
        )
        assert np.allclose(x(tt), expected, rtol=1e-10, atol=1e-15)
