"""The spectrum figure (calckit.render.spectrum_plot): three spectra on log axes, the equipment marked.

The spectrum drawn is the undamped rectangular force pulse, whose residual spectrum
``2 |sin(pi t_d/T_n)|`` (A. K. Chopra, Dynamics of Structures, 4th ed., sec. 4.7, from
memory) is checked on the plotted line, so the figure is known to draw the right data.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp

from calckit.errors import ModelError
from calckit.physics import pulses
from calckit.physics.pulse_spectrum import pulse_spectrum
from calckit.physics.spectrum import log_frequencies
from calckit.render.spectrum_plot import spectrum_figure

T = sp.Symbol("t", real=True)
D = 0.02  # s: a closing-valve pulse on the Harrow Creek backwash pump frame


@pytest.fixture(scope="module")
def spectrum():
    w = log_frequencies(2 * math.pi * 2, 2 * math.pi * 2000, 60)
    return pulse_spectrum(pulses.rectangular(1.0, D, t=T), T, w, 0.0, mass=1.0)


def test_three_spectra_on_log_axes_and_the_equipment_marked(spectrum):
    wn = 2 * math.pi * 37.0
    fig = spectrum_figure(spectrum, "relative_displacement", natural_frequency=wn, label="pump frame")
    (ax,) = fig.axes
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    lines = {line.get_label(): line for line in ax.get_lines()}
    assert {"maximax", "primary", "residual"} <= set(lines)
    hz = spectrum.natural_frequencies / (2 * math.pi)
    residual = lines["residual"]
    np.testing.assert_allclose(residual.get_xdata(), hz)
    expected = (
        2 * np.abs(np.sin(np.pi * D * hz)) / spectrum.natural_frequencies**2
    )  # z = residual * F/(m wn^2)
    drawn = np.asarray(residual.get_ydata(), dtype=float)
    ok = np.isfinite(drawn)
    np.testing.assert_allclose(drawn[ok], expected[ok], rtol=1e-9)
    marker = [line for name, line in lines.items() if name.startswith("pump frame")]
    assert len(marker) == 1
    assert np.allclose(marker[0].get_xdata(), 37.0)
    assert any("pump frame" in text.get_text() and "37 Hz" in text.get_text() for text in ax.texts)


def test_the_figure_goes_on_a_sheet(spectrum):
    from calckit.sheet.values import figure_svg

    fig = spectrum_figure(spectrum, natural_frequency=2 * math.pi * 100, scale=9.80665, unit="g_n")
    assert "g_n" in fig.axes[0].get_ylabel()
    assert figure_svg(fig, "Shock response spectrum").lstrip().startswith("<svg")


@pytest.mark.parametrize(
    "kwargs,words",
    [
        ({"natural_frequency": 2 * math.pi * 5000}, "outside"),
        ({"response": "velocity"}, "unknown response"),
        ({"scale": 0}, "scale"),
    ],
)
def test_refusals(spectrum, kwargs, words):
    with pytest.raises(ModelError) as err:
        spectrum_figure(spectrum, **kwargs)
    assert words in str(err.value)
