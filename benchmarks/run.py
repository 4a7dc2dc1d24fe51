"""calckit benchmarks: side-by-side comparisons in one run, reported as ratios.

Usage (from the repository root, after ``pip install -e '.[bench]'``)::

    python benchmarks/run.py            # the full set (about 10 minutes on 2 cores)
    python benchmarks/run.py --quick    # 1 repeat, small cases, 10-case batch (about 2 minutes)

Options: ``--repeats N``, ``--only derive,sheet,batch,numbers``,
``--dsolve-bound S`` (seconds one dsolve may take before it is recorded as
"> S s"), ``--out FILE`` (default ``benchmarks/RESULTS.md``), ``--proposed``
(also time the derivations with the patches in ``benchmarks/proposed/``
applied to a copy of the package: the before/after of a proposed engine fix).

Every comparison runs both sides in the same run on the same machine; each
timed derivation runs in a process of its own with sympy's cache cleared
before every repeat; medians are reported. Speed is never asserted in the
tests: this script is where the targets are checked, and RESULTS.md says which
are met.

Sections
--------
1. Derivation: ``Oscillator(m, c, k).particular(f, t=t)`` (verification
   included: the engine always substitutes the result back) against
   ``sympy.dsolve(..., hint="nth_linear_constant_coeff_undetermined_coefficients")``.
2. Sheet build: ``calckit build`` of a bundled template against executing the
   same template with nbclient and exporting it with nbconvert's HTMLExporter.
3. Batch: ``calckit batch`` of 50 cases on the machine's cores.
4. Numbers: the compiled closed form (``calckit.engine.numeric``) at 100,000 points
   against ``scipy.integrate.solve_ivp`` at rtol 1e-8.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import platform
import queue
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from derivation_cases import CASES  # noqa: E402

TEMPLATE = "single_mass_harmonic"
INPUTS = ROOT / "examples" / "harrow_creek_p101.toml"

# targets (see the project brief); checked here, never in the tests
MEDIAN_RATIO_TARGET = 20.0
PRODUCT_RATIO_TARGET = 100.0
PRODUCT_CASE = "symbolic-product"
HARMONICS_64_CASE = "harmonics-64"
HARMONICS_64_TARGET_S = 1.0
BATCH_CASES = 50
BATCH_TARGET_S = 60.0
FREQ_POINTS = 100_000
FREQ_TARGET_S = 0.050


# --------------------------------------------------------------------------- helpers
def _env(pythonpath: Path = ROOT) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(pythonpath), env.get("PYTHONPATH", "")) if p)
    env["MPLBACKEND"] = "Agg"
    env["PYDEVD_DISABLE_FILE_VALIDATION"] = "1"
    return env


def _say(text: str) -> None:
    print(text, file=sys.stderr, flush=True)


def _median(values):
    return statistics.median(values) if values else None


def _fmt_s(seconds: float | None, bound: float | None = None) -> str:
    if seconds is None:
        return f"> {bound:g} s" if bound is not None else "n/a"
    if seconds < 1e-3:
        return f"{seconds * 1e6:.0f} us"
    if seconds < 1:
        return f"{seconds * 1e3:.1f} ms"
    if seconds < 120:
        return f"{seconds:.2f} s"
    if seconds < 7200:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def _mark(ok: bool | None) -> str:
    return {True: "met", False: "**missed**", None: "not measured"}[ok]


def machine() -> dict[str, str]:
    cpu = "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:
        cores = os.cpu_count() or 1
    versions = {}
    for name in ("sympy", "numpy", "scipy", "nbclient", "nbconvert"):
        try:
            versions[name] = __import__(name).__version__
        except ImportError:
            versions[name] = "not installed"
    try:
        load = "{:.2f} {:.2f} {:.2f}".format(*os.getloadavg())
    except OSError:
        load = "n/a"
    return {
        "CPU": cpu,
        "cores available": str(cores),
        "load average at start (1, 5, 15 min)": load,
        "Python": platform.python_version(),
        **versions,
        "date": dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z"),
    }


def _timed_lines(cmd: list[str], env: dict[str, str], bound: float) -> tuple[list[dict], bool]:
    """Run *cmd*, read one JSON line per repeat; kill it when a repeat exceeds *bound* s."""
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    lines: queue.Queue = queue.Queue()

    def reader():
        for line in proc.stdout:
            lines.put(line)
        lines.put(None)

    threading.Thread(target=reader, daemon=True).start()
    results, timed_out = [], False
    startup = 30.0  # imports before the first repeat
    while True:
        try:
            line = lines.get(timeout=bound + startup)
        except queue.Empty:
            timed_out = True
            proc.kill()
            break
        startup = 0.0
        if line is None:
            break
        results.append(json.loads(line))
    proc.wait()
    if proc.returncode not in (0, None) and not timed_out and not results:
        raise RuntimeError(f"{' '.join(cmd)} failed:\n{proc.stderr.read()}")
    return results, timed_out


# --------------------------------------------------------------------------- 1. derivation
@dataclass
class DeriveRow:
    name: str
    what: str
    calckit: float | None = None
    calckit_ops: int | None = None
    calckit_n: int = 0
    verified: bool | None = None
    dsolve: float | None = None
    dsolve_ops: int | None = None
    dsolve_n: int = 0
    dsolve_bound: float | None = None
    proposed: float | None = None
    proposed_ops: int | None = None
    proposed_n: int = 0

    @property
    def ratio(self) -> float | None:
        """dsolve time over calckit time (a lower bound when dsolve hit the bound)."""
        if self.calckit is None:
            return None
        top = self.dsolve if self.dsolve is not None else self.dsolve_bound
        return None if top is None else top / self.calckit

    def proposed_ratio(self) -> float | None:
        if self.proposed is None:
            return None
        top = self.dsolve if self.dsolve is not None else self.dsolve_bound
        return None if top is None else top / self.proposed


def _worker(tool: str, case: str, repeats: int, budget: float, bound: float, pythonpath: Path):
    cmd = [sys.executable, str(HERE / "_derive_worker.py"), tool, case, str(repeats), str(budget)]
    return _timed_lines(cmd, _env(pythonpath), bound)


def bench_derivation(cases, repeats: int, bound: float, proposed_root: Path | None) -> list[DeriveRow]:
    rows = []
    for case in cases:
        row = DeriveRow(case.name, case.what)
        _say(f"derive {case.name}: calckit ...")
        got, _ = _worker("calckit", case.name, repeats, 1e9, bound, ROOT)
        row.calckit = _median([g["seconds"] for g in got])
        row.calckit_ops = got[0]["count_ops"] if got else None
        row.calckit_n = len(got)
        row.verified = all(g["verified"] for g in got) if got else None
        if proposed_root is not None:
            _say(f"derive {case.name}: calckit with the proposed fix ...")
            got, _ = _worker("calckit", case.name, repeats, 1e9, bound, proposed_root)
            row.proposed = _median([g["seconds"] for g in got])
            row.proposed_ops = got[0]["count_ops"] if got else None
            row.proposed_n = len(got)
        _say(f"derive {case.name}: dsolve (bound {bound:g} s) ...")
        # repeats of dsolve stop once they have taken 2 bounds in all: a 40 s solve runs once or twice
        got, timed_out = _worker("dsolve", case.name, repeats, 2 * bound, bound, ROOT)
        if got:
            row.dsolve = _median([g["seconds"] for g in got])
            row.dsolve_ops = got[0]["count_ops"]
            row.dsolve_n = len(got)
        elif timed_out:
            row.dsolve_bound = bound
        _say(
            f"  calckit {_fmt_s(row.calckit)}, dsolve {_fmt_s(row.dsolve, row.dsolve_bound)}, "
            f"ratio {row.ratio and round(row.ratio, 1)}"
        )
        rows.append(row)
    return rows


def derivation_verdicts(
    rows: list[DeriveRow],
    ratio_of=lambda r: r.ratio,
    time_of=lambda r: r.calckit,
    ops_of=lambda r: r.calckit_ops,
):
    ratios = [ratio_of(r) for r in rows if ratio_of(r) is not None]
    median = _median(ratios)
    product = next((r for r in rows if r.name == PRODUCT_CASE), None)
    h64 = next((r for r in rows if r.name == HARMONICS_64_CASE), None)
    ops = [(ops_of(r), r.dsolve_ops) for r in rows if ops_of(r) is not None and r.dsolve_ops is not None]
    return {
        f"median speed-up over the set >= {MEDIAN_RATIO_TARGET:g}x": (
            None if median is None else median >= MEDIAN_RATIO_TARGET,
            f"{median:.1f}x" if median is not None else "n/a",
        ),
        "never slower than dsolve (every ratio >= 1)": (
            None if not ratios else min(ratios) >= 1.0,
            f"smallest {min(ratios):.1f}x" if ratios else "n/a",
        ),
        f"symbolic product case >= {PRODUCT_RATIO_TARGET:g}x": (
            None
            if product is None or ratio_of(product) is None
            else ratio_of(product) >= PRODUCT_RATIO_TARGET,
            f"{ratio_of(product):.1f}x" + (" (dsolve hit the bound)" if product.dsolve is None else "")
            if product is not None and ratio_of(product) is not None
            else "n/a",
        ),
        "count_ops no larger than dsolve's on every case": (
            None if not ops else all(a <= b for a, b in ops),
            ", ".join(
                f"{r.name} {ops_of(r)} vs {r.dsolve_ops}"
                for r in rows
                if ops_of(r) is not None and r.dsolve_ops is not None and ops_of(r) > r.dsolve_ops
            )
            or "all no larger",
        ),
        f"64 harmonics derived and verified in < {HARMONICS_64_TARGET_S:g} s": (
            None if h64 is None or time_of(h64) is None else time_of(h64) < HARMONICS_64_TARGET_S,
            _fmt_s(time_of(h64)) if h64 is not None else "n/a",
        ),
    }


def prepare_proposed(workdir: Path) -> Path | None:
    """A copy of the package with benchmarks/proposed/*.diff applied, or None."""
    patches = sorted((HERE / "proposed").glob("*.diff"))
    if not patches:
        return None
    root = workdir / "proposed"
    shutil.copytree(ROOT / "calckit", root / "calckit", ignore=shutil.ignore_patterns("__pycache__"))
    for patch in patches:
        done = subprocess.run(["git", "apply", str(patch)], cwd=root, capture_output=True, text=True)
        if done.returncode:
            _say(f"proposed patch {patch.name} does not apply to the current engine:\n{done.stderr}")
            return None
    return root


# --------------------------------------------------------------------------- 2. sheet build
def _run_cmd(cmd: list[str], cwd: Path | None = None) -> float:
    start = time.perf_counter()
    done = subprocess.run(cmd, env=_env(), cwd=cwd, capture_output=True, text=True)
    seconds = time.perf_counter() - start
    if done.returncode:
        raise RuntimeError(f"{' '.join(cmd)} failed ({done.returncode}):\n{done.stdout}\n{done.stderr}")
    return seconds


def bench_sheet(repeats: int, workdir: Path) -> dict:
    template = ROOT / "templates" / f"{TEMPLATE}.ipynb"
    build, stock = [], []
    for r in range(repeats):  # alternate the two routes so load drifts hit both
        _say(f"sheet build, repeat {r + 1}: calckit build ...")
        build.append(
            _run_cmd(
                [
                    sys.executable,
                    "-m",
                    "calckit",
                    "build",
                    TEMPLATE,
                    "--inputs",
                    str(INPUTS),
                    "--out",
                    str(workdir / f"build-{r}"),
                ]
            )
        )
        _say(f"sheet build, repeat {r + 1}: nbclient + HTMLExporter ...")
        stock.append(
            _run_cmd(
                [
                    sys.executable,
                    str(HERE / "stock_route.py"),
                    str(template),
                    str(workdir / f"stock-{r}.html"),
                ]
            )
        )
    out = {"build": _median(build), "stock": _median(stock), "n": repeats}
    out["ratio"] = out["stock"] / out["build"]
    return out


# --------------------------------------------------------------------------- 3. batch
def write_cases(path: Path, n: int) -> None:
    """*n* cases around the P-101 demo: masses, stiffnesses, damping ratios and speeds varied."""
    lines = ["case,mass,stiffness,damping_ratio,forcing_frequency"]
    for i in range(n):
        mass = 1500 + 25 * i
        stiffness = 600 + 10 * (i % 17)
        zeta = (0.02, 0.05, 0.08, 0.12, 0.2)[i % 5]
        rpm = 900 + 30 * (i % 23)
        lines.append(f"case-{i + 1:02d},{mass} kg,{stiffness} kN/m,{zeta},{rpm} rpm")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def bench_batch(n: int, workdir: Path) -> dict:
    cases = workdir / "cases.csv"
    write_cases(cases, n)
    _say(f"batch of {n} cases ...")
    out = workdir / "batch"
    cmd = [
        sys.executable,
        "-m",
        "calckit",
        "batch",
        TEMPLATE,
        "--cases",
        str(cases),
        "--inputs",
        str(INPUTS),
        "--out",
        str(out),
    ]
    start = time.perf_counter()
    done = subprocess.run(cmd, env=_env(), capture_output=True, text=True)
    seconds = time.perf_counter() - start
    built = sum(1 for p in out.glob("*/*.json"))
    per_case = []
    for line in done.stderr.splitlines():
        if line.startswith("[") and line.rstrip().endswith(" s)"):
            try:
                per_case.append(float(line.rsplit("(", 1)[1].split()[0]))
            except (IndexError, ValueError):
                pass
    return {
        "cases": n,
        "built": built,
        "seconds": seconds,
        "per_minute": 60.0 * built / seconds if seconds else 0.0,
        "case_median": _median(per_case),
        "returncode": done.returncode,
        "tail": "\n".join((done.stdout + done.stderr).strip().splitlines()[-3:]),
    }


