"""Tests of calckit.physics.amplitude: conventions against closed forms and sampled signals (numpy, sympy)."""

import math

import numpy as np
import pytest
import sympy as sp

from calckit.errors import InputsError
from calckit.physics.amplitude import (
    amplitude_convention,
    convention_formula,
    harmonic_sum_formula,
    harmonic_sum_rms,
    in_convention,
    motion_formula,
    sum_in_convention,
)


def test_one_harmonic_against_a_sampled_sine():
    """rms and peak-to-peak of X sin(w t) sampled over whole periods (numpy), against the conversions."""
    X, w = 2.5, 2 * math.pi * 12.0
    t = np.linspace(0, 10 * 2 * math.pi / w, 100_001)
    x = X * np.sin(w * t)
    assert in_convention(X, "peak", "rms") == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-4)
    assert in_convention(X, "peak", "peak-to-peak") == pytest.approx(x.max() - x.min(), rel=1e-6)
    assert in_convention(in_convention(X, "peak", "rms"), "rms", "peak-to-peak") == pytest.approx(2 * X)


def test_sum_of_two_harmonics_against_a_sampled_signal():
    """sqrt(sum X_n^2 / 2) against the numerical rms of 3 sin(w t) + 4 cos(2.5 w t + 0.3) (numpy)."""
    w = 2 * math.pi * 4.0
    t = np.linspace(0, 40 * 2 * math.pi / w, 400_001)  # 40 periods of w, 100 of 2.5 w
    x = 3 * np.sin(w * t) + 4 * np.cos(2.5 * w * t + 0.3)
    assert harmonic_sum_rms([3.0, 4.0]) == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-4)
    formula = harmonic_sum_formula(2)
    assert float(formula.subs({"X_1": 3, "X_2": 4})) == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-4)


def test_formulas_are_exact():
    """rms = peak / sqrt(2), pk-pk = 2 peak (closed forms, exact in sympy)."""
    X = sp.Symbol("X")
    assert sp.simplify(convention_formula("peak", "rms") - X / sp.sqrt(2)) == 0
    assert sp.simplify(convention_formula("rms", "peak-to-peak") - 2 * sp.sqrt(2) * X) == 0


def test_motion_converts_with_its_frequency():
    """v = omega x, a = omega^2 x: the amplitudes of d/dt and d2/dt2 of X sin(omega t) (sympy.diff)."""
    t, X, w = sp.symbols("t X omega", positive=True)
    x = X * sp.sin(w * t)
    v_amp = sp.diff(x, t).coeff(sp.cos(w * t))
    a_amp = -sp.diff(x, t, 2).coeff(sp.sin(w * t))
    assert sp.simplify(motion_formula("displacement", "velocity").subs({"X": X, "omega": w}) - v_amp) == 0
    assert sp.simplify(motion_formula("displacement", "acceleration").subs({"X": X, "omega": w}) - a_amp) == 0


def test_unknown_convention_is_refused():
    with pytest.raises(InputsError) as err:
        amplitude_convention("rsm", where="velocity_limit_convention")
    assert str(err.value) == (
        'velocity_limit_convention: "rsm" is not an amplitude convention. Did you mean "rms"? Give "peak", '
        '"peak-to-peak" or "rms", e.g. velocity_limit = { value = "4.5 mm/s", convention = "rms" }.'
    )


def test_peak_of_a_sum_is_refused():
    with pytest.raises(InputsError) as err:
        sum_in_convention("peak-to-peak", where="criterion")
    assert str(err.value) == (
        "criterion: the peak-to-peak of a sum of harmonics depends on their phases, so it cannot be found from "
        'their amplitudes. Compare in rms: give the limit as rms, e.g. velocity_limit = { value = "4.5 mm/s", '
        'convention = "rms" }.'
    )
