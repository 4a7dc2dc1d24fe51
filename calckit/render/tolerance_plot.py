"""The tornado chart of a tolerance study: a checked result at each end of each input's band.

Plotting only: the numbers are the sheet's tolerance study
(:mod:`calckit.sheet.tolerance_study`), handed over as plain data (:class:`TornadoPanel`),
so this module knows nothing of sheets. One panel a check: a horizontal bar for each
input from the result with that input at the low end of its band to the result at the
high end (the others at their values), widest swing at the top; a solid line at the
nominal result, a dashed one at the limit. Black and white print: the low end is hatched,
the high end solid grey. matplotlib is imported when a figure is drawn.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

__all__ = ["TornadoPanel", "tornado_figure"]


@dataclass(frozen=True)
class TornadoPanel:
    """One check's bars: ``bars`` is ``(input label, result at low end, result at high end)`` for each input."""

    title: str
    unit: str
    nominal: float
    limit: float
    bars: tuple[tuple[str, float, float], ...]


def tornado_figure(panels: Sequence[TornadoPanel], *, width: float = 6.4):
    """A figure with one tornado chart a panel, stacked; inputs sorted by swing, widest at the top.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    heights = [0.9 + 0.32 * max(1, len(p.bars)) for p in panels]
    fig = Figure(figsize=(width, sum(heights) + 0.3 * len(panels)))
    axes = fig.subplots(len(panels), 1, squeeze=False, gridspec_kw={"height_ratios": heights})[:, 0]
    for ax, panel in zip(axes, panels, strict=True):
        bars = sorted(panel.bars, key=lambda b: abs(b[2] - b[1]))  # widest last: drawn at the top
        for row, (_label, low, high) in enumerate(bars):
            ax.barh(row, low - panel.nominal, left=panel.nominal, height=0.6, color="white",
                    edgecolor="black", hatch="////", linewidth=0.8)  # fmt: skip
            ax.barh(row, high - panel.nominal, left=panel.nominal, height=0.6, color="0.6",
                    edgecolor="black", linewidth=0.8)  # fmt: skip
        ax.set_yticks(range(len(bars)), [b[0] for b in bars], fontsize=8)
        ax.axvline(panel.nominal, color="black", lw=1.0)
        ax.axvline(panel.limit, color="black", lw=1.0, ls="--")
        ends = [v for b in bars for v in b[1:]] + [panel.nominal, panel.limit]
        lo, hi = min(ends), max(ends)
        pad = 0.08 * (hi - lo or abs(hi) or 1.0)
        ax.set_xlim(lo - pad, hi + pad)
        ax.set_ylim(-0.6, len(bars) - 0.4)
        unit = f", {panel.unit}" if panel.unit else ""
        ax.set_xlabel(f"{panel.title}{unit}", fontsize=8)
        ax.tick_params(axis="x", labelsize=8)
    axes[0].legend(
        handles=[
            Patch(facecolor="white", edgecolor="black", hatch="////", label="input at the low end"),
            Patch(facecolor="0.6", edgecolor="black", label="input at the high end"),
            Line2D([], [], color="black", lw=1.0, label="nominal"),
            Line2D([], [], color="black", lw=1.0, ls="--", label="limit"),
        ],
        loc="lower center", bbox_to_anchor=(0.5, 1.0), ncol=4, fontsize=7, frameon=False,
    )  # fmt: skip
    fig.tight_layout()
    return fig
