r"""Measured time histories: a load or a base acceleration given as samples, solved exactly.

A record is a list of samples ``(t_k, p_k)`` at one time step ``h``: a force on a mass
measured at its support, or the acceleration of a plinth under a piece of equipment. It
is read from a CSV file whose header names the units (``time (s),force (kN)``,
``time (ms),acceleration (g_n)``) through the kit's one unit registry, or made from two
arrays given in an inputs file (:meth:`TimeHistory.from_samples`).

The interval rule
-----------------
Between two samples the excitation is taken as the straight line through them, and on
that interval the response of the oscillator

.. math:: \ddot z + 2\zeta\omega_n \dot z + \omega_n^2 z = p(t)

is solved exactly, the end state of one interval being the start of the next: the
piecewise-exact recursion of the earthquake-engineering literature (N. C. Nigam and
P. C. Jennings, "Calculation of response spectra from strong-motion earthquake records",
Bull. Seismol. Soc. Am. 59(2), 1969; A. K. Chopra, *Dynamics of Structures*, 4th ed.,
Prentice Hall, 2012, sec. 5.2, "interpolation of excitation", from memory). Here
``p = f/m`` for a force on a mass (``z`` is then the mass's displacement) and
``p = -a_g`` for a base acceleration (``z`` the deflection of the mount).

For an underdamped oscillator (``0 <= zeta < 1``) the state ``(z, z')`` is carried as one
complex number, ``u = z' - s_2 z`` with the roots ``s_{1,2} = -zeta omega_n +- i omega_d``,
which obeys the first-order equation ``u' = s_1 u + p``. With ``x = s_1 h``, ``E = e^x``,
``phi_1(x) = (e^x - 1)/x`` and ``phi_2(x) = (e^x - 1 - x)/x^2``, one interval is exactly

.. math:: u_{k+1} = E\,u_k + h\left[(\phi_1 - \phi_2)\,p_k + \phi_2\,p_{k+1}\right],

and ``z = Im(u)/omega_d``, ``z' = Re(u) - zeta omega_n z``. The transition ``E`` and the two
load coefficients are computed once per natural frequency (series for small ``|x|``, so
nothing cancels); the recursion over the samples is a first-order complex filter run in
compiled code (``scipy.signal.lfilter`` with the coefficients above, so the rule stays
exact: the filter only performs the multiply-and-add of the recursion). The cost is
``O(N)`` per natural frequency for ``N`` samples.

Refusals (an :class:`~calckit.errors.InputsError` naming the row): times that do not
increase, uneven steps (beyond a relative tolerance), gaps, NaN or empty values, fewer
than :data:`FEWEST_SAMPLES` samples, a time step longer than a tenth of the shortest
natural period asked for.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from calckit.core.units import fmt_number, kind_of, quantity
from calckit.errors import InputsError, ModelError, UnitsError
from calckit.physics.record_inputs import (  # noqa: F401 - names of this module's contract
    STEPS_PER_PERIOD,
    check_damping,
    check_frequencies,
    load_per_mass,
    mass_in_kg,
)

__all__ = [
    "FEWEST_SAMPLES",
    "MOST_SAMPLES",
    "STEP_TOLERANCE",
    "HistoryResponse",
    "TimeHistory",
    "history_response",
    "load_time_history",
]


#: Fewest samples a record may have (two intervals).
FEWEST_SAMPLES = 3
#: Most samples read from one record (about 32 MB a natural frequency while it is solved).
MOST_SAMPLES = 2_000_000
#: Largest file read as a record, in bytes.
LARGEST_FILE = 200_000_000
#: Relative tolerance on the time step: ``|t_{k+1} - t_k - h| <= STEP_TOLERANCE * h``.
STEP_TOLERANCE = 1e-4
#: A step longer than this many times the record's step is called a gap.
GAP_FACTOR = 1.5

# what each kind of record drives, and its SI unit
_EXCITATION = {"force": "force", "acceleration": "base acceleration"}
_SI_UNIT = {"force": "N", "acceleration": "m/s**2", "time": "s"}
_HEADER = re.compile(r"^\s*(?P<name>[^()]*?)\s*(?:\((?P<unit>[^()]*)\))?\s*$")


@dataclass(frozen=True)
class TimeHistory:
    """A sampled load or base acceleration at one time step, in SI units.

    Attributes
    ----------
    times : numpy.ndarray
        Sample times in s, shape ``(N,)``, increasing at one step.
    values : numpy.ndarray
        Samples in SI units (N for a force, m/s^2 for an acceleration), shape ``(N,)``.
    kind : str
        ``"force"`` or ``"acceleration"``.
    given_unit : str
        The unit the values were given in (``"kN"``, ``"g_n"``), for showing them.
    source : str
        Where the samples came from (a file's name, "inputs file").
    step : float
        The time step ``h`` in s, ``(t_end - t_0)/(N - 1)``.
    """

    times: np.ndarray
    values: np.ndarray
    kind: str
    given_unit: str
    source: str
    step: float
    notes: tuple[str, ...] = field(default=())

    @property
    def excitation(self) -> str:
        """``"force"`` (on a mass) or ``"base acceleration"`` (under equipment)."""
        return _EXCITATION[self.kind]

    @property
    def unit(self) -> str:
        """The SI unit of :attr:`values`."""
        return _SI_UNIT[self.kind]

    @property
    def samples(self) -> int:
        return int(self.times.size)

    @property
    def duration(self) -> float:
        """Length of the record in s, first sample to last."""
        return float(self.times[-1] - self.times[0])

    @property
    def peak(self) -> float:
        """Largest absolute sample, SI units."""
        return float(np.max(np.abs(self.values)))

    def values_in(self, unit: str) -> np.ndarray:
        """The samples converted to *unit* (``"kN"``, ``"g_n"``)."""
        factor = quantity(f"1 {self.unit}", "unit").to(unit).magnitude
        return self.values * float(factor)

    @classmethod
    def from_samples(
        cls,
        times,
        values,
        *,
        time_unit: str = "s",
        value_unit: str,
        source: str = "inputs file",
        step_tolerance: float = STEP_TOLERANCE,
    ) -> TimeHistory:
        """A record from two sequences (an inputs file's lists): times and values with their units.

        Rows in messages count the samples from 1.

        Examples
        --------
        >>> h = TimeHistory.from_samples([0, 1, 2, 3], [0, 2, 1, 0], time_unit="ms", value_unit="kN")
        >>> h.kind, h.step, h.values.tolist()
        ('force', 0.001, [0.0, 2000.0, 1000.0, 0.0])
        """
        where = source
        time_factor = _factor(time_unit, "time", f"{where} (time unit)")
        kind, value_factor = _value_factor(value_unit, f"{where} (value unit)")
        t = _numbers(times, f"{where} (times)")
        v = _numbers(values, f"{where} (values)")
        if t.size != v.size:
            raise InputsError(
                f"{t.size} times and {v.size} values",
                where=where,
                do="Give one value for every time",
            )
        rows = np.arange(1, t.size + 1)
        return _checked(
            t * time_factor, v * value_factor, kind, value_unit, source, rows, "sample", step_tolerance
        )


def _numbers(seq, where: str) -> np.ndarray:
    try:
        arr = np.asarray(seq, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputsError(
            "cannot read the samples as numbers", where=where, do="Give a list of numbers"
        ) from exc
    if arr.ndim != 1:
        raise InputsError(
            f"expected a flat list of numbers, got shape {arr.shape}", where=where, do="Give a list"
        )
    if arr.size > MOST_SAMPLES:
        raise InputsError(
            f"{arr.size:,} samples, more than {MOST_SAMPLES:,}",
            where=where,
            do="Split the record into parts, or resample it coarser",
        )
    return arr


def _factor(unit: str, kind: str, where: str) -> float:
    q = quantity(f"1 {unit}", where, expect=kind)
    return float(q.to(_SI_UNIT[kind]).magnitude)


def _value_factor(unit: str, where: str) -> tuple[str, float]:
    try:
        q = quantity(f"1 {unit}", where)
    except UnitsError:
        raise
    kind = kind_of(q)
    if kind not in _EXCITATION:
        raise UnitsError(
            f'"{unit}" is not a unit of force or of acceleration',
            where=where,
            do="Give a force (N, kN, lbf) for a load on a mass, or an acceleration (m/s**2, g_n) for base motion",
        )
    return kind, float(q.to(_SI_UNIT[kind]).magnitude)


def _checked(t, v, kind, given_unit, source, rows, row_word, step_tolerance) -> TimeHistory:
    """Refuse NaN, too few samples, times that do not increase, gaps and uneven steps, naming the row."""
    where = source
    for arr, what in ((t, "time"), (v, "value")):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise InputsError(
                f"{row_word} {rows[bad[0]]}: the {what} is not a finite number ({float(arr[bad[0]])!r})",
                where=where,
                do="Fill or remove the sample; a record is read as measured, never patched",
            )
    if t.size < FEWEST_SAMPLES:
        raise InputsError(
            f"{t.size} samples, fewer than {FEWEST_SAMPLES}",
            where=where,
            do=f"Give at least {FEWEST_SAMPLES} samples at one time step",
        )
    dt = np.diff(t)
    back = np.flatnonzero(dt <= 0)
    if back.size:
        i = back[0]
        raise InputsError(
            f"{row_word} {rows[i + 1]}: the time {fmt_number(t[i + 1], 8)} s does not come after "
            f"{fmt_number(t[i], 8)} s ({row_word} {rows[i]})",
            where=where,
            do="Sort the record by time and remove repeated times",
        )
    h = float(np.median(dt))
    off = np.flatnonzero(np.abs(dt - h) > step_tolerance * h)
    if off.size:
        i = off[0]
        word = "a gap" if dt[i] > GAP_FACTOR * h else "an uneven step"
        raise InputsError(
            f"{row_word} {rows[i + 1]}: {word} of {fmt_number(dt[i], 6)} s after {row_word} {rows[i]}, "
            f"where the record's step is {fmt_number(h, 6)} s",
            where=where,
            do="Give the record at one time step (resample it, or fill the gap from the measurement)",
        )
    step = float((t[-1] - t[0]) / (t.size - 1))
    t.setflags(write=False)
    v.setflags(write=False)
    return TimeHistory(t, v, kind, given_unit, source, step)


def load_time_history(
    path,
    *,
    time_unit: str | None = None,
    value_unit: str | None = None,
    step_tolerance: float = STEP_TOLERANCE,
) -> TimeHistory:
    """Read a record from a CSV file: two columns, time and value, units in the header.

    The header is the first line that is not a comment (``#``): ``time (s),force (kN)`` or
    ``time (ms),acceleration (g_n)``. A unit missing from the header may be given here
    (*time_unit*, *value_unit*, as an inputs file would); a unit given in both places must
    agree. Rows are the file's line numbers.

    Raises
    ------
    InputsError
        A missing or too large file, a header without units, a row that is not two numbers,
        NaN, too few samples, times that do not increase, gaps, uneven steps.
    UnitsError
        A unit that is not a time, or not a force or an acceleration.

    Examples
    --------
    >>> import os, tempfile
    >>> p = os.path.join(tempfile.mkdtemp(), "r.csv")
    >>> with open(p, "w") as out:
    ...     _ = out.write("time (ms),acceleration (g_n)\\n0,0\\n1,0.5\\n2,0\\n")
    >>> h = load_time_history(p)
    >>> h.excitation, h.step, round(h.peak, 5)
    ('base acceleration', 0.001, 4.90332)
    """
    path = Path(path)
    where = path.name
    try:
        size = path.stat().st_size
    except FileNotFoundError as exc:
        raise InputsError("the record file does not exist", where=str(path), do="Check the path") from exc
    if size > LARGEST_FILE:
        raise InputsError(
            f"the file is {size:,} bytes, more than {LARGEST_FILE:,}",
            where=where,
            do="Split the record into parts, or resample it coarser",
        )
    try:
        return _read_rows(path, where, time_unit, value_unit, step_tolerance)
    except UnicodeDecodeError as exc:
        raise InputsError(
            f"the file is not UTF-8 text (byte {exc.start + 1})", where=where, do="Save it as UTF-8 CSV"
        ) from None
    except csv.Error as exc:  # a cell past the csv module's field limit (131072 characters), a broken quote
        raise InputsError(
            f"cannot read the file as CSV: {exc}",
            where=where,
            do="Give one time and one value, plain numbers, on each row",
        ) from None


def _read_rows(path: Path, where: str, time_unit, value_unit, step_tolerance) -> TimeHistory:
    """The rows of :func:`load_time_history`'s file, read and checked."""
    with path.open(newline="", encoding="utf-8-sig") as handle:
        reader = csv.reader(handle)
        header, header_line = None, 0
        times, values, lines, blank = [], [], [], set()
        for row in reader:
            if header is None:
                if not row or row[0].lstrip().startswith("#"):
                    continue
                header, header_line = row, reader.line_num
                continue
            if not row or all(not cell.strip() for cell in row):
                lines.append(reader.line_num)
                blank.add(reader.line_num)
                times.append(math.nan)  # an empty row inside the record is refused as a missing sample
                values.append(math.nan)
                continue
            if len(row) != 2:
                raise InputsError(
                    f"row {reader.line_num}: {len(row)} columns, expected 2 (time, value)",
                    where=where,
                    do="Give one time and one value on each row",
                )
            if len(times) >= MOST_SAMPLES:
                raise InputsError(
                    f"more than {MOST_SAMPLES:,} samples",
                    where=where,
                    do="Split the record into parts, or resample it coarser",
                )
            parsed = []
            for cell in row:
                text = cell.strip()
                try:
                    parsed.append(float(text) if text else math.nan)
                except ValueError:
                    raise InputsError(
                        f'row {reader.line_num}: "{text}" is not a number',
                        where=where,
                        do="Give plain numbers (no units or thousands separators in the rows)",
                    ) from None
            times.append(parsed[0])
            values.append(parsed[1])
            lines.append(reader.line_num)
    while lines and lines[-1] in blank:  # blank lines at the end of the file are no samples
        lines.pop(), times.pop(), values.pop()
    if header is None:
        raise InputsError(
            "the file has no header", where=where, do='Start with a header such as "time (s),force (kN)"'
        )
    if len(header) != 2:
        raise InputsError(
            f"row {header_line}: the header has {len(header)} columns, expected 2",
            where=where,
            do='Write a header such as "time (s),force (kN)"',
        )
    t_unit = _header_unit(header[0], time_unit, where, header_line, "time")
    v_unit = _header_unit(header[1], value_unit, where, header_line, "value")
    time_factor = _factor(t_unit, "time", f"{where} (time unit)")
    kind, value_factor = _value_factor(v_unit, f"{where} (value unit)")
    t = np.asarray(times, dtype=float) * time_factor
    v = np.asarray(values, dtype=float) * value_factor
    return _checked(t, v, kind, v_unit, where, np.asarray(lines), "row", step_tolerance)


def _header_unit(cell: str, given: str | None, where: str, line: int, column: str) -> str:
    match = _HEADER.match(cell)
    unit = (match.group("unit") or "").strip() if match else ""
    if unit and given and unit != given.strip():
        raise InputsError(
            f'row {line}: the header gives the {column} unit "{unit}", the inputs give "{given}"',
            where=where,
            do="Give the unit in one place, or make the two agree",
        )
    unit = unit or (given or "").strip()
    if not unit:
        raise InputsError(
            f'row {line}: the {column} column "{cell.strip()}" has no unit',
            where=where,
            do='Put the unit in brackets in the header, as "time (s),force (kN)", or give it in the inputs',
        )
    return unit


# --------------------------------------------------------------------------- the interval rule


def _phi(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``phi_1(x) = (e^x - 1)/x`` and ``phi_2(x) = (e^x - 1 - x)/x^2``, without cancellation."""
    x = np.asarray(x, dtype=complex)
    small = np.abs(x) < 0.5
    safe = np.where(small, 1.0, x)
    ex = np.exp(safe)
    phi1 = (ex - 1) / safe
    phi2 = (ex - 1 - safe) / safe**2
    if np.any(small):  # series: 20 terms leave less than 0.5**20/20! of the sum
        xs = x[small]
        s1 = np.zeros_like(xs)
        s2 = np.zeros_like(xs)
        term = np.ones_like(xs)
        for n in range(22):  # term = x^n / n!
            s1 += term / (n + 1)
            s2 += term / ((n + 1) * (n + 2))
            term = term * xs / (n + 1)
        phi1[small] = s1
        phi2[small] = s2
    return phi1, phi2


@dataclass(frozen=True)
class Interval:
    """One interval's exact transition for each natural frequency (complex, shape ``(n,)``)."""

    omega: np.ndarray
    zeta: float
    step: float

    @property
    def root(self) -> np.ndarray:
        """``s_1 = -zeta omega_n + i omega_d``."""
        return self.omega * complex(-self.zeta, math.sqrt(1 - self.zeta**2))

    @property
    def omega_d(self) -> np.ndarray:
        return self.omega * math.sqrt(1 - self.zeta**2)

    def coefficients(self, fraction=None):
        """``E``, ``G_0``, ``G_1`` over the whole interval (shape ``(n,)``), or over the parts
        *fraction* of it (a 1-D array of numbers in (0, 1]: shape ``(n, len(fraction))``)."""
        if fraction is None:
            frac, root = np.ones(1), self.root
        else:
            frac, root = np.asarray(fraction, dtype=float)[None, :], self.root[:, None]
        x = root * self.step * frac
        phi1, phi2 = _phi(x)
        tau = self.step * frac
        # load p_k + (p_{k+1} - p_k) tau/h: G0 on p_k, G1 on p_{k+1}
        g1 = tau * frac * phi2
        g0 = tau * phi1 - g1
        return np.exp(x), g0, g1


def modal_states(p: np.ndarray, interval: Interval, *, chunk_elements: int = 1_000_000) -> np.ndarray:
    """``u_k`` at every sample for every natural frequency, from rest: complex, shape ``(n, N)``.

    The recursion ``u_{k+1} = E u_k + c_k``, frequencies in chunks of about
    *chunk_elements* numbers (bounded memory).
    """
    w = interval.omega
    n, N = w.size, p.size
    out = np.empty((n, N), dtype=complex)
    per_chunk = max(1, chunk_elements // max(N, 1))
    for lo in range(0, n, per_chunk):
        sub = Interval(w[lo : lo + per_chunk], interval.zeta, interval.step)
        out[lo : lo + per_chunk] = _states_chunk(p, sub)
    return out


def _states_chunk(p: np.ndarray, interval: Interval) -> np.ndarray:
    """The recursion ``u_{k+1} = E u_k + c_k`` from ``u_0 = 0``, one first-order complex
    filter per natural frequency (``scipy.signal.lfilter``, which runs it in compiled code)."""
    from scipy.signal import lfilter

    E, g0, g1 = interval.coefficients()
    n, N = E.size, p.size
    out = np.empty((n, N), dtype=complex)
    out[:, 0] = 0
    for i in range(n):
        c = g0[i] * p[:-1] + g1[i] * p[1:]
        out[i, 1:] = lfilter(np.ones(1), np.array([1.0, -E[i]]), c)
    return out


@dataclass(frozen=True)
class HistoryResponse:
    """The response of one oscillator to a record, at the record's samples (SI units).

    ``relative_displacement`` is the mass's displacement under a force, the deflection of
    the mount under a base acceleration; ``absolute_acceleration`` what the mass feels;
    ``spring_damper_per_mass`` is ``omega_n^2 z + 2 zeta omega_n z'``, the force through the
    spring and damper per unit mass (multiply by the mass for the force on the support).
    """

    times: np.ndarray
    relative_displacement: np.ndarray
    relative_velocity: np.ndarray
    absolute_acceleration: np.ndarray
    spring_damper_per_mass: np.ndarray
    natural_frequency: float
    damping_ratio: float
    excitation: str


def history_response(history: TimeHistory, natural_frequency, damping_ratio, *, mass=None) -> HistoryResponse:
    """Response of the oscillator ``omega_n``, ``zeta`` to *history*, from rest, by the exact interval rule.

    Parameters
    ----------
    history : TimeHistory
    natural_frequency : float
        ``omega_n`` in rad/s.
    damping_ratio : float
        ``0 <= zeta < 1``.
    mass : float or quantity, optional
        Needed for a force record (kg): ``p = f/m``.

    Examples
    --------
    >>> h = TimeHistory.from_samples([0, 1, 2, 3, 4], [0, 1, 1, 1, 1], time_unit="ms", value_unit="m/s**2")
    >>> r = history_response(h, 100.0, 0.0)
    >>> round(float(r.relative_displacement[-1] * 1e7), 4)
    -61.0186
    """
    where = "history_response"
    zeta = check_damping(damping_ratio, f"{where}(damping_ratio)")
    w = check_frequencies(natural_frequency, history, f"{where}(natural_frequency)")
    if w.size != 1:
        raise ModelError(
            "history_response takes one natural frequency", where=where, do="Use record_spectrum for many"
        )
    p = load_per_mass(history, mass, where)
    interval = Interval(w, zeta, history.step)
    u = modal_states(p, interval)[0]
    wn, wd = float(w[0]), float(interval.omega_d[0])
    z = u.imag / wd
    v = u.real - zeta * wn * z
    through = wn**2 * z + 2 * zeta * wn * v
    accel = -through + (p if history.kind == "force" else 0.0)
    return HistoryResponse(history.times, z, v, accel, through, wn, zeta, history.excitation)
