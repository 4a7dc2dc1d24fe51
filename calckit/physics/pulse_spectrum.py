r"""Shock response spectra of closed-form pulses, from the derived piecewise solution.

:func:`pulse_spectrum` fills a :class:`~calckit.physics.spectrum.ShockSpectrum` (the
record type :func:`~calckit.physics.shock.record_spectrum` fills) for a pulse written as
a sympy expression in ``t`` (the helpers of :mod:`calckit.physics.pulses`, or any load
that switches and ends, its pieces quasi-polynomials):

1. The oscillator ``z'' + 2 zeta omega_n z' + omega_n^2 z = p(t)`` (per unit mass:
   ``p = f/m`` under a force, ``p = -a_b`` under a base acceleration) is solved once from
   rest by :meth:`Oscillator.response <calckit.physics.oscillator.Oscillator.response>`,
   interval by interval (:mod:`calckit.engine.piecewise`), with ``omega_n`` kept as a
   positive symbol, so one derivation serves every natural frequency. A natural frequency
   where that general solution does not hold (an undamped resonance with a sine pulse,
   recorded by the derivation as a condition) is derived again at that frequency.
2. **Primary** (during the pulse): on each interval the largest ``|z|`` and ``|a|`` lie at
   an end of the interval or at a root of the derivative. The roots are bracketed on a
   grid of :data:`POINTS_PER_CYCLE` points a cycle (of the damped frequency and of the
   load's own frequencies) and refined by bisection on the exact derivative, vectorised
   over the natural frequencies.
3. **Residual** (after the pulse): free vibration from the state at the end of the pulse;
   its largest value in closed form (:func:`calckit.physics.shock.residual_peak`).
4. **Maximax**: the larger of the two.

The absolute acceleration is ``z''`` under a force per unit mass and ``z'' - p`` (that is
``-(2 zeta omega_n z' + omega_n^2 z)``) under a base acceleration.

References
----------
C. M. Harris and A. G. Piersol (eds.), *Harris' Shock and Vibration Handbook*, 5th ed.,
McGraw-Hill, 2002, ch. 8 (primary, residual and maximax spectra), from memory.
"""

from __future__ import annotations

import math

import numpy as np
import sympy as sp

from calckit.engine import is_switching, split_switching
from calckit.errors import CalcError, ModelError
from calckit.physics.record_inputs import check_damping, mass_in_kg
from calckit.physics.shock import residual_peak
from calckit.physics.spectrum import RESPONSES, SPECTRUM_KINDS, ShockSpectrum, log_frequencies

__all__ = ["EXCITATIONS", "POINTS_PER_CYCLE", "pulse_spectrum"]

EXCITATIONS = ("force", "base acceleration")
#: Grid points a cycle on which the roots of the derivative are bracketed.
POINTS_PER_CYCLE = 16
#: Fewest grid points on any interval.
LEAST_POINTS = 33
#: Numbers held at once while evaluating (frequencies x grid points).
CHUNK_ELEMENTS = 2_000_000
#: Most cycles of the fastest oscillator during the pulse (bounded memory and time).
MOST_CYCLES = 100_000
#: Relative distance of a natural frequency from a singular one below which it is derived again there.
SINGULAR_TOLERANCE = 1e-8
_BISECTIONS = 60


def _time_symbol(pulse: sp.Expr, t) -> sp.Symbol:
    if t is not None:
        if not isinstance(t, sp.Symbol):
            raise ModelError(
                f"t = {t!r} is not a sympy Symbol", where="pulse_spectrum(t)", do="Give the time symbol"
            )
        return t
    named = [s for s in pulse.free_symbols if s.name == "t"]
    if not named:
        raise ModelError("the pulse has no time symbol t", where="pulse_spectrum(pulse)", do="Give t=")
    return named[0]


def _check_pulse(pulse, t) -> tuple[sp.Expr, sp.Symbol]:
    where = "pulse_spectrum(pulse)"
    try:
        pulse = sp.sympify(pulse)
    except (sp.SympifyError, TypeError):
        raise ModelError(
            f"cannot read the pulse {pulse!r}", where=where, do="Give a sympy expression in t"
        ) from None
    t = _time_symbol(pulse, t)
    if pulse.has(sp.floor):
        raise ModelError(
            "the load repeats without end (repeated() without a count): it never ends, so it has no residual "
            "spectrum and its response from rest would need infinitely many intervals",
            where=where,
            do="Give repeated(pulse, period, count=n) for n copies, or the single pulse",
        )
    others = sorted(s.name for s in pulse.free_symbols - {t})
    if others:
        raise ModelError(
            f"the pulse holds the symbol(s) {', '.join(others)}",
            where=where,
            do="Give numbers for the amplitude, duration and start (a spectrum is computed in numbers)",
        )
    if not is_switching(pulse, t):
        raise ModelError(
            f"{pulse} does not switch in t, so it is not a pulse",
            where=where,
            do="Give a pulse that starts and ends, e.g. calckit.pulses.half_sine(A, d)",
        )
    return pulse, t


