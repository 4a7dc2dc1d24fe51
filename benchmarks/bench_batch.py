"""The everyday batch, before and after, side by side in one run: cases a minute.

Runs ``calckit batch`` of the single-mass template over the 50 cases of
``benchmarks/run.py`` (masses, stiffnesses, damping ratios and speeds around the
P-101 demo) with this tree's calckit and with an earlier one (``--before DIR``,
a checkout of an older commit: ``git archive COMMIT | tar -x -C DIR``), in turns,
``--rounds`` times each, and writes ``benchmarks/RESULTS_BATCH.md``. The two runs
share the machine's state, so their ratio is what to read; the cases a minute
themselves move with the machine's load (it is shared).

    python benchmarks/bench_batch.py --before /tmp/calckit-before [--cases 50] [--rounds 1]
"""

from __future__ import annotations

import argparse
import os
import platform
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from run import INPUTS, TEMPLATE, write_cases  # noqa: E402

TARGET_PER_MINUTE = 150.0


def _env(tree: Path) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(tree)
    env["MPLBACKEND"] = "Agg"
    env["PYDEVD_DISABLE_FILE_VALIDATION"] = "1"
    return env


def run_batch(tree: Path, cases: Path, out: Path) -> dict:
    cmd = [sys.executable, "-m", "calckit", "batch", TEMPLATE, "--cases", str(cases)]
    cmd += ["--inputs", str(INPUTS), "--out", str(out)]
    start = time.perf_counter()
    done = subprocess.run(cmd, env=_env(tree), capture_output=True, text=True, cwd=tempfile.gettempdir())
    seconds = time.perf_counter() - start
    built = sum(1 for _ in out.glob("*/*.json"))
    return {"seconds": seconds, "built": built, "code": done.returncode, "tail": done.stderr[-400:]}


def load() -> str:
    try:
        return " / ".join(f"{x:.2f}" for x in os.getloadavg())
    except OSError:
        return "?"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--before", required=True, type=Path, help="a checkout of the earlier calckit")
    parser.add_argument("--cases", type=int, default=50)
    parser.add_argument("--rounds", type=int, default=1)
    parser.add_argument("--out", type=Path, default=HERE / "RESULTS_BATCH.md")
    args = parser.parse_args()
    work = Path(tempfile.mkdtemp(prefix="calckit-bench-batch-"))
    cases = work / "cases.csv"
    write_cases(cases, args.cases)
    runs: dict[str, list[dict]] = {"before": [], "after": []}
    loads = [load()]
    try:
        for round_ in range(args.rounds):
            for name, tree in (("before", args.before.resolve()), ("after", ROOT)):
                out = work / f"{name}-{round_}"
                print(f"{name}, round {round_ + 1} ...", file=sys.stderr, flush=True)
                result = run_batch(tree, cases, out)
                if result["code"] not in (0, 3) or result["built"] != args.cases:
                    print(result["tail"], file=sys.stderr)
                runs[name].append(result)
                shutil.rmtree(out, ignore_errors=True)
                loads.append(load())
    finally:
        shutil.rmtree(work, ignore_errors=True)
    best = {name: min(r["seconds"] for r in rs) for name, rs in runs.items()}
    per_minute = {name: 60.0 * args.cases / s for name, s in best.items()}
    lines = [
        "# The everyday batch: before and after",
        "",
        f"`python benchmarks/bench_batch.py --before DIR`: `calckit batch {TEMPLATE}` of {args.cases} cases "
        "(benchmarks/run.py's cases around the P-101 demo), the default process pool on the available cores, "
        f"the earlier calckit and this one in turns, best of {args.rounds} each.",
        "",
        f"Machine: {platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}; "
        f"load averages (1/5/15 min) before and after each run: {'; '.join(loads)}. The machine is shared "
        "with other work, so the ratio is the figure to read.",
        "",
        "| calckit | built | wall time | cases per minute |",
        "| --- | ---: | ---: | ---: |",
    ]
    for name in ("before", "after"):
        built = min(r["built"] for r in runs[name])
        lines.append(f"| {name} | {built} | {best[name]:.1f} s | {per_minute[name]:.1f} |")
    ratio = per_minute["after"] / per_minute["before"]
    met = per_minute["after"] >= TARGET_PER_MINUTE
    lines += [
        "",
        f"Ratio after / before: {ratio:.2f}x. Target: at least {TARGET_PER_MINUTE:g} cases a minute on the "
        f"2-core machine: {'met' if met else 'not met'} in this run ({per_minute['after']:.1f}).",
        "",
    ]
    args.out.write_text("\n".join(lines), encoding="utf-8")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
