"""The records of a periodic load as a Fourier series: :class:`FourierSeries` and its :class:`Harmonic` terms.

:mod:`calckit.physics.fourier` builds them, from a formula over one period or from
samples; this module holds what they are (coefficients, the captured fraction of
the mean square, the series as an expression or as numbers) and the checks of a
period and a number of harmonics both constructors make.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.errors import CalcError, ForcingError

__all__ = ["HARMONIC_NUMBER", "FourierSeries", "Harmonic", "check_count", "check_period"]

Number = sp.Expr | float

HARMONIC_NUMBER = sp.Symbol("n", integer=True, positive=True)  #: harmonic number in general formulas


@dataclass(frozen=True)
class Harmonic:
    """One row of the harmonic table of a :class:`FourierSeries`.

    ``a cos(n omega t) + b sin(n omega t) = amplitude * cos(n omega t - phase)``.

    Attributes
    ----------
    n : harmonic number (1 is the fundamental).
    frequency : ``n * omega``, rad/s.
    a, b : cosine and sine coefficients.
    amplitude : ``sqrt(a^2 + b^2)``.
    phase : ``atan2(b, a)``, rad, in ``(-pi, pi]``; 0 when the harmonic is absent.
    """

    n: int
    frequency: Number
    a: Number
    b: Number
    amplitude: Number
    phase: Number


@dataclass(frozen=True)
class FourierSeries:
    r"""A periodic load as its mean plus ``N`` harmonics.

    Attributes
    ----------
    period : ``T``, s (sympy for :func:`fourier_series`, float from samples).
    omega : fundamental frequency ``2 pi / T``, rad/s.
    a0 : the mean of the load over one period.
    coefficients : ``((1, a_1, b_1), (2, a_2, b_2), ...)``.
    mean_square : :math:`\frac{1}{T}\int_0^T f^2\,dt`, the whole load's mean square.
    is_exact : True when every coefficient is an exact sympy expression.
    a_n_formula, b_n_formula : the coefficients as sympy expressions in the
        positive-integer symbol :attr:`n_symbol` when sympy found them for general
        ``n``, else None. A note lists any ``n`` where the formula does not hold.
    n_symbol : the harmonic-number symbol of the formulas (``n``, or a dummy if the
        load itself uses a symbol called ``n``).
    notes : what was done that a checker should know (numeric quadrature, rounding).

    Examples
    --------
    >>> from calckit.physics.fourier import fourier_series
    >>> t = sp.Symbol("t", real=True)
    >>> s = fourier_series(sp.Piecewise((1, t < 1), (-1, True)), t, 2, 3)
    >>> s.coefficients
    ((1, 0, 4/pi), (2, 0, 0), (3, 0, 4/(3*pi)))
    >>> s.expression(t)
    4*sin(pi*t)/pi + 4*sin(3*pi*t)/(3*pi)
    """

    period: Number
    omega: Number
    a0: Number
    coefficients: tuple[tuple[int, Number, Number], ...]
    mean_square: Number
    is_exact: bool
    a_n_formula: sp.Expr | None = None
    b_n_formula: sp.Expr | None = None
    n_symbol: sp.Symbol = HARMONIC_NUMBER
    notes: tuple[str, ...] = ()

    @property
    def n_harmonics(self) -> int:
        return len(self.coefficients)

    def truncated(self, n_harmonics: int) -> FourierSeries:
        """The same series keeping only the first *n_harmonics* harmonics."""
        n = check_count(n_harmonics, "FourierSeries.truncated(n_harmonics)")
        if n > self.n_harmonics:
            raise ForcingError(
                f"the series holds {self.n_harmonics} harmonics, cannot keep {n}",
                where="FourierSeries.truncated(n_harmonics)",
                do=f"Give at most {self.n_harmonics}, or build the series with more harmonics",
            )
        return replace(self, coefficients=self.coefficients[:n])

    @property
    def harmonics(self) -> tuple[Harmonic, ...]:
        """The harmonic table: n, frequency, a_n, b_n, amplitude, phase."""
        rows = []
        for n, a, b in self.coefficients:
            if isinstance(a, sp.Basic) or isinstance(b, sp.Basic):
                a, b = sp.sympify(a), sp.sympify(b)
                amp = sp.sqrt(a**2 + b**2)
                phase = sp.Integer(0) if (a == 0 and b == 0) else sp.atan2(b, a)
            else:
                amp, phase = math.hypot(a, b), math.atan2(b, a)
            rows.append(Harmonic(n, n * self.omega, a, b, amp, phase))
        return tuple(rows)

    @property
    def amplitudes(self) -> tuple[Number, ...]:
        return tuple(h.amplitude for h in self.harmonics)

    @property
    def phases(self) -> tuple[Number, ...]:
        return tuple(h.phase for h in self.harmonics)

    @property
    def captured_mean_square(self) -> Number:
        r""":math:`a_0^2 + \frac12 \sum_{n=1}^N (a_n^2 + b_n^2)` (Parseval)."""
        return self.a0**2 + sum((a**2 + b**2) for _, a, b in self.coefficients) / 2

    @property
    def captured_fraction(self) -> Number:
        r"""Mean square of the truncated series over the mean square of the load.

        .. math:: \frac{a_0^2 + \frac12\sum_{n=1}^N (a_n^2 + b_n^2)}{\frac1T\int_0^T f^2\,dt}

        1 means the N harmonics (and the mean) hold all of the load's mean square
        (Parseval's identity). A load that is zero throughout gives 1.
        """
        return _ratio(self.captured_mean_square, self.mean_square)

    @property
    def alternating_captured_fraction(self) -> Number:
        """Like :attr:`captured_fraction` with the mean taken out of top and bottom:
        how much of the fluctuating part the N harmonics hold."""
        return _ratio(self.captured_mean_square - self.a0**2, self.mean_square - self.a0**2)

    def expression(self, t: sp.Symbol) -> sp.Expr:
        """The truncated series as a sympy expression in *t*, for the derivation engine.

        Exact coefficients are used as they are; float coefficients (from samples) are
        rounded to 12 significant figures, those below ``1e-12`` times the largest are
        dropped as round-off, and the rest are made exact decimals with
        :func:`calckit.core.exact.exact`. ``omega`` is exact (``2*pi/T``).
        """
        if not isinstance(t, sp.Symbol):
            raise ForcingError(
                f"expected a sympy Symbol for the time, got {type(t).__name__}",
                where="FourierSeries.expression(t)",
                do='Pass t = sympy.Symbol("t", real=True)',
            )
        omega = 2 * sp.pi / exact(self.period, where="FourierSeries.period")
        coeffs = [self.a0] + [c for _, a, b in self.coefficients for c in (a, b)]
        if all(isinstance(c, sp.Basic) for c in coeffs):
            a0 = self.a0
            ab = [(n, a, b) for n, a, b in self.coefficients]
        else:
            scale = max(abs(float(c)) for c in coeffs)
            a0 = _clean(self.a0, scale)
            ab = [(n, _clean(a, scale), _clean(b, scale)) for n, a, b in self.coefficients]
        return a0 + sum(a * sp.cos(n * omega * t) + b * sp.sin(n * omega * t) for n, a, b in ab)

    def evaluate(self, times) -> np.ndarray:
        """The truncated series at *times* (s), as numpy floats; vectorised."""
        try:
            a0 = float(self.a0)
            a = np.array([float(c) for _, c, _ in self.coefficients])
            b = np.array([float(c) for _, _, c in self.coefficients])
            omega = float(self.omega)
        except TypeError:
            names = sorted(
                str(s)
                for c in [self.a0, self.omega, *(x for row in self.coefficients for x in row[1:])]
                if isinstance(c, sp.Basic)
                for s in c.free_symbols
            )
            raise ForcingError(
                f"the coefficients hold symbols ({', '.join(names)}), so they have no numeric value",
                where="FourierSeries.evaluate",
                do="Substitute numbers into .expression(t) and evaluate that, or build the series from numbers",
            ) from None
        tt = np.asarray(times, dtype=float)
        n = np.arange(1, self.n_harmonics + 1)
        phase = np.multiply.outer(tt, n * omega)
        return a0 + np.cos(phase) @ a + np.sin(phase) @ b


def _ratio(top, bottom):
    if isinstance(top, sp.Basic) or isinstance(bottom, sp.Basic):
        bottom = sp.factor_terms(sp.sympify(bottom))
        if bottom.is_zero:
            return sp.Integer(1)
        return sp.factor_terms(sp.sympify(top)) / bottom  # common factors (A**2) cancel
    return 1.0 if bottom == 0 else float(top / bottom)


def _clean(value, scale: float) -> sp.Expr:
    v = float(value)
    if abs(v) <= 1e-12 * scale:
        return sp.Integer(0)
    return exact(float(f"{v:.12g}"))


# --------------------------------------------------------------------------- validation


def check_count(n_harmonics, where: str) -> int:
    """The number of harmonics asked for, as an int of at least 1, or a ForcingError."""
    if isinstance(n_harmonics, bool) or not isinstance(n_harmonics, int | np.integer):
        raise ForcingError(
            f"expected a whole number of harmonics, got {type(n_harmonics).__name__} {n_harmonics!r}",
            where=where,
            do="Give an int of at least 1",
        )
    if n_harmonics < 1:
        raise ForcingError(
            f"the number of harmonics must be at least 1, got {n_harmonics}",
            where=where,
            do="Give an int of at least 1",
        )
    return int(n_harmonics)


def check_period(period, where: str) -> sp.Expr:
    """The period, exact and positive, or a ForcingError."""
    try:
        p = exact(period, where=where)
    except CalcError as exc:
        raise ForcingError(exc.what, where=exc.where, do=exc.do) from None
    if p.is_positive is not True:
        if p.is_number or p.is_positive is False or p.is_nonpositive:
            raise ForcingError(
                f"the period must be positive, got {p}", where=where, do="Give a positive number of seconds"
            )
        raise ForcingError(
            f"cannot tell whether the period {p} is positive",
            where=where,
            do='Declare symbols as positive, e.g. sympy.Symbol("T", positive=True)',
        )
    return p
