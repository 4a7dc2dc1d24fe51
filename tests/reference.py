"""Outside references shared by several test files.

``steady_state`` integrates the oscillator with ``scipy.integrate.solve_ivp`` (an
independent numerical route) and reads the steady-state amplitude and lag off the
last forcing periods.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import solve_ivp


def steady_state(m, c, k, F0, w, *, decay=16.0, periods=4):
    """Amplitude and lag of x for m x'' + c x' + k x = F0 cos(w t), by scipy.integrate.solve_ivp.

    Runs from rest until the transient has decayed by exp(-decay), then fits
    a cos(w t) + b sin(w t) to the last *periods* forcing periods by least squares.
    """
    wn = math.sqrt(k / m)
    zeta = c / (2 * math.sqrt(k * m))
    T = 2 * math.pi / w
    t_end = math.ceil(decay / (zeta * wn) / T) * T + periods * T
    sol = solve_ivp(
        lambda t, y: [y[1], (F0 * math.cos(w * t) - c * y[1] - k * y[0]) / m],
        (0.0, t_end),
        [0.0, 0.0],
        method="DOP853",
        rtol=1e-10,
        atol=1e-13,
        dense_output=True,
    )
    tt = np.linspace(t_end - periods * T, t_end, 400 * periods)
    x = sol.sol(tt)[0]
    (a, b), *_ = np.linalg.lstsq(np.column_stack([np.cos(w * tt), np.sin(w * tt)]), x, rcond=None)
    return math.hypot(a, b), math.atan2(b, a)  # x = X cos(w t - phi): a = X cos phi, b = X sin phi