# --------------------------------------------------------------------------- 4. numbers
def bench_numbers(repeats: int) -> dict:
    import numpy as np
    import sympy as sp
    from scipy.integrate import solve_ivp

    import calckit as ck
    from calckit.engine import numeric

    t = sp.Symbol("t", real=True)
    m, c, k, F0, w = 1850, 3650, 720_000, 900, 155  # P-101 demo machine, zeta ~ 0.05, 1480 rpm
    osc = ck.Oscillator(m, c, k)
    res = osc.response(F0 * sp.cos(w * t), 0, 0, t=t)
    times = np.linspace(0.0, 10.0, FREQ_POINTS)
    omegas = np.linspace(0.0, 400.0, FREQ_POINTS)

    def best_of(fn, n):
        values = []
        for _ in range(n):
            start = time.perf_counter()
            fn()
            values.append(time.perf_counter() - start)
        return _median(values)

    n = max(repeats, 5)
    numeric._lambdify.cache_clear()
    numeric._receptance_compiled.cache_clear()
    start = time.perf_counter()
    x = numeric.time_history(res, times)
    th_cold = time.perf_counter() - start
    th_warm = best_of(lambda: numeric.time_history(res, times), n)
    compiled = numeric.compile_expr(res.solution, t)
    th_call = best_of(lambda: compiled(times), n)

    start = time.perf_counter()
    numeric.frequency_response(osc, omegas)
    fr_cold = time.perf_counter() - start
    fr_warm = best_of(lambda: numeric.frequency_response(osc, omegas).magnification, n)
    hand = best_of(lambda: np.abs(k / (k - m * omegas**2 + 1j * c * omegas)), n)

    def rhs(_, y):
        return [y[1], (F0 * np.cos(w * _) - c * y[1] - k * y[0]) / m]

    ivp_kw = dict(method="DOP853", rtol=1e-8, atol=1e-12)
    sol = None

    def integrate():
        nonlocal sol
        sol = solve_ivp(rhs, (0.0, 10.0), [0.0, 0.0], t_eval=times, **ivp_kw)

    ivp = best_of(integrate, max(1, repeats))
    peak = float(np.max(np.abs(x)))
    err = float(np.max(np.abs(sol.y[0] - x))) / peak

    # frequency response by integration: run to steady state at a sample of frequencies, read the amplitude
    zeta = c / (2 * (k * m) ** 0.5)
    wn = (k / m) ** 0.5
    settle = np.log(1e9) / (zeta * wn)  # transient down by 1e-9
    sample = np.linspace(20.0, 400.0, 8)
    amps = []
    start = time.perf_counter()
    for wf in sample:
        period = 2 * np.pi / wf
        s = solve_ivp(
            lambda tau, y, wf=wf: [y[1], (np.cos(wf * tau) - c * y[1] - k * y[0]) / m],
            (0.0, settle + period),
            [0.0, 0.0],
            **ivp_kw,
        )
        xe, ve = s.y[0, -1], s.y[1, -1]  # steady state: amplitude from displacement and velocity
        amps.append(k * np.hypot(xe, ve / wf))
    per_freq = (time.perf_counter() - start) / len(sample)
    exact_amp = np.abs(k / (k - m * sample**2 + 1j * c * sample))
    fr_err = float(np.max(np.abs(np.array(amps) - exact_amp) / exact_amp))
    return {
        "th_cold": th_cold,
        "th_warm": th_warm,
        "th_call": th_call,
        "ivp": ivp,
        "ivp_err": err,
        "ivp_steps": int(sol.t.size),
        "fr_cold": fr_cold,
        "fr_warm": fr_warm,
        "hand": hand,
        "ivp_fr_per_freq": per_freq,
        "ivp_fr_est": per_freq * FREQ_POINTS,
        "ivp_fr_err": fr_err,
        "ivp_fr_sample": len(sample),
    }


