"""The what-if explorer: sliders on a single-mass calculation's inputs, live results and checks.

``explore(...)`` opens a calculation of one mass on a spring and a viscous damper
under a harmonic force, ``m x'' + c x' + k x = F0 cos(w t)``, with a slider on each
input (units in the labels; stiffness and frequency on log scales), live key results
(natural frequency, frequency ratio, amplitude, phase lag, transmissibility, force
into the support), the acceptance checks with their margins, a frequency-response
plot with the operating point marked and a time history. "Keep these values"
writes the current values to an inputs file that ``calckit build`` reads.

Symbolic once, numeric on every move
------------------------------------
The steady-state response, its amplitude and phase lag, the force into the
support and the response from rest are derived once by the engine with symbols
``m, c, k, F0, w`` (per forcing expression, cached), compiled with
:func:`calckit.numeric.compile_expr`, and every slider move only evaluates
arrays. ``benchmarks/bench_explore.py`` measures a move against re-deriving.

Where the values come from
--------------------------
Either an inputs file and a template (the template's parameters are read and
the inputs file is checked against them, as ``calckit build`` does), or values
given directly by keyword (then the template ``single_mass_harmonic`` gives the
rest of the inputs file that "keep" writes). The template's parameters are mapped
to the model by name:

=================  =========================================================
model              parameter names recognised
=================  =========================================================
mass               ``mass``, ``m``
stiffness          ``stiffness``, ``k``
damping            ``damping_ratio``, ``zeta`` (a ratio) or ``damping``,
                   ``damping_coefficient``, ``c`` (a coefficient)
force amplitude    ``force_amplitude``, ``F0``
forcing frequency  ``forcing_frequency``, ``running_speed``, ``speed``
amplitude limit    ``amplitude_limit`` (optional), with
                   ``amplitude_limit_basis`` (optional)
forcing            ``forcing`` (optional): one harmonic in ``F0``, ``w``, ``t``
=================  =========================================================

Other names can be mapped with ``names={"mass": "machine_mass", ...}``.

Display
-------
In Jupyter with ipywidgets the explorer shows its sliders; the same display
carries a still (results table, checks and plot as SVG, with a note saying so)
that front ends without widgets, exported notebooks and sheets show instead. In a
plain Python session the explorer prints as a text table. Without ipywidgets the
explorer still computes, moves by :meth:`Explorer.set` and keeps.

Examples
--------
>>> ex = explore(mass="1850 kg", stiffness="720 kN/m", damping_ratio=0.05,
...              force_amplitude="0.9 kN", forcing_frequency="1480 rpm",
...              amplitude_limit="0.05 mm")  # doctest: +SKIP
>>> ex.set(forcing_frequency="200 rpm")  # doctest: +SKIP
>>> ex.results.checks[0].verdict  # doctest: +SKIP
'not met'
>>> ex.keep("p101_kept.toml")  # doctest: +SKIP
"""

from __future__ import annotations

import html
import io
import json
import math
import os
import re
import tempfile
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import sympy as sp

from .errors import CalcError, InputsError, OverwriteError
from .forcing import split_forcing
from .inputs import TITLE_FIELDS, check_keys, non_negative, parse_expression, positive, read_inputs
from .numeric import Compiled, compile_expr
from .oscillator import Oscillator
from .sheet import Check
from .units import Q_, angular_frequency, fmt, fmt_number, quantity, to_si
from .workflow import load_template

__all__ = ["explore", "Explorer", "WhatIf", "Kept", "ROLES", "SEPARATION_BASIS"]

#: Basis of the speed-separation check.
SEPARATION_BASIS = (
    "common practice, no source: keep running speed outside about +/-20 % of a natural frequency"
)
#: Template used when values are given directly.
DEFAULT_TEMPLATE = "single_mass_harmonic"
#: Points on the frequency-response curve and on the time history.
CURVE_POINTS = 2000
#: Significant figures a slider move keeps (at least as many as the starting value shows).
SIGNIFICANT = 4

_NO_WIDGETS_NOTE = (
    "A still of the what-if explorer at the values shown: the sliders need Jupyter with "
    "ipywidgets and a running kernel, which this view does not have."
)


@dataclass(frozen=True)
class _Role:
    """One input of the model: its keyword, kind of quantity and the parameter names it goes by."""

    key: str
    kind: str | None  # units kind (calckit.units.KINDS); None for text
    names: tuple[str, ...]
    label: str
    sign: str = "positive"  # "positive", "non-negative" or "" (text)
    scale: str = "linear"  # slider scale: "linear", "log" or "" (no slider)


#: The model's inputs, by keyword: the names a template may declare them under.
ROLES: Mapping[str, _Role] = MappingProxyType(
    {
        r.key: r
        for r in (
            _Role("mass", "mass", ("mass", "m"), "mass"),
            _Role("stiffness", "stiffness", ("stiffness", "k"), "stiffness", scale="log"),
            _Role(
                "damping_ratio", "dimensionless", ("damping_ratio", "zeta"), "damping ratio", "non-negative"
            ),
            _Role(
                "damping",
                "damping coefficient",
                ("damping", "damping_coefficient", "c"),
                "damping coefficient",
                "non-negative",
            ),
            _Role("force_amplitude", "force", ("force_amplitude", "F0"), "force amplitude", "non-negative"),
            _Role(
                "forcing_frequency",
                "frequency",
                ("forcing_frequency", "running_speed", "speed"),
                "forcing frequency",
                scale="log",
            ),
            _Role("amplitude_limit", "length", ("amplitude_limit",), "amplitude limit", scale=""),
            _Role("amplitude_limit_basis", None, ("amplitude_limit_basis",), "basis of the limit", "", ""),
            _Role("forcing", None, ("forcing",), "forcing", "", ""),
        )
    }
)
_REQUIRED = ("mass", "stiffness", "force_amplitude", "forcing_frequency")
_SLIDERS = ("mass", "stiffness", "damping_ratio", "damping", "force_amplitude", "forcing_frequency")


# ---------------------------------------------------------------------------
# The derivation, once per forcing expression

_m, _c, _k, _F0, _w = sp.symbols("m c k F0 w", positive=True)
_t = sp.Symbol("t", real=True)
_PARAMS = (_m, _c, _k, _F0)


@dataclass(frozen=True)
class _Derived:
    """The solution derived once with symbols and compiled for numpy."""

    forcing: sp.Expr
    derivation: Any  # Derivation: x_p(t)
    response: Any  # Response from rest, or None if it could not be derived
    amplitude: Compiled  # X(w; m, c, k, F0), m
    magnification: Compiled  # X k / F0 (w; m, c, k)
    phase_lag: Compiled  # phi(w; m, c, k), rad
    transmitted: Compiled  # |k x + c x'| amplitude (w; m, c, k, F0), N
    transmissibility: Compiled  # F_T / F0 (w; m, c, k)
    steady: Compiled  # x_p(t; m, c, k, F0, w)
    from_rest: Compiled | None  # x(t) from x(0) = 0, x'(0) = 0


