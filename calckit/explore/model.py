"""What the explorer derives once and compiles: the steady state and the response from rest.

The steady-state response to the forcing (in ``F0``, ``w`` and ``t``), its amplitude,
magnification, phase lag, transmissibility and the force into the support, and the
response from rest, are derived once by the engine with symbolic ``m, c, k`` (cached
per forcing expression) and compiled with :func:`calckit.engine.numeric.compile_expr`;
a slider move only evaluates arrays. The run-up's step response is derived once in
:func:`calckit.physics.runup.run_up_stage`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import sympy as sp

from calckit.core.expressions import parse_expression
from calckit.engine.numeric import Compiled, compile_expr
from calckit.errors import CalcError
from calckit.physics.excitation import require_one_harmonic
from calckit.physics.oscillator import Oscillator

_m, _c, _k, _F0, _w = sp.symbols("m c k F0 w", positive=True)
_t = sp.Symbol("t", real=True)
_PARAMS = (_m, _c, _k, _F0)


@dataclass(frozen=True)
class _Derived:
    """The solution derived once with symbols and compiled for numpy."""

    forcing: sp.Expr
    derivation: Any  # Derivation: x_p(t)
    response: Any  # Response from rest, or None if it could not be derived
    amplitude: Compiled  # X(w; m, c, k, F0), m
    magnification: Compiled  # X k / F0 (w; m, c, k)
    phase_lag: Compiled  # phi(w; m, c, k), rad
    transmitted: Compiled  # |k x + c x'| amplitude (w; m, c, k, F0), N
    transmissibility: Compiled  # F_T / F0 (w; m, c, k)
    steady: Compiled  # x_p(t; m, c, k, F0, w)
    from_rest: Compiled | None  # x(t) from x(0) = 0, x'(0) = 0


@lru_cache(maxsize=8)
def _derive(forcing: sp.Expr) -> _Derived:
    """Derive the response to *forcing* (in F0, w, t) with symbolic m, c, k, once."""
    osc = Oscillator(_m, _c, _k, regime="underdamped")
    derivation = osc.particular(forcing, t=_t)
    (line,) = osc.harmonics(forcing, t=_t)
    support = sp.sqrt(_k**2 + (_c * _w) ** 2)  # |k + i c w|: the spring and the damper together
    try:
        response = osc.response(forcing, 0, 0, t=_t)
        from_rest = compile_expr(response.solution, _t, (*_PARAMS, _w))
    except CalcError:  # pragma: no cover - the engine derives every harmonic forcing from rest
        response, from_rest = None, None
    return _Derived(
        forcing=forcing,
        derivation=derivation,
        response=response,
        amplitude=compile_expr(line.amplitude, _w, _PARAMS),
        magnification=compile_expr(line.magnification, _w, (_m, _c, _k)),
        phase_lag=compile_expr(line.phase_lag, _w, (_m, _c, _k)),
        transmitted=compile_expr(line.amplitude * support, _w, _PARAMS),
        transmissibility=compile_expr(line.amplitude * support / line.force_amplitude, _w, (_m, _c, _k)),
        steady=compile_expr(derivation.solution, _t, (*_PARAMS, _w)),
        from_rest=from_rest,
    )


def _forcing_expr(text: Any, where: str) -> sp.Expr:
    """The forcing text read in F0, w and t; refused unless one harmonic at w."""
    expr = parse_expression(text, {"F0": _F0, "w": _w}, where=where, t=_t)
    require_one_harmonic(expr, _t, _w, text=text, where=where, taker="The explorer")
    return expr


def _default_forcing() -> sp.Expr:
    """``F0 cos(w t)``, the forcing when the template names none."""
    return _F0 * sp.cos(_w * _t)
