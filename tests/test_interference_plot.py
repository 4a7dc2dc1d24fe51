"""The interference diagram (calckit.render.interference_plot): the data drawn, checked on the artists.

References: an order k at n rpm excites k n / 60 Hz (a revolution per turn, 60 s a minute: definitions);
the crossing of that line with a natural frequency f_n is at n = 60 f_n / k (plain algebra); the band
is f_n (1 -/+ 0.2) (common practice, no source).
"""

from __future__ import annotations

import math

import pytest

import calckit as ck
from calckit.errors import ModelError
from calckit.render.interference_plot import interference_figure


@pytest.fixture(scope="module")
def drawn():
    """Pump P-105 (invented): 740 to 1480 rpm, orders 1, 2, 7, modes at 3.127 Hz and 20 Hz."""
    found = ck.range_separation(
        ck.SpeedRange("740 rpm", "1480 rpm", orders="1, 2, 7 vane passing"), ["3.127 Hz", "20 Hz"]
    )
    return found, interference_figure(found, modes=("bounce", "rocking"))


def _extent(patch, axis):
    """The data extent of a span along x (0) or y (1): a Rectangle (matplotlib 3.9 on) or a Polygon."""
    if hasattr(patch, "get_height"):
        start, size = (patch.get_x(), patch.get_width()) if axis == 0 else (patch.get_y(), patch.get_height())
        return (start, start + size)
    values = [point[axis] for point in patch.get_xy()]
    return (min(values), max(values))


def test_orders_are_lines_through_the_origin(drawn):
    """Each order is a line from the origin with the slope k / 60 Hz per rpm."""
    found, fig = drawn
    (ax,) = fig.axes
    dashed = [line for line in ax.get_lines() if line.get_linestyle() == "--"]
    assert len(dashed) == 3
    for line, k in zip(dashed, (1, 2, 7), strict=True):
        (x0, x1), (y0, y1) = line.get_xdata(), line.get_ydata()
        assert (x0, y0) == (0, 0)
        assert y1 / x1 == pytest.approx(k / 60, rel=1e-12)
    assert ax.get_xlabel() == "running speed (rpm)" and ax.get_ylabel() == "frequency (Hz)"


def test_crossings_marked_where_the_lines_meet(drawn):
    """Crossings at n = 60 f_n / k: 20 Hz x 1x at 1200 rpm lies in the range (filled); the others
    (187.6, 93.8, 26.8 rpm for the bounce, 600 and 171.4 rpm for 20 Hz x 2x, 7x) outside (open)."""
    found, fig = drawn
    (ax,) = fig.axes
    marks = {line.get_label(): line for line in ax.get_lines() if line.get_marker() == "o"}
    inside = marks["crossing inside the speed range"]
    assert list(inside.get_xdata()) == pytest.approx([60 * 20 / 1])
    assert list(inside.get_ydata()) == pytest.approx([20.0])
    outside = marks["crossing outside the speed range"]
    expected = sorted([60 * 3.127 / k for k in (1, 2, 7)] + [60 * 20 / 2, 60 * 20 / 7])
    assert sorted(outside.get_xdata()) == pytest.approx(expected, rel=1e-12)


def test_bands_and_the_speed_range_shaded(drawn):
    """Each natural frequency's band spans f_n (1 -/+ 0.2); the speed range spans 740 to 1480 rpm."""
    found, fig = drawn
    (ax,) = fig.axes
    hatched = [p for p in ax.patches if p.get_hatch() == "////"]
    spans = [y for span in sorted(_extent(p, 1) for p in hatched) for y in span]
    assert spans == pytest.approx([3.127 * 0.8, 3.127 * 1.2, 16.0, 24.0], rel=1e-9)
    (strip,) = [p for p in ax.patches if p.get_label().startswith("speed range")]
    assert _extent(strip, 0) == pytest.approx((740, 1480), rel=1e-12)
    labels = [t.get_text() for t in ax.texts]
    assert "bounce: 3.127 Hz" in labels and "rocking: 20 Hz" in labels


def test_a_fixed_speed_marks_each_order_on_its_line():
    """At one speed the orders' excitations are crosses on the speed's line: k x 1480 / 60 Hz."""
    found = ck.range_separation(ck.SpeedRange("1480 rpm", orders=(1, 2)), [140.0, 172.0])
    fig = interference_figure(found)
    (ax,) = fig.axes
    (crosses,) = [line for line in ax.get_lines() if line.get_marker() == "x"]
    assert list(crosses.get_xdata()) == pytest.approx([1480, 1480])
    assert list(crosses.get_ydata()) == pytest.approx([1480 / 60, 2 * 1480 / 60], rel=1e-12)
    in_hz = interference_figure(found, speed_unit="Hz")
    (crosses,) = [line for line in in_hz.axes[0].get_lines() if line.get_marker() == "x"]
    assert list(crosses.get_xdata()) == pytest.approx([1480 / 60] * 2)  # 1480 rpm = 24.67 Hz of turning
    assert math.isclose(in_hz.axes[0].get_xlim()[1], 1.25 * 1480 / 60, rel_tol=1e-12)


def test_refusals():
    found = ck.range_separation(ck.SpeedRange("1480 rpm"), 140.0)
    with pytest.raises(ModelError) as info:
        interference_figure("not a separation")
    assert str(info.value) == (
        "interference_figure: expected a RangeSeparation, got str. Pass what calckit.range_separation "
        "(or sheet.speed_range_check) returns."
    )
    with pytest.raises(ModelError) as info:
        interference_figure(found, modes=("a", "b"))
    assert str(info.value) == (
        "interference_figure: 2 names for 1 natural frequencies. Give one name per natural frequency."
    )
    with pytest.raises(ModelError) as info:
        interference_figure(found, speed_limit=-1.0)
    assert str(info.value) == "interference_figure: speed_limit = -1.0. Give a positive speed in rad/s."