def _numeric(expr, symbols):
    """A numpy function of *symbols* that broadcasts even when *expr* is a constant."""
    f = sp.lambdify(symbols, expr, modules="numpy")

    def call(*args):
        out = np.asarray(f(*args), dtype=float)
        return (
            np.broadcast_to(out, np.broadcast(*args).shape) if out.shape != np.broadcast(*args).shape else out
        )

    return call


class _Piece:
    """One interval of the pulse, derived once: its length, and ``z``, ``a`` and their
    derivatives as numpy functions of ``(tau, omega_n, z_0, v_0)``, the state at its start."""

    def __init__(self, res, load, length, args, force: bool):
        tau = args[0]
        z = res.solution
        self.length = float(length)
        dz = sp.diff(z, tau)
        a = sp.diff(dz, tau) - (0 if force else load)
        self.z, self.dz = _numeric(z, args), _numeric(dz, args)
        self.a, self.da = _numeric(a, args), _numeric(sp.diff(a, tau), args)
        self.frequencies = _load_frequencies(load, tau)  # the load's own fastest angular frequency
        self.conditions = tuple(res.particular.conditions)
        self.verified = bool(res.particular.verified)


def _load_frequencies(load: sp.Expr, tau: sp.Symbol) -> float:
    """Largest angular frequency (rad/s) of the sines and cosines of a piece."""
    fastest = 0.0
    for atom in load.atoms(sp.sin, sp.cos):
        rate = sp.expand(atom.args[0]).coeff(tau, 1)
        if rate.is_number:
            fastest = max(fastest, abs(float(rate)))
    return fastest


def _derive(switched, w_value, zeta: float, force: bool, scale) -> list[_Piece]:
    """Every interval during the pulse, solved by undetermined coefficients from a symbolic state.

    Each interval's load is written in its local time ``tau = t - t_i`` and solved by the
    oscillator's own interval rule (:meth:`Oscillator.interval_solver`, the one
    :func:`calckit.engine.piecewise.piecewise_response` uses) from the state ``(z_0, v_0)``
    kept as symbols; the state is carried from one interval to the next in numbers, per
    natural frequency, so that no expression grows with the number of intervals.
    *w_value* is the positive symbol ``omega_n`` (one derivation for all) or an exact number.
    """
    from calckit.physics.oscillator import Oscillator

    t = switched.t
    zeta_exact = sp.nsimplify(zeta, rational=True) if zeta else sp.S.Zero
    osc = Oscillator(1, 2 * zeta_exact * w_value, w_value**2)
    solver = osc.interval_solver(osc.regime)
    tau = sp.Symbol("tau", real=True)
    z0, v0 = sp.Symbol("z_0", real=True), sp.Symbol("v_0", real=True)
    args = (tau, _W, z0, v0)
    starts = switched.starts
    cache: dict = {}
    parts = []
    for i in range(len(starts) - 1):
        local = sp.expand((switched.pieces[i] * scale).xreplace({t: tau + starts[i]}))
        length = starts[i + 1] - starts[i]
        if local not in cache:
            cache[local] = solver.respond(local, (z0, v0), tau)
        parts.append(_Piece(cache[local], local, length, args, force))
    return parts


_W = sp.Symbol("omega_n", positive=True)


def _is_zero(value) -> bool:
    return value == 0 or (isinstance(value, sp.Expr) and value.is_zero is True)


def _singular_frequencies(conditions, w: sp.Symbol) -> list[sp.Expr]:
    """Positive natural frequencies at which a condition ``expr != 0`` of the derivation fails."""
    found = []
    for cond in conditions:
        if not isinstance(cond, sp.Ne):
            continue
        expr = cond.lhs - cond.rhs
        if not expr.has(w):
            continue
        for root in sp.solve(expr, w):
            if root.is_number and root.is_real and root.is_positive:
                found.append(root)
    return found


def _extremes(part: _Piece, fun, dfun, w, z0, v0, points) -> np.ndarray:
    """``max |fun|`` over the interval for each frequency: grid, interval ends, roots of *dfun*."""
    tau = np.linspace(0.0, part.length, points)[None, :]
    W, Z, V = w[:, None], z0[:, None], v0[:, None]
    best = np.max(np.abs(fun(tau, W, Z, V)), axis=1)
    slope = dfun(tau, W, Z, V)
    rows, cols = np.nonzero(slope[:, :-1] * slope[:, 1:] < 0)
    if rows.size:
        a, b = tau[0, cols], tau[0, cols + 1]
        fa = slope[rows, cols]
        ww, zz, vv = w[rows], z0[rows], v0[rows]
        for _ in range(_BISECTIONS):
            m = 0.5 * (a + b)
            fm = dfun(m, ww, zz, vv)
            same = np.sign(fm) == np.sign(fa)
            a, fa, b = np.where(same, m, a), np.where(same, fm, fa), np.where(same, b, m)
        np.maximum.at(best, rows, np.abs(fun(0.5 * (a + b), ww, zz, vv)))
    return best


