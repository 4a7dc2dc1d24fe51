"""Acceptance criteria of the trade: their limits and the bases they are judged on, one constant each.

The templates, :meth:`calckit.Sheet.separation_check`'s callers and the what-if explorer
take these constants from here, so that a check reads the same wherever it is made.

The separation of an operating speed from a natural frequency is measured one of two ways,
and specifications differ: relative to the natural frequency, ``|Omega / omega_n - 1|``
(the default here, kept), or relative to the operating speed, ``|omega_n / Omega - 1|``.
The choice is a named argument (``relative_to``) and is printed in the check's basis
(:func:`separation_basis`); a band of 20 % means a little more below the speed when
measured against the speed.

Examples
--------
>>> round(speed_separation(1.15, 1.0) * 100, 9)
15.0
>>> round(speed_separation(1.15, 1.0, relative_to="operating speed") * 100, 4)
13.0435
>>> SEPARATION_BAND, LEAST_ISOLATION_RATIO
(0.2, 3.0)
"""

from __future__ import annotations

from calckit.errors import InputsError

__all__ = [
    "DEFAULT_SEPARATION_REFERENCE",
    "ISOLATION_RATIO_BASIS",
    "LEAST_ISOLATION_RATIO",
    "SEPARATION_BAND",
    "SEPARATION_BASIS",
    "SEPARATION_REFERENCES",
    "separation_basis",
    "separation_formula",
    "speed_separation",
]

#: Half-width of the band around a natural frequency to keep an operating frequency out of,
#: as a fraction (common practice, no source).
SEPARATION_BAND = 0.20

#: What a separation can be measured relative to; the first is the default.
SEPARATION_REFERENCES = ("natural frequency", "operating speed")

#: The default: the separation relative to the natural frequency, ``|Omega / omega_n - 1|``.
DEFAULT_SEPARATION_REFERENCE = SEPARATION_REFERENCES[0]


def _reference(relative_to: str) -> str:
    if relative_to not in SEPARATION_REFERENCES:
        raise InputsError(
            f"a separation relative to {relative_to!r} is not defined",
            where="relative_to",
            do=f"Give one of {', '.join(repr(r) for r in SEPARATION_REFERENCES)}",
        )
    return relative_to


def separation_basis(relative_to: str = DEFAULT_SEPARATION_REFERENCE, band: float = SEPARATION_BAND) -> str:
    """The basis a separation check prints: the band and what the separation is measured against.

    Examples
    --------
    >>> print(separation_basis("operating speed"))  # doctest: +NORMALIZE_WHITESPACE
    common practice, no source: keep the operating frequency outside about $\\pm 20$ % of a
    natural frequency; separation measured relative to the operating speed, $|\\omega_n / \\Omega - 1|$
    """
    formula = (
        r"$|\Omega / \omega_n - 1|$"
        if _reference(relative_to) == SEPARATION_REFERENCES[0]
        else r"$|\omega_n / \Omega - 1|$"
    )
    return (
        "common practice, no source: keep the operating frequency outside about "
        f"$\\pm {band * 100:.0f}$ % of a natural frequency; separation measured relative to the {relative_to}, {formula}"
    )


#: Basis of the speed-separation check (:meth:`calckit.Sheet.separation_check` gives it in these words).
SEPARATION_BASIS = separation_basis()

#: Least frequency ratio ``r = Omega / omega_n`` for isolation (common practice, no source).
LEAST_ISOLATION_RATIO = 3.0

#: Basis of the frequency-ratio check for isolation.
ISOLATION_RATIO_BASIS = r"common practice, no source: isolation needs $r > \sqrt{2}$, usually $r \ge 3$"


def speed_separation(
    operating: float, natural: float, *, relative_to: str = DEFAULT_SEPARATION_REFERENCE
) -> float:
    """Separation of an operating frequency from a natural frequency, as a fraction.

    ``|f_op / f_n - 1|`` relative to the natural frequency (the default), ``|f_n / f_op - 1|``
    relative to the operating speed. Both frequencies in the same unit; the check compares the
    result with :data:`SEPARATION_BAND`.

    Examples
    --------
    >>> speed_separation(80.0, 100.0)
    0.19999999999999996
    >>> speed_separation(80.0, 100.0, relative_to="operating speed")
    0.25
    """
    if _reference(relative_to) == SEPARATION_REFERENCES[0]:
        return abs(operating / natural - 1)
    return abs(natural / operating - 1)


def separation_formula(relative_to: str = DEFAULT_SEPARATION_REFERENCE):
    """:func:`speed_separation` as a sympy formula in the plain symbols ``Omega`` and ``omega_n``, for a sheet step.

    Examples
    --------
    >>> separation_formula()
    Abs(Omega/omega_n - 1)
    """
    import sympy as sp  # only when a sheet shows the formula: the criteria stay light to import

    w, wn = sp.symbols("Omega omega_n")
    return sp.Abs(w / wn - 1) if _reference(relative_to) == SEPARATION_REFERENCES[0] else sp.Abs(wn / w - 1)