@lru_cache(maxsize=8)
def _derive(forcing: sp.Expr) -> _Derived:
    """Derive the response to *forcing* (in F0, w, t) with symbolic m, c, k, once."""
    osc = Oscillator(_m, _c, _k, regime="underdamped")
    derivation = osc.particular(forcing, t=_t)
    (line,) = osc.harmonics(forcing, t=_t)
    support = sp.sqrt(_k**2 + (_c * _w) ** 2)  # |k + i c w|: the spring and the damper together
    try:
        response = osc.response(forcing, 0, 0, t=_t)
        from_rest = compile_expr(response.solution, _t, (*_PARAMS, _w))
    except CalcError:  # pragma: no cover - the engine derives every harmonic forcing from rest
        response, from_rest = None, None
    return _Derived(
        forcing=forcing,
        derivation=derivation,
        response=response,
        amplitude=compile_expr(line.amplitude, _w, _PARAMS),
        magnification=compile_expr(line.magnification, _w, (_m, _c, _k)),
        phase_lag=compile_expr(line.phase_lag, _w, (_m, _c, _k)),
        transmitted=compile_expr(line.amplitude * support, _w, _PARAMS),
        transmissibility=compile_expr(line.amplitude * support / line.force_amplitude, _w, (_m, _c, _k)),
        steady=compile_expr(derivation.solution, _t, (*_PARAMS, _w)),
        from_rest=from_rest,
    )


def _forcing_expr(text: Any, where: str) -> sp.Expr:
    """The forcing text read in F0, w and t; refused unless one harmonic at w."""
    expr = parse_expression(text, {"F0": _F0, "w": _w}, where=where, t=_t)
    groups = split_forcing(expr, _t).groups
    if len(groups) != 1 or not groups[0].harmonic or groups[0].decay != 0 or groups[0].frequency != _w:
        raise InputsError(
            f'"{text}" is not one harmonic at the forcing frequency',
            where=where,
            do="The explorer takes a force at one frequency, for example F0*cos(w*t) or F0*sin(w*t)",
        )
    return expr


# ---------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class WhatIf:
    """The key results at one set of values (SI units unless said otherwise).

    The names are the result names of the ``single_mass_harmonic`` sheet where
    that sheet has them, so that :meth:`si` can be compared with a built sheet.
    """

    mass: float  # kg
    stiffness: float  # N/m
    damping_coefficient: float  # N s/m
    damping_ratio: float
    force_amplitude: float  # N
    forcing_frequency: float  # rad/s
    natural_frequency: float  # rad/s
    natural_frequency_hz: float  # Hz
    frequency_ratio: float
    magnification: float
    static_deflection: float  # m, F0 / k
    amplitude: float  # m
    phase_lag: float  # rad
    transmissibility: float
    transmitted_force: float  # N, amplitude of k x + c x'
    checks: tuple[Check, ...] = ()

    def si(self) -> dict[str, float]:
        """The results by name, SI values (the sheet's JSON record gives results the same way)."""
        return {
            name: getattr(self, name)
            for name in (
                "damping_coefficient",
                "natural_frequency",
                "natural_frequency_hz",
                "frequency_ratio",
                "magnification",
                "static_deflection",
                "amplitude",
                "phase_lag",
                "transmissibility",
                "transmitted_force",
            )
        }

    def check(self, name: str) -> Check:
        """The check called *name* (``"amplitude"``, ``"speed separation"``)."""
        for item in self.checks:
            if item.name == name:
                return item
        known = ", ".join(c.name for c in self.checks) or "none"
        raise InputsError(f"no check named {name!r}", where="WhatIf.check", do=f"The checks are: {known}")


@dataclass(frozen=True)
class Kept:
    """What :meth:`Explorer.keep` wrote: the file and the values changed from the start.

    ``changes`` holds ``(name, starting text, kept text)`` for each value that moved.
    """

    path: Path
    changes: tuple[tuple[str, str, str], ...]
    template: str

    def summary(self) -> str:
        """One sentence: what was written and what changed."""
        if not self.changes:
            moved = "no value changed from the start"
        else:
            moved = "; ".join(f"{name} {old} -> {new}" for name, old, new in self.changes)
        return f"Wrote {self.path}: {moved}."


# ---------------------------------------------------------------------------
# Small helpers


def _round_sig(x: float, sig: int) -> float:
    if x == 0 or not math.isfinite(x):
        return float(x)
    return float(f"{x:.{sig - 1}e}")


def _digits(number: float) -> int:
    """Significant digits a starting value shows (``1850`` -> 4, ``0.05`` -> 1, ``1234.56`` -> 6)."""
    mantissa = repr(abs(float(number))).split("e")[0]
    if mantissa.endswith(".0"):
        mantissa = mantissa[:-2]
    return max(len(mantissa.replace(".", "").lstrip("0")), 1)


def _number_text(x: float) -> str:
    """The shortest text of a float, without a trailing ``.0`` (``1923.0`` -> ``"1923"``)."""
    text = repr(float(x))
    return text[:-2] if text.endswith(".0") else text


def _nice_step(span: float, count: int = 400) -> float:
    """A 1-2-5 step near ``span / count``."""
    raw = span / count
    if raw <= 0 or not math.isfinite(raw):
        return 0.01
    power = 10 ** math.floor(math.log10(raw))
    for factor in (1, 2, 5, 10):
        if factor * power >= raw:
            return factor * power
    return 10 * power  # pragma: no cover


def _nice_ceiling(x: float) -> float:
    """The 1-2-5 number at or above *x* (``0.031`` -> ``0.05``)."""
    power = 10 ** math.floor(math.log10(x))
    for factor in (1, 2, 5, 10):
        if factor * power >= x * (1 - 1e-12):
            return factor * power
    return 10 * power  # pragma: no cover


def _unit_text(q) -> str:
    return f"{q.units:~P}"


_NUMBER_AT_START = re.compile(r"\s*[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*(.*)$", re.DOTALL)


def _written_unit(raw: Any, q) -> str:
    """The unit as the user wrote it (``"720 kN/m"`` -> ``"kN/m"``), for writing values back."""
    if isinstance(raw, str):
        found = _NUMBER_AT_START.match(raw)
        if found:
            return found.group(1).strip()
    return f"{q.units:~}" if not q.unitless else ""


