"""Side-by-side: one slider move of the what-if explorer against re-deriving on every move.

The explorer derives the response once with symbols for m, c, k, F0 and w and
compiles it; a move only evaluates arrays (a 2,000-point frequency-response curve
and 2,000-point time histories). The alternative re-derives with the moved
numbers each time (particular solution, harmonic line, response from rest) and
then evaluates the same arrays. Speed is reported as a ratio; nothing is asserted.

Run from the repository root::

    python benchmarks/bench_explore.py [--repeat N]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import sympy as sp

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from calckit.engine.numeric import compile_expr  # noqa: E402
from calckit.explore import explore  # noqa: E402
from calckit.physics.oscillator import Oscillator  # noqa: E402

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "harrow_creek_p101.toml"
POINTS = 2000


def timed(action, repeat: int) -> list[float]:
    times = []
    for i in range(repeat):
        start = time.perf_counter()
        action(i)
        times.append(time.perf_counter() - start)
    return times


def rederive(m: float, zeta: float, k: float, f0: float, w: float, omegas: np.ndarray, times: np.ndarray):
    """What a move would cost without the symbolic-once design: derive with numbers, then evaluate."""
    t = sp.Symbol("t", real=True)
    mq, kq, zq = (sp.Rational(str(v)) for v in (m, k, zeta))
    osc = Oscillator(mq, 2 * zq * sp.sqrt(kq * mq), kq)
    f = sp.Rational(str(f0)) * sp.cos(sp.Float(w, 15) * t)
    steady = osc.particular(f, t=t).solution
    rest = osc.response(f, 0, 0, t=t).solution
    compile_expr(steady, t)(times)
    compile_expr(rest, t)(times)
    wv = sp.Symbol("w", positive=True)
    (line,) = osc.harmonics(sp.Rational(str(f0)) * sp.cos(wv * t), t=t)
    compile_expr(line.amplitude, wv)(omegas)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=30, help="slider moves timed (default 30)")
    parser.add_argument("--rederive", type=int, default=3, help="re-derivations timed (default 3)")
    args = parser.parse_args()

    start = time.perf_counter()
    ex = explore(EXAMPLE, points=POINTS)
    opened = time.perf_counter() - start
    stiffness = ex.sliders["stiffness"]
    values = np.geomspace(300.0, 1500.0, args.repeat)

    def numbers_only(i: int) -> None:
        ex._inputs["stiffness"].value = float(values[i])
        ex.results = ex._evaluate()
        ex._curves()

    def full_move(i: int) -> None:
        stiffness.value = float(values[-1 - i])  # results table, plot artists and PNG

    numeric = timed(numbers_only, args.repeat)
    full = timed(full_move, args.repeat)
    r = ex.results
    omegas = ex._omega
    times = np.linspace(0.0, 1.0, POINTS)
    again = timed(
        lambda i: rederive(
            r.mass,
            r.damping_ratio,
            r.stiffness * (1 + 0.01 * i),
            r.force_amplitude,
            r.forcing_frequency,
            omegas,
            times,
        ),
        args.rederive,
    )

    med = {
        name: statistics.median(v) * 1000
        for name, v in (("numeric", numeric), ("full", full), ("again", again))
    }
    print(f"explorer opened (derive once, compile, first draw): {opened * 1000:.0f} ms")
    print(
        f"move, numbers only (2,000-point curve + time histories): median {med['numeric']:.2f} ms over {args.repeat}"
    )
    print(
        f"move, full (numbers + results table + plot as PNG):     median {med['full']:.1f} ms over {args.repeat}"
    )
    print(
        f"move by re-deriving symbolically, then evaluating:      median {med['again']:.0f} ms over {args.rederive}"
    )
    print(f"ratio re-derive / numbers only: {med['again'] / med['numeric']:.0f}x")
    print(f"ratio re-derive / full move:    {med['again'] / med['full']:.1f}x")


if __name__ == "__main__":
    main()
