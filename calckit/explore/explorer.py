"""The what-if explorer: sliders on a template's inputs, its key results and checks live.

:class:`Explorer` holds one set of values of a template's calculation (its
:class:`~calckit.explore.plans.Plan` says which), with a slider on each input that
matters (units in the labels; stiffness and frequency on log scales), the key
results, the acceptance checks with their limits, bases and margins, a
frequency-response plot with the operating point marked and a time history. "Keep
these values" writes the current values to an inputs file that ``calckit build``
reads (:mod:`calckit.explore.keep`). Open one with :func:`calckit.explore.explore`.

Symbolic once, numeric on every move
------------------------------------
The solution is derived once with symbols and compiled (:mod:`calckit.explore.model`,
:func:`calckit.physics.runup.run_up_stage`); a slider move only evaluates arrays.
``benchmarks/bench_explore.py`` measures a move against re-deriving.

Same numbers as the sheet
-------------------------
:meth:`WhatIf.si` gives the results under the template's own result names, in SI,
as the sheet's JSON record gives them. The plan's result function calls the same
physics functions the template calls, so a sheet built from the kept file gives the
same numbers to floating-point accuracy.

Display
-------
In Jupyter with ipywidgets the explorer shows its sliders; the same display
carries a still (results table, checks and plot as SVG, with a note saying so)
that front ends without widgets, exported notebooks and sheets show instead. In a
plain Python session the explorer prints as a text table. Without ipywidgets the
explorer still computes, moves by :meth:`Explorer.set` and keeps.
"""

from __future__ import annotations

import html
import math
import os
import re
from collections.abc import Mapping
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
import sympy as sp

from calckit.core.units import Q_, quantity
from calckit.errors import InputsError, OverwriteError
from calckit.explore import explore
from calckit.explore.figure import _Plots
from calckit.explore.keep import Kept, _free_name, _kept_text, _write_kept
from calckit.explore.model import _derive
from calckit.explore.plans import PLANS, ROLES, Plan
from calckit.explore.results import WhatIf, _Move
from calckit.explore.values import _as_display, _Input, _number_text
from calckit.explore.widgets import _Sliders, _widgets_module
from calckit.physics.criteria import SEPARATION_BASIS
from calckit.physics.runup import RunUp
from calckit.sheet import Check, in_kernel
from calckit.workflow import check_keys, read_inputs

# The explorer's own names, and (as before the folder was split) the names it works with.
__all__ = [
    "CURVE_POINTS",
    "Explorer",
    "Kept",
    "PLANS",
    "Plan",
    "ROLES",
    "SEPARATION_BASIS",
    "WhatIf",
    "explore",
]

#: Points on the frequency-response curve and on the time history.
CURVE_POINTS = 2000

_NO_WIDGETS_NOTE = (
    "A still of the what-if explorer at the values shown: the sliders need Jupyter with "
    "ipywidgets and a running kernel, which this view does not have."
)