def _si_factor(role: _Role, unit: str, where: str) -> float:
    """SI value of one display unit (rad/s for frequencies)."""
    one = Q_(1, unit)
    if role.kind == "frequency":
        return angular_frequency(one, where)
    return float(to_si(one, where).magnitude)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return _number_text(value) if isinstance(value, float) and not value.is_integer() else repr(value)
    if isinstance(value, tuple | list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return json.dumps(str(value), ensure_ascii=False)


def _in_kernel() -> bool:
    import sys

    ipython = sys.modules.get("IPython")
    if ipython is None:
        return False
    try:
        shell = ipython.get_ipython()
    except AttributeError:  # pragma: no cover
        return False
    return shell is not None and getattr(shell, "kernel", None) is not None


def _widgets_module():
    """ipywidgets, or None where it cannot be imported."""
    try:
        import ipywidgets
    except ImportError:
        return None
    return ipywidgets


# ---------------------------------------------------------------------------
# One input of the explorer


@dataclass
class _Input:
    """An input on a slider: its parameter name, starting value and current value (display unit)."""

    role: _Role
    name: str  # the template's parameter name
    raw: Any  # the starting value as given (text, number)
    unit: str  # display unit ("kg", "kN/m", "rpm", "" for a pure number)
    written_unit: str  # the unit as written in the inputs
    factor: float  # SI value of one display unit
    start: float  # starting value in the display unit
    value: float  # current value in the display unit
    sig: int  # significant figures kept on a move
    from_text: bool  # the starting value was text ("1850 kg"), not a bare number
    where: str  # where to point an error about it

    @property
    def si(self) -> float:
        return self.value * self.factor

    @property
    def label(self) -> str:
        shown = self.name.replace("_", " ")
        return f"{shown} ({self.unit})" if self.unit else shown

    def text(self, value: float | None = None) -> str:
        """The value as an inputs file holds it: ``"1923 kg"`` (text) or ``0.065`` (a number)."""
        v = self.value if value is None else value
        if self.from_text:
            return f"{_number_text(v)} {self.written_unit}".strip()
        return _number_text(v)

    def toml(self) -> str:
        """The value as TOML text: a quoted string with its unit, or a bare number."""
        return json.dumps(self.text(), ensure_ascii=False) if self.from_text else _number_text(self.value)

    @property
    def changed(self) -> bool:
        return self.value != self.start


# ---------------------------------------------------------------------------
# The explorer


class Explorer:
    """Sliders over one mass on a spring and damper under a harmonic force; see :func:`explore`.

    Attributes
    ----------
    results : WhatIf
        The key results and checks at the current values.
    derivation : Derivation
        The steady-state solution derived once with symbols (``ck.show`` renders it).
    widget : ipywidgets.VBox or None
        The sliders, results, plot and keep controls; None without ipywidgets.
    template : str
        The template the kept inputs file is for.
    """

    def __init__(
        self,
        inputs: dict[str, _Input],
        fixed: dict[str, Any],
        *,
        template: Any,
        values: Mapping[str, Any],
        file: Any,
        forcing: sp.Expr,
        limit: tuple[Any, str] | None,
        band: float,
        points: int,
        widgets: bool,
    ):
        self._inputs = inputs
        self._fixed = fixed  # role key -> value for roles without a slider (limit, basis, forcing)
        self._template = template
        self._values = dict(values)  # every template parameter's starting value, raw
        self._file = file
        self._limit = limit  # (quantity, parameter name) or None
        self._band = band
        self._points = points
        self._model = _derive(forcing)
        self._hold = False
        freq = inputs["forcing_frequency"]
        lo, hi = self._frequency_range()
        self._grid = np.logspace(math.log10(lo), math.log10(hi), points)  # display unit
        self._omega = self._grid * freq.factor  # rad/s
        self.results = self._evaluate()
        self._figure = None
        self._artists: dict[str, Any] = {}
        self.widget = None
        self._controls: dict[str, Any] = {}
        self._ipywidgets = _widgets_module() if widgets else None
        if self._ipywidgets is not None:
            self._build_widgets()
            self._draw()

    # ------------------------------------------------------------ reading
    @property
    def template(self) -> str:
        return self._template.name

    @property
    def derivation(self):
        return self._model.derivation

    @property
    def controls(self) -> Mapping[str, Any]:
        """Every widget by name: the sliders (by parameter name), ``results``, ``plot``,
        ``path``, ``replace``, ``keep``, ``status`` and ``back``. Empty without ipywidgets."""
        return MappingProxyType(self._controls)

    @property
    def sliders(self) -> dict[str, Any]:
        """The sliders by parameter name (empty without ipywidgets)."""
        return {i.name: self._controls[i.name] for i in self._inputs.values() if i.name in self._controls}

    @property
    def values(self) -> dict[str, Any]:
        """Current values by parameter name, as quantities in the slider units."""
        return {i.name: Q_(i.value, i.unit) if i.unit else i.value for i in self._inputs.values()}

    @property
    def starting_values(self) -> dict[str, Any]:
        return {i.name: Q_(i.start, i.unit) if i.unit else i.start for i in self._inputs.values()}

    def changes(self) -> tuple[tuple[str, str, str], ...]:
        """``(name, starting text, current text)`` for each value moved from the start."""
        return tuple((i.name, i.text(i.start), i.text()) for i in self._inputs.values() if i.changed)

    def _frequency_range(self) -> tuple[float, float]:
        freq = self._inputs["forcing_frequency"]
        m, k = self._inputs["mass"], self._inputs["stiffness"]
        wn = math.sqrt(k.si / m.si) / freq.factor  # display unit
        lo = 0.1 * min(freq.start, wn)
        hi = 3.0 * max(freq.start, wn)
        return lo, hi

    # ------------------------------------------------------------ numbers
    def _evaluate(self) -> WhatIf:
        """The key results at the current values: compiled functions only, no sympy."""
        ins = self._inputs
        m, k, F0, w = (
            ins["mass"].si,
            ins["stiffness"].si,
            ins["force_amplitude"].si,
            ins["forcing_frequency"].si,
        )
        if "damping_ratio" in ins:
            zeta = ins["damping_ratio"].si
            c = 2.0 * zeta * math.sqrt(k * m)
        else:
            c = ins["damping"].si
            zeta = c / (2.0 * math.sqrt(k * m))
        d = self._model
        at = np.array([w])
        wn = math.sqrt(k / m)
        amplitude = float(d.amplitude(at, m=m, c=c, k=k, F0=F0)[0])
        result = dict(
            mass=m,
            stiffness=k,
            damping_coefficient=c,
            damping_ratio=zeta,
            force_amplitude=F0,
            forcing_frequency=w,
            natural_frequency=wn,
            natural_frequency_hz=wn / (2 * math.pi),
            frequency_ratio=w / wn,
            magnification=float(d.magnification(at, m=m, c=c, k=k)[0]),
            static_deflection=F0 / k,
            amplitude=amplitude,
            phase_lag=float(d.phase_lag(at, m=m, c=c, k=k)[0]),
            transmissibility=float(d.transmissibility(at, m=m, c=c, k=k)[0]),
            transmitted_force=float(d.transmitted(at, m=m, c=c, k=k, F0=F0)[0]),
        )
        checks = []
        if self._limit is not None:
            limit, _ = self._limit
            unit = _unit_text(limit)
            value = Q_(amplitude, "m").to(limit.units).magnitude if math.isfinite(amplitude) else math.inf
            lim = float(limit.magnitude)
            met = value <= lim
            checks.append(
                Check(
                    "amplitude",
                    float(value),
                    lim,
                    "<=",
                    unit,
                    (lim - value) / abs(lim) * 100,
                    bool(met),
                    str(self._fixed.get("amplitude_limit_basis") or ""),
                    fmt(Q_(value, limit.units)),
                    fmt(limit),
                )
            )
        separation = abs(w / wn - 1) * 100
        band = self._band * 100
        checks.append(
            Check(
                "speed separation",
                separation,
                band,
                ">=",
                "percent",
                (separation - band) / band * 100,
                separation >= band,
                SEPARATION_BASIS,
                f"{fmt_number(separation)} %",
                f"{fmt_number(band)} %",
            )
        )
        return WhatIf(**result, checks=tuple(checks))

    def _curves(self) -> dict[str, np.ndarray]:
        """The frequency-response curve and the time histories at the current values."""
        r = self.results
        m, c, k, F0, w = r.mass, r.damping_coefficient, r.stiffness, r.force_amplitude, r.forcing_frequency
        d = self._model
        curve = d.amplitude(self._omega, m=m, c=c, k=k, F0=F0)
        period = 2 * math.pi / w
        span = min(max(4 * period, 3 * 2 * math.pi / r.natural_frequency), 60 * period)
        times = np.linspace(0.0, _nice_ceiling(span * 1000) / 1000, self._points)  # a 1-2-5 span in ms
        steady = d.steady(times, m=m, c=c, k=k, F0=F0, w=w)
        rest = None
        if d.from_rest is not None and r.damping_ratio < 1:
            rest = d.from_rest(times, m=m, c=c, k=k, F0=F0, w=w)
        return {"curve": curve, "times": times, "steady": steady, "from_rest": rest}

    # ------------------------------------------------------------ moving
    def set(self, **values: Any) -> WhatIf:
        """Move inputs, by parameter name or model keyword: ``set(stiffness="900 kN/m")``.

        Values are text with a unit, pint quantities, or plain numbers in the
        slider's unit (the unit in its label). Returns the new results.
        """
        moved = {}
        for key, value in values.items():
            item = self._lookup(key)
            if item is None:
                self._set_fixed(key, value)
                continue
            if isinstance(value, int | float) and not isinstance(value, bool):
                number = float(value)
            else:
                q = quantity(value, item.name, expect=item.role.kind)
                number = float(q.to(item.unit).magnitude) if item.unit else float(q.to("").magnitude)
            self._check_sign(item, number)
            moved[item.name] = number
        self._hold = True
        try:
            for name, number in moved.items():
                item = self._inputs_by_name()[name]
                item.value = number
                slider = self._controls.get(name)
                if slider is not None:
                    self._fit_slider(slider, number)
                    slider.value = number
        finally:
            self._hold = False
        self.refresh()
        return self.results

    def reset(self) -> WhatIf:
        """Back to the starting values."""
        return self.set(**{i.name: i.start for i in self._inputs.values()})

    def _inputs_by_name(self) -> dict[str, _Input]:
        return {i.name: i for i in self._inputs.values()}

    def _lookup(self, key: str) -> _Input | None:
        if key in self._inputs:
            return self._inputs[key]
        return self._inputs_by_name().get(key)

    def _set_fixed(self, key: str, value: Any) -> None:
        limit_name = self._limit[1] if self._limit else None
        if key in ("amplitude_limit", limit_name) and self._limit is not None:
            q = positive(quantity(value, limit_name, expect="length"), limit_name)
            self._limit = (q, limit_name)
            return
        known = ", ".join([i.name for i in self._inputs.values()] + ([limit_name] if limit_name else []))
        raise InputsError(
            f'"{key}" is not an input the explorer moves',
            where=f"Explorer.set({key}=...)",
            do=f"Move one of: {known}",
        )

    @staticmethod
    def _check_sign(item: _Input, number: float) -> None:
        if not math.isfinite(number):
            raise InputsError(f"{number} is not a finite number", where=item.name, do="Give a finite number")
        if number < 0 or (number == 0 and item.role.sign == "positive"):
            bound = "greater than zero" if item.role.sign == "positive" else "zero or more"
            raise InputsError(
                f"must be {bound}, got {_number_text(number)} {item.unit}".rstrip(),
                where=item.name,
                do="Check the value and its sign",
            )

    def _on_move(self, change) -> None:
        if self._hold:
            return
        item = self._inputs_by_name()[change["owner"]._calckit_name]
        number = float(change["new"])
        item.value = item.start if number == item.start else _round_sig(number, item.sig)
        self.refresh()

    def refresh(self) -> None:
        """Recompute the results and update the displayed table and plot."""
        self.results = self._evaluate()
        if self.widget is not None:
            self._controls["results"].value = self._results_html()
            self._draw()

    # ------------------------------------------------------------ widgets
    def _slider(self, item: _Input):
        w = self._ipywidgets
        style = {"description_width": "180px"}
        layout = w.Layout(width="480px")
        readout = ".4g"
        if item.role.key == "forcing_frequency":
            lo, hi = self._frequency_range()
            return w.FloatLogSlider(
                value=item.start,
                base=10,
                min=math.log10(lo),
                max=math.log10(hi),
                step=(math.log10(hi) - math.log10(lo)) / 400,
                description=item.label,
                readout_format=readout,
                continuous_update=True,
                style=style,
                layout=layout,
            )
        if item.role.scale == "log":
            centre = math.log10(item.start)
            return w.FloatLogSlider(
                value=item.start,
                base=10,
                min=centre - 1,
                max=centre + 1,
                step=0.005,
                description=item.label,
                readout_format=readout,
                style=style,
                layout=layout,
            )
        if item.role.key == "damping_ratio":
            per_one = 1 / item.factor  # display units in a ratio of 1 (100 for percent)
            hi = max(0.5 * per_one, min(0.95 * per_one, 2 * item.start))
            lo = 0.0
        elif item.role.key == "damping":
            m, k = self._inputs["mass"].si, self._inputs["stiffness"].si
            critical = 2 * math.sqrt(k * m) / item.factor
            hi, lo = max(0.5 * critical, 2 * item.start), 0.0
        elif item.role.key == "force_amplitude":
            hi, lo = 3 * item.start if item.start > 0 else 1.0, 0.0
        else:  # mass
            hi, lo = 3 * item.start, 0.25 * item.start
        return w.FloatSlider(
            value=item.start,
            min=lo,
            max=hi,
            step=_nice_step(hi - lo),
            description=item.label,
            readout_format=readout,
            style=style,
            layout=layout,
        )

    @staticmethod
    def _fit_slider(slider, number: float) -> None:
        """Widen a slider's range so that a value set by :meth:`set` is not clipped."""
        if hasattr(slider, "base"):
            exponent = math.log(number, slider.base) if number > 0 else slider.min
            if exponent < slider.min:
                slider.min = math.floor(exponent * 10) / 10
            if exponent > slider.max:
                slider.max = math.ceil(exponent * 10) / 10
        else:
            if number < slider.min:
                slider.min = number
            if number > slider.max:
                slider.max = number

    def _build_widgets(self) -> None:
        w = self._ipywidgets
        sliders = []
        for item in self._inputs.values():
            slider = self._slider(item)
            slider._calckit_name = item.name
            slider.observe(self._on_move, names="value")
            self._controls[item.name] = slider
            sliders.append(slider)
        back = w.Button(description="Back to the starting values", layout=w.Layout(width="240px"))
        back.on_click(lambda _: self.reset())
        results = w.HTML(self._results_html())
        plot = w.Image(format="png", layout=w.Layout(width="100%", max_width="960px"))
        name = w.Text(
            value=str(self._default_keep_path()),
            description="inputs file",
            style={"description_width": "80px"},
            layout=w.Layout(width="420px"),
        )
        replace = w.Checkbox(value=False, description="replace it if it exists", indent=False)
        keep = w.Button(description="Keep these values", button_style="", layout=w.Layout(width="180px"))
        status = w.HTML("")
        keep.on_click(lambda _: self._keep_clicked())
        self._controls.update(
            back=back, results=results, plot=plot, path=name, replace=replace, keep=keep, status=status
        )
        title = self._values.get("subject") or "One mass on a spring and damper under a harmonic force"
        self.widget = w.VBox(
            [
                w.HTML(f"<b>What if: {html.escape(str(title))}</b>"),
                w.HBox([w.VBox([*sliders, back]), results]),
                plot,
                w.HBox([name, replace, keep]),
                status,
            ]
        )

    def _default_keep_path(self) -> Path:
        stem = self._file.path.stem if self._file is not None else self.template
        candidate = Path(f"{stem}_kept.toml")
        return _free_name(candidate)

    def _keep_clicked(self) -> None:
        status = self._controls["status"]
        path = Path(self._controls["path"].value.strip() or self._default_keep_path())
        try:
            kept = self.keep(path, overwrite=self._controls["replace"].value)
        except OverwriteError as exc:
            alongside = _free_name(path)
            self._controls["path"].value = str(alongside)
            status.value = (
                f"<p>{html.escape(str(exc))}</p><p>Nothing was written. Press the button again to write "
                f"<code>{html.escape(str(alongside))}</code> alongside it instead, or tick "
                "&ldquo;replace it if it exists&rdquo;.</p>"
            )
            return
        except (CalcError, OSError) as exc:
            status.value = f"<p>Nothing was written: {html.escape(str(exc))}</p>"
            return
        status.value = _kept_html(kept)

    # ------------------------------------------------------------ figure
    # Dynamic artists are drawn over a cached frame (axes, ticks, labels, legend): a move
    # redraws only them. The frame is redrawn when an axis range changes, and the ranges
    # move in steps (decades, 1-2-5) so that most moves keep the frame.
    _DYNAMIC = ("band", "natural", "curve", "point", "legend1", "from_rest", "steady", "legend2")

    def _make_figure(self):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure
        from matplotlib.ticker import NullLocator

        freq = self._inputs["forcing_frequency"]
        unit = self._amplitude_unit()
        fig = Figure(figsize=(9.6, 3.4), dpi=80)
        FigureCanvasAgg(fig)
        fig.subplots_adjust(left=0.075, right=0.985, bottom=0.16, top=0.90, wspace=0.28)
        ax1, ax2 = fig.subplots(1, 2)
        a = {}
        a["band"] = ax1.axvspan(1, 1, color="0.85", label="within 20 % of the natural frequency")
        a["natural"] = ax1.axvline(1, color="0.4", lw=0.8, ls=":")
        (a["curve"],) = ax1.plot([], [], color="black", lw=1.2)
        (a["point"],) = ax1.plot([], [], "o", color="black", ms=6, label="operating point")
        if self._limit is not None:
            a["limit"] = ax1.axhline(1, color="0.3", lw=0.9, ls="--", label="amplitude limit")
        ax1.set_xscale("log")
        ax1.set_yscale("log")
        ax1.yaxis.set_minor_locator(NullLocator())
        ax1.set_xlim(self._grid[0], self._grid[-1])
        ax1.set_xlabel(f"forcing frequency, {freq.unit or 'rad/s'}")
        ax1.set_ylabel(f"amplitude X, {unit}")
        ax1.set_title("Frequency response", fontsize=10)
        a["legend1"] = ax1.legend(loc="lower left", fontsize=7, framealpha=0.9)
        (a["from_rest"],) = ax2.plot([], [], color="0.6", lw=0.8, label="from rest")
        (a["steady"],) = ax2.plot([], [], color="black", lw=1.2, label="steady state")
        if self._limit is not None:
            a["limit_up"] = ax2.axhline(1, color="0.3", lw=0.9, ls="--")
            a["limit_down"] = ax2.axhline(-1, color="0.3", lw=0.9, ls="--")
        ax2.set_xlabel("time, ms")
        ax2.set_ylabel(f"displacement x, {unit}")
        ax2.set_title("Time history at the operating point", fontsize=10)
        a["legend2"] = ax2.legend(loc="upper right", fontsize=7, framealpha=0.9)
        for name in self._DYNAMIC:
            a[name].set_animated(True)
        a["ax1"], a["ax2"] = ax1, ax2
        self._figure, self._artists = fig, a
        self._frame = None  # (limits, cached background)

    def _amplitude_unit(self) -> str:
        return _unit_text(self._limit[0]) if self._limit is not None else "mm"

    def _update_figure(self) -> tuple:
        """Put the current curves into the existing artists (no new figure, no new lines).

        Returns the axis ranges, which change in steps."""
        if self._figure is None:
            self._make_figure()
        a, r = self._artists, self.results
        unit = self._amplitude_unit()
        to_unit = Q_(1, "m").to(unit).magnitude
        freq = self._inputs["forcing_frequency"]
        curves = self._curves()
        y = curves["curve"] * to_unit
        a["curve"].set_data(self._grid, y)
        x_op = r.forcing_frequency / freq.factor
        a["point"].set_data([x_op], [r.amplitude * to_unit])
        wn = r.natural_frequency / freq.factor
        a["natural"].set_xdata([wn, wn])
        _set_span(a["band"], (1 - self._band) * wn, (1 + self._band) * wn)
        finite = y[np.isfinite(y) & (y > 0)]
        top = float(finite.max()) if finite.size else 1.0
        bottom = float(finite.min()) if finite.size else 1e-6
        lim = float(self._limit[0].magnitude) if self._limit is not None else None
        if lim is not None:
            top, bottom = max(top, lim), min(bottom, lim)
        y_range = (10.0 ** math.floor(math.log10(bottom / 2)), 10.0 ** math.ceil(math.log10(top * 2)))
        ms = curves["times"] * 1000
        steady = curves["steady"] * to_unit
        rest = curves["from_rest"]
        a["steady"].set_data(ms, steady)
        a["from_rest"].set_data(ms, rest * to_unit if rest is not None else np.full_like(ms, np.nan))
        peak = 0.0
        for v in (steady, rest * to_unit if rest is not None else None):
            if v is not None and np.isfinite(v).any():
                peak = max(peak, float(np.max(np.abs(v[np.isfinite(v)]))))
        peak = max(peak, lim or 0.0)
        peak = _nice_ceiling(1.1 * peak) if peak > 0 and math.isfinite(peak) else 1.0
        ranges = (y_range, float(ms[-1]), peak, lim)
        if ranges != getattr(self, "_ranges", None):
            a["ax1"].set_ylim(*y_range)
            a["ax2"].set_xlim(0, float(ms[-1]))
            a["ax2"].set_ylim(-peak, peak)
            if lim is not None:
                a["limit"].set_ydata([lim, lim])
                a["limit_up"].set_ydata([lim, lim])
                a["limit_down"].set_ydata([-lim, -lim])
            self._ranges = ranges
        return ranges

    def _png(self) -> bytes:
        """The figure as PNG: the cached frame with the dynamic artists drawn over it."""
        from PIL import Image

        ranges = self._update_figure()
        canvas = self._figure.canvas
        if self._frame is None or self._frame[0] != ranges:
            canvas.draw()  # animated artists are left out of a full draw
            self._frame = (ranges, canvas.copy_from_bbox(self._figure.bbox))
        else:
            canvas.restore_region(self._frame[1])
        for name in self._DYNAMIC:
            artist = self._artists[name]
            artist.axes.draw_artist(artist)
        width, height = canvas.get_width_height()
        image = Image.frombuffer("RGBA", (width, height), canvas.buffer_rgba(), "raw", "RGBA", 0, 1)
        buffer = io.BytesIO()
        image.save(buffer, format="png", compress_level=1)
        return buffer.getvalue()

    def _svg(self) -> str:
        import matplotlib

        self._update_figure()
        for name in self._DYNAMIC:  # a saved figure leaves animated artists out
            self._artists[name].set_animated(False)
        try:
            buffer = io.StringIO()
            with matplotlib.rc_context({"svg.hashsalt": "calckit", "svg.fonttype": "path"}):
                self._figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
        finally:
            for name in self._DYNAMIC:
                self._artists[name].set_animated(True)
            self._frame = None
        svg = buffer.getvalue()
        svg = svg[svg.index("<svg") :]
        return re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.DOTALL)

    def _draw(self) -> None:
        self._controls["plot"].value = self._png()

    # ------------------------------------------------------------ text
    def _rows(self) -> list[tuple[str, str, str, str]]:
        """``(name, symbol, shown value, SI value)`` for each key result."""
        r = self.results
        freq = self._inputs["forcing_frequency"]
        force_unit = self._inputs["force_amplitude"].unit or "N"
        amp_unit = self._amplitude_unit()
        wn_alt = f" = {fmt(Q_(r.natural_frequency_hz, 'Hz'))}"
        if freq.unit and freq.unit not in ("Hz", "rad/s"):
            wn_alt += f" = {fmt_number(r.natural_frequency / freq.factor)} {freq.unit}"
        amplitude = (
            fmt(Q_(r.amplitude, "m").to(amp_unit))
            if math.isfinite(r.amplitude)
            else "unbounded (undamped resonance)"
        )
        return [
            (
                "natural_frequency",
                "natural frequency ω<sub>n</sub>",
                f"{fmt(Q_(r.natural_frequency, 'rad/s'))}{wn_alt}",
                repr(r.natural_frequency),
            ),
            (
                "frequency_ratio",
                "frequency ratio r = ω/ω<sub>n</sub>",
                fmt_number(r.frequency_ratio),
                repr(r.frequency_ratio),
            ),
            ("damping_ratio", "damping ratio ζ", fmt_number(r.damping_ratio), repr(r.damping_ratio)),
            ("amplitude", "amplitude X", amplitude, repr(r.amplitude)),
            (
                "magnification",
                "magnification X k/F<sub>0</sub>",
                fmt_number(r.magnification),
                repr(r.magnification),
            ),
            ("phase_lag", "phase lag φ", fmt(Q_(r.phase_lag, "rad").to("deg")), repr(r.phase_lag)),
            (
                "transmissibility",
                "transmissibility T",
                fmt_number(r.transmissibility),
                repr(r.transmissibility),
            ),
            (
                "transmitted_force",
                "force into the support F<sub>T</sub>",
                fmt(Q_(r.transmitted_force, "N").to(force_unit)),
                repr(r.transmitted_force),
            ),
        ]

    def _results_html(self) -> str:
        rows = "".join(
            f'<tr data-name="{name}" data-si="{si}"><td>{label}</td><td style="text-align:right">'
            f"{html.escape(shown)}</td></tr>"
            for name, label, shown, si in self._rows()
        )
        checks = "".join(_check_row(c) for c in self.results.checks)
        moved = self.changes()
        changed = (
            "<p>Changed from the start: "
            + "; ".join(f"{html.escape(n)} {html.escape(o)} &rarr; {html.escape(v)}" for n, o, v in moved)
            + "</p>"
            if moved
            else "<p>At the starting values.</p>"
        )
        return (
            '<div class="calckit-explore">'
            f"<table><tbody>{rows}</tbody></table>"
            f"<table><thead><tr><th>check</th><th>value</th><th>limit</th><th>verdict</th><th>margin</th></tr>"
            f"</thead><tbody>{checks}</tbody></table>{changed}</div>"
        )

    def static_html(self, note: str = _NO_WIDGETS_NOTE) -> str:
        """A still: the note, the inputs, results and checks, and the plot as SVG."""
        inputs = "".join(
            f"<tr><td>{html.escape(i.name)}</td><td>{html.escape(i.text())}</td></tr>"
            for i in self._inputs.values()
        )
        return (
            f'<div class="calckit-explore-still"><p><em>{html.escape(note)}</em></p>'
            f"<table><tbody>{inputs}</tbody></table>{self._results_html()}"
            f"<figure>{self._svg()}</figure></div>"
        )

    def text(self) -> str:
        """The values, results and checks as plain text."""
        lines = ["What-if explorer (" + self.template + ")", "inputs:"]
        lines += [f"  {i.name} = {i.text()}" for i in self._inputs.values()]
        lines.append("results:")
        for _, label, shown, _ in self._rows():
            plain = re.sub(r"<sub>(.*?)</sub>", r"_\1", label)
            lines.append(f"  {plain}: {shown}")
        lines.append("checks:")
        for c in self.results.checks:
            lines.append(
                f"  {c.name}: {c.shown_value} {c.relation} {c.shown_limit}: {c.verdict} "
                f"(margin {fmt_number(c.margin_percent, 3)} %)"
            )
        return "\n".join(lines)

    def __repr__(self) -> str:
        return self.text()

    def _repr_mimebundle_(self, include=None, exclude=None):
        if self.widget is not None and _in_kernel():
            data = dict(self.widget._repr_mimebundle_())
            data["text/html"] = self.static_html()
        else:
            note = _NO_WIDGETS_NOTE
            if self._ipywidgets is None:
                note = (
                    "ipywidgets is not available here, so the what-if explorer shows a still at the "
                    "values given; install ipywidgets and run it in Jupyter for the sliders."
                )
            data = {"text/html": self.static_html(note)}
        data["text/plain"] = self.text()
        return data

    # ------------------------------------------------------------ keep
    def keep(self, path: str | os.PathLike | None = None, *, overwrite: bool = False) -> Kept:
        """Write the current values to an inputs file that ``calckit build`` reads.

        The starting inputs file is copied line for line (comments, tables and
        the ``[sheet]`` table kept) with only the moved values replaced, in the
        units they were written in. Without a starting file, the template's own
        values are written with the explorer's in their place.

        Parameters
        ----------
        path : str or path, optional
            The file to write; ``<inputs stem>_kept.toml`` in the working folder
            by default.
        overwrite : bool
            Replace an existing file. Without it an existing file is refused.

        Returns
        -------
        Kept

        Raises
        ------
        OverwriteError
            The file exists and *overwrite* is false; nothing is written.
        """
        path = Path(path) if path is not None else self._default_keep_path()
        if path.exists() and not overwrite:
            raise OverwriteError(
                "the file exists already",
                where=str(path),
                do=f"Keep to another name (for example {_free_name(path).name} alongside it), "
                "or pass overwrite=True to replace it",
            )
        if path.is_dir():
            raise OverwriteError(
                "the path is a folder", where=str(path), do="Give a file name ending in .toml"
            )
        text = self._kept_text()
        _write(path, text, overwrite=overwrite)
        written = read_inputs(path)  # read back as calckit build will
        check_keys(written, self._template.parameters, path=path)
        for item in self._inputs.values():
            got = written.values.get(item.name)
            if _as_display(item, got) != item.value:  # pragma: no cover - guards the writer itself
                raise InputsError(
                    f"the kept value {got!r} reads back differently from {item.text()!r}",
                    where=str(path),
                    do="Report this; the file was written and may be edited by hand",
                )
        return Kept(path, self.changes(), self.template)

    def _kept_text(self) -> str:
        moved = [i for i in self._inputs.values() if i.changed]
        header = "# Kept from the what-if explorer (calckit.explore)"
        header += (
            ": " + "; ".join(f"{i.name} was {i.text(i.start)}" for i in moved) + ".\n"
            if moved
            else "; no value moved from the start.\n"
        )
        if self._file is not None:
            text = _replace_lines(self._file, {i.name: i.toml() for i in moved})
            if text is not None:
                return header + text
            values = dict(self._file.values)
            groups = dict(self._file.groups)
            title = self._file.sheet.present()
        else:
            values = {n: v for n, v in self._values.items() if n not in TITLE_FIELDS}
            groups = {}
            title = {n: v for n, v in self._values.items() if n in TITLE_FIELDS}
        for item in self._inputs.values():
            values[item.name] = item.text() if item.from_text else float(item.value)
        return header + _document(values, groups, title, self.template)


