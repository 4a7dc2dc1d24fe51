"""An interference diagram: excitation frequency against running speed, orders as lines, modes as bands.

Plotting only: the pairs, their separation bands and their crossings are computed in the
physics layer (:func:`calckit.physics.interference.range_separation`) and drawn here. Each
order ``k`` is a line ``f = k n`` through the origin (speed ``n`` on the horizontal axis in
the unit the speeds were given in, frequency in Hz); each natural frequency a horizontal
line with its separation band shaded; the speed range a vertical shaded strip (a line for a
fixed speed); each crossing a marker, filled when it lies in the speed range and open when
outside. Black and white print: the orders are told apart by their labels, the bands by
hatching. The figure goes on a sheet with ``sheet.figure(fig, caption)``; matplotlib is
imported when a figure is drawn.
"""

from __future__ import annotations

import math

from calckit.errors import ModelError
from calckit.physics.interference import RangeSeparation, separation_band_edges

__all__ = ["interference_figure"]

#: Orders drawn with their label at the line's end; past this many, every order is drawn, one label in a few.
LABELLED_ORDERS = 8


def _per_unit(unit: str) -> float:
    """rad/s in one *unit* of speed (rpm, Hz, rad/s), the 2 pi counted for cycles."""
    from calckit.core.units import Q_, angular_frequency

    return angular_frequency(Q_(1, unit), "speed unit")


