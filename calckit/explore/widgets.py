"""The explorer's sliders, buttons and their callbacks: ipywidgets is imported only here, lazily.

:func:`_widgets_module` returns ipywidgets, or None where it cannot be imported; the
explorer then computes, moves by :meth:`~calckit.explore.explorer.Explorer.set` and
keeps without sliders.
"""

from __future__ import annotations

import html
import math
from pathlib import Path
from typing import Any

from calckit.core.units import Q_
from calckit.errors import CalcError, OverwriteError
from calckit.explore.figure import _nice_step
from calckit.explore.keep import _free_name, _kept_html
from calckit.explore.values import _Input, _number_text, _round_sig


def _widgets_module():
    """ipywidgets, or None where it cannot be imported."""
    try:
        import ipywidgets
    except ImportError:
        return None
    return ipywidgets


class _Sliders:
    """The widgets of an :class:`~calckit.explore.explorer.Explorer` (a mixin: it reads and moves the
    explorer's inputs)."""

    _ipywidgets: Any
    _controls: dict[str, Any]

    def _on_move(self, change) -> None:
        if self._hold:
            return
        item = self._inputs_by_name()[change["owner"]._calckit_name]
        number = float(change["new"])
        number = item.start if number == item.start else _round_sig(number, item.sig)
        refusal = self._refusal({item.name: number})
        if refusal is not None:  # the template would refuse it: the slider goes back, the message shows
            self._hold = True
            try:
                change["owner"].value = item.value
            finally:
                self._hold = False
            self._controls["status"].value = f"<p>Not moved: {html.escape(str(refusal))}</p>"
            return
        item.value = number
        self.refresh()

    def _slider(self, item: _Input):
        w = self._ipywidgets
        style = {"description_width": "180px"}
        layout = w.Layout(width="480px")
        readout = ".4g"
        if item.role.choices:
            return w.SelectionSlider(
                options=self._choices(item),
                value=item.start,
                description=item.label,
                continuous_update=True,
                style=style,
                layout=layout,
            )
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
        else:  # a mass, a time
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
    def _choices(item: _Input, also: float | None = None) -> list[tuple[str, float]]:
        """The slider's stops: the role's choices in the display unit, with the starting value
        (and *also*) among them: ``[("G 2.5", 2.5), ("G 6.3", 6.3), ...]``."""
        to_display = Q_(1, item.role.choice_unit).to(item.unit).magnitude if item.unit else 1.0
        stops = {_round_sig(c * to_display, 12) for c in item.role.choices}
        stops |= {item.start, item.value} | ({also} if also is not None else set())
        prefix = "G " if item.role.key == "balance_grade" else ""
        return [(f"{prefix}{_number_text(v)}", v) for v in sorted(stops)]

    def _fit_slider(self, slider, number: float) -> None:
        """Widen a slider's range (or add a stop) so that a value set by :meth:`set` is not clipped."""
        if hasattr(slider, "options"):
            if number not in [v for _, v in slider.options]:
                item = self._inputs_by_name()[slider._calckit_name]
                slider.options = self._choices(item, number)
            return
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
        for key, item in self._inputs.items():
            if key not in self.plan.sliders:
                continue  # a limit: moved by set(), kept like the others
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
        title = self._values.get("subject") or "One mass on springs and dampers under a harmonic force"
        self.widget = w.VBox(
            [
                w.HTML(f"<b>What if: {html.escape(str(title))}</b>"),
                w.HBox([w.VBox([*sliders, back]), results]),
                plot,
                w.HBox([name, replace, keep]),
                status,
            ]
        )

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
