"""The arguments and results of the harmonic closed forms: one set of checks for every function.

Every closed form of :mod:`calckit.physics.harmonic` (and of the modules that extend it:
:mod:`calckit.physics.resonance_peak`, :mod:`calckit.physics.hysteretic`,
:mod:`calckit.physics.excitation`) takes its arguments through :func:`_args`, which picks
the exact path (any sympy argument: every one through :func:`calckit.core.exact.exact`)
or the numeric one (numpy broadcast), refuses bad values naming the function and the
argument, and gives its result through :func:`_out`.
"""

from __future__ import annotations

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.errors import ModelError

_MEANING = {
    "r": "frequency ratio",
    "zeta": "damping ratio",
    "loss_factor": "loss factor",
    "delta": "logarithmic decrement",
    "omega": "forcing frequency",
    "omega_n": "natural frequency",
    # used by calckit.physics.excitation
    "m_u": "unbalanced mass",
    "e": "eccentricity",
    "G": "balance quality grade",
    "rotor_mass": "rotor mass",
    "k": "stiffness",
    "c": "damping coefficient",
    "X": "amplitude",
    "U": "residual unbalance",
}

Value = sp.Expr | np.ndarray | np.floating


# --------------------------------------------------------------------------- input handling
# Shared with calckit.physics.excitation (same layer, same rules).


def _is_exact(*values) -> bool:
    """True when any value is a sympy object: then the exact path is taken."""
    return any(isinstance(v, sp.Basic) for v in values)


def _exact_arg(value, name: str, func: str, *, positive: bool = False) -> sp.Expr:
    where = f"{func}({name})"
    meaning = _MEANING.get(name, name)
    v = exact(value, where=where)
    if v.is_real is False:
        raise ModelError(f"the {meaning} {v} is not a real number", where=where, do=f"Give a real {name}")
    if v.is_negative:
        raise ModelError(f"the {meaning} is negative ({v})", where=where, do=f"Give {name} >= 0")
    if positive and v.is_zero:
        raise ModelError(f"the {meaning} is zero", where=where, do=f"Give {name} > 0")
    return v


def _numeric_arg(value, name: str, func: str, *, positive: bool = False) -> np.ndarray:
    where = f"{func}({name})"
    meaning = _MEANING.get(name, name)
    if isinstance(value, bool | np.bool_):
        raise ModelError(f"got a truth value {value!r}", where=where, do="Give a number")
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ModelError(
            f"expected a number or an array of numbers, got {type(value).__name__}",
            where=where,
            do="Give a float, an int or a numpy array, or a sympy expression for an exact result",
        ) from None
    bad = ~np.isfinite(a)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        at = f" at index {i}" if a.ndim else ""
        raise ModelError(
            f"the {meaning} is not a finite number ({float(a.flat[i])!r}{at})",
            where=where,
            do="Give finite numbers",
        )
    neg = a < 0
    if neg.any():
        i = int(np.flatnonzero(neg)[0])
        at = f" at index {i}" if a.ndim else ""
        raise ModelError(
            f"the {meaning} is negative ({float(a.flat[i])!r}{at})", where=where, do=f"Give {name} >= 0"
        )
    if positive:
        zero = a == 0
        if zero.any():
            i = int(np.flatnonzero(zero)[0])
            at = f" at index {i}" if a.ndim else ""
            raise ModelError(f"the {meaning} is zero{at}", where=where, do=f"Give {name} > 0")
    return a + 0.0  # turns -0.0 into +0.0, so atan2 stays in [0, pi]


def _args(func: str, positive: tuple[str, ...] = (), **values):
    """Validate *values* and return (exact?, converted values in order)."""
    if _is_exact(*values.values()):
        return True, [_exact_arg(v, k, func, positive=k in positive) for k, v in values.items()]
    return False, [_numeric_arg(v, k, func, positive=k in positive) for k, v in values.items()]


def _out(a):
    """A numpy float for 0-d results, the array otherwise."""
    a = np.asarray(a, dtype=float)
    return a[()] if a.ndim == 0 else a


def _finite(expr: sp.Expr, func: str, what: str, do: str) -> sp.Expr:
    if expr.has(sp.zoo, sp.oo, -sp.oo, sp.nan):
        raise ModelError(what, where=func, do=do)
    return expr


_RESONANCE = (
    "undamped at exact resonance (r = 1, zeta = 0) the steady amplitude grows without bound: "
    "there is no steady-state amplitude"
)
_RESONANCE_DO = (
    "Add damping (zeta > 0) or move the speed off the natural frequency; "
    "Oscillator.response gives the growing resonant response"
)


def _refuse_scalar_resonance(result, func: str):
    """A single value at undamped resonance is refused in words; an array keeps its ``inf`` (curves)."""
    out = _out(result)
    if np.ndim(out) == 0 and np.isinf(out):
        raise ModelError(_RESONANCE, where=func, do=_RESONANCE_DO)
    return out


# --------------------------------------------------------------------------- closed forms


def _atan2_lag(num, den, is_exact: bool):
    """atan2 with the 0/0 point (undamped resonance) given its limit pi/2."""
    if is_exact:
        if num == 0 and den == 0:
            return sp.pi / 2
        return sp.atan2(num, den)
    both_zero = (num == 0) & (den == 0)
    return _out(np.where(both_zero, np.pi / 2, np.arctan2(num, den)))