class Explorer(_Plots, _Sliders):
    """Sliders over one template's calculation, by its plan; open one with :func:`calckit.explore.explore`.

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
    plan : Plan
        What the explorer knows of that template.
    """

    def __init__(
        self,
        inputs: dict[str, _Input],
        texts: dict[str, Any],
        *,
        plan: Plan,
        template: Any,
        values: Mapping[str, Any],
        file: Any,
        forcing: sp.Expr,
        band: float,
        points: int,
        widgets: bool,
    ):
        self._inputs = inputs  # role -> input (sliders and limits)
        self._fixed = texts  # role -> text for roles without a unit (bases, forcing)
        self.plan = plan
        self._template = template
        self._values = dict(values)  # every template parameter's starting value, raw
        self._file = file
        self._band = band
        self._points = points
        self._model = _derive(forcing)
        self._run: RunUp | None = None
        self._hold = False
        for name, only in self.plan.takes_only.items():
            given = str(self._values.get(name, only)).strip()
            if given.lower() != only:
                raise InputsError(
                    f"the what-if explorer of {plan.template} computes {name} = {only!r} only, not {given!r}",
                    where=name,
                    do=f"Build the sheet for this case (calckit build {plan.template} --inputs FILE --out DIR), "
                    f"or explore it with {name} = {only!r}",
                )
        refusal = self._refusal({})
        if refusal is not None:
            raise refusal
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
        """The values the explorer opened with, by parameter name (quantities in the slider units)."""
        return {i.name: Q_(i.start, i.unit) if i.unit else i.start for i in self._inputs.values()}

    def changes(self) -> tuple[tuple[str, str, str], ...]:
        """``(name, starting text, current text)`` for each value moved from the start."""
        return tuple((i.name, i.text(i.start), i.text()) for i in self._inputs.values() if i.changed)

    def _frequency_range(self) -> tuple[float, float]:
        freq = self._inputs["forcing_frequency"]
        m, k = self._inputs["mass"].si, self._inputs["stiffness"].si
        if self.plan.equivalent is not None:
            m, _, k = self.plan.equivalent(self._si_values({}), self._fixed)
        wn = math.sqrt(k / m) / freq.factor  # display unit
        lo = 0.1 * min(freq.start, wn)
        hi = 3.0 * max(freq.start, wn)
        return lo, hi

    # ------------------------------------------------------------ numbers
    def _si_values(self, moved: Mapping[str, float]) -> dict[str, float]:
        """Role -> SI value, with *moved* (parameter name -> display value) in place."""
        return {key: moved.get(item.name, item.value) * item.factor for key, item in self._inputs.items()}

    def _quantities(self, moved: Mapping[str, float] | None = None) -> dict[str, Any]:
        moved = moved or {}
        out = {}
        for key, item in self._inputs.items():
            number = moved.get(item.name, item.value)
            out[key] = Q_(number, item.unit) if item.unit else Q_(number, "")
        return out

    def _refusal(self, moved: Mapping[str, float]) -> InputsError | None:
        """The template's own refusal of these values (None if it takes them)."""
        rule = self.plan.refuse
        if rule is None:
            return None
        names = {key: item.name for key, item in self._inputs.items()}
        return rule(self._si_values(moved), self._quantities(moved), names)

    def _evaluate(self) -> WhatIf:
        """The key results at the current values: compiled functions only, no sympy."""
        values = self._si_values({})
        m, k, w = values["mass"], values["stiffness"], values["forcing_frequency"]
        if self.plan.equivalent is not None:  # a model that is not one mass: the one mass its plot shows
            m, c, k = self.plan.equivalent(values, self._fixed)
            zeta = c / (2.0 * math.sqrt(k * m))
        elif "damping_ratio" in values:
            zeta = values["damping_ratio"]
            c = 2.0 * zeta * math.sqrt(k * m)
        else:
            c = values["damping"]
            zeta = c / (2.0 * math.sqrt(k * m))
        f0 = self.plan.force(values)
        d = self._model
        at = np.array([w])
        wn = math.sqrt(k / m)
        base = dict(
            mass=m,
            stiffness=k,
            damping_coefficient=c,
            damping_ratio=zeta,
            force_amplitude=f0,
            forcing_frequency=w,
            natural_frequency=wn,
            natural_frequency_hz=wn / (2 * math.pi),
            frequency_ratio=w / wn,
            magnification=float(d.magnification(at, m=m, c=c, k=k)[0]),
            static_deflection=f0 / k,
            amplitude=float(d.amplitude(at, m=m, c=c, k=k, F0=f0)[0]),
            phase_lag=float(d.phase_lag(at, m=m, c=c, k=k)[0]),
            transmissibility=float(d.transmissibility(at, m=m, c=c, k=k)[0]),
            transmitted_force=float(d.transmitted(at, m=m, c=c, k=k, F0=f0)[0]),
        )
        texts = {key: str(value or "") for key, value in self._fixed.items()}
        move = _Move(self.plan, d, values, self._quantities(), texts, base, self._band)
        sheet, self._run = self.plan.results(move)
        checks = (check(move, sheet) for check in self.plan.checks)
        return WhatIf(**base, checks=tuple(c for c in checks if c is not None), sheet=sheet)

    # ------------------------------------------------------------ moving
    def set(self, **values: Any) -> WhatIf:
        """Move inputs, by parameter name or model keyword: ``set(stiffness="900 kN/m")``.

        Values are text with a unit, pint quantities, or plain numbers in the
        slider's unit (the unit in its label). Limits (``amplitude_limit``,
        ``movement_limit`` ...) move the same way and are kept like the others.
        Values the template would refuse (a rotor heavier than the machine, a
        damping ratio of 1 or more ...) are refused with its message, and
        nothing moves. Returns the new results.
        """
        moved = {}
        for key, value in values.items():
            item = self._lookup(key)
            if item is None:
                raise self._not_an_input(key)
            if isinstance(value, int | float) and not isinstance(value, bool):
                number = float(value)
            else:
                q = quantity(value, item.name, expect=item.role.kind)
                number = float(q.to(item.unit).magnitude) if item.unit else float(q.to("").magnitude)
            self._check_sign(item, number)
            moved[item.name] = number
        refusal = self._refusal(moved)
        if refusal is not None:
            raise refusal
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

    def _not_an_input(self, key: str) -> InputsError:
        known = ", ".join(i.name for i in self._inputs.values())
        return InputsError(
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

    def refresh(self) -> None:
        """Recompute the results and update the displayed table and plot."""
        self.results = self._evaluate()
        if self.widget is not None:
            self._controls["results"].value = self._results_html()
            self._draw()

    def _default_keep_path(self) -> Path:
        stem = self._file.path.stem if self._file is not None else self.template
        candidate = Path(f"{stem}_kept.toml")
        return _free_name(candidate)

    def _results_html(self) -> str:
        rows = "".join(
            f'<tr data-name="{name}" data-si="{si}"><td>{label}</td><td style="text-align:right">'
            f"{html.escape(shown)}</td></tr>"
            for name, label, shown, si in self.plan.rows(self.results, self._inputs)
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
        for _, label, shown, _ in self.plan.rows(self.results, self._inputs):
            plain = re.sub(r"<sub>(.*?)</sub>", r"_\1", label)
            lines.append(f"  {plain}: {shown}")
        lines.append("checks:")
        for c in self.results.checks:
            lines.append(
                f"  {c.name}: {c.shown_value} {c.relation} {c.shown_limit}: {c.verdict} "
                f"(margin {c.margin_text})"
            )
        return "\n".join(lines)

    def __repr__(self) -> str:
        text = self.text()
        if not in_kernel():  # a plain Python session: say how to move the values here
            text += (
                "\n(The sliders need Jupyter with ipywidgets. Here, move values with "
                ".set(name=value) and write them with .keep(path).)"
            )
        return text

    def _repr_mimebundle_(self, include=None, exclude=None):
        if self.widget is not None and in_kernel():
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
        text = _kept_text(self._inputs.values(), self._file, self._values, self.template, path)
        _write_kept(path, text, overwrite=overwrite)
        written = read_inputs(path)  # read back as calckit build will
        check_keys(written, self._template.parameters, path=path, optional=self._template.optional_inputs)
        for item in self._inputs.values():
            got = written.values.get(item.name)
            if _as_display(item, got) != item.value:  # pragma: no cover - guards the writer itself
                raise InputsError(
                    f"the kept value {got!r} reads back differently from {item.text()!r}",
                    where=str(path),
                    do="Report this; the file was written and may be edited by hand",
                )
        return Kept(path, self.changes(), self.template)


def _check_row(c: Check) -> str:
    verdict = "met" if c.met else "<b>NOT MET</b>"
    return (
        f'<tr data-check="{html.escape(c.name)}" data-verdict="{c.verdict}" data-margin="{c.margin_percent!r}">'
        f"<td>{html.escape(c.name)}</td><td>{html.escape(c.shown_value)}</td>"
        f"<td>{c.relation} {html.escape(c.shown_limit)}</td><td>{verdict}</td>"
        f"<td>{html.escape(c.margin_text)}</td></tr>"
    )
