"""Test-suite settings shared by every test file: the ``kernel`` marker.

A test that starts a Jupyter kernel (a build, a batch, the demo, a notebook run
under nbval) costs seconds; everything else runs in milliseconds. Such tests are
marked ``kernel`` here, in one place, so that the quick subset is one marker away::

    python -m pytest -m "not kernel and not browser"

A test module whose tests build sheets is listed in ``KERNEL_MODULES``; a single
test elsewhere that builds one in a child process carries ``@pytest.mark.slow``,
which is taken as ``kernel`` too (both mean: it runs a build).
"""

from __future__ import annotations

from pathlib import Path

import pytest

#: test files whose tests (nearly all) start kernels, through module-scoped built sheets
KERNEL_MODULES = frozenset(
    {
        "test_workflow.py",
        "test_cli.py",
        "test_templates.py",
        "test_batch_isolation.py",
        "test_print_fit.py",
        "test_sampled_build.py",
    }
)


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    for item in items:
        path = Path(str(item.path))
        if path.suffix == ".ipynb" or path.name in KERNEL_MODULES or item.get_closest_marker("slow"):
            item.add_marker(pytest.mark.kernel)


@pytest.fixture(scope="session")
def shared_demo(tmp_path_factory, worker_id):
    """``calckit demo --out demo`` run once for the whole run (across xdist workers, under a file lock):
    ``(folder it ran in, its CompletedProcess)``. The CLI test reads what it printed, the print-fit
    test prints its sheets, the template tests read the examples' records; none writes into it."""
    return run_shared_demo(tmp_path_factory, worker_id)


#: the child that runs the demo and writes its result, all at once, to the done file
_DEMO_CHILD = """
import json, os, subprocess, sys
where, done = sys.argv[1], sys.argv[2]
run = subprocess.run([sys.executable, "-m", "calckit", "demo", "--out", "demo"],
                     capture_output=True, text=True, timeout=900, cwd=where, check=False)
with open(done + ".part", "w", encoding="utf-8") as out:
    json.dump([run.returncode, run.stdout, run.stderr], out)
os.replace(done + ".part", done)
"""


_CHILDREN: list = []


def pytest_sessionfinish(session: pytest.Session) -> None:
    """A demo child this worker started is waited for, so none outlives the run."""
    for child in _CHILDREN:
        child.wait(timeout=900)


def _demo_root(tmp_path_factory, worker_id) -> Path:
    base = tmp_path_factory.getbasetemp()
    return base.parent if worker_id != "master" else base  # one folder for this run, shared by its workers


def start_shared_demo(tmp_path_factory, worker_id):
    """Start the run's one ``calckit demo`` in a child process, unless a worker did already.

    Started when collection shows a test that needs it, so the demo builds while the
    workers run other tests, instead of a worker waiting for it."""
    import fcntl
    import subprocess
    import sys

    root = _demo_root(tmp_path_factory, worker_id)
    where, done, started = root / "shared-demo", root / "shared-demo.json", root / "shared-demo.pid"
    with open(root / "shared-demo.lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        if not done.exists() and not started.exists():
            where.mkdir(exist_ok=True)
            child = subprocess.Popen(
                [sys.executable, "-c", _DEMO_CHILD, str(where), str(done)],
                stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
            )  # fmt: skip
            started.write_text(str(child.pid), encoding="utf-8")
            _CHILDREN.append(child)  # kept, and waited for when the session ends
    return where, done, started


def run_shared_demo(tmp_path_factory, worker_id):
    """What :func:`shared_demo` gives, for a fixture that needs it only on first use: waits for the demo."""
    import json
    import subprocess
    import time

    where, done, started = start_shared_demo(tmp_path_factory, worker_id)
    pid = int(started.read_text(encoding="utf-8")) if started.exists() else None
    deadline = time.monotonic() + 900
    while not done.exists():
        if time.monotonic() > deadline:
            raise TimeoutError("calckit demo did not finish within 900 s")
        if pid is not None:
            stat = Path(f"/proc/{pid}/stat")
            ended = (
                not stat.exists() or stat.read_text().rsplit(")", 1)[-1].split()[0] == "Z"
            )  # gone, or a zombie
            if ended and not done.exists():
                time.sleep(0.5)  # its last write may still be landing
                if not done.exists():
                    raise RuntimeError("the shared calckit demo child ended without a result")
        time.sleep(0.25)
    code, out, err = json.loads(done.read_text(encoding="utf-8"))
    return where, subprocess.CompletedProcess(["calckit", "demo", "--out", "demo"], code, out, err)


def pytest_collection_finish(session: pytest.Session) -> None:
    """Start the shared demo at once when a collected test needs it (the CLI, print and template tests)."""
    if session.config.option.collectonly:
        return

    def needs(item) -> bool:
        names = set(getattr(item, "fixturenames", ()))
        return "shared_demo" in names or (
            "built" in names and Path(str(item.path)).name in ("test_templates.py", "test_sampled_build.py")
        )

    if any(needs(item) for item in session.items):
        worker = getattr(session.config, "workerinput", {}).get("workerid", "master")
        start_shared_demo(session.config._tmp_path_factory, worker)
