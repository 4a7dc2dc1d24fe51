"""Equipment on mounts judged band by band against a criterion curve for floors.

The floor's motion is given one of two ways:

- as one-third-octave band rms velocities, as a floor survey reports them
  (``"8 Hz: 30 um/s; 10 Hz: 45 um/s"``, :func:`read_spectrum`): each band passes through the
  mounts with the base-motion transmissibility at its nominal midband frequency;
- as a sum of harmonics (``"740 rpm: 2.2 mm/s; 1480 rpm: 0.6 mm/s"``, in a stated convention):
  each harmonic passes through the mounts with the transmissibility at its own frequency,
  and the harmonics that fall in one band add as ``V_rms = sqrt(sum V_n^2 / 2)`` (peaks
  ``V_n``, distinct frequencies).

:func:`band_response` gives one :class:`BandRow` per band the floor moves in, with the
criterion curve's limit there (None outside the curve's range) and the margin; the sheet
shows them as a table and checks the worst band (``calckit.sheet.amplitudes``).

Examples
--------
>>> from calckit.physics.criteria_tables import criterion_curve
>>> rows = band_response(criterion_curve("VC-A"), 5.0, 0.08, harmonics=[(12.33, 2.2e-3)])
>>> rows[0].centre_hz, round(rows[0].equipment_rms * 1e6, 2), round(rows[0].limit * 1e6, 2)
(12.5, 328.14, 50.0)
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from calckit.errors import InputsError
from calckit.physics.amplitude import in_convention
from calckit.physics.criteria_tables import CriterionCurve, third_octave_band

__all__ = ["BandRow", "Spectrum", "band_response", "read_spectrum", "worst_band"]

#: Longest spectrum text read, and most entries in it (a survey has some tens of bands).
_MAX_TEXT, _MAX_ENTRIES = 20_000, 200


@dataclass(frozen=True)
class BandRow:
    """One one-third-octave band: the floor's and the equipment's rms velocity (m/s), the limit, the margin."""

    centre_hz: float
    floor_rms: float
    equipment_rms: float
    limit: float | None  # m/s rms; None where the curve does not reach
    harmonics: tuple[
        tuple[float, float, float], ...
    ] = ()  # (Hz, floor peak m/s, transmissibility) for harmonics

    @property
    def ratio(self) -> float:
        """Equipment over floor rms velocity: the transmissibility for a band, or the harmonics' combined ratio."""
        return self.equipment_rms / self.floor_rms if self.floor_rms else 0.0

    @property
    def margin_percent(self) -> float | None:
        """``(limit - value) / limit`` in percent; None outside the curve."""
        return None if self.limit is None else (self.limit - self.equipment_rms) / self.limit * 100

    @property
    def utilisation(self) -> float | None:
        return None if self.limit is None else self.equipment_rms / self.limit


class Spectrum(tuple):
    """Pairs (Hz, SI value) read from text, which it keeps: ``str()`` gives the text as written, for a sheet's inputs."""

    text: str

    def __new__(cls, pairs, text: str):
        made = super().__new__(cls, pairs)
        made.text = text
        return made

    def __str__(self) -> str:
        return self.text

    def __repr__(self) -> str:
        return f"Spectrum({tuple(self)!r}, {self.text!r})"