def _as_display(item: _Input, raw: Any) -> float | None:
    if raw is None:
        return None
    q = quantity(raw, item.name, expect=item.role.kind)
    return float(q.to(item.unit).magnitude) if item.unit else float(q.to("").magnitude)


def _set_span(patch, x0: float, x1: float) -> None:
    """Move an ``axvspan`` (a Rectangle in newer matplotlib, a Polygon in older)."""
    if hasattr(patch, "set_width") and hasattr(patch, "set_x"):
        patch.set_x(x0)
        patch.set_width(x1 - x0)
    else:  # pragma: no cover - matplotlib before 3.9
        patch.set_xy([[x0, 0], [x0, 1], [x1, 1], [x1, 0], [x0, 0]])


def _check_row(c: Check) -> str:
    verdict = "met" if c.met else "<b>NOT MET</b>"
    return (
        f'<tr data-check="{html.escape(c.name)}" data-verdict="{c.verdict}" data-margin="{c.margin_percent!r}">'
        f"<td>{html.escape(c.name)}</td><td>{html.escape(c.shown_value)}</td>"
        f"<td>{c.relation} {html.escape(c.shown_limit)}</td><td>{verdict}</td>"
        f"<td>{fmt_number(c.margin_percent, 3)} %</td></tr>"
    )