def _scale(excitation: str, mass):
    """The factor that makes the pulse the load per unit mass ``p``."""
    if excitation == "base acceleration":
        return sp.S.NegativeOne
    m = mass_in_kg(mass, "a force pulse", "pulse_spectrum(mass)")
    return 1 / sp.nsimplify(m, rational=True)


def pulse_spectrum(
    pulse,
    t=None,
    natural_frequencies=None,
    damping_ratio: float = 0.05,
    *,
    excitation: str = "force",
    mass=None,
) -> ShockSpectrum:
    """Maximax, primary and residual shock response spectra of a closed-form pulse.

    Parameters
    ----------
    pulse : sympy expression
        A load in ``t`` that switches on and ends (``calckit.pulses.half_sine(A, d)``), in SI
        numbers: N for a force, m/s^2 for a base acceleration. No other symbols.
    t : sympy.Symbol, optional
        The time symbol (by default the symbol named ``t`` in the pulse).
    natural_frequencies : array_like, optional
        ``omega_n`` in rad/s; by default 100 log-spaced from a tenth to a hundred cycles per
        pulse length.
    damping_ratio : float
        ``0 <= zeta < 1``, shared by every oscillator.
    excitation : str
        ``"force"`` (on a mass; give *mass*) or ``"base acceleration"`` (under equipment;
        *mass* is not used).
    mass : float or quantity, optional
        The mass a force acts on, kg (the spectrum is then of ``f/m``).

    Raises
    ------
    ModelError
        A pulse that does not end, repeats without a count, holds other symbols or does not
        switch; a bad damping ratio, frequencies, excitation or mass.
    ForcingError
        A piece of the pulse that is not a quasi-polynomial, or switching times out of order.

    Examples
    --------
    >>> from calckit.physics.pulses import rectangular
    >>> t = sp.Symbol("t", real=True)
    >>> s = pulse_spectrum(rectangular(1, 0.01, t=t), t, [2 * math.pi * 25, 2 * math.pi * 200], 0.0, mass=1)
    >>> [round(float(x), 6) for x in s.values["residual"]["relative_displacement"] * s.natural_frequencies**2]
    [1.414214, 0.0]
    """
    if excitation not in EXCITATIONS:
        raise ModelError(
            f"unknown excitation {excitation!r}",
            where="pulse_spectrum(excitation)",
            do=f"Use one of {', '.join(map(repr, EXCITATIONS))}",
        )
    pulse, t = _check_pulse(pulse, t)
    zeta = check_damping(damping_ratio, "pulse_spectrum(damping_ratio)")
    force = excitation == "force"
    scale = _scale(excitation, mass)
    switched = split_switching(pulse, t)
    if not switched.times or not _is_zero(switched.pieces[-1]):
        after = f" after its last switch at t = {switched.times[-1]}" if switched.times else ""
        raise ModelError(
            f"the load is {switched.pieces[-1]}{after}, not 0: the pulse does not end, so it has no residual spectrum",
            where="pulse_spectrum(pulse)",
            do="Give a pulse that returns to 0 (a ramp-and-hold start-up is a step load: compute its response)",
        )
    duration = float(switched.times[-1])
    if natural_frequencies is None:
        natural_frequencies = log_frequencies(2 * math.pi * 0.1 / duration, 2 * math.pi * 100 / duration, 100)
    w = np.atleast_1d(np.asarray(natural_frequencies, dtype=float))
    if w.ndim != 1 or w.size == 0 or not np.all(np.isfinite(w)) or np.any(w <= 0):
        raise ModelError(
            "natural frequencies must be positive finite numbers (rad/s)",
            where="pulse_spectrum(natural_frequencies)",
            do="Give omega_n > 0 in rad/s (calckit.physics.spectrum.log_frequencies makes a range)",
        )
    w = np.sort(w)
    if w[-1] * duration / (2 * math.pi) > MOST_CYCLES:
        raise ModelError(
            f"the fastest oscillator makes {w[-1] * duration / (2 * math.pi):,.0f} cycles during the pulse, more "
            f"than {MOST_CYCLES:,}",
            where="pulse_spectrum(natural_frequencies)",
            do="Ask for lower natural frequencies: far above the pulse's own frequencies the spectrum is flat",
        )
    general = _derive(switched, _W, zeta, force, scale)
    singular = _singular_frequencies([c for part in general for c in part.conditions], _W)
    near = np.zeros(w.size, dtype=bool)
    special = []
    for root in singular:
        close = np.abs(w / float(root) - 1) < SINGULAR_TOLERANCE
        if np.any(close):
            special.append((root, close))
            near |= close
    values = {
        kind: {r: np.empty(w.size) for r in ("relative_displacement", "absolute_acceleration")}
        for kind in SPECTRUM_KINDS
    }
    verified = all(part.verified for part in general)
    if np.any(~near):
        _fill(values, ~near, w, general, zeta)
    for root, close in special:
        derived = _derive(switched, root, zeta, force, scale)
        verified = verified and all(part.verified for part in derived)
        _fill(values, close, w, derived, zeta)
    for name in ("relative_displacement", "absolute_acceleration"):
        values["maximax"][name] = np.maximum(values["primary"][name], values["residual"][name])
    for kind in SPECTRUM_KINDS:
        values[kind]["pseudo_velocity"] = w * values[kind]["relative_displacement"]
        values[kind] = {r: values[kind][r] for r in RESPONSES}
    for kind in SPECTRUM_KINDS:
        for r in RESPONSES:
            if not np.all(np.isfinite(values[kind][r])):
                raise CalcError(
                    f"the {kind} spectrum of {r.replace('_', ' ')} is not finite at some natural frequency",
                    where="pulse_spectrum",
                    do="Report this pulse; meanwhile sample it and use record_spectrum",
                )
    method = (
        f"piecewise solution from rest: {_intervals(len(general))} of the pulse solved by undetermined "
        f"coefficients with $\\omega_n$ and the starting state as symbols, the state carried across each switch, "
        f"maxima during the pulse at the interval ends and "
        f"at the roots of the exact derivative (bracketed on {POINTS_PER_CYCLE} points a cycle, refined by "
        f"bisection), residual from the free vibration after the pulse in closed form"
    )
    notes = []
    if special:
        notes.append(
            "At "
            + ", ".join(f"$\\omega_n = {sp.latex(root)}$ rad/s" for root, _ in special)
            + " the general solution does not hold (resonance with the pulse); the response was derived there again."
        )
    if force:
        notes.append("A force pulse: the spectrum is of the force per unit mass, f/m.")
    if not verified:
        notes.append("The derivation's check by substitution did not confirm every interval.")
    return ShockSpectrum(w, zeta, excitation, values, method, duration, tuple(notes))


