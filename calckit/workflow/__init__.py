"""Re-running calculations: inputs files, templates, kernels, build, batch, diff, the command line.

Kept light: nothing here imports sympy, pint or numpy at import time, so the
command line starts quickly and a build starts its kernel first.
"""

import importlib

# the folder's public names and the module that holds each (loaded on first use)
_NAMES = {
    "TITLE_FIELDS": "calckit.workflow.inputs",
    "check_keys": "calckit.workflow.inputs",
    "read_inputs": "calckit.workflow.inputs",
    "InputsFile": "calckit.workflow.inputs",
    "load_template": "calckit.workflow.build",
    "Template": "calckit.workflow.build",
    "build_sheet": "calckit.workflow.build",
    "run_batch": "calckit.workflow.build",
    "diff_sheets": "calckit.workflow.diff",
}


def __getattr__(name: str):
    if name not in _NAMES:
        raise AttributeError(f"module 'calckit.workflow' has no attribute {name!r}")
    value = getattr(importlib.import_module(_NAMES[name]), name)
    globals()[name] = value
    return value


__all__ = sorted(_NAMES)
