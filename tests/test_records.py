"""Measured records and their shock spectra (calckit.physics.records, calckit.physics.shock).

Every response is checked against scipy.integrate.solve_ivp (DOP853, tight tolerances,
max_step a sixteenth of the sample step) on synthetic records whose load is piecewise
linear by numpy.interp; the residual spectrum against the damped free vibration closed
form (A. K. Chopra, Dynamics of Structures, 4th ed., sec. 2.2, from memory) evaluated on a
fine grid; refusals are pinned with their row numbers.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from calckit.errors import InputsError, ModelError
from calckit.physics.records import TimeHistory, history_response, load_time_history
from calckit.physics.shock import record_spectrum

H = 1e-3


def _record(n=401, seed=2):
    rng = np.random.default_rng(seed)
    t = np.arange(n) * H
    return t, np.sin(2 * np.pi * t / t[-1]) * np.cumsum(rng.normal(size=n))


def _reference(t, a, wn, zeta, sign, t_end):
    """solve_ivp of z'' + 2 zeta wn z' + wn^2 z = sign * a(t), a straight between samples, zero after."""

    def rhs(tt, y):
        return [y[1], sign * np.interp(tt, t, a, right=0.0) - 2 * zeta * wn * y[1] - wn**2 * y[0]]

    return solve_ivp(rhs, (0, t_end), [0, 0], rtol=1e-12, atol=1e-16, max_step=H / 16, method="DOP853", dense_output=True)


@pytest.mark.parametrize("zeta", [0.0, 0.05, 0.5])
@pytest.mark.parametrize("wn", [2 * np.pi * 3, 2 * np.pi * 40, 2 * np.pi * 99])
def test_recursion_matches_solve_ivp_at_the_samples(wn, zeta):
    """The interval rule at every sample against scipy.integrate.solve_ivp."""
    t, a = _record()
    r = history_response(TimeHistory.from_samples(t, a, value_unit="m/s**2"), wn, zeta)
    ref = _reference(t, a, wn, zeta, -1.0, t[-1]).sol(t)
    scale = np.max(np.abs(ref[0]))
    assert np.max(np.abs(r.relative_displacement - ref[0])) < 1e-8 * scale, f"reproduce: wn={wn}, zeta={zeta}"
    assert np.max(np.abs(r.relative_velocity - ref[1])) < 1e-8 * np.max(np.abs(ref[1]))


@pytest.mark.parametrize(
    ("zeta", "mass"), [(0.0, None), (0.05, 7.0), (0.5, None)]
)  # undamped, light and heavy damping; base motion and a force (each costs seconds in solve_ivp)
def test_spectrum_matches_solve_ivp(zeta, mass):
    """Primary and residual peaks against solve_ivp's dense output (samples and a fine grid), base and force."""
    t, a = _record()
    hist = TimeHistory.from_samples(t, a, value_unit="N" if mass else "m/s**2")
    ws = np.array([2 * np.pi * 3, 2 * np.pi * 20, 2 * np.pi * 99.9])
    s = record_spectrum(hist, ws, zeta, mass=mass)
    sign = 1 / mass if mass else -1.0
    for i, wn in enumerate(ws):
        t_end = t[-1] + 3 * 2 * np.pi / wn
        sol = _reference(t, a, wn, zeta, sign, t_end)
        tp = np.union1d(np.linspace(0, t[-1], 80_000), t)
        tr = np.linspace(t[-1], t_end, 20_000)
        yp, yr = sol.sol(tp), sol.sol(tr)
        load = np.interp(tp, t, a) / mass if mass else 0.0
        acc_p = -(2 * zeta * wn * yp[1] + wn**2 * yp[0]) + load
        acc_r = -(2 * zeta * wn * yr[1] + wn**2 * yr[0])  # no load after the record
        pairs = [
            (s.values["primary"]["relative_displacement"][i], np.max(np.abs(yp[0]))),
            (s.values["residual"]["relative_displacement"][i], np.max(np.abs(yr[0]))),
            (s.values["primary"]["absolute_acceleration"][i], np.max(np.abs(acc_p))),
            (s.values["residual"]["absolute_acceleration"][i], np.max(np.abs(acc_r))),
        ]
        for got, want in pairs:
            assert got == pytest.approx(want, rel=2e-6), f"reproduce: wn={wn}, zeta={zeta}, mass={mass}"
    assert np.allclose(s.values["maximax"]["pseudo_velocity"], ws * s.values["maximax"]["relative_displacement"])


