"""The single-degree-of-freedom oscillator ``m x'' + c x' + k x = f(t)``.

Quantities of the trade (natural and damped frequency, damping ratio, regime,
critical damping, logarithmic decrement, quality factor), the transient in
every regime, the total response from an initial state, and the steady-state
amplitude and phase lag of each harmonic of the forcing.

Inputs may be plain numbers (taken as SI), sympy symbols, or pint quantities
(masses in kg or lb, stiffness in N/mm or lbf/in, damping in N s/m); with
quantities the frequencies and other results are returned with units.

References
----------
Rao, *Mechanical Vibrations*, 5th ed., ch. 2-3 (free and harmonically excited
single-degree-of-freedom systems), from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy as sp

from calckit.core.exact import exact
from calckit.engine import (
    Derivation,
    FrequencyResponse,
    IntervalSolver,
    LinearODE,
    Response,
    frequency_response,
    is_switching,
    periodic_steady_state,
    piecewise_response,
    resolve_time,
    scalar_solver,
    split_forcing,
    total_response,
)
from calckit.errors import ModelError

__all__ = ["Oscillator", "HarmonicLine", "REGIMES"]

REGIMES = ("undamped", "underdamped", "critically damped", "overdamped")


@dataclass(frozen=True)
class HarmonicLine:
    """Steady-state response to one harmonic of the forcing.

    ``force = force_amplitude * cos(frequency t - force_phase)`` gives
    ``x = amplitude * cos(frequency t - force_phase - phase_lag)``.
    """

    frequency: sp.Expr  # rad/s
    force_amplitude: sp.Expr
    force_phase: sp.Expr
    amplitude: sp.Expr
    phase_lag: sp.Expr  # radians, in [0, pi] for c >= 0
    magnification: sp.Expr  # amplitude * k / force_amplitude


def _article(word: str) -> str:
    """``"an"`` before a vowel (an overdamped system), else ``"a"``."""
    return "an" if word[:1] in "aeiou" else "a"


def _is_quantity(value) -> bool:
    return hasattr(value, "magnitude") and hasattr(value, "units")


class Oscillator(LinearODE):
    """``m x'' + c x' + k x = f(t)``.

    Parameters
    ----------
    m, c, k : number, sympy expression or pint Quantity
        Mass, viscous damping coefficient and stiffness. ``m = 0`` (a massless
        spring and damper) and ``k = 0`` (no spring) are allowed.
    regime : str, optional
        For symbolic parameters whose regime cannot be decided, the regime to
        assume (one of ``REGIMES``); it is recorded in the steps.

    Examples
    --------
    >>> osc = Oscillator(2, 0, 50)
    >>> osc.natural_frequency, osc.regime
    (5, 'undamped')
    """

    def __init__(self, m, c, k, *, regime: str | None = None, name: str = "x"):
        self.units = any(_is_quantity(v) for v in (m, c, k))
        m = self._si(m, "m", "mass")
        c = self._si(c, "c", "damping coefficient")
        k = self._si(k, "k", "stiffness")
        for value, label in ((m, "m"), (c, "c"), (k, "k")):
            if value.is_number and value.is_negative:
                raise ModelError(
                    f"the value {value} is negative",
                    where=label,
                    do="Give a mass, damping and stiffness of zero or more",
                )
        self.m, self.c, self.k = m, c, k
        coefficients = [m, c, k]
        while coefficients and coefficients[0] == 0:
            coefficients.pop(0)
        if len(coefficients) < 2:
            raise ModelError(
                "with m = 0 and c = 0 the equation k x = f(t) has no derivative left",
                where="Oscillator(m, c, k)",
                do="The response is simply x = f(t)/k; give a mass or a damper for a dynamic model",
            )
        super().__init__(coefficients, name=name)
        if regime is not None and regime not in REGIMES:
            raise ModelError(
                f"unknown regime {regime!r}",
                where="regime",
                do=f"Use one of {', '.join(REGIMES)}",
            )
        self._regime_hint = regime

    @staticmethod
    def _si(value, label: str, kind: str) -> sp.Expr:
        if _is_quantity(value):
            from calckit.core.units import quantity, to_si

            q = quantity(value, label, expect=kind)
            return exact(to_si(q, label).magnitude, where=label)
        return exact(value, where=label)

    def _with_unit(self, value: sp.Expr, unit: str):
        if not self.units or not value.is_number:
            return value
        from calckit.core.units import Q_

        return Q_(float(value), unit)

    def __repr__(self) -> str:
        return f"Oscillator(m={self.m}, c={self.c}, k={self.k})"

    # ---------------------------------------------------------- quantities
    @property
    def omega_n(self) -> sp.Expr:
        """Natural frequency as an exact sympy value, rad/s."""
        if self.m == 0:
            raise ModelError(
                "a massless model has no natural frequency", where="natural_frequency", do="Give a mass"
            )
        return sp.sqrt(self.k / self.m)

    @property
    def natural_frequency(self):
        """``omega_n = sqrt(k/m)``, rad/s."""
        return self._with_unit(self.omega_n, "rad/s")

    @property
    def natural_frequency_hz(self):
        """``f_n = omega_n / (2 pi)``, Hz."""
        return self._with_unit(self.omega_n / (2 * sp.pi), "Hz")

    @property
    def critical_damping(self):
        """``c_c = 2 sqrt(k m)``, N s/m."""
        return self._with_unit(2 * sp.sqrt(self.k * self.m), "N*s/m")

    @property
    def zeta(self) -> sp.Expr:
        """Damping ratio as an exact sympy value."""
        if self.k == 0 or self.m == 0:
            raise ModelError(
                "the damping ratio c/(2 sqrt(k m)) needs both a mass and a spring",
                where="damping_ratio",
                do="Give m > 0 and k > 0, or use the roots of the characteristic polynomial",
            )
        return self.c / (2 * sp.sqrt(self.k * self.m))

    @property
    def damping_ratio(self):
        """``zeta = c / (2 sqrt(k m))``, dimensionless."""
        return self.zeta

    @property
    def regime(self) -> str:
        """``"undamped"``, ``"underdamped"``, ``"critically damped"`` or ``"overdamped"``."""
        if self.c == 0:
            return "undamped"
        disc = sp.expand(self.c**2 - 4 * self.m * self.k)
        if disc.is_negative:
            return "underdamped"
        if disc.is_zero:
            return "critically damped"
        if disc.is_positive:
            return "overdamped"
        if self._regime_hint:
            return self._regime_hint
        raise ModelError(
            f"the regime depends on the sign of c**2 - 4*m*k = {disc}, which the symbols do not decide",
            where=repr(self),
            do='Pass regime="underdamped" (or another) to Oscillator, or give numbers',
        )

    @property
    def omega_d(self) -> sp.Expr:
        """Damped natural frequency as an exact sympy value, rad/s."""
        regime = self.regime
        if regime == "undamped":
            return self.omega_n
        if regime != "underdamped":
            raise ModelError(
                f"{_article(regime)} {regime} system does not oscillate, so it has no damped frequency",
                where="damped_frequency",
                do="Use the roots of the characteristic polynomial (characteristic_roots)",
            )
        return sp.sqrt(self.k / self.m - (self.c / (2 * self.m)) ** 2)

    @property
    def damped_frequency(self):
        """``omega_d = omega_n sqrt(1 - zeta^2)``, rad/s (undamped and underdamped only)."""
        return self._with_unit(self.omega_d, "rad/s")

    @property
    def log_decrement(self) -> sp.Expr:
        """``delta = 2 pi zeta / sqrt(1 - zeta^2)`` (underdamped only)."""
        if self.regime != "underdamped":
            raise ModelError(
                f"{_article(self.regime)} {self.regime} system has no logarithmic decrement",
                where="log_decrement",
                do="It is defined for underdamped systems only (0 < zeta < 1)",
            )
        z = self.zeta
        return 2 * sp.pi * z / sp.sqrt(1 - z**2)

    @property
    def quality_factor(self) -> sp.Expr:
        """``Q = 1 / (2 zeta)``."""
        if self.c == 0:
            raise ModelError("an undamped system has an unbounded quality factor", where="quality_factor")
        return 1 / (2 * self.zeta)

    @property
    def static_deflection(self):
        """Static deflection under the weight, ``delta_st = m g / k`` with standard gravity 9.80665 m/s^2, m.

        Not the deflection under a force amplitude applied statically, ``F0 / k``.
        """
        if self.k == 0:
            raise ModelError("with no spring there is no static deflection", where="static_deflection")
        g = sp.Rational("9.80665")
        return self._with_unit(self.m * g / self.k, "m")

    # ---------------------------------------------------------- responses
    def transient_basis(self, t: sp.Symbol) -> tuple[sp.Expr, ...]:
        """The textbook real-form basis of the free motion for the regime."""
        m, c, k = self.m, self.c, self.k
        if m == 0:
            return (sp.exp(-k / c * t),)
        if k == 0:
            return (sp.S.One, t) if c == 0 else (sp.S.One, sp.exp(-c / m * t))
        regime = self.regime
        if regime == "undamped":
            wn = self.omega_n
            return (sp.cos(wn * t), sp.sin(wn * t))
        if regime == "underdamped":
            sigma, wd = c / (2 * m), self.omega_d
            return (sp.exp(-sigma * t) * sp.cos(wd * t), sp.exp(-sigma * t) * sp.sin(wd * t))
        if regime == "critically damped":
            sigma = c / (2 * m)
            return (sp.exp(-sigma * t), t * sp.exp(-sigma * t))
        root = sp.sqrt(c**2 - 4 * m * k)
        return (sp.exp((-c + root) / (2 * m) * t), sp.exp((-c - root) / (2 * m) * t))

    def particular(self, f, *, t: sp.Symbol | None = None) -> Derivation:
        """Particular solution; see :meth:`LinearODE.particular`."""
        return super().particular(self._forcing_si(f), t=t)

    def _forcing_si(self, f):
        if _is_quantity(f):
            from calckit.core.units import Q_, quantity, to_si

            # check the unit on a unit quantity: the magnitude may be an expression in t
            scale = to_si(quantity(Q_(1, f.units), "forcing", expect="force"), "forcing").magnitude
            return exact(f.magnitude, where="forcing") * exact(scale, where="forcing")
        return f

    def response(self, f, x0=0, v0=0, *, t: sp.Symbol | None = None, initial_values=None) -> Response:
        """Total response meeting ``x(0) = x0`` and ``x'(0) = v0``.

        The initial state may also be given as the base class takes it, a list
        ``initial_values = [x0, v0]`` (``[x0]`` for a massless model), in the place
        of x0 or by keyword: ``osc.response(f, [0.002, 0], t=t)``.

        For a massless model (``m = 0``) the equation is first order and only
        ``x0`` is used; ``v0`` must then be left at 0 or None.

        Examples
        --------
        >>> t = sp.Symbol("t", real=True)
        >>> Oscillator(1, 0, 4).response(0, [1, 0], t=t).solution
        cos(2*t)
        """
        if initial_values is None and isinstance(x0, (list, tuple)):
            initial_values, x0 = x0, 0
        if initial_values is not None:
            x0, v0 = self._unpack(initial_values, x0, v0)
        f = self._forcing_si(f)
        x0 = self._initial(x0, "x0", "length")
        if self.m == 0:
            if v0 not in (None, 0):
                raise ModelError(
                    "a massless model is first order, so its initial velocity cannot be chosen",
                    where="v0",
                    do="Leave v0 out; only x0 is used",
                )
            values = [x0]
        else:
            values = [x0, self._initial(0 if v0 is None else v0, "v0", "velocity")]
        regime = self.regime if (self.m != 0 and self.k != 0) else ""
        if is_switching(f, t):
            return piecewise_response(self, f, tuple(values), self.interval_solver(regime), t=resolve_time(f, t))
        t = split_forcing(f, t).t
        return total_response(self, f, values, t=t, basis=self.transient_basis(t), regime=regime)

    def periodic_steady_state(self, f, period, *, t: sp.Symbol | None = None):
        """The exact periodic response to *f* (one period on ``[0, period)``) repeated with *period*.

        A :class:`calckit.engine.periodic.PeriodicSteadyState`; *period* a number in s or a
        pint time. The model needs numbers for m, c and k.
        """
        if _is_quantity(period):
            from calckit.core.units import quantity, to_si

            period = to_si(quantity(period, "period", expect="time"), "period").magnitude
        f = self._forcing_si(f)
        regime = self.regime if (self.m != 0 and self.k != 0) else ""
        return periodic_steady_state(self, f, period, self.interval_solver(regime), t=resolve_time(f, t))

    def interval_solver(self, regime: str = "") -> IntervalSolver:
        """One interval of a switching forcing, with the textbook basis of the free motion."""

        def respond(piece, state, tau):
            return total_response(self, piece, list(state), t=tau, basis=self.transient_basis(tau), regime=regime)

        return scalar_solver(respond, len(self.coefficients) - 1)

    def _unpack(self, initial_values, x0, v0):
        values = list(initial_values)
        order = 1 if self.m == 0 else 2
        if len(values) != order:
            raise ModelError(
                f"got {len(values)} initial value(s) for an equation of order {order}",
                where="initial values",
                do="Give [x0, v0]" if order == 2 else "Give [x0]; a massless model has no initial velocity",
            )
        if x0 not in (None, 0) or v0 not in (None, 0):
            raise ModelError(
                "the initial state is given twice, as initial_values and as x0 or v0",
                where="initial values",
                do="Give either initial_values = [x0, v0] or x0 and v0",
            )
        return values[0], (values[1] if order == 2 else 0)

    def _initial(self, value, label, kind):
        if _is_quantity(value):
            from calckit.core.units import quantity, to_si

            return exact(to_si(quantity(value, label, expect=kind), label).magnitude, where=label)
        return exact(value, where=label)

    def harmonics(self, f, *, t: sp.Symbol | None = None) -> tuple[HarmonicLine, ...]:
        """Steady-state amplitude and phase lag of each pure harmonic in *f*.

        Only groups of constant-amplitude cosines and sines (no polynomial or
        exponential factor) are harmonics in this sense.
        """
        split = split_forcing(self._forcing_si(f), t)
        lines = []
        for group in split.groups:
            if group.decay != 0 or group.degree != 0 or not group.harmonic:
                continue
            w = group.frequency
            fc = sum((term.coefficient for term in group.terms if term.kind == "cos"), sp.S.Zero)
            fs = sum((term.coefficient for term in group.terms if term.kind == "sin"), sp.S.Zero)
            force = sp.sqrt(fc**2 + fs**2)
            real, imag = self.k - self.m * w**2, self.c * w
            denom = sp.sqrt(real**2 + imag**2)
            if denom == 0:
                raise ModelError(
                    f"the harmonic at {w} rad/s is at an undamped resonance: the amplitude grows without bound",
                    where="harmonics",
                    do="Add damping, or move the forcing frequency away from the natural frequency",
                )
            amplitude = force / denom
            lag = sp.atan2(imag, real)
            mag = amplitude * self.k / force if self.k != 0 else sp.nan
            lines.append(HarmonicLine(w, force, sp.atan2(fs, fc), amplitude, lag, mag))
        return tuple(lines)

    def frequency_response(self, omega, **values) -> FrequencyResponse:
        """Receptance ``H(omega) = 1 / (k - m omega^2 + i c omega)`` at numeric frequencies (m/N).

        Returns a :class:`~calckit.engine.numeric.FrequencyResponse` (``receptance``,
        ``amplitude``, ``phase_lag``, ``magnification``), the type
        :func:`calckit.engine.numeric.frequency_response` and
        ``MultiMass.frequency_response`` return; it reads as the receptance array
        (``np.abs(H)``, ``H[0]``). Symbols take numbers from *values* by name. At an
        undamped resonance the receptance is infinite, quietly.

        Examples
        --------
        >>> H = Oscillator(1, 0, 4).frequency_response([0.0, 1.0])
        >>> H.magnification
        array([1.        , 1.33333333])
        """
        params = [self.m, self.c, self.k]
        missing = sorted({s.name for p in params for s in p.free_symbols} - set(values))
        if missing:
            raise ModelError(
                "the frequency response needs numeric m, c and k",
                where="frequency_response",
                do="Substitute numbers first (Oscillator(m, c, k) with values)",
            )
        return frequency_response(self, omega, **values)