def _kept_html(kept: Kept) -> str:
    if kept.changes:
        rows = "".join(
            f"<tr><td>{html.escape(n)}</td><td>{html.escape(o)}</td><td>{html.escape(v)}</td></tr>"
            for n, o, v in kept.changes
        )
        moved = (
            f"<table><thead><tr><th>input</th><th>at the start</th><th>kept</th></tr></thead>{rows}</table>"
        )
    else:
        moved = "<p>No value moved from the start.</p>"
    command = f"calckit build {kept.template} --inputs {kept.path} --out built/"
    return (
        f"<p>Wrote <code>{html.escape(str(kept.path))}</code>.</p>{moved}"
        f"<p>Build its sheet with <code>{html.escape(command)}</code></p>"
    )


def _free_name(path: Path) -> Path:
    """*path* if it does not exist, else ``<stem>_2<suffix>``, ``_3`` ... beside it."""
    if not path.exists():
        return path
    stem = re.sub(r"_\d+$", "", path.stem)
    number = 2
    while True:
        candidate = path.with_name(f"{stem}_{number}{path.suffix}")
        if not candidate.exists():
            return candidate
        number += 1


def _write(path: Path, text: str, *, overwrite: bool) -> None:
    """Write *text* whole or not at all; without *overwrite* never replace a file."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".calckit-keep-", suffix=".toml", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        if overwrite:
            os.replace(tmp, path)
        else:
            try:
                os.link(tmp, path)  # fails if the file appeared meanwhile
            except FileExistsError:
                raise OverwriteError(
                    "the file exists already",
                    where=str(path),
                    do="Keep to another name, or pass overwrite=True to replace it",
                ) from None
            except OSError:  # pragma: no cover - file systems without hard links
                with open(path, "x", encoding="utf-8") as handle:
                    handle.write(text)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


_HEADER = re.compile(r"\s*\[\s*([^\[\]]*?)\s*\]\s*(#.*)?$")
_VALUE = re.compile(
    r"""^(?P<lead>\s*(?P<key>[A-Za-z0-9_-]+|"[^"]*"|'[^']*')\s*=\s*)"""
    r"""(?P<value>"(?:[^"\\]|\\.)*"|'[^']*'|[^\s#"']+)(?P<tail>\s*(?:#.*)?)$"""
)