def read_spectrum(text: str, *, where: str, expect: str = "velocity") -> Spectrum:
    """``"8 Hz: 30 um/s; 10 Hz: 45 um/s"`` as ((Hz, SI value), ...), frequencies in Hz, rpm or rad/s.

    The result is a tuple of pairs that keeps the text (a :class:`Spectrum`), so that a sheet
    shows the input as written (``sheet.input(name, spectrum, ...)``).

    Raises
    ------
    InputsError
        Empty or too long text, an entry without ``frequency: value``, a frequency given twice
        or not above zero, a negative value.
    UnitsError
        A frequency or value of the wrong kind (a velocity where a frequency belongs ...).

    Examples
    --------
    >>> tuple(read_spectrum("740 rpm: 2.2 mm/s; 24.67 Hz: 0.6 mm/s", where="floor_harmonics"))
    ((12.333333333333334, 0.0022), (24.67, 0.0006))
    """
    from calckit.core.units import cyclic_frequency, quantity, to_si

    example = f'{where} = "8 Hz: 30 um/s; 10 Hz: 45 um/s"'
    if not isinstance(text, str) or not text.strip():
        raise InputsError("no frequencies and values are given", where=where, do=f"Write them like {example}")
    if len(text) > _MAX_TEXT or text.count(";") >= _MAX_ENTRIES:
        raise InputsError(
            f"the list is longer than {_MAX_ENTRIES} entries or {_MAX_TEXT} characters",
            where=where,
            do="Give the bands or harmonics that matter, at most 200",
        )
    out: list[tuple[float, float]] = []
    for number, part in enumerate((p for p in text.split(";") if p.strip()), start=1):
        if part.count(":") != 1:
            raise InputsError(
                f'entry {number}, "{part.strip()}", is not "frequency: value"',
                where=where,
                do=f"Write each entry as frequency: value, separated by semicolons, like {example}",
            )
        f_text, v_text = (s.strip() for s in part.split(":"))
        place = f"{where}, entry {number}"
        f = cyclic_frequency(quantity(f_text, place, expect="frequency"), place)
        v = float(to_si(quantity(v_text, place, expect=expect), place).magnitude)
        if not f > 0 or v < 0:
            raise InputsError(
                f"entry {number} has {'a frequency of zero' if not f > 0 else 'a negative value'}",
                where=where,
                do="Give frequencies above zero and values of at least zero",
            )
        if any(math.isclose(f, g) for g, _ in out):
            raise InputsError(f"{f_text} is given twice", where=where, do="Give each frequency once")
        out.append((f, v))
    return Spectrum(out, text.strip())


def band_response(
    curve: CriterionCurve,
    natural_hz: float,
    damping_ratio: float,
    *,
    bands: Sequence[tuple[float, float]] | None = None,
    harmonics: Sequence[tuple[float, float]] | None = None,
    convention: str = "peak",
) -> tuple[BandRow, ...]:
    """The equipment's rms velocity band by band, from floor bands (Hz, m/s rms) or harmonics (Hz, m/s).

    Exactly one of *bands* and *harmonics*; the harmonics' velocities are in *convention*.
    A band of *bands* is placed by its frequency (``third_octave_band``), so a survey's
    nominal or exact midband frequencies both serve.

    Raises
    ------
    InputsError
        Both or neither of bands and harmonics; two entries of *bands* in one band.
    """
    from calckit.physics.harmonic import transmissibility

    if (bands is None) == (harmonics is None):
        raise InputsError(
            "the floor's motion is given both as bands and as harmonics, or neither",
            where="floor motion",
            do="Give one-third-octave band rms velocities or harmonics, one of the two",
        )

    def T(f: float) -> float:
        return float(transmissibility(f / natural_hz, damping_ratio))

    rows: dict[float, BandRow] = {}
    if bands is not None:
        for f, v_rms in bands:
            centre = third_octave_band(f)[0]
            if centre in rows:
                raise InputsError(
                    f"two of the floor's bands fall in the one-third-octave band at {centre:g} Hz",
                    where="floor_bands",
                    do="Give one rms velocity a band",
                )
            rows[centre] = BandRow(centre, v_rms, T(centre) * v_rms, curve.velocity_limit(centre))
    else:
        grouped: dict[float, list[tuple[float, float, float]]] = {}
        frequencies = sorted(f for f, _ in harmonics)
        for a, b in zip(frequencies, frequencies[1:], strict=False):
            if math.isclose(a, b, rel_tol=1e-9):
                raise InputsError(
                    f"two of the floor's harmonics are at {a:.6g} Hz",
                    where="floor_harmonics",
                    do="Give each frequency once (the dominant harmonic is floor_frequency; list only the others)",
                )
        for f, v in harmonics:
            peak = in_convention(v, convention, "peak")
            grouped.setdefault(third_octave_band(f)[0], []).append((f, peak, T(f)))
        for centre, items in grouped.items():
            floor = math.sqrt(sum(p * p / 2 for _, p, _ in items))
            equipment = math.sqrt(sum((p * t) ** 2 / 2 for _, p, t in items))
            rows[centre] = BandRow(centre, floor, equipment, curve.velocity_limit(centre), tuple(items))
    return tuple(rows[c] for c in sorted(rows))


def worst_band(rows: Sequence[BandRow]) -> BandRow:
    """The band with the highest utilisation (value over limit) among those the curve covers.

    Raises
    ------
    InputsError
        No band lies within the curve's frequency range.
    """
    covered = [row for row in rows if row.limit is not None]
    if not covered:
        raise InputsError(
            "none of the floor's bands lies within the criterion curve's frequency range",
            where="criterion_curve",
            do="Give the floor's motion in the bands the curve covers, or choose a curve that covers them",
        )
    return max(covered, key=lambda row: row.utilisation)