# --------------------------------------------------------------------------- report
def report(info, derive, proposed_used, sheet, batch, numbers, args) -> str:
    out = ["# calckit benchmarks", ""]
    out.append(
        "Written by `python benchmarks/run.py"
        + (" --quick" if args.quick else "")
        + "`"
        + (" --proposed" if args.proposed else "")
        + "; every comparison below ran side by side in "
        "this one run. Medians of repeats; sympy's cache cleared before every timed derivation. "
        "Shared machine: other jobs may have been running, so read the ratios, not the absolute times."
    )
    out += ["", "## Machine", "", "| | |", "| --- | --- |"]
    out += [f"| {k} | {v} |" for k, v in info.items()]
    targets: list[tuple[str, bool | None, str]] = []

    if derive is not None:
        out += [
            "",
            "## 1. Derivation: calckit against sympy.dsolve",
            "",
            "calckit: `ck.Oscillator(*coeffs).particular(f, t=t)`, which derives and verifies by "
            'substitution. dsolve: `sympy.dsolve(eq, x(t), hint="nth_linear_constant_coeff_undetermined_'
            'coefficients")`, count_ops with the constants C1, C2 set to 0. '
            f"A dsolve over {args.dsolve_bound:g} s is stopped and recorded as the bound. "
            "n = repeats (dsolve repeats stop after twice the bound in all).",
            "",
        ]
        head = (
            "| case | forcing | calckit | dsolve | ratio | count_ops calckit | count_ops dsolve | n (ck/ds) |"
        )
        rule = "| --- | --- | ---: | ---: | ---: | ---: | ---: | --- |"
        if proposed_used:
            head = head.replace("| ratio |", "| ratio | calckit, proposed fix | ratio, proposed fix |")
            rule = rule.replace(
                "| ---: | ---: | ---: | ---: | --- |", "| ---: | ---: | ---: | ---: | ---: | ---: | --- |"
            )
        out += [head, rule]
        for r in derive:
            ratio = r.ratio
            ratio_s = "n/a" if ratio is None else (f"> {ratio:.1f}x" if r.dsolve is None else f"{ratio:.1f}x")
            cells = [
                r.name,
                r.what,
                _fmt_s(r.calckit) + ("" if r.verified else " (NOT verified)"),
                _fmt_s(r.dsolve, r.dsolve_bound),
                ratio_s,
            ]
            if proposed_used:
                pr = r.proposed_ratio()
                cells += [_fmt_s(r.proposed), "n/a" if pr is None else f"{pr:.1f}x"]
            cells += [
                str(r.calckit_ops),
                str(r.dsolve_ops) if r.dsolve_ops is not None else "n/a",
                f"{r.calckit_n}/{r.dsolve_n}",
            ]
            out.append("| " + " | ".join(cells) + " |")
        out.append("")
        for name, (ok, value) in derivation_verdicts(derive).items():
            targets.append((f"Derivation: {name}", ok, value))
        if proposed_used:
            for name, (ok, value) in derivation_verdicts(
                derive,
                ratio_of=lambda r: r.proposed_ratio(),
                time_of=lambda r: r.proposed,
                ops_of=lambda r: r.proposed_ops,
            ).items():
                targets.append((f"Derivation, with the proposed fix: {name}", ok, value))

    if sheet is not None:
        out += [
            "",
            "## 2. Sheet build: `calckit build` against nbclient + nbconvert",
            "",
            f"`calckit build {TEMPLATE} --inputs examples/{INPUTS.name}` (runs the template in a fresh "
            "kernel, writes HTML with MathML, the JSON record and the executed notebook) against "
            "`benchmarks/stock_route.py` (nbclient executes the same template, nbconvert's HTMLExporter "
            "exports it). Both are whole commands: interpreter start, imports, kernel start included.",
            "",
            "| route | median wall time | n |",
            "| --- | ---: | ---: |",
            f"| calckit build | {_fmt_s(sheet['build'])} | {sheet['n']} |",
            f"| nbclient execute + HTMLExporter | {_fmt_s(sheet['stock'])} | {sheet['n']} |",
            "",
            f"Ratio (stock / calckit build): {sheet['ratio']:.2f}",
        ]
        targets.append(
            ("Sheet build no slower than execute-and-export", sheet["ratio"] >= 1.0, f"{sheet['ratio']:.2f}x")
        )

    if batch is not None:
        out += [
            "",
            "## 3. Batch: `calckit batch`",
            "",
            f"{batch['cases']} cases (mass, stiffness, damping ratio and speed varied around the P-101 demo), "
            f"one kept kernel per worker (reset before every case), worker processes on the {info['cores available']} available cores.",
            "",
            "| cases | built | wall time | cases per minute | median case time (in its worker) |",
            "| ---: | ---: | ---: | ---: | ---: |",
            f"| {batch['cases']} | {batch['built']} | {_fmt_s(batch['seconds'])} | {batch['per_minute']:.1f} | "
            f"{_fmt_s(batch['case_median'])} |",
        ]
        if batch["returncode"]:
            out += [
                "",
                f"The batch exited with code {batch['returncode']}:",
                "",
                "```",
                batch["tail"],
                "```",
            ]
        if batch["cases"] == BATCH_CASES:
            targets.append(
                (
                    f"{BATCH_CASES}-case batch under {BATCH_TARGET_S:g} s on these cores",
                    batch["seconds"] < BATCH_TARGET_S and batch["built"] == batch["cases"],
                    _fmt_s(batch["seconds"]),
                )
            )
        else:
            targets.append(
                (
                    f"{BATCH_CASES}-case batch under {BATCH_TARGET_S:g} s",
                    None,
                    f"quick run: {batch['cases']} cases in {_fmt_s(batch['seconds'])}, "
                    f"{BATCH_CASES} would take about {_fmt_s(batch['seconds'] * BATCH_CASES / batch['cases'])}",
                )
            )

    if numbers is not None:
        nb = numbers
        out += [
            "",
            "## 4. Numbers: compiled closed form against scipy.integrate.solve_ivp",
            "",
            "Model: m = 1850 kg, c = 3650 N s/m, k = 720 kN/m, 900 N cos(155 t), from rest; "
            f"{FREQ_POINTS:,} points over 0..10 s (time history) and 0..400 rad/s (frequency response). "
            "solve_ivp: DOP853, rtol 1e-8, atol 1e-12. Cold = first call, compiling included.",
            "",
            "| what | calckit | reference | ratio (reference / calckit) |",
            "| --- | ---: | ---: | ---: |",
            f"| time history, 100,000 points (`time_history`, warm) | {_fmt_s(nb['th_warm'])} | "
            f"solve_ivp {_fmt_s(nb['ivp'])} | {nb['ivp'] / nb['th_warm']:.0f}x |",
            f"| time history, compiled function call only | {_fmt_s(nb['th_call'])} | | |",
            f"| time history, cold (compile + evaluate) | {_fmt_s(nb['th_cold'])} | "
            f"solve_ivp {_fmt_s(nb['ivp'])} | {nb['ivp'] / nb['th_cold']:.1f}x |",
            f"| frequency response, 100,000 points (warm) | {_fmt_s(nb['fr_warm'])} | "
            f"solve_ivp to steady state, estimated {_fmt_s(nb['ivp_fr_est'])} "
            f"({_fmt_s(nb['ivp_fr_per_freq'])} a frequency, {nb['ivp_fr_sample']} timed) | "
            f"{nb['ivp_fr_est'] / nb['fr_warm']:.0f}x |",
            f"| frequency response, cold (compile + evaluate) | {_fmt_s(nb['fr_cold'])} | "
            f"numpy formula written by hand (magnification only) {_fmt_s(nb['hand'])} | "
            f"{nb['hand'] / nb['fr_warm']:.2f}x (hand / warm) |",
            "",
            f"Accuracy: solve_ivp's time history differs from the closed form by at most "
            f"{nb['ivp_err']:.1e} of the peak; its steady-state amplitudes by at most {nb['ivp_fr_err']:.1e}.",
        ]
        targets.append(
            (
                f"{FREQ_POINTS:,}-point frequency response under {FREQ_TARGET_S * 1e3:g} ms",
                nb["fr_warm"] < FREQ_TARGET_S,
                f"{_fmt_s(nb['fr_warm'])} warm, {_fmt_s(nb['fr_cold'])} cold",
            )
        )

    out += ["", "## Targets", "", "| target | result | value |", "| --- | --- | --- |"]
    out += [f"| {name} | {_mark(ok)} | {value} |" for name, ok, value in targets]
    notes = HERE / "NOTES.md"
    if notes.exists():
        out += ["", notes.read_text(encoding="utf-8").strip()]
    return "\n".join(out) + "\n"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--quick", action="store_true", help="1 repeat, small derivation cases, 10-case batch"
    )
    parser.add_argument("--repeats", type=int, help="repeats of each timing (default 3, 1 with --quick)")
    parser.add_argument("--only", default="derive,sheet,batch,numbers", help="comma-separated sections")
    parser.add_argument("--dsolve-bound", type=float, default=60.0, help="seconds before a dsolve is stopped")
    parser.add_argument(
        "--proposed",
        action="store_true",
        help="also time the derivations with benchmarks/proposed/*.diff applied to a copy",
    )
    parser.add_argument("--out", type=Path, default=HERE / "RESULTS.md")
    args = parser.parse_args(argv)
    repeats = args.repeats or (1 if args.quick else 3)
    only = {s.strip() for s in args.only.split(",")}
    info = machine()
    cases = [c for c in CASES if c.quick] if args.quick else list(CASES)
    bound = min(args.dsolve_bound, 20.0) if args.quick else args.dsolve_bound
    args.dsolve_bound = bound
    with tempfile.TemporaryDirectory(prefix="calckit-bench-") as tmp:
        work = Path(tmp)
        proposed_root = prepare_proposed(work) if args.proposed else None
        derive = bench_derivation(cases, repeats, bound, proposed_root) if "derive" in only else None
        sheet = bench_sheet(repeats, work) if "sheet" in only else None
        batch = bench_batch(10 if args.quick else BATCH_CASES, work) if "batch" in only else None
        numbers = bench_numbers(repeats) if "numbers" in only else None
    text = report(info, derive, proposed_root is not None and derive is not None, sheet, batch, numbers, args)
    args.out.write_text(text, encoding="utf-8")
    _say(f"wrote {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
