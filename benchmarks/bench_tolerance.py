"""A sampled tolerance study of the single-mass sheet: all samples at once against a loop over samples.

Usage (from the repository root)::

    python benchmarks/bench_tolerance.py                 # writes benchmarks/RESULTS_TOLERANCE.md
    python benchmarks/bench_tolerance.py --repeats 3 --out /tmp/tolerance.md

The sheet is the bundled ``single_mass_harmonic`` template run in this process (its code
cells executed in order, the build's inputs cell injected from
``examples/harrow_creek_p101.toml``, whose mass, stiffness and forcing frequency carry
bands). Timed, in one run:

1. the sheet's whole tolerance study with ``sheet.sample_study(n=100_000)`` (uniform, seed
   2026): composing each check's chain, the worst case over the box, the sensitivities and
   the pass fraction of every check over 100,000 samples, on expressions compiled to numpy
   (:mod:`calckit.sheet.tolerance_study`), each repeat from nothing (the kept compiled
   functions and sympy's cache emptied); the same study without samples beside it, so the
   share of the sampling shows; and the study again with its compiled functions kept, as a
   batch's or a watch's later cases find them;
2. the same 100,000 samples by a loop: each sample's checked results computed one sample at
   a time by the same compiled expressions (``sympy.lambdify`` with the ``math`` module),
   timed on 5,000 samples and scaled to 100,000 (said in the table);
3. the same by ``sympy`` substitution per sample (``expr.subs(...).evalf()``), timed on 200
   samples and scaled.

The pass fractions of the loop are compared with the study's on the samples the loop
draws (the same generator, seed and order), so the routes are checked to agree.

Target (checked here, never in the tests): 100,000 samples of the single-mass sheet's
checks in under 2 s.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))

SAMPLES = 100_000
SEED = 2026
TARGET_S = 2.0
LOOP_SAMPLES = 5_000
SUBS_SAMPLES = 200


def single_mass_sheet():
    """The single-mass template run in this process from the P-101 example (with its bands)."""
    import matplotlib

    matplotlib.use("Agg")
    from calckit.workflow.build import prepared_values
    from calckit.workflow.inputs import read_inputs
    from calckit.workflow.templates import cell_source, inputs_cell_source, load_template

    template = load_template(ROOT / "templates" / "single_mass_harmonic.ipynb")
    inputs = read_inputs(ROOT / "examples" / "harrow_creek_p101.toml")
    injected = inputs_cell_source(
        prepared_values(template, inputs),
        inputs.path.name,
        template.digest,
        dict(inputs.sources),
        inputs.tolerances,
    )
    namespace: dict = {}
    for index, cell in enumerate(template.notebook.cells):
        if cell.cell_type != "code":
            continue
        exec(compile(cell_source(cell), f"cell {index}", "exec"), namespace)  # noqa: S102 - the bundled template
        if index == template.parameters_cell:
            exec(compile(injected, "inputs-from-file", "exec"), namespace)  # noqa: S102
    return namespace["sheet"]


def shown(seconds: float) -> str:
    return f"{seconds * 1000:.0f} ms" if seconds < 10 else f"{seconds:,.0f} s"


def timed(call, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--out", type=Path, default=HERE / "RESULTS_TOLERANCE.md")
    args = parser.parse_args()

    import sympy as sp

    from calckit.sheet.chain import composed, input_symbol, si_float
    from calckit.sheet.tolerance_study import study_of

    sheet = single_mass_sheet()
    bands = [rec.tolerance for rec in sheet.inputs.values() if rec.tolerance is not None]

    from sympy.core.cache import clear_cache

    from calckit.sheet.tolerance_study import _derivatives, _lambdified

    def study(samples: bool, cold: bool = True):
        def run():
            sheet.sampling = None
            if samples:
                sheet.sample_study(n=SAMPLES, distribution="uniform", seed=SEED)
            sheet._study_kept = None  # computed afresh: nothing kept from the last repeat
            if cold:  # as a sheet's first study: no compiled margin kept, sympy's cache empty
                _lambdified.cache_clear()
                _derivatives.cache_clear()
                clear_cache()
            return study_of(sheet)

        return run

    with_samples = timed(study(True), args.repeats)
    without = timed(study(False), args.repeats)
    kept = timed(study(True, cold=False), args.repeats)
    result = study(True)()
    evaluated = [c for c in result.checks if c.evaluated and c.inputs]

    # the loop routes: the same checked results, one sample at a time
    names = [b.name for b in bands]
    symbols = [input_symbol(n) for n in names]
    fixed = {input_symbol(r.name): si_float(r.value) for r in sheet.inputs.values() if r.tolerance is None}
    checks = {c.name: c for c in sheet.checks}
    exprs = []
    for c in evaluated:
        factor = si_float(sheet.results[c.result]) and (
            float(checks[c.name].value) / si_float(sheet.results[c.result])
        )
        exprs.append(
            (
                c,
                composed(sheet, c.result).xreplace({s: v for s, v in fixed.items() if v is not None})
                * factor,
            )
        )
    rng = np.random.default_rng(SEED)
    drawn = np.array([rng.uniform(*b.si()[::2], SAMPLES) for b in bands]).T  # the study's draw: same order
    compiled = [(c, sp.lambdify(symbols, e, "math")) for c, e in exprs]

    def loop(count: int):
        passed = [0] * len(compiled)
        for row in drawn[:count]:
            for j, (c, f) in enumerate(compiled):
                v = f(*row)
                passed[j] += (v <= c.worst_limit) if c.relation in ("<=", "<") else (v >= c.worst_limit)
        return passed

    start = time.perf_counter()
    loop_passed = loop(LOOP_SAMPLES)
    loop_s = (time.perf_counter() - start) * SAMPLES / LOOP_SAMPLES
    loop_fractions = {c.name: loop_passed[j] / LOOP_SAMPLES for j, (c, _f) in enumerate(compiled)}
    start = time.perf_counter()
    for row in drawn[:SUBS_SAMPLES]:
        for _c, e in exprs:
            float(e.subs(dict(zip(symbols, row, strict=True))).evalf())
    subs_s = (time.perf_counter() - start) * SAMPLES / SUBS_SAMPLES

    # the loop's fractions on its first samples against the study's own pass rule on the same samples
    from calckit.sheet.tolerance_study import _Frame

    agree = []
    for c, e in exprs:
        v = _Frame(symbols, {}).one(e)(*drawn[:LOOP_SAMPLES].T)
        own = float(np.mean(v <= c.worst_limit if c.relation in ("<=", "<") else v >= c.worst_limit))
        agree.append(abs(own - loop_fractions[c.name]) < 1e-12)

    ok = with_samples < TARGET_S
    lines = [
        "# Tolerance study benchmark",
        "",
        f"Run {dt.datetime.now(dt.UTC):%Y-%m-%d %H:%M} UTC on {platform.platform()}, "
        f"{os.cpu_count()} cores, Python {platform.python_version()}; median of {args.repeats} repeats. "
        "Written by `python benchmarks/bench_tolerance.py`.",
        "",
        f"Sheet: `single_mass_harmonic` from `examples/harrow_creek_p101.toml`, bands on {', '.join(names)}; "
        f"{len(evaluated)} checks evaluated over them ({', '.join(c.name for c in evaluated)}).",
        "",
        "| route | time for 100,000 samples | against the study |",
        "| --- | ---: | ---: |",
        f"| whole tolerance study with 100,000 samples (worst case, sensitivities, pass fractions) | "
        f"{shown(with_samples)} | 1 |",
        f"| the same study without samples | {shown(without)} | (sampling: {shown(with_samples - without)}) |",
        f"| the study with 100,000 samples again, its compiled margins kept (a batch's or a watch's later cases) | "
        f"{shown(kept)} | {kept / with_samples:.2f} |",
        f"| loop over samples, compiled expressions (`lambdify`, `math`), timed on {LOOP_SAMPLES:,} and scaled | "
        f"{shown(loop_s)} | {loop_s / max(with_samples - without, 1e-9):.0f}x the sampling |",
        f"| loop over samples, `sympy` `subs` and `evalf`, timed on {SUBS_SAMPLES} and scaled | "
        f"{shown(subs_s)} | {subs_s / max(with_samples - without, 1e-9):.0f}x the sampling |",
        "",
        "Pass fractions (study, 100,000 samples): "
        + ", ".join(f"{c.name} {c.pass_fraction * 100:.2f} %" for c in evaluated)
        + f". The loop's fractions on its {LOOP_SAMPLES:,} samples equal the study's rule on the same samples: "
        + ("yes" if all(agree) else "NO") + ".",
        "",
        f"Target: 100,000 samples of the single-mass sheet's checks under {TARGET_S:g} s: "
        + ("**met**" if ok else "**NOT MET**") + f" ({with_samples:.2f} s for the whole study).",
        "",
    ]  # fmt: skip
    text = "\n".join(lines)
    args.out.write_text(text, encoding="utf-8")
    print(text)


if __name__ == "__main__":
    main()