def _replace_lines(file: Any, new: Mapping[str, str]) -> str | None:
    """The inputs file's text with the values of *new* replaced in place, or None if a line
    cannot be placed safely (then the caller writes the file afresh)."""
    lines = file.text.splitlines(keepends=True)
    for name, toml in new.items():
        number = file.line_of(name)
        if number is None:
            return None
        line = lines[number - 1]
        ending = line[len(line.rstrip("\r\n")) :]
        found = _VALUE.match(line.rstrip("\r\n"))
        if not found or found.group("key").strip("\"'") != name:
            return None
        lines[number - 1] = found.group("lead") + toml + found.group("tail") + ending
    text = "".join(lines)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError:  # pragma: no cover - a value the pattern misread
        return None
    for name, toml in new.items():
        group = file.groups.get(name, "")
        table = data.get(group, {}) if group else data
        if table.get(name) != tomllib.loads(f"x = {toml}")["x"]:  # pragma: no cover
            return None
    return text


def _document(
    values: Mapping[str, Any], groups: Mapping[str, str], title: Mapping[str, Any], template: str
) -> str:
    """An inputs file written afresh: top-level inputs, then each table, then ``[sheet]``."""
    lines = [f"# Inputs for the template {template}.", ""]
    tables: dict[str, list[str]] = {}
    for name, value in values.items():
        group = groups.get(name, "")
        entry = f"{name} = {_toml_value(value)}"
        if group:
            tables.setdefault(group, []).append(entry)
        else:
            lines.append(entry)
    for group, entries in tables.items():
        lines += ["", f"[{group}]", *entries]
    if title:
        lines += ["", "[sheet]"] + [f"{n} = {_toml_value(v)}" for n, v in title.items()]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------
