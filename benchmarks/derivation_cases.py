"""The derivation cases: one equation each, solved by calckit and by ``sympy.dsolve``.

Each case is ``(coefficients, forcing)`` for ``L(D) x = f(t)`` with the
coefficients highest derivative first (``[m, c, k]`` for the oscillator). The
numbers belong to an invented machine (a 250 kg rotor on its mounts), not to
any published example.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy as sp

t = sp.Symbol("t", real=True)
m, c, k = sp.symbols("m c k", positive=True)
A, w = sp.symbols("A omega", positive=True)

#: the numeric oscillator: m = 250 kg, c = 150 N s/m, k = 180 kN/m (omega_n ~ 26.8 rad/s)
NUMERIC = (250, 150, 180_000)
#: fundamental of the harmonic sets, rad/s
W1 = 50


def harmonics(n: int) -> sp.Expr:
    """``sum_{i=1..n} (400/i) cos(i w1 t) + (120/i) sin(i w1 t)``, N."""
    return sp.Add(
        *(
            sp.Rational(400, i) * sp.cos(i * W1 * t) + sp.Rational(120, i) * sp.sin(i * W1 * t)
            for i in range(1, n + 1)
        )
    )


@dataclass(frozen=True)
class Case:
    name: str
    what: str
    coefficients: tuple
    forcing: sp.Expr
    quick: bool = True


CASES = (
    Case("harmonics-1", "numeric oscillator, 1 harmonic", NUMERIC, harmonics(1)),
    Case("harmonics-8", "numeric oscillator, 8 harmonics", NUMERIC, harmonics(8)),
    Case("harmonics-32", "numeric oscillator, 32 harmonics", NUMERIC, harmonics(32), quick=False),
    Case("harmonics-64", "numeric oscillator, 64 harmonics", NUMERIC, harmonics(64), quick=False),
    Case(
        "poly+exp+harmonic",
        "100 t^2 + 50 e^(-2t) + 400 cos(155 t)",
        NUMERIC,
        100 * t**2 + 50 * sp.exp(-2 * t) + 400 * sp.cos(155 * t),
    ),
    Case(
        "resonant-undamped",
        "m = 100, c = 0, k = 250000: 400 cos(50 t) at omega_n",
        (100, 0, 250_000),
        400 * sp.cos(50 * t),
    ),
    Case(
        "exp-double-root",
        "m = 250, c = 4000, k = 16000 (double root -8): 300 e^(-8t)",
        (250, 4_000, 16_000),
        300 * sp.exp(-8 * t),
    ),
    Case(
        "resonant-irrational",
        "x'' + 3 x = cos(sqrt(3) t): resonance at an irrational frequency",
        (1, 0, 3),
        sp.cos(sp.sqrt(3) * t),
    ),
    Case(
        "resonant-irrational-4th",
        "(D^2 + 3)^2 x = cos(sqrt(3) t): double resonance at an irrational frequency",
        (1, 0, 6, 0, 9),
        sp.cos(sp.sqrt(3) * t),
    ),
    Case("symbolic-cos", "symbolic m, c, k: A cos(omega t)", (m, c, k), A * sp.cos(w * t)),
    Case(
        "symbolic-product",
        "symbolic m, c, k: t e^(-t) sin(omega t)",
        (m, c, k),
        t * sp.exp(-t) * sp.sin(w * t),
        quick=False,
    ),
)

BY_NAME = {case.name: case for case in CASES}
