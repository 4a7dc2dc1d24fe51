"""Every mode against every excitation order over a speed range: least separations and crossings.

Order ``k`` of a machine running at ``Omega`` excites at ``k Omega``; over a speed range
``[Omega_min, Omega_max]`` it sweeps ``[k Omega_min, k Omega_max]``. It meets the natural
frequency ``omega_n`` of a mode at the crossing speed ``Omega_c = omega_n / k``: if that lies
in the range the band is crossed and the least separation over the range is 0. Otherwise the
separation (:func:`calckit.physics.criteria.speed_separation` of ``k Omega`` from
``omega_n``, relative to the natural frequency, ``|k Omega / omega_n - 1|``, or to the
operating frequency, ``|omega_n / (k Omega) - 1|``) falls as ``k Omega`` nears ``omega_n``
from either side, so its least value over the range is at the end of the range nearer the
crossing: at ``Omega_max`` when the whole sweep lies below ``omega_n``, at ``Omega_min`` when
above. That is the closed form :func:`range_separation` uses; no search.

An interference diagram (frequency against speed, each order a line ``k Omega`` through the
origin, the natural frequencies as horizontal lines) shows the same: the crossings are
where the lines meet (:attr:`RangeSeparation.crossings`); it is drawn by
:func:`calckit.render.interference_plot.interference_figure`.

Examples
--------
>>> from calckit.physics.speed_range import SpeedRange
>>> found = range_separation(SpeedRange("600 rpm", "1480 rpm", orders=(1, 2)), [30.0, 250.0])
>>> worst = found.worst
>>> worst.mode, worst.label, worst.crossed, round(worst.crossing_speed, 3)
(2, '2x', True, 125.0)
>>> [(p.mode, p.label, round(p.least, 4), p.at) for p in found.pairs]
[(1, '1x', 1.0944, 'minimum'), (1, '2x', 3.1888, 'minimum'), (2, '1x', 0.3801, 'maximum'), (2, '2x', 0.0, 'crossing')]
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from calckit.core.units import fmt
from calckit.errors import InputsError
from calckit.physics.criteria import (
    DEFAULT_SEPARATION_REFERENCE,
    SEPARATION_BAND,
    SEPARATION_REFERENCES,
    separation_basis,
    speed_separation,
)
from calckit.physics.speed_range import SpeedRange

__all__ = [
    "PairSeparation",
    "RangeSeparation",
    "natural_frequencies_of",
    "order_separation_formula",
    "range_basis",
    "range_separation",
    "separation_band_edges",
]


@dataclass(frozen=True)
class PairSeparation:
    """One mode against one order over the speed range.

    ``least`` is the least separation over the range (a fraction; 0 when crossed), found at
    ``speed`` (rad/s): the crossing speed, or the end of the range (``at`` is ``"crossing"``,
    ``"minimum"``, ``"maximum"`` or ``"fixed speed"``). ``waived`` gives the reason when the pair
    is shown but not judged (an absorber's own modes; a harmonic too small to count).
    """

    mode: int  # from 1
    natural_frequency: float  # rad/s
    order: int | float
    label: str
    least: float
    speed: float  # rad/s, where the separation is least
    at: str
    crossing_speed: float  # omega_n / k, rad/s
    crossed: bool
    band: float
    waived: str = ""

    @property
    def excitation(self) -> float:
        """The excitation frequency ``k Omega`` where the separation is least, rad/s."""
        return self.order * self.speed

    @property
    def met(self) -> bool:
        """Whether the pair keeps the band (a waived pair is not judged, and counts as met)."""
        return bool(self.waived) or self.least >= self.band

    @property
    def verdict(self) -> str:
        return "waived" if self.waived else ("met" if self.met else "not met")


@dataclass(frozen=True)
class RangeSeparation:
    """Every mode x order of a speed range: the pairs, the worst one judged, the crossings.

    Attributes
    ----------
    speeds : SpeedRange
    natural_frequencies : tuple of float
        The modes' natural frequencies, rad/s, ascending as given.
    band : float
        Half-width of the band to keep out of, a fraction.
    relative_to : str
        What the separation is measured relative to (:data:`~calckit.physics.criteria.SEPARATION_REFERENCES`).
    pairs : tuple of PairSeparation
        Mode by mode, order by order.
    """

    speeds: SpeedRange
    natural_frequencies: tuple
    band: float
    relative_to: str
    pairs: tuple

    @property
    def judged(self) -> tuple:
        """The pairs not waived."""
        return tuple(p for p in self.pairs if not p.waived)

    @property
    def worst(self) -> PairSeparation | None:
        """The judged pair of the least separation (the lower mode, then the lower order, on a tie); None
        when every pair is waived."""
        judged = self.judged
        return min(judged, key=lambda p: (p.least, p.mode, p.order)) if judged else None

    @property
    def met(self) -> bool:
        return all(p.met for p in self.pairs)

    @property
    def crossings(self) -> tuple:
        """Every pair's crossing speed ``omega_n / k``, by speed: ``(speed rad/s, pair)``, in the range or not."""
        return tuple(sorted(((p.crossing_speed, p) for p in self.pairs), key=lambda c: (c[0], c[1].mode)))

    @property
    def crossings_in_range(self) -> tuple:
        """The pairs whose crossing speed lies in the speed range (their band is crossed)."""
        return tuple(p for _, p in self.crossings if p.crossed)

    @property
    def definition(self) -> str:
        """The margin definition the check prints (its basis), one text for every range and speed."""
        return range_basis(self.relative_to, self.band, fixed=self.speeds.fixed, single=self.single)

    @property
    def single(self) -> bool:
        """One speed, one mode, once per revolution: the plain separation of a running speed from a natural frequency."""
        return self.speeds.fixed and len(self.natural_frequencies) == 1 and self.speeds.orders == (1,)


def range_basis(relative_to: str, band: float, *, fixed: bool, single: bool) -> str:
    """The basis of a speed-range check: :func:`separation_basis`, and over what it is least.

    One speed against one natural frequency once per revolution (*single*) reads as
    :func:`~calckit.physics.criteria.separation_basis` alone, so a fixed-speed machine's check
    reads as it always has.
    """
    if single:
        return separation_basis(relative_to, band)
    formula = (
        r"$|k \Omega / \omega_n - 1|$"
        if relative_to == SEPARATION_REFERENCES[0]
        else r"$|\omega_n / (k \Omega) - 1|$"
    )
    over = "at the running speed" if fixed else "over the whole speed range, 0 where an order crosses a mode"
    return (
        "common practice, no source: keep every excitation frequency $k \\Omega$ (order $k$ at speed $\\Omega$) "
        f"outside about $\\pm {band * 100:.0f}$ % of every natural frequency; separation measured relative to the "
        f"{relative_to}, {formula}; the value is the least {over}, of every mode against every order"
    )


def order_separation_formula(relative_to: str = DEFAULT_SEPARATION_REFERENCE, order: Any = None):
    """The separation of order ``k`` as a sympy formula in ``k``, ``Omega`` and ``omega_n`` (no ``k`` for order 1).

    Examples
    --------
    >>> order_separation_formula(order=2)
    Abs(Omega*k/omega_n - 1)
    >>> order_separation_formula("operating speed", order=1)
    Abs(1 - omega_n/Omega)
    """
    import sympy as sp  # only when a sheet shows the formula

    if relative_to not in SEPARATION_REFERENCES:
        speed_separation(1.0, 1.0, relative_to=relative_to)  # refuses with the criteria's message
    k, w, wn = sp.symbols("k Omega omega_n")
    excitation = w if order == 1 else k * w
    return (
        sp.Abs(excitation / wn - 1)
        if relative_to == SEPARATION_REFERENCES[0]
        else sp.Abs(wn / excitation - 1)
    )


def separation_band_edges(natural: float, band: float, relative_to: str = DEFAULT_SEPARATION_REFERENCE):
    """The excitation frequencies between which the separation from *natural* is below *band*.

    Relative to the natural frequency ``omega_n (1 -/+ band)``; relative to the operating
    frequency ``omega_n / (1 + band)`` to ``omega_n / (1 - band)`` (to infinity for a band of 1 or more).

    Examples
    --------
    >>> separation_band_edges(100.0, 0.2)
    (80.0, 120.0)
    >>> [round(e, 3) for e in separation_band_edges(100.0, 0.2, "operating speed")]
    [83.333, 125.0]
    """
    if relative_to == SEPARATION_REFERENCES[0]:
        return natural * (1 - band), natural * (1 + band)
    speed_separation(1.0, 1.0, relative_to=relative_to)
    return natural / (1 + band), (natural / (1 - band) if band < 1 else math.inf)


def natural_frequencies_of(model: Any, where: str = "natural frequencies") -> tuple[float, ...]:
    """The natural frequencies in rad/s of a model or as given: an ``Oscillator`` (its one), a ``MultiMass``
    (all of them), a frequency, or a sequence of frequencies (numbers in rad/s, quantities, text).

    Raises
    ------
    InputsError
        None given, or one that is not a positive finite frequency (a rigid-body mode at 0 rad/s has no
        separation: leave it out).
    """
    from calckit.core.units import angular_frequency

    if hasattr(model, "natural_frequencies"):
        given = list(model.natural_frequencies)
    elif hasattr(model, "natural_frequency"):
        given = [model.natural_frequency]
    elif isinstance(model, str) or hasattr(model, "units") or not isinstance(model, Sequence | Mapping):
        given = [model]
    else:
        given = list(model.values() if isinstance(model, Mapping) else model)
    if not given:
        raise InputsError(
            "no natural frequency is given", where=where, do="Give at least one natural frequency"
        )
    found = []
    for i, w in enumerate(given, start=1):
        if isinstance(w, bool):
            raise InputsError(f"mode {i} is a truth value", where=where, do="Give a frequency")
        if isinstance(w, str) or hasattr(w, "units"):
            value = angular_frequency(w, where)  # refuses a unit that is not a frequency, in its own words
        else:
            try:
                value = float(w)
            except (TypeError, ValueError):
                raise InputsError(
                    f"the natural frequency of mode {i}, {w!r}, is not a number",
                    where=where,
                    do="Give numbers in rad/s or frequencies with a unit",
                ) from None
        if not math.isfinite(value) or value <= 0:
            shown = fmt(w) if hasattr(w, "units") else repr(w)
            raise InputsError(
                f"the natural frequency of mode {i}, {shown}, is not above zero",
                where=where,
                do="Give the natural frequencies above zero (a rigid-body mode at 0 has no separation: leave it out)",
            )
        found.append(value)
    return tuple(found)


def _pair(mode, natural, order, label, speeds, band, relative_to, waived) -> PairSeparation:
    crossing = natural / order
    crossed = speeds.low <= crossing <= speeds.high
    if crossed:
        speed, at, least = crossing, "crossing", 0.0
    else:
        speed, at = (speeds.high, "maximum") if crossing > speeds.high else (speeds.low, "minimum")
        at = "fixed speed" if speeds.fixed else at
        least = speed_separation(order * speed, natural, relative_to=relative_to)
    return PairSeparation(mode, natural, order, label, least, speed, at, crossing, crossed, band, waived)


def range_separation(
    speeds: SpeedRange,
    natural_frequencies: Any,
    *,
    band: float = SEPARATION_BAND,
    relative_to: str = DEFAULT_SEPARATION_REFERENCE,
    waived: Mapping[tuple[int, Any], str] | None = None,
) -> RangeSeparation:
    """Every mode against every order of *speeds*: least separation over the range, verdict, crossings.

    Parameters
    ----------
    speeds : SpeedRange
    natural_frequencies
        See :func:`natural_frequencies_of`: a model (``Oscillator``, ``MultiMass``), a frequency or several.
    band : float
        The band to keep out of, a fraction (0.2 for +/- 20 %).
    relative_to : str
        ``"natural frequency"`` (default) or ``"operating speed"``.
    waived : mapping, optional
        ``{(mode, order): reason}``: pairs shown but not judged.

    Raises
    ------
    InputsError
        Not a :class:`SpeedRange`, a band not between 0 and 1, an unknown ``relative_to``, a natural
        frequency :func:`natural_frequencies_of` refuses, or a waived pair that is not one of the pairs.
    """
    if not isinstance(speeds, SpeedRange):
        raise InputsError(
            f"expected a SpeedRange, got {type(speeds).__name__}",
            where="speeds",
            do='Describe the machine\'s speeds as calckit.SpeedRange("900 rpm", "1480 rpm", orders=(1, 2))',
        )
    if isinstance(band, bool) or not isinstance(band, int | float) or not 0 < band < 1:
        raise InputsError(
            f"a separation band of {band!r} is not a fraction between 0 and 1",
            where="band",
            do="Give the band's half-width as a fraction, e.g. 0.2 for +/- 20 %",
        )
    speed_separation(1.0, 1.0, relative_to=relative_to)  # refuses an unknown reference
    naturals = natural_frequencies_of(natural_frequencies)
    waived = dict(waived or {})
    known = {(i, k) for i in range(1, len(naturals) + 1) for k in speeds.orders}
    stray = [pair for pair in waived if pair not in known]
    if stray:
        raise InputsError(
            f"the waived pair {stray[0]!r} is not a (mode, order) of the check",
            where="waived",
            do=f"Give pairs (mode from 1 to {len(naturals)}, one of the orders {', '.join(map(str, speeds.orders))})",
        )
    pairs = tuple(
        _pair(i, wn, k, label, speeds, float(band), relative_to, str(waived.get((i, k), "")))
        for i, wn in enumerate(naturals, start=1)
        for k, label in zip(speeds.orders, speeds.labels, strict=True)
    )
    return RangeSeparation(speeds, naturals, float(band), relative_to, pairs)
