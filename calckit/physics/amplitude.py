"""Amplitude conventions: peak, peak-to-peak and rms, and motion that converts with its frequency.

A harmonic ``X sin(omega t)`` has the amplitude (peak, zero-to-peak) ``X``, the
peak-to-peak value ``2 X`` and the root-mean-square value ``X / sqrt(2)``. A sum of
harmonics at distinct frequencies (no mean) has the rms value ``sqrt(sum X_n^2 / 2)``:
the cross terms average to zero over a common period. Its peak depends on the phases
of the harmonics, so it has no conversion from the rms: a limit on the peak of a sum
of harmonics is refused here, not guessed.

Displacement, velocity and acceleration of one harmonic convert with its angular
frequency: ``v = omega x``, ``a = omega^2 x``, each in the same convention.

Every conversion is a sympy formula in plain symbols (``X``, ``omega``) that a sheet
puts numbers through as a step (``sheet.calc(name, formula, values)``), so that a
checker sees the factor used; the numeric helpers here give the same numbers for the
explorer and for studies.

Examples
--------
>>> convention_formula("peak", "rms")
sqrt(2)*X/2
>>> convention_formula("rms", "peak-to-peak", symbol="V")
2*sqrt(2)*V
>>> harmonic_sum_formula(2)
sqrt(X_1**2/2 + X_2**2/2)
>>> motion_formula("displacement", "acceleration")
X*omega**2
>>> round(in_convention(1.0, "peak", "rms"), 6), harmonic_sum_rms([3.0, 4.0])
(0.707107, 3.5355339059327378)
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Sequence
from typing import Any

from calckit.errors import InputsError

__all__ = [
    "AMPLITUDE_CONVENTIONS",
    "MOTION_KINDS",
    "amplitude_convention",
    "convention_factor",
    "convention_formula",
    "convention_text",
    "harmonic_sum_formula",
    "harmonic_sum_rms",
    "in_convention",
    "motion_formula",
    "sum_in_convention",
]

#: The three ways an amplitude is stated, in the words sheets print.
AMPLITUDE_CONVENTIONS = ("peak", "peak-to-peak", "rms")

#: Other spellings read as one of :data:`AMPLITUDE_CONVENTIONS` (lower case, spaces as typed).
_SPELLINGS = {
    "peak": "peak",
    "zero-to-peak": "peak",
    "0-pk": "peak",
    "pk": "peak",
    "amplitude": "peak",
    "peak-to-peak": "peak-to-peak",
    "pk-pk": "peak-to-peak",
    "p-p": "peak-to-peak",
    "rms": "rms",
    "r.m.s.": "rms",
}

#: A harmonic's value in each convention, as a multiple of its peak (exact, for sympy).
_OF_PEAK = {"peak": (1, 1), "peak-to-peak": (2, 1), "rms": (1, 2)}  # (factor, root): factor / sqrt(root)

#: Motion quantities and the power of omega each carries relative to displacement.
MOTION_KINDS = {"displacement": 0, "velocity": 1, "acceleration": 2}

_EXAMPLE = 'velocity_limit = { value = "4.5 mm/s", convention = "rms" }'


def amplitude_convention(text: Any, *, where: str = "convention") -> str:
    """The convention *text* names, as one of :data:`AMPLITUDE_CONVENTIONS`.

    Read without regard to case; ``pk``, ``0-pk``, ``zero-to-peak``, ``pk-pk``, ``p-p``
    are read as ``peak`` and ``peak-to-peak``.

    Raises
    ------
    InputsError
        *text* is empty or names no convention.

    Examples
    --------
    >>> amplitude_convention("RMS"), amplitude_convention("pk-pk")
    ('rms', 'peak-to-peak')
    >>> amplitude_convention("average", where="velocity_limit_convention")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: velocity_limit_convention: "average" is not an amplitude convention. Give "peak", "peak-to-peak" or "rms", e.g. velocity_limit = { value = "4.5 mm/s", convention = "rms" }.
    """
    key = text.strip().lower() if isinstance(text, str) else None
    if key in _SPELLINGS:
        return _SPELLINGS[key]
    choices = '"peak", "peak-to-peak" or "rms"'
    if key == "":
        raise InputsError(
            "the amplitude convention is not given",
            where=where,
            do=f"Say whether the value is peak, peak-to-peak or rms: give {choices}, e.g. {_EXAMPLE}",
        )
    close = difflib.get_close_matches(key or "", list(_SPELLINGS), n=1) if key else []
    hint = f'Did you mean "{_SPELLINGS[close[0]]}"? ' if close else ""
    shown = f'"{text}"' if isinstance(text, str) else repr(text)
    raise InputsError(
        f"{shown} is not an amplitude convention",
        where=where,
        do=f"{hint}Give {choices}, e.g. {_EXAMPLE}",
    )


def convention_text(convention: str) -> str:
    """The short word a value carries on a sheet: ``"peak"``, ``"pk-pk"`` or ``"rms"``.

    >>> convention_text("peak-to-peak")
    'pk-pk'
    """
    return {"peak": "peak", "peak-to-peak": "pk-pk", "rms": "rms"}[amplitude_convention(convention)]


def convention_factor(source: str, target: str):
    """The exact factor that turns a harmonic's value in *source* into its value in *target* (sympy).

    >>> convention_factor("rms", "peak"), convention_factor("peak", "peak-to-peak")
    (sqrt(2), 2)
    """
    import sympy as sp  # only when a formula is shown or a factor asked: the module stays light to import

    f_s, r_s = _OF_PEAK[amplitude_convention(source, where="source convention")]
    f_t, r_t = _OF_PEAK[amplitude_convention(target, where="target convention")]
    return sp.nsimplify(sp.Rational(f_t, f_s) * sp.sqrt(sp.Rational(r_s, r_t)))


def convention_formula(source: str, target: str, *, symbol: str = "X"):
    """The conversion of one harmonic's value *symbol* from *source* to *target* as a sympy formula.

    >>> convention_formula("peak-to-peak", "peak")
    X/2
    """
    import sympy as sp

    return convention_factor(source, target) * sp.Symbol(symbol)


def in_convention(value: Any, source: str, target: str) -> Any:
    """*value* (a number or quantity) of one harmonic, stated in *source*, stated in *target*.

    >>> in_convention(2.0, "peak-to-peak", "rms")
    0.7071067811865476
    """
    factor = float(convention_factor(source, target))
    return value * factor


def harmonic_sum_formula(count: int, *, symbol: str = "X"):
    """``sqrt(sum X_n^2 / 2)``: the rms value of *count* harmonics at distinct frequencies, from their peaks.

    The symbols are ``X_1 ... X_count``, the peaks (amplitudes) of the harmonics.

    Raises
    ------
    InputsError
        *count* is not a whole number of at least 1.
    """
    import sympy as sp

    if isinstance(count, bool) or not isinstance(count, int) or count < 1:
        raise InputsError(
            f"{count!r} is not a number of harmonics",
            where="harmonic sum",
            do="Give at least one harmonic",
        )
    peaks = sp.symbols(f"{symbol}_1:{count + 1}")
    terms = [p**2 / 2 for p in peaks]  # kept as written: sympy would pull sqrt(2) out of sqrt(X_1**2/2)
    return sp.sqrt(sp.Add(*terms, evaluate=False) if count > 1 else terms[0], evaluate=False)


def harmonic_sum_rms(amplitudes: Sequence[float], convention: str = "peak") -> float:
    """The rms value of a sum of harmonics at distinct frequencies, each given in *convention*.

    Raises
    ------
    InputsError
        No amplitudes, or one that is negative or not finite.

    Examples
    --------
    >>> harmonic_sum_rms([2.0, 2.0], "peak-to-peak")
    1.0
    """
    values = [float(a) for a in amplitudes]
    if not values or any(not math.isfinite(a) or a < 0 for a in values):
        raise InputsError(
            f"the amplitudes {values!r} are not a list of finite values of at least zero",
            where="harmonic sum",
            do="Give each harmonic's amplitude, zero or more",
        )
    peaks = [in_convention(a, convention, "peak") for a in values]
    return math.sqrt(sum(p * p / 2 for p in peaks))


def sum_in_convention(convention: str, *, where: str = "harmonic sum") -> str:
    """The convention a sum of harmonics can be compared in: rms only (its peak depends on the phases).

    Raises
    ------
    InputsError
        *convention* is peak or peak-to-peak.

    Examples
    --------
    >>> sum_in_convention("peak", where="criterion")
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: criterion: the peak of a sum of harmonics depends on their phases, so it cannot be found from their amplitudes. Compare in rms: give the limit as rms, e.g. velocity_limit = { value = "4.5 mm/s", convention = "rms" }.
    """
    found = amplitude_convention(convention, where=where)
    if found != "rms":
        raise InputsError(
            f"the {found} of a sum of harmonics depends on their phases, so it cannot be found from their amplitudes",
            where=where,
            do=f"Compare in rms: give the limit as rms, e.g. {_EXAMPLE}",
        )
    return found


def motion_formula(source: str, target: str, *, symbol: str = "X", frequency: str = "omega"):
    """One harmonic's displacement, velocity or acceleration *symbol* as *target*: ``v = omega x``, ``a = omega^2 x``.

    The value keeps its convention (peak, peak-to-peak or rms): each is proportional to the peak.

    Raises
    ------
    InputsError
        A kind that is not displacement, velocity or acceleration.

    Examples
    --------
    >>> motion_formula("acceleration", "velocity", symbol="A")
    A/omega
    """
    import sympy as sp

    for kind in (source, target):
        if kind not in MOTION_KINDS:
            raise InputsError(
                f"{kind!r} is not a kind of motion",
                where="motion conversion",
                do=f"Give one of {', '.join(MOTION_KINDS)}",
            )
    power = MOTION_KINDS[target] - MOTION_KINDS[source]
    return sp.Symbol(symbol) * sp.Symbol(frequency) ** power
