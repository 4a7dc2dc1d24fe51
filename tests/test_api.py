"""The public API: every exported name exists, and the contract in shared/DESIGN.md holds."""

from __future__ import annotations

import sympy as sp

import calckit as ck


def test_every_exported_name_exists():
    """Each name in calckit.__all__ is importable."""
    missing = [name for name in ck.__all__ if not hasattr(ck, name)]
    assert missing == []


def test_design_contract_names():
    """The names the design notes promise (shared/DESIGN.md, public API contract)."""
    for name in ("Oscillator", "LinearODE", "magnification", "transmissibility", "CalcError", "Sheet"):
        assert name in ck.__all__, name


def test_design_contract_behaviour():
    """The contract's example, line by line."""
    t = sp.Symbol("t", real=True)
    m, c, k, f0, w = sp.symbols("m c k F_0 omega", positive=True)
    osc = ck.Oscillator(m, c, k)
    der = osc.particular(f0 * sp.cos(w * t), t=t)
    assert isinstance(der.solution, sp.Expr) and der.steps and der.verified is True
    res = ck.Oscillator(2, 4, 50).response(sp.cos(3 * t), 1, 0, t=t)
    assert sp.simplify(res.solution - res.transient - res.steady_state) == 0
    assert ck.LinearODE([1, 0, 0, 1]).particular(t, t=t).solution == t
    numeric = ck.Oscillator(2, 4, 50)
    assert numeric.natural_frequency == 5 and numeric.damping_ratio == sp.Rational(1, 5)
    assert numeric.damped_frequency == sp.sqrt(24) and numeric.regime == "underdamped"
    assert ck.magnification(0.0, 0.1) == 1.0
    assert ck.transmissibility(2**0.5, 0.3) == 1.0 or abs(ck.transmissibility(2**0.5, 0.3) - 1) < 1e-12
    assert issubclass(ck.ForcingError, ck.CalcError) and issubclass(ck.ForcingError, ValueError)


def test_multimass_contract():
    """DESIGN.md's multi-mass lines: natural_frequencies is a property, as osc.natural_frequency is.

    Two unit masses between three unit springs: omega = 1 and sqrt(3) rad/s (Rao, Mechanical
    Vibrations, 5th ed., sec. 5.3, from memory).
    """
    t = sp.Symbol("t", real=True)
    mm = ck.MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]])
    assert mm.natural_frequencies == (1, sp.sqrt(3))
    der = mm.particular([sp.cos(2 * t), 0], t=t)
    assert isinstance(der.solution, sp.ImmutableMatrix) and der.verified is True
    res = mm.response([0, 0], [1, 1], [0, 0], t=t)
    assert isinstance(res, ck.Response) and isinstance(res.particular, ck.Derivation)
    values = der.evaluate([0.0, 1.0, 2.5])
    assert values.shape == (2, 3)
    # x_p = (-2 cos 2t / 3, cos 2t / 3): K - 4 M = [[-2, -1], [-1, -2]] solved by hand
    import numpy as np

    times = np.array([0.0, 1.0, 2.5])
    np.testing.assert_allclose(values, [-2 * np.cos(2 * times) / 3, np.cos(2 * times) / 3], rtol=1e-14)


def test_records_are_built_by_keyword():
    """Derivation and Response take keywords only (frozen, kw_only dataclasses)."""
    import dataclasses

    import pytest

    t = sp.Symbol("t", real=True)
    der = ck.LinearODE([1, 0, 4]).particular(sp.cos(2 * t), t=t)
    fields = [f.name for f in dataclasses.fields(ck.Derivation)]
    with pytest.raises(TypeError):
        ck.Derivation(*(getattr(der, name) for name in fields))
    again = ck.Derivation(**{name: getattr(der, name) for name in fields})
    assert again.solution == der.solution
    res = ck.LinearODE([1, 0, 4]).response(sp.cos(2 * t), [0, 0], t=t)
    names = [f.name for f in dataclasses.fields(ck.Response)]
    with pytest.raises(TypeError):
        ck.Response(*(getattr(res, name) for name in names))
    assert all(f.kw_only for f in dataclasses.fields(ck.Derivation) + dataclasses.fields(ck.Response))


def test_one_frequency_response_type():
    """Oscillator, MultiMass and calckit.frequency_response return the one FrequencyResponse type."""
    import numpy as np

    osc = ck.Oscillator(250, 670, 180_000)
    mm = ck.MultiMass([[1, 0], [0, 1]], [[0.2, -0.1], [-0.1, 0.2]], [[2, -1], [-1, 2]])
    omegas = np.array([0.5, 2.0])
    for value in (
        osc.frequency_response(omegas),
        mm.frequency_response(omegas),
        ck.frequency_response(mm, omegas),
    ):
        assert isinstance(value, ck.FrequencyResponse)
    np.testing.assert_array_equal(
        mm.frequency_response(omegas).receptance, ck.frequency_response(mm, omegas).receptance
    )
    # one unit spring-mass-damper: H = 1 / (k - m w^2 + i c w), written out here
    np.testing.assert_allclose(
        osc.frequency_response(omegas).receptance, 1 / (180_000 - 250 * omegas**2 + 670j * omegas), rtol=1e-14
    )
