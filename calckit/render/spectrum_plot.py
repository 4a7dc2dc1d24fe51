"""A shock response spectrum as a matplotlib figure: maximax, primary and residual on log axes.

Plotting only: the spectrum is computed in the physics layer
(:func:`calckit.physics.shock.record_spectrum`, :func:`calckit.physics.pulse_spectrum.pulse_spectrum`)
and drawn here. The equipment's natural frequency is marked by a vertical line with its
label and the maximax value there. The figure goes on a sheet with
``sheet.figure(fig, caption)``; matplotlib is imported when a figure is drawn.
"""

from __future__ import annotations

import math

import numpy as np

from calckit.errors import ModelError
from calckit.physics.spectrum import RESPONSE_UNITS, RESPONSES, SPECTRUM_KINDS, ShockSpectrum

__all__ = ["SPECTRUM_STYLES", "spectrum_figure"]

#: line style of each spectrum (black and white print: told apart by the dash, not the colour)
SPECTRUM_STYLES = {
    "maximax": {"color": "black", "linestyle": "-", "linewidth": 1.6},
    "primary": {"color": "tab:blue", "linestyle": "--", "linewidth": 1.2},
    "residual": {"color": "tab:red", "linestyle": ":", "linewidth": 1.4},
}

_NAMES = {
    "relative_displacement": "relative displacement",
    "pseudo_velocity": "pseudo-velocity",
    "absolute_acceleration": "absolute acceleration",
}


def spectrum_figure(
    spectrum: ShockSpectrum,
    response: str = "absolute_acceleration",
    *,
    natural_frequency: float | None = None,
    label: str = "equipment",
    scale: float = 1.0,
    unit: str | None = None,
    size: tuple[float, float] = (6.4, 4.0),
):
    """The three spectra of one response against natural frequency in Hz, both axes logarithmic.

    Parameters
    ----------
    spectrum : ShockSpectrum
    response : str
        One of ``RESPONSES`` (``"absolute_acceleration"`` by default).
    natural_frequency : float, optional
        The equipment's natural frequency in rad/s, marked by a vertical line and *label*.
    scale, unit : optional
        Values are divided by *scale* and the axis says *unit* (``scale=9.80665, unit="g_n"``);
        by default SI.
    size : (width, height) in inches

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not isinstance(spectrum, ShockSpectrum):
        raise ModelError(
            f"expected a ShockSpectrum, got {type(spectrum).__name__}",
            where="spectrum_figure",
            do="Pass what record_spectrum or pulse_spectrum returns",
        )
    if response not in RESPONSES:
        raise ModelError(
            f"unknown response {response!r}", where="spectrum_figure", do=f"Use one of {', '.join(RESPONSES)}"
        )
    if not (isinstance(scale, int | float) and math.isfinite(scale) and scale > 0):
        raise ModelError(f"scale = {scale!r}", where="spectrum_figure", do="Give a positive number")
    from matplotlib.figure import Figure

    hz = np.asarray(spectrum.natural_frequencies, dtype=float) / (2 * math.pi)
    fig = Figure(figsize=size)
    ax = fig.add_subplot(1, 1, 1)
    for kind in SPECTRUM_KINDS:
        y = np.asarray(spectrum.values[kind][response], dtype=float) / scale
        y = np.where(y > 0, y, np.nan)  # a zero of the residual spectrum is a gap on a log axis
        ax.plot(hz, y, label=kind, **SPECTRUM_STYLES[kind])
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("natural frequency (Hz)")
    ax.set_ylabel(f"{_NAMES[response]} ({unit or RESPONSE_UNITS[response]})")
    ax.grid(True, which="both", linewidth=0.3, alpha=0.6)
    if natural_frequency is not None:
        value = spectrum.at(float(natural_frequency), "maximax", response) / scale
        f_n = float(natural_frequency) / (2 * math.pi)
        ax.axvline(f_n, color="0.3", linewidth=1.0, linestyle="-.", label=f"{label}: {f_n:.4g} Hz")
        ax.plot([f_n], [value], marker="o", color="black", linestyle="none")
        ax.annotate(
            f"{label}\n{f_n:.4g} Hz, {value:.4g}",
            xy=(f_n, value),
            xytext=(6, -14),
            textcoords="offset points",
            fontsize=8,
        )
    ax.legend(fontsize=8, loc="best")
    zeta = spectrum.damping_ratio
    ax.set_title(f"Shock response spectrum ({spectrum.excitation}), damping ratio {zeta:.3g}", fontsize=10)
    fig.tight_layout()
    return fig
