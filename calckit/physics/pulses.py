"""Standard load pulses as sympy expressions in t.

Each pulse is a ``Piecewise`` in the time ``t``: zero before its start, one formula while
it lasts, zero (or, for the ramp-and-hold, held) after. The engine solves a model under
any of them exactly, interval by interval (:mod:`calckit.engine.piecewise`); the shock
spectra of :mod:`calckit.physics.pulse_spectrum` take them as the closed-form load.

Every function takes the amplitude (peak value, in whatever unit the load has: N for a
force, m/s^2 for a base acceleration, SI numbers or sympy symbols), the duration and an
optional start time, and the time symbol as ``t=`` (default ``Symbol("t", real=True)``).
Durations must be positive; floats are read as the decimals they show.

========================== ==========================================================
pulse                      value for ``start <= t < start + d`` (``s = t - start``)
========================== ==========================================================
rectangular                ``A``
half_sine                  ``A sin(pi s / d)``
versed_sine (haversine)    ``A (1 - cos(2 pi s / d)) / 2``
triangle (symmetric)       ``2 A s / d`` up to ``d/2``, then ``2 A (1 - s/d)``
terminal_peak_sawtooth     ``A s / d`` (drops to 0 at the end)
initial_peak_sawtooth      ``A (1 - s / d)`` (jumps to A at the start)
trapezoid                  ``A s / r`` rising, ``A`` dwelling, ``A (1 - (s - r - w) / f)`` falling
ramp_and_hold              ``A s / r`` while rising, ``A`` held after ``s = r`` (a start-up)
========================== ==========================================================

``repeated(pulse, period)`` repeats a pulse that starts at 0 and ends within the period.

References
----------
C. M. Harris and A. G. Piersol (eds.), *Harris' Shock and Vibration Handbook*, 5th ed.,
McGraw-Hill, 2002, ch. 8 (the standard pulse shapes), from memory.
"""

from __future__ import annotations

import sympy as sp

from calckit.core.exact import exact
from calckit.errors import ModelError

__all__ = [
    "FUNCTIONS",
    "half_sine",
    "initial_peak_sawtooth",
    "one_period",
    "ramp_and_hold",
    "rectangular",
    "repeated",
    "terminal_peak_sawtooth",
    "trapezoid",
    "triangle",
    "versed_sine",
]


def _time(t):
    return sp.Symbol("t", real=True) if t is None else t


def _positive(value, name: str):
    value = exact(value, where=name)
    if value.is_positive is False or value.is_zero:
        raise ModelError(f"{name} = {value} is not positive", where=name, do=f"Give {name} > 0")
    return value


def _start(value):
    value = exact(value, where="start")
    if value.is_negative:
        raise ModelError(f"start = {value} is before t = 0", where="start", do="Give a start time of 0 or later")
    return value


def _pulse(shape, duration, start, t):
    """0 before start, shape(s) for start <= t < start + duration, 0 after."""
    s = t - start
    return sp.Piecewise((0, t < start), (shape(s), t < start + duration), (0, True))


def rectangular(amplitude, duration, start=0, *, t=None):
    """``A`` for ``start <= t < start + d``, 0 otherwise.

    >>> t = sp.Symbol("t", real=True)
    >>> rectangular(2, 1, t=t)
    Piecewise((0, t < 0), (2, t < 1), (0, True))
    """
    t, a, d, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(duration, "duration"), _start(start)
    return _pulse(lambda s: a, d, t0, t)


def half_sine(amplitude, duration, start=0, *, t=None):
    """``A sin(pi (t - start) / d)`` during the pulse: one half wave of a sine of period 2d."""
    t, a, d, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(duration, "duration"), _start(start)
    return _pulse(lambda s: a * sp.sin(sp.pi * s / d), d, t0, t)


def versed_sine(amplitude, duration, start=0, *, t=None):
    """Versed sine (haversine): ``A (1 - cos(2 pi (t - start) / d)) / 2``, smooth at both ends."""
    t, a, d, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(duration, "duration"), _start(start)
    return _pulse(lambda s: a * (1 - sp.cos(2 * sp.pi * s / d)) / 2, d, t0, t)


def triangle(amplitude, duration, start=0, *, t=None):
    """Symmetric triangle: rises linearly to ``A`` at the middle, falls linearly to 0 at the end."""
    t, a, d, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(duration, "duration"), _start(start)
    s = t - t0
    return sp.Piecewise(
        (0, t < t0), (2 * a * s / d, t < t0 + d / 2), (2 * a * (1 - s / d), t < t0 + d), (0, True)
    )


