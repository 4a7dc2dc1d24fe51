"""Shock spectra of closed-form pulses (calckit.physics.pulse_spectrum).

References outside calckit:

* the undamped rectangular force-pulse spectra, primary ``1 - cos(2 pi t_d/T_n)`` for
  ``t_d < T_n/2`` and 2 beyond, residual ``2 |sin(pi t_d/T_n)|`` (A. K. Chopra, *Dynamics of
  Structures*, 4th ed., sec. 4.7; C. M. Harris and A. G. Piersol, *Shock and Vibration
  Handbook*, 5th ed., ch. 8; from memory);
* the undamped half-sine spectra (Chopra, 4th ed., sec. 4.8, from memory): with
  ``r = T_n/(2 t_d)``, primary ``sin(2 pi l r/(1 + r))/(1 - r)`` maximised over the whole
  ``l <= (1 + r)/(2 r)`` for ``r < 1``, ``pi/2`` at ``r = 1``, ``r sin(pi/r)/(r^2 - 1)`` (its
  value at the end of the pulse) for ``r > 1``; residual ``2 r |cos(pi/(2 r))|/|r^2 - 1|``;
* every other response against ``scipy.integrate.solve_ivp`` (DOP853, rtol 1e-12, the step
  limited to a two-hundredth of the pulse, the integration restarted at each switching time),
  its maxima read on a fine grid of the dense output.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

from calckit.core.units import Q_
from calckit.errors import CalcError, ModelError
from calckit.physics import pulses
from calckit.physics.pulse_spectrum import pulse_spectrum

T = sp.Symbol("t", real=True)
D = 0.012  # pulse length, s (a valve-slam pulse on a pump skid at Harrow Creek)
RATIOS = np.geomspace(0.05, 20, 100)  # t_d / T_n


def _normalised(s, kind):
    """k z / F for a unit force on a unit mass: omega_n^2 z."""
    return s.values[kind]["relative_displacement"] * s.natural_frequencies**2


def test_undamped_rectangular_matches_the_closed_form():
    w = 2 * np.pi * RATIOS / D
    s = pulse_spectrum(pulses.rectangular(1, D, t=T), T, w, 0.0, mass=1)
    primary = np.where(RATIOS >= 0.5, 2.0, 1 - np.cos(2 * np.pi * RATIOS))
    residual = 2 * np.abs(np.sin(np.pi * RATIOS))
    np.testing.assert_allclose(_normalised(s, "primary"), primary, rtol=0, atol=1e-9)
    np.testing.assert_allclose(_normalised(s, "residual"), residual, rtol=0, atol=1e-9)
    np.testing.assert_allclose(_normalised(s, "maximax"), np.maximum(primary, residual), rtol=0, atol=1e-9)
    # pseudo-velocity is omega_n z by definition
    np.testing.assert_allclose(
        s.values["maximax"]["pseudo_velocity"], w * s.values["maximax"]["relative_displacement"], rtol=1e-15
    )


def _half_sine_primary(r):
    if r < 1:
        top = math.floor((1 + r) / (2 * r))
        return max(math.sin(2 * math.pi * k * r / (1 + r)) for k in range(1, top + 1)) / (1 - r)
    if r == 1:
        return math.pi / 2
    return r * math.sin(math.pi / r) / (r * r - 1)


def test_undamped_half_sine_matches_the_closed_form():
    ratios = np.concatenate([RATIOS, [0.5, 1.0, 1.5]])  # 0.5: the pulse's own frequency (resonance)
    w = 2 * np.pi * ratios / D
    s = pulse_spectrum(pulses.half_sine(1, D, t=T), T, w, 0.0, mass=1)
    order = np.argsort(w)
    r = (1 / (2 * ratios))[order]
    primary = np.array([_half_sine_primary(x) for x in r])
    with np.errstate(divide="ignore", invalid="ignore"):
        residual = np.where(
            np.isclose(r, 1), math.pi / 2, 2 * r * np.abs(np.cos(np.pi / (2 * r))) / np.abs(r * r - 1)
        )
    np.testing.assert_allclose(_normalised(s, "primary"), primary, rtol=0, atol=1e-8)
    np.testing.assert_allclose(_normalised(s, "residual"), residual, rtol=0, atol=1e-8)
    assert any("resonance" in note for note in s.notes)


def test_long_rectangular_pulse_gives_twice_the_static_deflection():
    """A force held for 40 periods: peak 2 F/k (Chopra, 4th ed., sec. 4.3, step force, from memory)."""
    m, k, force = 350.0, 2.2e6, 1800.0  # kg, N/m, N
    wn = math.sqrt(k / m)
    d = 40 * 2 * math.pi / wn
    s = pulse_spectrum(pulses.rectangular(force, d, t=T), T, [wn], 0.0, mass=Q_(m, "kg"))
    assert s.values["primary"]["relative_displacement"][0] == pytest.approx(2 * force / k, rel=1e-9)
    s = pulse_spectrum(pulses.rectangular(force, d, t=T), T, [wn], 0.02, mass=m)
    # damped: the first overshoot, 1 + exp(-zeta pi/sqrt(1 - zeta^2)) (Chopra, 4th ed., sec. 4.3, from memory)
    overshoot = 1 + math.exp(-0.02 * math.pi / math.sqrt(1 - 0.02**2))
    assert s.values["primary"]["relative_displacement"][0] == pytest.approx(overshoot * force / k, rel=1e-9)


def _branch(expr, at):
    """The expression with every Piecewise replaced by the branch that holds at t = at."""

    def pick(*args):
        for value, cond in args:
            if bool(cond.subs(T, at)):
                return value
        raise AssertionError("no branch")

    return expr.replace(sp.Piecewise, pick)


def _reference_maxima(pulse, wn, zeta, sign, switches):
    """Maxima of |z| and |absolute acceleration| during and after the pulse, from solve_ivp.

    The integration restarts at each switching time with the formula in force on the span
    (so no step straddles a jump); after the pulse it runs six natural periods.
    """
    edges = [0.0, *switches]
    spans = [*zip(edges[:-1], edges[1:], strict=True), (edges[-1], edges[-1] + 6 * 2 * math.pi / wn)]
    y = [0.0, 0.0]
    found = {"primary": [0.0, 0.0], "residual": [0.0, 0.0]}
    for j, (a, b) in enumerate(spans):
        last = j == len(spans) - 1
        load = sp.lambdify(T, sign * _branch(pulse, (a + b) / 2), modules="numpy")

        def rhs(tt, yy, load=load):
            return [yy[1], float(load(tt)) - 2 * zeta * wn * yy[1] - wn**2 * yy[0]]

        sol = solve_ivp(
            rhs, (a, b), y, rtol=1e-12, atol=1e-18, max_step=D / 200, method="DOP853", dense_output=True
        )
        grid = np.linspace(a, b, 4001)

        def displacement(x, sol=sol):
            return abs(float(sol.sol(x)[0]))

        def acceleration(x, sol=sol, load=load):
            z, v = sol.sol(x)
            acc = -(2 * zeta * wn * v + wn**2 * z)
            if sign > 0:  # under a force the mass's acceleration is p - (...)
                acc = acc + np.broadcast_to(np.asarray(load(x), dtype=float), np.shape(x))
            return np.abs(acc)

        kind = "residual" if last else "primary"
        z_grid = np.abs(sol.sol(grid)[0])
        for col, (values, fun) in enumerate(((z_grid, displacement), (acceleration(grid), acceleration))):
            top = int(np.argmax(values))
            lo, hi = grid[max(top - 1, 0)], grid[min(top + 1, grid.size - 1)]
            # the peak between grid points: scipy.optimize.minimize_scalar on the dense output
            refined = minimize_scalar(
                lambda x, fun=fun: -float(fun(x)), bounds=(lo, hi), method="bounded", options={"xatol": 1e-15}
            )
            found[kind][col] = max(found[kind][col], float(values[top]), -float(refined.fun))
        y = sol.y[:, -1]
    return found


CASES = [
    ("half_sine", lambda: pulses.half_sine(2.5, D, t=T), [D]),
    ("triangle", lambda: pulses.triangle(2.5, D, t=T), [D / 2, D]),
    ("terminal_peak_sawtooth", lambda: pulses.terminal_peak_sawtooth(2.5, D, t=T), [D]),
    ("trapezoid", lambda: pulses.trapezoid(2.5, D / 4, D / 2, D / 4, t=T), [D / 4, 3 * D / 4, D]),
    ("versed_sine_late", lambda: pulses.versed_sine(2.5, D, start=D / 3, t=T), [D / 3, 4 * D / 3]),
]


@pytest.mark.parametrize(
    ("zeta", "excitation"), [(0.0, "force"), (0.05, "base acceleration"), (0.3, "force")]
)  # every damping and both excitations for every shape, in three runs of solve_ivp (seconds each), not six
@pytest.mark.parametrize("name,make,switches", CASES, ids=[c[0] for c in CASES])
def test_spectrum_matches_solve_ivp(name, make, switches, zeta, excitation):
    pulse = make()
    mass = 4.0 if excitation == "force" else None
    sign = 1 / mass if mass else -1.0
    ws = np.array([0.3, 1.7, 6.3, 24.6]) * 2 * math.pi / D
    s = pulse_spectrum(pulse, T, ws, zeta, excitation=excitation, mass=mass)
    for i, wn in enumerate(ws):
        ref = _reference_maxima(pulse, wn, zeta, sign, switches)
        for kind in ("primary", "residual"):
            for col, response in enumerate(("relative_displacement", "absolute_acceleration")):
                got = s.values[kind][response][i]
                assert got == pytest.approx(
                    ref[kind][col], rel=2e-6, abs=1e-9 * ref["primary"][col]
                ), f"reproduce: {name}, wn={wn}, zeta={zeta}, {excitation}, {kind} {response}"
        assert s.values["maximax"]["relative_displacement"][i] == pytest.approx(
            max(ref["primary"][0], ref["residual"][0]), rel=2e-6
        )


def test_spectrum_of_a_counted_repeat_matches_solve_ivp():
    pulse = pulses.repeated(pulses.half_sine(1.0, D, t=T), 3 * D, count=2, t=T)
    ws = np.array([0.4, 2.0]) * 2 * math.pi / D
    s = pulse_spectrum(pulse, T, ws, 0.05, mass=1.0)
    for i, wn in enumerate(ws):
        ref = _reference_maxima(pulse, wn, 0.05, 1.0, [D, 3 * D, 4 * D])
        assert s.values["primary"]["relative_displacement"][i] == pytest.approx(ref["primary"][0], rel=2e-6)
        assert s.values["residual"]["relative_displacement"][i] == pytest.approx(ref["residual"][0], rel=2e-6)


@pytest.mark.parametrize(
    "pulse,kwargs,words",
    [
        (lambda: pulses.repeated(pulses.half_sine(1, D, t=T), 2 * D, t=T), {"mass": 1}, "count"),
        (lambda: pulses.ramp_and_hold(1, D, t=T), {"mass": 1}, "does not end"),
        (lambda: pulses.half_sine(sp.Symbol("A"), D, t=T), {"mass": 1}, "symbol"),
        (lambda: sp.sin(T), {"mass": 1}, "not a pulse"),
        (lambda: pulses.half_sine(1, D, t=T), {}, "mass"),
        (lambda: pulses.half_sine(1, D, t=T), {"mass": -2.0}, "not positive"),
        (lambda: pulses.half_sine(1, D, t=T), {"mass": 1, "excitation": "velocity"}, "excitation"),
        (lambda: pulses.half_sine(1, D, t=T), {"mass": 1, "damping_ratio": 1.2}, "damping"),
        (lambda: pulses.half_sine(1, D, t=T), {"mass": 1, "natural_frequencies": [-3.0]}, "positive"),
        (lambda: pulses.half_sine(1, D, t=T), {"mass": 1, "natural_frequencies": [1e9]}, "cycles"),
    ],
)
def test_refusals(pulse, kwargs, words):
    kwargs = {"natural_frequencies": [100.0], **kwargs}
    with pytest.raises(CalcError) as err:
        pulse_spectrum(pulse(), T, **kwargs)
    assert words in str(err.value)
    assert isinstance(err.value, ModelError)


def test_default_frequencies_span_the_pulse():
    s = pulse_spectrum(pulses.half_sine(1, D, t=T), T, damping_ratio=0.05, excitation="base acceleration")
    f = s.natural_frequencies / (2 * math.pi)
    assert s.natural_frequencies.size == 100
    assert f[0] == pytest.approx(0.1 / D) and f[-1] == pytest.approx(100 / D)
    assert s.duration == pytest.approx(D)
