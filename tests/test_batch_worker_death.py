"""A batch whose case kills its worker process: that case fails with the reason, the others are built.

The template is the single-mass one with a cell that, for the case asking for it,
kills the process that started its kernel (the batch's worker), as a crash or the
system's out-of-memory killer would. The pool breaks; the batch finds the case by
running the ones that may have been running alone, marks it failed and goes on.
"""

from __future__ import annotations

from pathlib import Path

import nbformat
import pytest

from calckit.workflow import bundled_templates, run_batch
from calckit.workflow.dispatch import WORKER_DIED
from calckit.workflow.templates import PARAMETERS_TAG

EXAMPLE = Path(__file__).parent.parent / "examples" / "harrow_creek_p101.toml"

KILL = """import os, signal
if kill_worker:
    os.kill(os.getppid(), signal.SIGKILL)  # the kernel's parent: the batch's worker process
"""


@pytest.mark.slow
def test_a_case_that_kills_its_worker_fails_and_the_rest_go_on(tmp_path):
    notebook = nbformat.read(bundled_templates()["single_mass_harmonic"], as_version=4)
    parameters = next(c for c in notebook.cells if PARAMETERS_TAG in c.metadata.get("tags", []))
    parameters.source += "\nkill_worker = False\n"
    notebook.cells.insert(len(notebook.cells) - 1, nbformat.v4.new_code_cell(KILL))
    for number, cell in enumerate(notebook.cells):
        cell.id = f"cell-{number}"
    template = tmp_path / "fragile.ipynb"
    nbformat.write(notebook, template)
    cases = tmp_path / "cases.csv"
    cases.write_text("case,kill_worker\nkiller,true\nquiet,false\n", encoding="utf-8")

    result = run_batch(template, cases, tmp_path / "out", inputs=EXAMPLE, workers=1)

    assert [(c.name, c.ok) for c in result.cases] == [("killer", False), ("quiet", True)]
    # how it died is read off the pool's process when it can be (under heavy load the pool may
    # already have forgotten it): the message says which, never a guess
    assert result.cases[0].message in {
        WORKER_DIED.format(how="killed by SIGKILL"),
        WORKER_DIED.format(how="no exit status known"),
    }
    assert (tmp_path / "out" / "quiet" / "fragile.json").is_file()
    assert not (tmp_path / "out" / "killer").exists()
    summary = result.summary_csv.read_text(encoding="utf-8")
    assert "killer,failed," in summary and "quiet,built," in summary