# Opening an explorer


def _roles_of(parameters: Mapping[str, Any], names: Mapping[str, str] | None, where: str) -> dict[str, str]:
    """Model keyword -> the template's parameter name."""
    found: dict[str, str] = {}
    names = dict(names or {})
    for key, name in names.items():
        if key not in ROLES:
            raise InputsError(
                f'"{key}" is not an input of the explorer\'s model',
                where="explore(names=...)",
                do=f"Map these keywords to the template's names: {', '.join(ROLES)}",
            )
        if name not in parameters:
            raise InputsError(
                f'the template declares no parameter "{name}"',
                where=f"explore(names={{{key!r}: {name!r}}})",
                do=f"The template's parameters are {', '.join(parameters)}",
            )
        found[key] = name
    for key, role in ROLES.items():
        if key in found:
            continue
        for name in role.names:
            if name in parameters:
                found[key] = name
                break
    if "damping_ratio" in found and "damping" in found and "damping" not in names:
        del found["damping"]
    missing = [k for k in _REQUIRED if k not in found]
    if "damping_ratio" not in found and "damping" not in found:
        missing.append("damping")
    if missing:
        wanted = "; ".join(
            f"the {ROLES[k].label} ({', '.join(ROLES[k].names)})"
            if k != "damping"
            else "the damping (damping_ratio, zeta, damping, damping_coefficient or c)"
            for k in missing
        )
        raise InputsError(
            f"the template declares no input for {wanted}",
            where=where,
            do="Explore a template of one mass on a spring and damper under a harmonic force "
            f"(such as {DEFAULT_TEMPLATE}), map its names with names={{'mass': '...'}}, "
            "or give the values directly",
        )
    return found