def test_undamped_residual_is_the_free_vibration_amplitude():
    """Undamped: residual = sqrt(z^2 + (z'/wn)^2) at the record's end (textbook free vibration, from memory)."""
    t, a = _record(seed=5)
    hist = TimeHistory.from_samples(t, a, value_unit="m/s**2")
    wn = 2 * np.pi * 17
    end = _reference(t, a, wn, 0.0, -1.0, t[-1]).sol(t[-1])
    s = record_spectrum(hist, [wn], 0.0)
    assert s.values["residual"]["relative_displacement"][0] == pytest.approx(np.hypot(end[0], end[1] / wn), rel=1e-8)


def _csv(tmp_path, text):
    p = tmp_path / "r.csv"
    p.write_text(text)
    return p


def test_csv_units_from_the_header(tmp_path):
    """kN and ms in the header become N and s (1 kN = 1000 N, 1 ms = 0.001 s by definition)."""
    h = load_time_history(_csv(tmp_path, "# plinth\ntime (ms),force (kN)\n0,0\n1,2\n2,0\n\n"))
    assert (h.kind, h.samples, h.step) == ("force", 3, pytest.approx(1e-3))
    assert h.values.tolist() == [0.0, 2000.0, 0.0]


@pytest.mark.parametrize(
    "rows, message",
    [
        ("0,0\n1,nan\n2,0\n", "r.csv: row 3: the value is not a finite number (nan). Fill or remove the sample; a record is read as measured, never patched."),
        ("0,0\n2,1\n1,0\n", "r.csv: row 4: the time 0.001 s does not come after 0.002 s (row 3). Sort the record by time and remove repeated times."),
        ("0,0\n1,1\n2,0\n5,0\n6,0\n7,0\n", "r.csv: row 5: a gap of 0.003 s after row 4, where the record's step is 0.001 s. Give the record at one time step (resample it, or fill the gap from the measurement)."),
        ("0,0\n1,1\n2.3,0\n3,0\n4,0\n", "r.csv: row 4: an uneven step of 0.0013 s after row 3, where the record's step is 0.001 s. Give the record at one time step (resample it, or fill the gap from the measurement)."),
        ("0,0\n1,1\n", "r.csv: 2 samples, fewer than 3. Give at least 3 samples at one time step."),
    ],
)
def test_refusals_name_the_row(tmp_path, rows, message):
    """NaN, times going back, gaps, uneven steps, too few samples: refused with the row."""
    with pytest.raises(InputsError) as err:
        load_time_history(_csv(tmp_path, "time (ms),acceleration (m/s**2)\n" + rows))
    assert str(err.value) == message


def test_step_too_long_for_the_frequencies_asked():
    """A step longer than a tenth of the shortest period is refused with what to do."""
    hist = TimeHistory.from_samples([0, 1, 2, 3], [0, 1, 0, 0], time_unit="ms", value_unit="m/s**2", source="rec")
    with pytest.raises(InputsError) as err:
        record_spectrum(hist, [2 * np.pi * 200], 0.05)
    assert str(err.value) == (
        "rec: record_spectrum(natural_frequencies): the record's time step 1 ms is longer than a tenth of the "
        "shortest natural period asked for (5 ms, at 200 Hz). Give a record sampled at 0.5 ms or finer, or ask "
        "for natural frequencies up to 100 Hz."
    )


def test_force_needs_a_mass_and_damping_below_one():
    hist = TimeHistory.from_samples([0, 1, 2], [0, 1, 0], time_unit="ms", value_unit="kN")
    with pytest.raises(ModelError, match="a force record needs the mass"):
        record_spectrum(hist, [10.0], 0.05)
    with pytest.raises(ModelError, match="outside 0 <= zeta < 1"):
        record_spectrum(hist, [10.0], 1.0, mass=5.0)