def _fill(values, mask, w, parts: list[_Piece], zeta: float):
    """Primary and residual values of the frequencies in *mask* from one derivation."""
    ws = w[mask]
    wd = ws * math.sqrt(1 - zeta**2)
    primary_z = np.zeros(ws.size)
    primary_a = np.zeros(ws.size)
    z0, v0 = np.zeros(ws.size), np.zeros(ws.size)  # from rest
    rate = POINTS_PER_CYCLE / (2 * math.pi)
    for part in parts:
        # chunks of frequencies (increasing), each with its own grid: the fastest of the chunk sets it
        lo = 0
        while lo < ws.size:
            hi = lo + 1
            while hi < ws.size and _points(part, ws[hi], rate) * (hi + 1 - lo) <= CHUNK_ELEMENTS:
                hi += 1
            points = _points(part, ws[hi - 1], rate)
            sl = slice(lo, hi)
            state = (ws[sl], z0[sl], v0[sl], points)
            primary_z[sl] = np.maximum(primary_z[sl], _extremes(part, part.z, part.dz, *state))
            primary_a[sl] = np.maximum(primary_a[sl], _extremes(part, part.a, part.da, *state))
            lo = hi
        end = np.full(ws.size, part.length)
        z0, v0 = part.z(end, ws, z0, v0), part.dz(end, ws, z0, v0)
    u = v0 + zeta * ws * z0 + 1j * wd * z0  # modal state at the end of the pulse: z = Im(u e^{s tau})/omega_d
    root = -zeta * ws + 1j * wd
    idx = np.flatnonzero(mask)
    values["primary"]["relative_displacement"][idx] = primary_z
    values["primary"]["absolute_acceleration"][idx] = primary_a
    values["residual"]["relative_displacement"][idx] = residual_peak(u, root) / wd
    values["residual"]["absolute_acceleration"][idx] = residual_peak(root**2 * u, root) / wd


def _points(part: _Piece, omega: float, rate: float) -> int:
    cycles_rate = omega + part.frequencies
    return LEAST_POINTS + int(math.ceil(rate * cycles_rate * part.length))


def _intervals(n: int) -> str:
    """``its one interval``, ``each of its 3 intervals``."""
    return "its one interval" if n == 1 else f"each of its {n} intervals"