def explore(
    inputs: str | os.PathLike | None = None,
    template: str | os.PathLike | None = None,
    *,
    mass: Any = None,
    stiffness: Any = None,
    damping_ratio: Any = None,
    damping: Any = None,
    force_amplitude: Any = None,
    forcing_frequency: Any = None,
    amplitude_limit: Any = None,
    names: Mapping[str, str] | None = None,
    band: float = 0.20,
    points: int = CURVE_POINTS,
    widgets: bool = True,
) -> Explorer:
    """Open the what-if explorer on a single-mass harmonic calculation.

    Parameters
    ----------
    inputs : str or path, optional
        An inputs file (TOML) for *template*; checked against the template's
        parameters as ``calckit build`` checks it.
    template : str or path, optional
        A template notebook or a bundled template's name; ``single_mass_harmonic``
        by default. Its parameters say which inputs there are (see the module notes).
    mass, stiffness, damping_ratio, damping, force_amplitude, forcing_frequency, amplitude_limit
        Values given directly: text with a unit (``"1850 kg"``), a pint quantity,
        or a number for the damping ratio. They replace the file's (or the
        template's) starting values.
    names : mapping, optional
        Model keyword -> the template's parameter name, for names not recognised.
    band : float
        Half-width of the speed-separation band as a fraction (0.20: +/-20 %).
    points : int
        Points on the frequency-response curve and the time history.
    widgets : bool
        Build the sliders (when ipywidgets is importable). With False, or without
        ipywidgets, the explorer shows a still and moves by :meth:`Explorer.set`.

    Returns
    -------
    Explorer

    Raises
    ------
    InputsError, UnitsError
        A template without the inputs of the model, an inputs file that does not
        match its template, a value of the wrong kind or sign, a forcing that is
        not one harmonic at the forcing frequency.
    BuildError
        No such template.
    """
    tmpl = load_template(template if template is not None else DEFAULT_TEMPLATE)
    file = None
    values: dict[str, Any] = dict(tmpl.parameters)
    wheres = {name: name for name in values}
    roles = _roles_of(tmpl.parameters, names, where=str(tmpl.path))
    if inputs is not None:
        file = read_inputs(inputs)
        check_keys(file, tmpl.parameters, path=file.path)
        values.update(file.assignments(tmpl.parameters))
        wheres.update({name: file.where(name) for name in file.values})
    given = {
        "mass": mass,
        "stiffness": stiffness,
        "damping_ratio": damping_ratio,
        "damping": damping,
        "force_amplitude": force_amplitude,
        "forcing_frequency": forcing_frequency,
        "amplitude_limit": amplitude_limit,
    }
    for key, value in given.items():
        if value is None:
            continue
        if key not in roles:
            raise _not_declared(key, value, roles, values, tmpl.name)
        values[roles[key]] = value
        wheres[roles[key]] = f"explore({key}=...)"
    if not isinstance(points, int) or isinstance(points, bool) or points < 10:
        raise InputsError(
            f"expected 10 or more points, got {points!r}", where="explore(points=...)", do="Give an int"
        )
    if not (isinstance(band, int | float) and 0 < band < 1):
        raise InputsError(
            f"expected a fraction between 0 and 1, got {band!r}",
            where="explore(band=...)",
            do="Give, for example, 0.2 for +/-20 %",
        )

    items: dict[str, _Input] = {}
    for key in _SLIDERS:
        if key not in roles:
            continue
        name = roles[key]
        items[key] = _input(ROLES[key], name, values[name], wheres.get(name, name))
    fixed: dict[str, Any] = {}
    limit = None
    if "amplitude_limit" in roles:
        name = roles["amplitude_limit"]
        q = _checked(ROLES["amplitude_limit"], values[name], wheres.get(name, name))
        limit = (q, name)
    if "amplitude_limit_basis" in roles:
        fixed["amplitude_limit_basis"] = values[roles["amplitude_limit_basis"]]
    forcing = _F0 * sp.cos(_w * _t)
    if "forcing" in roles:
        name = roles["forcing"]
        forcing = _forcing_expr(values[name], wheres.get(name, name))
    return Explorer(
        items,
        fixed,
        template=tmpl,
        values=values,
        file=file,
        forcing=forcing,
        limit=limit,
        band=float(band),
        points=points,
        widgets=widgets,
    )


def _not_declared(
    key: str, value: Any, roles: Mapping[str, str], values: Mapping[str, Any], template: str
) -> InputsError:
    if key == "damping" and "damping_ratio" in roles:
        hint = "Give damping_ratio=c/(2*sqrt(k*m))"
        try:
            c = float(to_si(quantity(value, "damping", expect="damping coefficient"), "damping").magnitude)
            m = float(to_si(quantity(values[roles["mass"]], "mass", expect="mass"), "mass").magnitude)
            k = float(
                to_si(quantity(values[roles["stiffness"]], "stiffness", expect="stiffness"), "k").magnitude
            )
            hint += f", here {fmt_number(c / (2 * math.sqrt(k * m)))}"
        except (CalcError, ValueError, ZeroDivisionError):
            pass
        return InputsError(
            f"the template {template} takes the damping as a ratio ({roles['damping_ratio']}), not as a coefficient",
            where="explore(damping=...)",
            do=hint,
        )
    if key == "damping_ratio" and "damping" in roles:
        return InputsError(
            f"the template {template} takes the damping as a coefficient ({roles['damping']}), not as a ratio",
            where="explore(damping_ratio=...)",
            do="Give damping=c with a unit, c = 2 zeta sqrt(k m)",
        )
    return InputsError(
        f"the template {template} declares no input for the {ROLES[key].label}",
        where=f"explore({key}=...)",
        do="Leave it out, or explore a template that has it",
    )


def _checked(role: _Role, raw: Any, where: str):
    """The starting value as a quantity of the role's kind, finite and of the right sign."""
    try:
        q = quantity(raw, role.key, expect=role.kind)
        q = positive(q, role.key) if role.sign == "positive" else non_negative(q, role.key)
    except CalcError as exc:
        raise type(exc)(exc.what, where=where if where != role.key else exc.where, do=exc.do) from None
    return q


def _input(role: _Role, name: str, raw: Any, where: str) -> _Input:
    q = _checked(role, raw, where)
    unit = _unit_text(q)  # "" for a bare number; "%" for a percentage
    start = float(q.magnitude)
    factor = _si_factor(role, unit, where) if unit else 1.0
    return _Input(
        role=role,
        name=name,
        raw=raw,
        unit=unit,
        written_unit=_written_unit(raw, q),
        factor=factor,
        start=start,
        value=start,
        sig=max(SIGNIFICANT, _digits(start)),
        from_text=isinstance(raw, str),
        where=where,
    )
