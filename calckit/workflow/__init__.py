"""Re-running calculations: inputs files, templates, kernels, build, batch, diff, the command line.

One module per job:

- :mod:`~calckit.workflow.inputs`: inputs files, the parameters cell's values, safe expressions;
- :mod:`~calckit.workflow.templates`: the template contract, :func:`load_template`, the bundled templates;
- :mod:`~calckit.workflow.kernels` and :mod:`~calckit.workflow.kernel_state`: the kernel a template runs
  in, its warm-up and its reset between cases;
- :mod:`~calckit.workflow.build`: one sheet, :func:`build_sheet`, and the refusals that keep a user's files;
- :mod:`~calckit.workflow.cases` and :mod:`~calckit.workflow.batch`: a table of cases, :func:`run_batch`
  and its summary; :mod:`~calckit.workflow.case_job` (a case as self-contained data, built on any
  worker), :mod:`~calckit.workflow.dispatch` (sending cases to an executor, a worker that dies) and
  :mod:`~calckit.workflow.progress` (the bar);
- :mod:`~calckit.workflow.watch`: ``calckit watch``, rebuild on save in one kept kernel;
- :mod:`~calckit.workflow.starter`: ``calckit new`` and ``calckit demo``;
- :mod:`~calckit.workflow.diff`: what changed between two built sheets;
- :mod:`~calckit.workflow.cli`: the ``calckit`` command.

The folder's public names below load on first use (PEP 562), so that other
folders import them from here (``from calckit.workflow import load_template``)
without knowing which module holds them. Kept light: nothing here imports
sympy, pint or numpy at import time, so the command line starts quickly and a
build starts its kernel first.
"""

from calckit.core.lazy import lazy_names

# the folder's public names and the module that holds each (loaded on first use)
_NAMES = {
    "TITLE_FIELDS": "calckit.workflow.inputs",
    "check_keys": "calckit.workflow.inputs",
    "read_inputs": "calckit.workflow.inputs",
    "InputsFile": "calckit.workflow.inputs",
    "band_line": "calckit.workflow.tolerance_table",
    "PARAMETERS_TAG": "calckit.workflow.templates",
    "INPUTS_TAG": "calckit.workflow.templates",
    "SAVE_TAG": "calckit.workflow.templates",
    "Template": "calckit.workflow.templates",
    "load_template": "calckit.workflow.templates",
    "bundled_templates": "calckit.workflow.templates",
    "BuildResult": "calckit.workflow.build",
    "build_sheet": "calckit.workflow.build",
    "save_built_sheet": "calckit.workflow.build",
    "Case": "calckit.workflow.cases",
    "read_cases": "calckit.workflow.cases",
    "CaseResult": "calckit.workflow.batch",
    "BatchResult": "calckit.workflow.batch",
    "run_batch": "calckit.workflow.batch",
    "inputs_text": "calckit.workflow.starter",
    "new_calculation": "calckit.workflow.starter",
    "demos": "calckit.workflow.starter",
    "run_demo": "calckit.workflow.starter",
    "diff_sheets": "calckit.workflow.diff",
    "load_built_record": "calckit.workflow.diff",
    "watch_sheet": "calckit.workflow.watch",
    "WatchEvent": "calckit.workflow.watch",
    "CaseJob": "calckit.workflow.case_job",
    "BuiltCase": "calckit.workflow.case_job",
    "build_case": "calckit.workflow.case_job",
    "BatchProgress": "calckit.workflow.progress",
}


__getattr__, __dir__ = lazy_names(__name__, _NAMES)

__all__ = sorted(_NAMES)
