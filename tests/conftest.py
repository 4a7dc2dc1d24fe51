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
    {"test_workflow.py", "test_cli.py", "test_templates.py", "test_batch_isolation.py", "test_print_fit.py"}
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


def run_shared_demo(tmp_path_factory, worker_id):
    """What :func:`shared_demo` gives, for a fixture that needs it only on first use."""
    import fcntl
    import json
    import subprocess
    import sys

    base = tmp_path_factory.getbasetemp()
    root = base.parent if worker_id != "master" else base  # one folder for this run, shared by its workers
    where = root / "shared-demo"
    with open(root / "shared-demo.lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        done = root / "shared-demo.json"
        if not done.exists():
            where.mkdir(exist_ok=True)
            run = subprocess.run(
                [sys.executable, "-m", "calckit", "demo", "--out", "demo"],
                capture_output=True, text=True, timeout=900, cwd=where, check=False,
            )  # fmt: skip
            done.write_text(json.dumps([run.returncode, run.stdout, run.stderr]), encoding="utf-8")
        code, out, err = json.loads(done.read_text(encoding="utf-8"))
    return where, subprocess.CompletedProcess(["calckit", "demo", "--out", "demo"], code, out, err)
