"""Write harrow_creek_b402_trip.csv: an invented base-acceleration record for the demo.

Harrow Creek water-treatment works (invented): blower B-402 stands on a skid on isolating
mounts on a concrete plinth beside the raw-water pumps. When pump P-403 trips, its check
valve slams and the delivery main surges; the plinth shakes. This script makes the record a
plinth accelerometer might give, in the vertical direction, at 1000 samples a second for
3 s (3001 samples), in g_n:

* the valve slam at 0.25 s, a half-sine of 0.28 g_n over 6 ms, and a weaker second slam
  at 1.10 s (the surge wave back from the reservoir, 0.6 of the first);
* after each slam the floor rings in its first mode (11.5 Hz, 3 % damping) and the main's
  anchor in its own (31 Hz, 2 % damping);
* the running blower's own vibration at 49.5 Hz (2970 rpm), 0.012 g_n, all through;
* accelerometer noise, 0.003 g_n rms, from a fixed seed so the file is always the same.

The numbers are made up to look like a site record, not measured. Run it from this folder:

    python make_b402_record.py
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

STEP = 1e-3  # s
DURATION = 3.0  # s
SLAMS = ((0.25, 1.0), (1.10, 0.6))  # (time s, relative size)
SLAM_PEAK, SLAM_LENGTH = 0.28, 0.006  # g_n, s
MODES = ((11.5, 0.03, 0.22), (31.0, 0.02, 0.10))  # (Hz, damping ratio, amplitude g_n per slam)
BLOWER = (49.5, 0.012)  # Hz, g_n
NOISE = 0.003  # g_n rms
SEED = 402


def record() -> tuple[np.ndarray, np.ndarray]:
    """Times (s) and plinth acceleration (g_n) of the invented pump-trip record."""
    t = np.round(np.arange(0.0, DURATION + STEP / 2, STEP), 6)
    a = BLOWER[1] * np.sin(2 * math.pi * BLOWER[0] * t)
    for start, size in SLAMS:
        s = t - start
        during = (s >= 0) & (s < SLAM_LENGTH)
        a[during] += size * SLAM_PEAK * np.sin(math.pi * s[during] / SLAM_LENGTH)
        after = s >= 0
        for f, zeta, amplitude in MODES:
            w = 2 * math.pi * f
            a[after] += (
                size
                * amplitude
                * np.exp(-zeta * w * s[after])
                * np.sin(w * math.sqrt(1 - zeta**2) * s[after])
            )
    a += NOISE * np.random.default_rng(SEED).standard_normal(t.size)
    return t, a


def main() -> None:
    t, a = record()
    lines = [
        "# Harrow Creek water-treatment works (invented): plinth of blower B-402, vertical acceleration",
        "# during the trip of pump P-403; synthetic record made by make_b402_record.py, not measured",
        "time (s),acceleration (g_n)",
    ]
    lines += [f"{ti:.3f},{ai:.5f}" for ti, ai in zip(t, a, strict=True)]
    Path(__file__).with_name("harrow_creek_b402_trip.csv").write_text(
        "\n".join(lines) + "\n", encoding="utf-8"
    )


if __name__ == "__main__":
    main()
