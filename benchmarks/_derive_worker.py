"""Time one derivation case by one tool, in a process of its own.

Usage: ``python _derive_worker.py TOOL CASE REPEATS BUDGET_S``, TOOL ``calckit``
or ``dsolve``. Prints one JSON line per repeat (seconds, count_ops of the
particular solution, verified) and stops repeating once the repeats so far
took BUDGET_S. sympy's cache is cleared before every repeat, for both tools, after one
untimed warm-up on another equation (x'' + 3x' + 2x = cos t + t).
The parent process bounds each repeat's wall time and kills this one past it.
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import sympy as sp  # noqa: E402
from derivation_cases import BY_NAME, t  # noqa: E402
from sympy.core.cache import clear_cache  # noqa: E402

HINT = "nth_linear_constant_coeff_undetermined_coefficients"


def calckit_solve(coefficients, forcing):
    import calckit as ck

    model = ck.Oscillator(*coefficients) if len(coefficients) == 3 else ck.LinearODE(coefficients)
    der = model.particular(forcing, t=t)
    return der.solution, der.verified


def dsolve_solve(coefficients, forcing):
    x = sp.Function("x")
    n = len(coefficients) - 1
    lhs = sp.Add(*(a * x(t).diff(t, n - i) if n - i else a * x(t) for i, a in enumerate(coefficients)))
    sol = sp.dsolve(sp.Eq(lhs, forcing), x(t), hint=HINT)
    constants = {s: 0 for s in sol.rhs.free_symbols if s.name.startswith("C") and s.name[1:].isdigit()}
    return sol.rhs.subs(constants), None


def main() -> None:
    tool, name, repeats, budget = sys.argv[1], sys.argv[2], int(sys.argv[3]), float(sys.argv[4])
    case = BY_NAME[name]
    solve = {"calckit": calckit_solve, "dsolve": dsolve_solve}[tool]
    # one untimed warm-up on another equation, for both tools: lazy imports and
    # first-call set-up are not what is compared
    solve((1, 3, 2), sp.cos(t) + t)
    spent = 0.0
    for _ in range(repeats):
        clear_cache()
        start = time.perf_counter()
        solution, verified = solve(case.coefficients, case.forcing)
        seconds = time.perf_counter() - start
        spent += seconds
        print(
            json.dumps({"seconds": seconds, "count_ops": int(sp.count_ops(solution)), "verified": verified}),
            flush=True,
        )
        if spent >= budget:
            break


if __name__ == "__main__":
    main()
