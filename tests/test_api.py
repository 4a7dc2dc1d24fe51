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
