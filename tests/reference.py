"""Outside references shared by several test files.

``steady_state`` integrates the oscillator with ``scipy.integrate.solve_ivp`` (an
independent numerical route) and reads the steady-state amplitude and lag off the
last forcing periods.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import solve_ivp


def last_periods(m, c, k, F0, w, *, decay=16.0, periods=4):
    """Times, displacement and velocity over the last *periods* forcing periods of
    m x'' + c x' + k x = F0 cos(w t) from rest, by scipy.integrate.solve_ivp (DOP853), run
    until the transient has decayed by exp(-decay)."""
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
    x, v = sol.sol(tt)
    return tt, x, v


def harmonic_fit(tt, y, w):
    """Amplitude and lag of y = Y cos(w t - phi), by least squares on a cos + b sin."""
    (a, b), *_ = np.linalg.lstsq(np.column_stack([np.cos(w * tt), np.sin(w * tt)]), y, rcond=None)
    return math.hypot(a, b), math.atan2(b, a)  # a = Y cos phi, b = Y sin phi


def steady_state(m, c, k, F0, w, *, decay=16.0, periods=4):
    """Amplitude and lag of x for m x'' + c x' + k x = F0 cos(w t), by scipy.integrate.solve_ivp."""
    tt, x, _ = last_periods(m, c, k, F0, w, decay=decay, periods=periods)
    return harmonic_fit(tt, x, w)
