"""The explorer's plots: the frequency-response curve with the operating point, and the time history.

Dynamic artists are drawn over a cached frame (axes, ticks, labels, legend): a move
redraws only them, and the frame is redrawn when an axis range changes (the ranges
move in steps, decades and 1-2-5, so most moves keep the frame). The PNG feeds the
widget; the SVG goes into the still. matplotlib and PIL are imported when first drawn.
"""

from __future__ import annotations

import io
import math
import re
from typing import Any

import numpy as np

from calckit.core.units import Q_, fmt, fmt_number
from calckit.explore.results import _amplitude_unit


class _Plots:
    """The figure of an :class:`~calckit.explore.explorer.Explorer` (a mixin: it reads the explorer's
    inputs, results, plan, band and grid)."""

    _figure: Any
    _artists: dict[str, Any]

    def _curves(self) -> dict[str, np.ndarray]:
        """The frequency-response curve and the time histories at the current values."""
        r = self.results
        m, c, k, F0, w = r.mass, r.damping_coefficient, r.stiffness, r.force_amplitude, r.forcing_frequency
        d = self._model
        if self.plan.curve == "transmissibility":
            curve = d.transmissibility(self._omega, m=m, c=c, k=k)
        else:
            curve = d.amplitude(self._omega, m=m, c=c, k=k, F0=F0)
        if self.plan.history == "run-up":
            run = self._run
            return {"curve": curve, "times": run.times, "run": run.x, "envelope": run.envelope}
        period = 2 * math.pi / w
        span = min(max(4 * period, 3 * 2 * math.pi / r.natural_frequency), 60 * period)
        times = np.linspace(0.0, _nice_ceiling(span * 1000) / 1000, self._points)  # a 1-2-5 span in ms
        steady = d.steady(times, m=m, c=c, k=k, F0=F0, w=w)
        rest = None
        if d.from_rest is not None and r.damping_ratio < 1:
            rest = d.from_rest(times, m=m, c=c, k=k, F0=F0, w=w)
        return {"curve": curve, "times": times, "steady": steady, "from_rest": rest}

    _LEFT = {
        "amplitude": ("band", "natural", "curve", "point", "legend1"),
        "transmissibility": ("band", "natural", "sqrt2", "required", "curve", "point", "legend1"),
    }
    _RIGHT = {
        "steady": ("from_rest", "steady", "legend2"),
        "run-up": ("envelope_up", "envelope_down", "end", "run", "legend2"),
    }

    @property
    def _dynamic(self) -> tuple[str, ...]:
        return self._LEFT[self.plan.curve] + self._RIGHT[self.plan.history]

    def _limit(self, role: str) -> tuple[float, str] | None:
        """A limit's current value and unit, or None when the template has none."""
        item = self._inputs.get(role)
        return (item.value, item.unit) if item is not None else None

    def _make_figure(self):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure
        from matplotlib.ticker import NullLocator

        freq = self._inputs["forcing_frequency"]
        fig = Figure(figsize=(9.6, 3.4), dpi=80)
        FigureCanvasAgg(fig)
        fig.subplots_adjust(left=0.075, right=0.985, bottom=0.16, top=0.90, wspace=0.28)
        ax1, ax2 = fig.subplots(1, 2)
        a = {}
        band = f"within {fmt_number(self._band * 100)} % of the natural frequency"
        a["band"] = ax1.axvspan(1, 1, color="0.85", label=band)
        a["natural"] = ax1.axvline(1, color="0.4", lw=0.8, ls=":")
        (a["curve"],) = ax1.plot([], [], color="black", lw=1.2)
        (a["point"],) = ax1.plot([], [], "o", color="black", ms=6, label="operating point")
        if self.plan.curve == "transmissibility":
            a["sqrt2"] = ax1.axvline(1, color="0.5", lw=0.8, ls="-.", label="√2 ω_n: T = 1")
            a["required"] = ax1.axhline(
                1, color="0.3", lw=0.9, ls="--", label="T allowed by the required isolation"
            )
            ax1.set_ylabel("transmissibility T = F_T / F_0")
            ax1.set_title("Transmissibility", fontsize=10)
        else:
            unit = _amplitude_unit(self._inputs)
            if "amplitude_limit" in self._inputs:
                a["limit"] = ax1.axhline(1, color="0.3", lw=0.9, ls="--", label="amplitude limit")
            ax1.set_ylabel(f"amplitude X, {unit}")
            ax1.set_title("Frequency response", fontsize=10)
        ax1.set_xscale("log")
        ax1.set_yscale("log")
        ax1.yaxis.set_minor_locator(NullLocator())
        ax1.set_xlim(self._grid[0], self._grid[-1])
        ax1.set_xlabel(f"{freq.name.replace('_', ' ')}, {freq.unit or 'rad/s'}")
        a["legend1"] = ax1.legend(loc="lower left", fontsize=7, framealpha=0.9)
        if self.plan.history == "run-up":
            movement = self._limit("movement_limit")
            (a["envelope_up"],) = ax2.plot(
                [], [], color="0.5", lw=1.0, ls="--", label="steady amplitude at the current speed"
            )
            (a["envelope_down"],) = ax2.plot([], [], color="0.5", lw=1.0, ls="--")
            a["end"] = ax2.axvline(1, color="0.4", lw=0.8, ls=":", label="end of the run-up")
            (a["run"],) = ax2.plot([], [], color="black", lw=0.5, label="x(t): run-up, then running speed")
            if movement is not None:
                label = f"movement limit ±{fmt(Q_(*movement))}"
                a["limit_up"] = ax2.axhline(1, color="0.3", lw=0.9, ls="-.", label=label)
                a["limit_down"] = ax2.axhline(-1, color="0.3", lw=0.9, ls="-.")
            ax2.set_xlabel("time, s")
            ax2.set_ylabel("displacement x, mm")
            ax2.set_title("Run-up from rest through resonance", fontsize=10)
        else:
            unit = _amplitude_unit(self._inputs)
            (a["from_rest"],) = ax2.plot([], [], color="0.6", lw=0.8, label="from rest")
            (a["steady"],) = ax2.plot([], [], color="black", lw=1.2, label="steady state")
            if "amplitude_limit" in self._inputs:
                a["limit_up"] = ax2.axhline(1, color="0.3", lw=0.9, ls="--")
                a["limit_down"] = ax2.axhline(-1, color="0.3", lw=0.9, ls="--")
            ax2.set_xlabel("time, ms")
            ax2.set_ylabel(f"displacement x, {unit}")
            ax2.set_title("Time history at the operating point", fontsize=10)
        a["legend2"] = ax2.legend(loc="upper right", fontsize=7, framealpha=0.9)
        for name in self._dynamic:
            a[name].set_animated(True)
        a["ax1"], a["ax2"] = ax1, ax2
        self._figure, self._artists = fig, a
        self._frame = None  # (limits, cached background)

    @staticmethod
    def _decades(y: np.ndarray, *also: float) -> tuple[float, float]:
        """A log axis range in whole decades around the finite positive values."""
        finite = y[np.isfinite(y) & (y > 0)]
        top = float(finite.max()) if finite.size else 1.0
        bottom = float(finite.min()) if finite.size else 1e-6
        for value in also:
            if value is not None and math.isfinite(value) and value > 0:
                top, bottom = max(top, value), min(bottom, value)
        return (10.0 ** math.floor(math.log10(bottom / 2)), 10.0 ** math.ceil(math.log10(top * 2)))

    def _update_figure(self) -> tuple:
        """Put the current curves into the existing artists (no new figure, no new lines).

        Returns the axis ranges, which change in steps."""
        if self._figure is None:
            self._make_figure()
        a, r = self._artists, self.results
        freq = self._inputs["forcing_frequency"]
        curves = self._curves()
        x_op = r.forcing_frequency / freq.factor
        wn = r.natural_frequency / freq.factor
        a["natural"].set_xdata([wn, wn])
        _set_span(a["band"], (1 - self._band) * wn, (1 + self._band) * wn)
        if self.plan.curve == "transmissibility":
            y = curves["curve"]
            a["curve"].set_data(self._grid, y)
            a["point"].set_data([x_op], [r.transmissibility])
            a["sqrt2"].set_xdata([math.sqrt(2) * wn] * 2)
            allowed = 1 - float(self._quantities()["required_isolation"].to("").magnitude)
            a["required"].set_ydata([allowed, allowed])
            y_range = self._decades(y, allowed)
            lim = None
        else:
            unit = _amplitude_unit(self._inputs)
            to_unit = Q_(1, "m").to(unit).magnitude
            y = curves["curve"] * to_unit
            a["curve"].set_data(self._grid, y)
            a["point"].set_data([x_op], [r.amplitude * to_unit])
            limit = self._limit("amplitude_limit")
            lim = float(limit[0]) if limit is not None else None
            y_range = self._decades(y, lim)
        if self.plan.history == "run-up":
            seconds = curves["times"]
            run_mm = curves["run"] * 1000
            envelope = curves["envelope"] * 1000
            a["run"].set_data(seconds, run_mm)
            a["envelope_up"].set_data(seconds, envelope)
            a["envelope_down"].set_data(seconds, -envelope)
            a["end"].set_xdata([self._run.end] * 2)
            finite = np.abs(run_mm[np.isfinite(run_mm)])
            peak = float(finite.max()) if finite.size else 0.0
            peak = _nice_ceiling(1.1 * peak) if peak > 0 and math.isfinite(peak) else 1.0
            step = _nice_step(float(seconds[-1]), 8)
            span = math.ceil(float(seconds[-1]) / step) * step  # a whole number of 1-2-5 steps
            movement = self._limit("movement_limit")
            lim = float(Q_(*movement).to("mm").magnitude) if movement is not None else None
            ranges = (y_range, span, peak, lim)
        else:
            unit = _amplitude_unit(self._inputs)
            to_unit = Q_(1, "m").to(unit).magnitude
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
            span = float(ms[-1])
            ranges = (y_range, span, peak, lim)
        if ranges != getattr(self, "_ranges", None):
            a["ax1"].set_ylim(*y_range)
            a["ax2"].set_xlim(0, span)
            a["ax2"].set_ylim(-peak, peak)
            if lim is not None:
                if "limit" in a:
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
        for name in self._dynamic:
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
        for name in self._dynamic:  # a saved figure leaves animated artists out
            self._artists[name].set_animated(False)
        try:
            buffer = io.StringIO()
            with matplotlib.rc_context({"svg.hashsalt": "calckit", "svg.fonttype": "path"}):
                self._figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
        finally:
            for name in self._dynamic:
                self._artists[name].set_animated(True)
            self._frame = None
        svg = buffer.getvalue()
        svg = svg[svg.index("<svg") :]
        return re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.DOTALL)

    def _draw(self) -> None:
        self._controls["plot"].value = self._png()


def _set_span(patch, x0: float, x1: float) -> None:
    """Move an ``axvspan`` (a Rectangle in newer matplotlib, a Polygon in older)."""
    if hasattr(patch, "set_width") and hasattr(patch, "set_x"):
        patch.set_x(x0)
        patch.set_width(x1 - x0)
    else:  # pragma: no cover - matplotlib before 3.9
        patch.set_xy([[x0, 0], [x0, 1], [x1, 1], [x1, 0], [x0, 0]])


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
