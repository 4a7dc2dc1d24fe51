"""Rebuild on save: a rebuild by ``calckit watch`` after an edit, side by side with a cold ``calckit build``.

Both build the single-mass template from the P-101 example. The cold build is
the command as a user runs it (a new process: imports, a kernel's start, the
template, the files), timed from start to exit. The watch keeps one kernel; the
inputs file is edited (the running speed, 1480 and 1200 rpm in turns) and the
time is taken from the write to the line that says the sheet was rebuilt: the
watch's own look at the file (every POLL_S, then SETTLE_S to see it settled; watch.py), the
template, the files and the diff. Cold builds and edits alternate, so both see
the same load on the (shared) machine. Writes ``benchmarks/RESULTS_WATCH.md``.

    python benchmarks/bench_watch.py [--rounds 5]
"""

from __future__ import annotations

import argparse
import os
import platform
import queue
import shutil
import signal
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))

from calckit.workflow.watch import POLL_S, SETTLE_S  # noqa: E402  (this tree's, as the watch run below uses)
EXAMPLE = ROOT / "examples" / "harrow_creek_p101.toml"
TEMPLATE = "single_mass_harmonic"
TARGET_S = 1.5


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH", "")) if p)
    env["MPLBACKEND"] = "Agg"
    env["PYDEVD_DISABLE_FILE_VALIDATION"] = "1"
    return env


def cold_build(work: Path, inputs: Path, n: int) -> float:
    out = work / f"cold-{n}"
    cmd = [sys.executable, "-m", "calckit", "build", TEMPLATE, "--inputs", str(inputs), "--out", str(out)]
    start = time.perf_counter()
    done = subprocess.run(cmd, env=_env(), capture_output=True, text=True, cwd=work)
    seconds = time.perf_counter() - start
    if done.returncode not in (0, 3):
        raise SystemExit(f"calckit build failed: {done.stderr}")
    shutil.rmtree(out, ignore_errors=True)
    return seconds


def load() -> str:
    return " / ".join(f"{x:.2f}" for x in os.getloadavg())


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--out", type=Path, default=HERE / "RESULTS_WATCH.md")
    args = parser.parse_args()
    work = Path(tempfile.mkdtemp(prefix="calckit-bench-watch-"))
    watched = work / "p101.toml"
    watched.write_bytes(EXAMPLE.read_bytes())
    cold_inputs = work / "cold.toml"
    cold_inputs.write_bytes(EXAMPLE.read_bytes())
    lines: queue.Queue = queue.Queue()
    cmd = [sys.executable, "-m", "calckit", "watch", TEMPLATE, "--inputs", watched.name, "--out", "built"]
    watch = subprocess.Popen(
        cmd, cwd=work, env=_env(), stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True
    )
    reader = threading.Thread(
        target=lambda: [lines.put((time.perf_counter(), line.rstrip())) for line in watch.stdout]
    )
    reader.daemon = True
    reader.start()

    def wait_for(start: str, timeout: float = 300.0) -> tuple[float, str]:
        deadline = time.perf_counter() + timeout
        while True:
            at, line = lines.get(timeout=max(0.1, deadline - time.perf_counter()))
            if line.startswith(start):
                return at, line

    loads = [load()]
    colds, rebuilds, reported = [], [], []
    try:
        wait_for("Watching")
        speeds = ("1200 rpm", "1480 rpm")
        text = watched.read_text(encoding="utf-8")
        for n in range(args.rounds):
            colds.append(cold_build(work, cold_inputs, n))
            time.sleep(0.5)
            old, new = (
                ('"1480 rpm"', f'"{speeds[n % 2]}"') if n % 2 == 0 else ('"1200 rpm"', f'"{speeds[n % 2]}"')
            )
            text = text.replace(f"forcing_frequency = {old}", f"forcing_frequency = {new}")
            written = time.perf_counter()
            watched.write_text(text, encoding="utf-8")
            at, line = wait_for("Rebuilt")
            rebuilds.append(at - written)
            reported.append(float(line.split(" in ", 1)[1].split(" s:")[0]))
            wait_for("Watching")
            loads.append(load())
            print(f"round {n + 1}: cold {colds[-1]:.2f} s, rebuild {rebuilds[-1]:.2f} s", file=sys.stderr)
    finally:
        watch.send_signal(signal.SIGINT)
        code = watch.wait(timeout=60)
        shutil.rmtree(work, ignore_errors=True)
    cold, rebuild, inner = (statistics.median(v) for v in (colds, rebuilds, reported))
    met = rebuild < TARGET_S
    lines_out = [
        "# Rebuild on save: `calckit watch` against a cold `calckit build`",
        "",
        f"`python benchmarks/bench_watch.py --rounds {args.rounds}`: the single-mass template with the P-101 example. "
        "Cold: `calckit build` as a new process, start to exit. Rebuild: from the write of the edited inputs file "
        "(the running speed, 1480 and 1200 rpm in turns) to the watch's line saying it rebuilt the sheet, with the "
        f"watch's look at the file (every {POLL_S:g} s, {SETTLE_S:g} s to see it settled) included; the build time the watch reports "
        "(inputs read, template run in the kept kernel, files moved in) beside it. Cold builds and edits alternate.",
        "",
        f"Machine: {platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}; load averages "
        f"(1/5/15 min) at the start and after each round: {'; '.join(loads)}. The machine is shared, so the ratio is "
        "the figure to read.",
        "",
        "| what | median | each round |",
        "| --- | ---: | --- |",
        f"| cold `calckit build` | {cold:.2f} s | {', '.join(f'{v:.2f}' for v in colds)} |",
        f"| rebuild after an edit (write to 'Rebuilt' line) | {rebuild:.2f} s | {', '.join(f'{v:.2f}' for v in rebuilds)} |",
        f"| the rebuild as the watch reports it | {inner:.2f} s | {', '.join(f'{v:.1f}' for v in reported)} |",
        "",
        f"Ratio cold / rebuild: {cold / rebuild:.1f}x. Target: a rebuild after an edit under {TARGET_S:g} s on the "
        f"2-core machine: {'met' if met else 'not met'} in this run ({rebuild:.2f} s). The watch ended on SIGINT "
        f"with exit code {code}.",
        "",
    ]
    args.out.write_text("\n".join(lines_out), encoding="utf-8")
    print("\n".join(lines_out))


if __name__ == "__main__":
    main()