def terminal_peak_sawtooth(amplitude, duration, start=0, *, t=None):
    """Rises linearly from 0 to ``A`` over the duration, then drops to 0 at once."""
    t, a, d, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(duration, "duration"), _start(start)
    return _pulse(lambda s: a * s / d, d, t0, t)


def initial_peak_sawtooth(amplitude, duration, start=0, *, t=None):
    """Jumps to ``A`` at the start, then falls linearly to 0 over the duration."""
    t, a, d, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(duration, "duration"), _start(start)
    return _pulse(lambda s: a * (1 - s / d), d, t0, t)


def trapezoid(amplitude, rise, dwell, fall, start=0, *, t=None):
    """Rises linearly over ``rise``, holds ``A`` for ``dwell``, falls linearly over ``fall``.

    The duration is ``rise + dwell + fall``; ``dwell`` may be 0 (an unsymmetric triangle).
    """
    t, a, t0 = _time(t), exact(amplitude, where="amplitude"), _start(start)
    r, f = _positive(rise, "rise"), _positive(fall, "fall")
    w = exact(dwell, where="dwell")
    if w.is_negative:
        raise ModelError(f"dwell = {w} is negative", where="dwell", do="Give a dwell of 0 or longer")
    s = t - t0
    pieces = [(0, t < t0), (a * s / r, t < t0 + r)]
    if not w.is_zero:
        pieces.append((a, t < t0 + r + w))
    pieces += [(a * (1 - (s - r - w) / f), t < t0 + r + w + f), (0, True)]
    return sp.Piecewise(*pieces)


def ramp_and_hold(amplitude, rise, start=0, *, t=None):
    """A start-up: rises linearly from 0 to ``A`` over ``rise``, then holds ``A`` for good."""
    t, a, r, t0 = _time(t), exact(amplitude, where="amplitude"), _positive(rise, "rise"), _start(start)
    return sp.Piecewise((0, t < t0), (a * (t - t0) / r, t < t0 + r), (a, True))


def repeated(pulse, period, count=None, *, t=None):
    """A pulse that starts at 0 repeated every *period*.

    With *count* the sum of that many copies (a load with finitely many switches, solved
    exactly from rest); without, the pulse of ``t mod period``, written
    ``pulse(t - period floor(t / period))``, whose exact periodic steady state
    :func:`calckit.engine.periodic.periodic_steady_state` finds (no Fourier truncation).

    Raises ModelError when the pulse lasts longer than the period (copies would overlap).
    """
    from calckit.engine import split_switching

    t = _time(t)
    period = _positive(period, "period")
    pulse = sp.sympify(pulse)
    cut = split_switching(pulse, t)
    if cut.pieces[-1] != 0 and not (isinstance(cut.pieces[-1], sp.Expr) and cut.pieces[-1].is_zero):
        raise ModelError(
            "the pulse does not end: it is not 0 after its last switch",
            where="repeated",
            do="Repeat a pulse that returns to 0, such as half_sine or trapezoid",
        )
    end = cut.times[-1] if cut.times else sp.S.Zero
    if sp.simplify(period - end).is_negative:
        raise ModelError(
            f"the pulse lasts until t = {end}, longer than the period {period}: the copies would overlap",
            where="repeated",
            do="Give a period at least as long as the pulse, or add the overlapping copies as separate pulses",
        )
    if count is None:
        return pulse.xreplace({t: t - period * sp.floor(t / period)})
    if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= 100:
        raise ModelError(f"count = {count!r}", where="repeated", do="Give a whole number of copies from 1 to 100")
    return sp.Add(*(pulse.xreplace({t: t - j * period}) for j in range(count)))


def one_period(load, period, *, t=None):
    """The pulse of one period of a load made by ``repeated(pulse, period)`` (the load itself otherwise)."""
    t = _time(t)
    period = exact(period, where="period")
    return sp.sympify(load).xreplace({sp.floor(t / period): 0})


#: the pulses by name, for the expression reader (``parse_expression(..., functions=FUNCTIONS)``)
FUNCTIONS = {
    "rectangular": rectangular,
    "half_sine": half_sine,
    "versed_sine": versed_sine,
    "haversine": versed_sine,
    "triangle": triangle,
    "terminal_peak_sawtooth": terminal_peak_sawtooth,
    "initial_peak_sawtooth": initial_peak_sawtooth,
    "trapezoid": trapezoid,
    "ramp_and_hold": ramp_and_hold,
}