def interference_figure(
    found: RangeSeparation,
    *,
    modes: tuple[str, ...] | None = None,
    speed_limit: float | None = None,
    speed_name: str = "running speed",
    speed_unit: str | None = None,
    size: tuple[float, float] = (6.4, 4.2),
):
    """The interference diagram of *found*: orders, natural frequencies with their bands, the speed range.

    Parameters
    ----------
    found : RangeSeparation
        What :func:`~calckit.physics.interference.range_separation` returned.
    modes : tuple of str, optional
        A name for each natural frequency (``"mode 1"`` ... by default).
    speed_limit : float, optional
        The right end of the speed axis, in rad/s; by default 1.25 times the greatest speed.
    speed_name : str
        What the horizontal axis is called (``"stroke rate"`` for a press).
    speed_unit : str, optional
        The unit of the speed axis (``"rpm"``, ``"Hz"``, ``"rad/s"``); by default the one the speeds were given in.
    size : (width, height) in inches

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not isinstance(found, RangeSeparation):
        raise ModelError(
            f"expected a RangeSeparation, got {type(found).__name__}",
            where="interference_figure",
            do="Pass what calckit.range_separation (or sheet.speed_range_check) returns",
        )
    naturals = found.natural_frequencies
    names = tuple(modes) if modes else tuple(f"mode {i}" for i in range(1, len(naturals) + 1))
    if len(names) != len(naturals):
        raise ModelError(
            f"{len(names)} names for {len(naturals)} natural frequencies",
            where="interference_figure",
            do="Give one name per natural frequency",
        )
    top = speed_limit if speed_limit is not None else 1.25 * found.speeds.high
    if not (isinstance(top, int | float) and math.isfinite(top) and top > 0):
        raise ModelError(
            f"speed_limit = {top!r}", where="interference_figure", do="Give a positive speed in rad/s"
        )
    from matplotlib.figure import Figure

    speeds, unit = found.speeds, speed_unit or found.speeds.unit
    per = _per_unit(unit)  # rad/s in one unit of the axis
    to_hz = 1 / (2 * math.pi)
    x_top = top / per
    f_top = 1.15 * max(
        max(naturals) * to_hz, min(max(speeds.orders) * speeds.high * to_hz, 2.5 * max(naturals) * to_hz)
    )
    fig = Figure(figsize=size)
    ax = fig.add_subplot(1, 1, 1)
    # the speed range, behind everything
    if speeds.fixed:
        ax.axvline(
            speeds.low / per, color="0.6", lw=2.5, alpha=0.6, zorder=0, label=f"{speed_name}, {speeds.text()}"
        )
    else:
        ax.axvspan(
            speeds.low / per, speeds.high / per, color="0.88", zorder=0, label=f"speed range, {speeds.text()}"
        )
    # natural frequencies and their bands; the labels stacked upwards where frequencies lie close (each names its
    # frequency, so a label lifted off its line still says which line it is)
    gap, lifted, last = 0.05 * f_top, {}, -math.inf
    for name, wn in sorted(zip(names, naturals, strict=True), key=lambda pair: pair[1]):
        last = lifted[name] = max(wn * to_hz, last + gap)
    for name, wn in zip(names, naturals, strict=True):
        lo, hi = separation_band_edges(wn, found.band, found.relative_to)
        ax.axhspan(lo * to_hz, min(hi, 10 * wn) * to_hz, facecolor="none", edgecolor="0.55", hatch="////",
                   lw=0.0, zorder=1)  # fmt: skip
        ax.axhline(wn * to_hz, color="black", lw=1.0, zorder=2)
        ax.text(x_top * 0.99, lifted[name], f"{name}: {wn * to_hz:.4g} Hz", va="bottom", ha="right", fontsize=7,
                bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.5, "alpha": 0.8}, zorder=6)  # fmt: skip
    # the orders: lines through the origin
    step = max(1, math.ceil(len(speeds.orders) / LABELLED_ORDERS))
    for i, (k, label) in enumerate(zip(speeds.orders, speeds.labels, strict=True)):
        x_end = min(x_top, f_top / (k * per * to_hz))
        ax.plot([0, x_end], [0, k * x_end * per * to_hz], color="0.15", lw=0.9, ls="--", zorder=3)
        if i % step == 0:
            # a line that leaves by the top is labelled below it, each a little lower than the one before
            shown = i // step
            y_label = k * x_end * per * to_hz * (1 if x_end >= x_top else 0.93 - 0.09 * (shown % 6))
            x_label = y_label / (k * per * to_hz)
            ax.annotate(label, xy=(x_label, y_label), xytext=(3, 0), textcoords="offset points", fontsize=7,
                        ha="left" if x_end < 0.9 * x_top else "right", va="top",
                        bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.3, "alpha": 0.8}, zorder=6)  # fmt: skip
    # the crossings: filled inside the speed range, open outside
    inside = [(p.crossing_speed / per, p.natural_frequency * to_hz) for _, p in found.crossings if p.crossed]
    outside = [(p.crossing_speed / per, p.natural_frequency * to_hz) for s, p in found.crossings
               if not p.crossed and s <= top]  # fmt: skip
    if outside:
        ax.plot(
            *zip(*outside, strict=True),
            ls="none",
            marker="o",
            mfc="white",
            mec="black",
            ms=5,
            zorder=4,
            label="crossing away from the " + speed_name
            if speeds.fixed
            else "crossing outside the speed range",
        )
    if inside:
        ax.plot(*zip(*inside, strict=True), ls="none", marker="o", color="black", ms=6, zorder=5,
                label="crossing inside the speed range")  # fmt: skip
    if speeds.fixed:  # where each order excites at the one speed
        at = [
            (speeds.low / per, k * speeds.low * to_hz)
            for k in speeds.orders
            if k * speeds.low * to_hz <= f_top
        ]
        ax.plot(*zip(*at, strict=True), ls="none", marker="x", color="black", ms=4, zorder=5,
                label=f"excitation at the {speed_name}")  # fmt: skip
    ax.fill_between([], [], facecolor="none", edgecolor="0.55", hatch="////", lw=0.0,
                    label=f"separation band, $\\pm {100 * found.band:g}$ % (relative to the {found.relative_to})")  # fmt: skip
    ax.set_xlim(0, x_top)
    ax.set_ylim(0, f_top)
    ax.set_xlabel(f"{speed_name} ({unit})")
    ax.set_ylabel("frequency (Hz)")
    ax.grid(True, linewidth=0.3, alpha=0.6)
    ax.legend(
        loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=2, fontsize=7, frameon=False
    )  # orders: labelled on their lines
    ax.set_title("Interference diagram: excitation orders against natural frequencies", fontsize=10)
    fig.tight_layout()
    return fig
