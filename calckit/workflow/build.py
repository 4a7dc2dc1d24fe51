"""The re-run workflow: build a sheet from a template and an inputs file, run a table of cases.

How a template works
--------------------
A template is a Jupyter notebook that builds one calculation sheet.

1. **Parameters.** One code cell carries the tag ``parameters``. It holds only
   plain assignments of literals, one per line: text with units
   (``mass = "250 kg"``), numbers (``damping_ratio = 0.05``), true/false, and
   expressions as text (``forcing = "F0*cos(w*t)"``, read later with
   :func:`calckit.parse_expression`, never run). The title-block fields
   ``subject``, ``project``, ``calculation``, ``revision``, ``author``,
   ``checker`` and ``date`` may be declared there too; an inputs file sets
   them from its ``[sheet]`` table (or at its top level); ``subject`` it must
   give, the others keep the template's values when left out. Run as it is,
   the template uses these values.
2. **The sheet.** The rest of the notebook builds a :class:`calckit.Sheet`
   named ``sheet``, with ``template=template_text`` so that the sheet's
   fingerprint covers the template, and with ``sources=input_sources``. A cell
   *before* the parameters cell sets the defaults ``template_text = ""``,
   ``inputs_file = "..."`` (used as the inputs' source) and
   ``input_sources = {}``, so that the template also runs by hand. Inputs go on
   the sheet under their parameter names (``sheet.input("mass", mass, ...,
   source=inputs_file)``), so that an error about an input is reported at its
   line in the inputs file, and so that a source the inputs file gives for an
   input (``mass = { value = "1850 kg", source = "Vendor drawing ..." }``, see
   :mod:`calckit.workflow.inputs`) takes the place of ``inputs_file`` in the sheet's
   Source column.
3. **The build** (:func:`build_sheet`, ``calckit build``) reads and checks the
   inputs file against the parameters (unknown names with the closest known
   one, missing names), then puts a new code cell tagged ``inputs-from-file``
   right after the parameters cell. That cell assigns every input (the value
   alone, also for an input written with a source), the title-block fields the
   template declares, ``inputs_file`` (the inputs file's name),
   ``template_text`` (a SHA-256 of the template's cell sources, so that
   metadata Jupyter rewrites on save does not count) and, when the inputs file
   gives sources, ``input_sources`` (input name -> source, for those inputs
   only). A source given for an input that the built sheet does not show, or
   not shown as its source (a template that does not pass ``input_sources`` to
   its sheet), stops the build before anything is written: no source is
   dropped without a word. The notebook runs in
   a new ``python3`` kernel of the interpreter calckit runs in (see "Kernels"
   below), with a temporary folder as its working folder. The kernel is started
   first; the template and the inputs are read and checked while it starts and
   imports calckit, and a bad input still stops the build before any cell
   runs. The template itself saves nothing:
   after its last cell the build runs one more cell, tagged ``save-sheet``,
   that calls :func:`save_built_sheet` on ``sheet`` to write ``<stem>.json``,
   ``<stem>.html`` and, with ``pdf=True``, ``<stem>.pdf`` into the temporary
   folder. The executed notebook (without that last cell) is written beside them
   as ``<stem>.ipynb``. Only when everything has been written are the files moved
   into the output folder, the JSON record last; a failed build leaves no sheet
   behind.

A cell that fails stops the build with a :class:`CellError` naming the
template's cell (counted from 1 over all cells of the template), the line and
its source, the error's type and its message. A calckit error whose place is an
input's name (``mass: must be greater than zero ...``) is reported at that
input's file and line instead.

Nothing built is silently replaced. Without ``overwrite=True`` a build into a
folder that already holds files of a sheet of the same name is refused with
:class:`~calckit.errors.OverwriteError`

- when the sheet there has another fingerprint (see
  :attr:`calckit.Sheet.fingerprint` for what it covers), known once the new
  sheet is built, or one that cannot be read (refused before any cell runs);
- when the fingerprint is the same but any file about to be replaced differs
  from what this build writes, byte for byte (a PDF's print dates aside, which
  Chromium sets anew each time): an executed notebook annotated since it was
  built, a PDF signed since, a sheet built with another date (the date is not
  in the fingerprint).

A rebuild of the same inputs through the same template writes the same bytes,
so it goes through without ``overwrite``; a file of the old sheet that this
build does not write (a PDF, when no PDF is asked for now) is then kept. With
``overwrite=True`` the sheet's files are replaced and such a file is removed
(it would describe the replaced sheet). The executed notebook is never written
over the template it came from. The files are compared once they are
finished, after the template has run and before anything is moved into the
folder. Bytes, and not the fingerprint alone: an equal fingerprint says the
calculation is the same, not that the files there are the ones a build wrote.

Batches and executors
---------------------
:func:`run_batch` builds one sheet per case of a table into ``<out>/<case>/``
and writes ``summary.csv`` and ``summary.html``; a summary already in the
folder (another batch's, or one the user edited) is refused before any case
runs unless ``overwrite=True``. Every case is dispatched
through one :class:`concurrent.futures.Executor`: by default a
:class:`~concurrent.futures.ProcessPoolExecutor` (processes started by
*spawn*, one per available core, at most one per case). Any object with the
same ``submit`` interface whose futures work with
:func:`concurrent.futures.as_completed` can be passed instead, for example a
Dask cluster's executor::

    from dask.distributed import Client
    client = Client("tcp://scheduler:8786")
    run_batch("single_mass_harmonic", "cases.csv", "built/", executor=client.get_executor())

The workers must see the template, the inputs and the output folder at the same
paths (a shared file system) and have calckit and ipykernel installed. A case
that fails is recorded in the summary with its message; the others go on. Each
worker (process, or thread of one) keeps one kernel for the cases it runs.

Kernels
-------
Every sheet, built alone or as a case of a batch, goes through the same steps
in its kernel: the kernel starts in a private temporary folder and runs a
warm-up once (:func:`_kernel_warm_up`: it imports matplotlib with the Agg
backend, numpy, sympy and all of calckit, and records the state a template can
change); before the sheet's cells run, a reset (:func:`_kernel_reset`) puts
that state back; then the template's cells and the save cell run. A build
uses its kernel once and kills it. A batch worker keeps its kernel and runs
the next case in it after the same reset, so that a case costs the template's
own work, not a kernel start and the imports (seconds).

Why a case cannot see the case before it: the reset clears the user's
namespace (IPython's reset: every name, the output history, the execution
count back to 1), closes all figures and restores matplotlib's rcParams as
recorded, changes to the case's own working folder, restores the environment
variables, ``sys.path``, the warning filters (and forgets which warnings were
shown), numpy's error and print settings, sympy's global parameters,
the recursion limit, IPython's display formatters, event hooks and
transformers; it empties sympy's cache and calckit's own caches and reseeds
``random`` and numpy's global generator from the system, as a new process
would. The state it cannot put back is checked instead: a replaced
``sys.stdout`` or hook, a changed builtin, changed import hooks, units
defined in calckit's registry, a module imported from outside the
installation (a case's own folder, say). Any of these, and any case that timed
out, killed its kernel or failed other than by a cell's error, makes the
worker kill the kernel and run the next case in a new one. What remains
shared is what the warm-up loaded (the modules, their code) and modules the
templates imported from the installation. ``tests/test_batch_isolation.py``
checks it: a case that sets a global, matplotlib settings, numpy options, an
environment variable, warning filters and the working folder, and leaves a
figure open, is followed by one whose sheet (record, HTML and notebook) is
byte for byte the sheet built alone, and a case that adds a builtin sends the
next case to a new kernel. A kept kernel is killed when its worker process
ends.

Examples
--------
>>> result = build_sheet("single_mass_harmonic", "p101.toml", "built/p101")  # doctest: +SKIP
>>> result.html.name  # doctest: +SKIP
'single_mass_harmonic.html'
"""

from __future__ import annotations

import asyncio
import atexit
import concurrent.futures as cf
import contextlib
import csv
import dataclasses
import hashlib
import io
import json
import math
import multiprocessing
import os
import re
import shutil
import site
import sys
import tempfile
import threading
import time
import tomllib
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from calckit import errors
from calckit.errors import BuildError, CalcError, CellError, InputsError, OverwriteError

if TYPE_CHECKING:  # the real imports are inside the functions: sympy and pint stay out of the CLI's start
    from calckit.workflow.inputs import InputsFile

__all__ = [
    "PARAMETERS_TAG",
    "INPUTS_TAG",
    "SAVE_TAG",
    "Template",
    "BuildResult",
    "CellError",
    "Case",
    "CaseResult",
    "BatchResult",
    "bundled_templates",
    "load_template",
    "build_sheet",
    "save_built_sheet",
    "read_cases",
    "run_batch",
    "default_workers",
    "new_calculation",
    "run_demo",
]

#: Tag of the template's parameters cell.
PARAMETERS_TAG = "parameters"
#: Tag of the cell the build puts after the parameters cell.
INPUTS_TAG = "inputs-from-file"
#: Tag of the cell the build runs last to save the sheet.
SAVE_TAG = "save-sheet"
#: Seconds one cell may run before the build gives up.
CELL_TIMEOUT_S = 600
_SHEET_SUFFIXES = (".ipynb", ".html", ".json", ".pdf")
_CALCKIT_ERRORS = frozenset({*errors.__all__, "CellError"})  # the names of calckit's own errors


# ---------------------------------------------------------------------------
# Errors




# ---------------------------------------------------------------------------
# Templates


@dataclass(frozen=True)
class Template:
    """A template notebook as read: where it is, its cells and its parameters.

    Attributes
    ----------
    path : Path
    name : str
        The file's stem; the built files are called after it.
    notebook : object
        The notebook (``nbformat.NotebookNode``).
    parameters : Mapping[str, object]
        Parameter names and default values, in order.
    parameters_cell : int
        Index (from 0) of the parameters cell.
    digest : str
        SHA-256 over the cells' types and sources.
    """

    path: Path
    name: str
    notebook: Any
    parameters: Mapping[str, Any]
    parameters_cell: int
    digest: str

    @property
    def inputs(self) -> list[str]:
        """Parameter names an inputs file must give (all but the optional title-block fields)."""
        from calckit.workflow.inputs import OPTIONAL_TITLE_FIELDS

        return [name for name in self.parameters if name not in OPTIONAL_TITLE_FIELDS]


def _resource_folder(package: str, fallback: str) -> Path:
    """Folder of a bundled resource package, from an install or from the source tree."""
    try:
        from importlib.resources import files

        return Path(str(files(package)))
    except ModuleNotFoundError:
        return Path(__file__).resolve().parents[2] / fallback  # the repository


def _templates_folder() -> Path:
    return _resource_folder("calckit.templates", "templates")


def _examples_folder() -> Path:
    return _resource_folder("calckit.examples", "examples")


def bundled_templates() -> dict[str, Path]:
    """The templates that come with calckit, by name (the file's stem).

    Examples
    --------
    >>> "single_mass_harmonic" in bundled_templates()
    True
    """
    return {p.stem: p for p in sorted(_templates_folder().glob("*.ipynb"))}


def _find_template(spec: str | os.PathLike) -> Path:
    path = Path(spec)
    if path.is_file():
        return path
    bundled = bundled_templates()
    name = path.name[: -len(".ipynb")] if path.name.endswith(".ipynb") else path.name
    if str(spec) in (name, f"{name}.ipynb") and name in bundled:
        return bundled[name]
    known = ", ".join(bundled) or "none"
    raise BuildError(
        "no such template: it is neither a notebook file nor a bundled template",
        where=str(spec),
        do=f"Give the path of a .ipynb file or a bundled template's name ({known})",
    )


def _digest(notebook: Any) -> str:
    cells = [[cell.get("cell_type", ""), _source(cell)] for cell in notebook.cells]
    return hashlib.sha256(json.dumps(cells, ensure_ascii=True).encode()).hexdigest()


def _source(cell: Any) -> str:
    source = cell.get("source", "")
    return "".join(source) if isinstance(source, list) else source


def _tags(cell: Any) -> list[str]:
    return list(cell.get("metadata", {}).get("tags", []))


def load_template(template: str | os.PathLike) -> Template:
    """Read a template notebook and its parameters cell.

    Parameters
    ----------
    template : str or path
        A notebook file, or the name of a bundled template (see
        :func:`bundled_templates`).

    Raises
    ------
    BuildError
        No such template, not a notebook, no cell or several cells tagged
        ``parameters``.
    InputsError
        The parameters cell holds something other than plain assignments of
        literals.
    """
    import nbformat

    from calckit.workflow.inputs import parameters_from_source

    path = _find_template(template)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # nbformat's notes on missing cell ids
            notebook = nbformat.read(path, as_version=4)
    except (OSError, UnicodeDecodeError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise BuildError(
            "cannot read the template as a notebook",
            where=str(path),
            do="Give a Jupyter notebook (.ipynb) saved by Jupyter or nbformat",
        ) from exc
    tagged = [i for i, cell in enumerate(notebook.cells) if PARAMETERS_TAG in _tags(cell)]
    if len(tagged) != 1:
        what = "no cell is tagged" if not tagged else f"{len(tagged)} cells are tagged"
        raise BuildError(
            f'{what} "{PARAMETERS_TAG}"',
            where=str(path),
            do=f'Tag exactly one code cell "{PARAMETERS_TAG}" and put the inputs there as plain assignments',
        )
    cell = notebook.cells[tagged[0]]
    if cell.get("cell_type") != "code":
        raise BuildError(
            f'the cell tagged "{PARAMETERS_TAG}" is not a code cell',
            where=f"{path}, cell {tagged[0] + 1}",
            do="Tag the code cell that holds the assignments",
        )
    try:
        parameters = parameters_from_source(_source(cell))
    except InputsError as exc:
        raise InputsError(exc.what, where=f"{path}, cell {tagged[0] + 1}, {exc.where}", do=exc.do) from None
    return Template(path, path.stem, notebook, parameters, tagged[0], _digest(notebook))


# ---------------------------------------------------------------------------
# Building one sheet


@dataclass(frozen=True)
class BuildResult:
    """What :func:`build_sheet` wrote.

    Attributes
    ----------
    out : Path
        The output folder.
    notebook, html, json : Path
        The executed notebook, the sheet and its JSON record.
    pdf : Path or None
        The PDF, when asked for.
    fingerprint : str
        The sheet's fingerprint.
    record : dict
        The JSON record (see :meth:`calckit.Sheet.record`).
    seconds : float
        Time the build took.
    """

    out: Path
    notebook: Path
    html: Path
    json: Path
    pdf: Path | None
    fingerprint: str
    record: dict = field(repr=False)
    seconds: float = 0.0

    @property
    def files(self) -> list[Path]:
        """The files written, in the order the command line lists them."""
        return [p for p in (self.html, self.pdf, self.json, self.notebook) if p is not None]


def save_built_sheet(sheet: Any, folder: str, stem: str, *, pdf: bool = False) -> None:
    """Save *sheet* as ``<stem>.json``, ``<stem>.html`` (and ``.pdf``) in *folder*.

    The build runs this in the kernel, in the cell tagged ``save-sheet``, after
    the template's last cell.

    Raises
    ------
    BuildError
        The template made no :class:`calckit.Sheet` named ``sheet``.
    """
    from calckit.sheet.sheet import Sheet

    if not isinstance(sheet, Sheet):
        got = "nothing" if sheet is None else f"a {type(sheet).__name__}"
        raise BuildError(
            f"the template left {got} in the name sheet, not a calculation sheet",
            where="template",
            do="Build a calckit.Sheet named sheet in the template",
        )
    base = Path(folder) / stem
    sheet.save(base.with_suffix(".json"), overwrite=True)
    sheet.save(base.with_suffix(".html"), overwrite=True)
    if pdf:
        sheet.save(base.with_suffix(".pdf"), overwrite=True)


def _inputs_cell_source(
    assignments: Mapping[str, Any],
    inputs_label: str,
    digest: str,
    sources: Mapping[str, str] | None = None,
) -> str:
    from calckit.workflow.inputs import injected_source

    text = injected_source(assignments)
    label = f"# Inputs set by calckit build from {inputs_label}\n"
    text = label + text.split("\n", 1)[1] if text.startswith("# Inputs set by calckit build") else text
    text += f"inputs_file = {inputs_label!r}\ntemplate_text = {f'calckit template sha256 {digest}'!r}\n"
    if sources:  # left out when there are none: the template's default input_sources = {} holds
        for name, source in sources.items():
            if not isinstance(name, str) or not isinstance(source, str):
                raise InputsError(
                    f"the source {source!r} of {name!r} is not text",
                    where="input sources",
                    do="Give each source as text, by the input's name",
                )
        text += "input_sources = {\n" + "".join(f"    {n!r}: {s!r},\n" for n, s in sources.items()) + "}\n"
    return text


def _check_sources(
    template: Template, record: Mapping[str, Any], sources: Mapping[str, str], wheres: Mapping[str, str]
) -> None:
    """Refuse a built sheet that does not show a source the inputs file gives, where it gives it."""
    shown = {item.get("name"): item.get("source") for item in record.get("inputs", [])}
    for name in sources:
        if name not in shown:
            raise InputsError(
                f'the template puts no input "{name}" on the sheet, so its source would not be shown',
                where=wheres.get(name, name),
                do=f"Write {name} = value without a source; nothing was written",
            )
    for name, source in sources.items():
        if shown[name] != source:
            raise BuildError(
                f'the sheet shows "{shown[name]}" as the source of "{name}", not the inputs file\'s '
                f'"{source}": the template does not pass input_sources to its sheet',
                where=str(template.path),
                do="Set input_sources = {} in the cell before the parameters cell and create the sheet "
                "with ck.Sheet(..., sources=input_sources); nothing was written",
            )


def _kernel_env() -> dict[str, str]:
    """Environment of the kernel: this one, with calckit importable and quiet debugger checks."""
    env = dict(os.environ)
    root = str(Path(__file__).resolve().parents[2])  # the folder that holds calckit/
    installed = {str(Path(p).resolve()) for p in [*site.getsitepackages(), site.getusersitepackages()]}
    if root not in installed:
        env["PYTHONPATH"] = os.pathsep.join(p for p in (root, env.get("PYTHONPATH", "")) if p)
    env["PYDEVD_DISABLE_FILE_VALIDATION"] = "1"
    env["MPLBACKEND"] = "Agg"
    return env


def _kernel_manager() -> Any:
    """A kernel manager that starts ipykernel in the interpreter calckit runs in.

    A ``python3`` kernel spec found on the machine may point at another Python
    without calckit; this one cannot.
    """
    try:
        import ipykernel  # noqa: F401
    except ImportError as exc:
        raise BuildError(
            "running a template needs ipykernel, which is not installed",
            where="kernel python3",
            do="Install it in this environment: pip install ipykernel",
        ) from exc
    from jupyter_client.kernelspec import KernelSpec, KernelSpecManager
    from jupyter_client.manager import AsyncKernelManager

    class ThisPython(KernelSpecManager):
        def get_kernel_spec(self, kernel_name: str) -> KernelSpec:
            return KernelSpec(
                argv=[
                    sys.executable,
                    "-Xfrozen_modules=off",
                    "-m",
                    "ipykernel_launcher",
                    "-f",
                    "{connection_file}",
                ],
                display_name="Python 3 (calckit)",
                language="python",
            )

    return AsyncKernelManager(kernel_name="python3", kernel_spec_manager=ThisPython())


# ---------------------------------------------------------------------------
# Kernels: one per build, one per batch worker (reused from case to case)
#
# Every case, whether built alone or in a batch, runs in a kernel through the same
# steps: the kernel starts (its folder is a private temporary one), runs the
# warm-up below once, then before the case the reset below, then the template's
# cells and the save cell. A lone build starts a kernel, uses it once and kills
# it; a batch worker keeps its kernel and resets it before the next case.

#: Seconds a kernel may take to start and import calckit.
KERNEL_START_TIMEOUT_S = 180

_BASELINE: dict[str, Any] = {}


def _kernel_warm_up() -> None:
    """Run once in a new kernel: import what templates use, then record the state to reset to.

    The imports are the ones every template makes (``import calckit`` imports
    all of calckit); they hold no case's data. What is recorded is what a
    template can change and :func:`_kernel_reset` puts back.
    """
    import builtins
    import random
    import warnings

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot  # noqa: F401
    import numpy as np
    import sympy  # noqa: F401
    from sympy.core.parameters import global_parameters

    import calckit

    for name in calckit.__all__:  # the package loads lazily; a kernel wants all of it
        getattr(calckit, name)
    from IPython import get_ipython

    shell = get_ipython()
    rc = dict(matplotlib.rcParams.copy())
    rc.pop("backend", None)
    formatters = shell.display_formatter.formatters
    _BASELINE.clear()
    _BASELINE.update(
        user_ns={k: v for k, v in shell.user_ns.items() if isinstance(v, str | type(None))},
        rc=rc,
        environ=dict(os.environ),
        path=list(sys.path),
        meta_path=list(sys.meta_path),
        filters=list(warnings.filters),
        numpy_err=np.geterr(),
        numpy_print=np.get_printoptions(),
        sympy=dict(vars(global_parameters)),
        recursion=sys.getrecursionlimit(),
        streams=(sys.stdout, sys.stderr, sys.displayhook, sys.excepthook),
        builtins={k: v for k, v in vars(builtins).items() if k != "_"},
        formatters={
            mime: (dict(f.type_printers), dict(f.deferred_printers), dict(f.singleton_printers))
            for mime, f in formatters.items()
        },
        events={name: list(hooks) for name, hooks in shell.events.callbacks.items()},
        transformers=(list(shell.ast_transformers), list(shell.input_transformers_post)),
        modules=set(sys.modules),
        units=_units_state(),
    )
    random.seed()  # (the reset reseeds too: a case never sees the numbers of another)


def _units_state() -> tuple:
    """calckit's unit registry: its units (bar the prefixed ones pint adds as they are used) and defaults."""
    from calckit.core.units import ureg

    units = set(ureg._units)
    prefixes = [p for p in ureg._prefixes if p]
    own = frozenset(u for u in units if not any(u.startswith(p) and u[len(p) :] in units for p in prefixes))
    formatter = getattr(ureg, "formatter", ureg)
    return (own, getattr(formatter, "default_format", None), ureg.default_system)


def _installed_module(module: Any) -> bool:
    """Whether a module comes with Python or an installed package (or calckit), not a case's folder."""
    where = getattr(module, "__file__", None)
    if not where:
        return True
    roots = {sys.prefix, sys.base_prefix, sys.exec_prefix, str(Path(__file__).resolve().parents[1])}  # calckit/
    roots.update(site.getsitepackages(), [site.getusersitepackages()])
    where = os.path.realpath(where)
    return any(where.startswith(os.path.realpath(root) + os.sep) for root in roots)


def _kernel_reset(folder: str) -> None:
    """Run in the kernel before each case: put back the state the warm-up recorded.

    Clears the user's namespace (IPython's reset: names, output history,
    execution count back to 1), closes every figure and restores matplotlib's
    rcParams, the working folder (*folder*), environment variables,
    ``sys.path``, warning filters (and which warnings were already shown),
    numpy's error and print settings, sympy's global parameters and cache,
    calckit's caches, IPython's display formatters, event hooks and
    transformers, and reseeds ``random`` and numpy's global generator from the
    system, as a new process would. What cannot be put back (a new builtin, a
    replaced ``sys.stdout``, a module imported from outside the installation,
    units defined in calckit's registry, changed import hooks) raises
    ``RuntimeError``: the caller then replaces the kernel by a new one.
    """
    import builtins
    import gc
    import random
    import warnings

    import matplotlib
    import matplotlib.pyplot as plt
    import numpy as np
    from IPython import get_ipython
    from sympy.core.cache import clear_cache
    from sympy.core.parameters import global_parameters

    base = _BASELINE
    if not base:
        raise RuntimeError("the kernel was not warmed up")
    os.chdir(folder)  # first: the last case's folder is gone, and IPython's reset asks for the working folder
    shell = get_ipython()
    shell.reset(new_session=True)
    for key, value in base["user_ns"].items():
        shell.user_ns.setdefault(key, value)
    plt.close("all")
    matplotlib.rcParams._update_raw(base["rc"])
    if dict(os.environ) != base["environ"]:
        os.environ.clear()
        os.environ.update(base["environ"])
    sys.path[:] = base["path"]
    warnings.resetwarnings()  # also forgets which warnings were shown already
    warnings.filters[:] = base["filters"]
    np.seterr(**base["numpy_err"])
    np.set_printoptions(**base["numpy_print"])
    for key, value in base["sympy"].items():
        setattr(global_parameters, key, value)
    sys.setrecursionlimit(base["recursion"])
    for mime, (types, deferred, singletons) in base["formatters"].items():
        formatter = shell.display_formatter.formatters[mime]
        for held, saved in (
            (formatter.type_printers, types),
            (formatter.deferred_printers, deferred),
            (formatter.singleton_printers, singletons),
        ):
            held.clear()
            held.update(saved)
    for name, hooks in base["events"].items():
        shell.events.callbacks[name][:] = hooks
    shell.ast_transformers[:], shell.input_transformers_post[:] = (list(t) for t in base["transformers"])
    clear_cache()
    for name, module in list(sys.modules.items()):
        if name == "calckit" or name.startswith("calckit."):
            for value in list(vars(module).values()):
                if callable(getattr(value, "cache_clear", None)) and hasattr(value, "cache_info"):
                    value.cache_clear()
    random.seed()
    np.random.seed()
    gc.collect()

    problems = []
    if (sys.stdout, sys.stderr, sys.displayhook, sys.excepthook) != base["streams"]:
        problems.append("sys.stdout, sys.stderr or a hook was replaced")
    now = {k: v for k, v in vars(builtins).items() if k != "_"}  # "_": the last result shown
    if now.keys() != base["builtins"].keys() or any(_differs(now[k], v) for k, v in base["builtins"].items()):
        changed = sorted(
            set(now) ^ set(base["builtins"])
            | {k for k, v in base["builtins"].items() if _differs(now.get(k), v)}
        )
        problems.append(f"builtins were changed ({', '.join(changed[:5])})")
    if sys.meta_path != base["meta_path"]:
        problems.append("import hooks were changed")
    if _units_state() != base["units"]:
        problems.append("the unit registry was changed")
    foreign = [
        name
        for name in set(sys.modules) - base["modules"]
        if sys.modules[name] is not None and not _installed_module(sys.modules[name])
    ]
    if foreign:
        problems.append(
            f"modules from outside the installation were imported: {', '.join(sorted(foreign)[:3])}"
        )
    if problems:
        raise RuntimeError("the kernel cannot be reset: " + "; ".join(problems))


def _differs(a: Any, b: Any) -> bool:
    """Not the same object, nor an equal one (the kernel binds ``input`` anew for each request)."""
    try:
        return a is not b and not bool(a == b)
    except Exception:
        return True


class _ResetError(BuildError):
    """The kernel could not be put back to its warmed-up state (a kept kernel is then replaced)."""


_IN_KERNEL = "__import__('calckit.workflow.build', fromlist=['_'])."


class _Kernel:
    """An ipykernel of this interpreter, driven through nbclient, that can run case after case."""

    def __init__(self) -> None:
        self.folder = Path(tempfile.mkdtemp(prefix="calckit-kernel-")).resolve()
        self.log = open(self.folder / "kernel.log", "wb")  # noqa: SIM115 (the kernel's stdout and stderr)
        self.km: Any = None
        self.kc: Any = None
        self.language_info: dict = {}
        self.cases = 0
        self.healthy = False

    async def start(self) -> None:
        """Launch the kernel process; returns without waiting for it to be ready."""
        self.km = _kernel_manager()
        await self.km.start_kernel(
            cwd=str(self.folder),
            env=_kernel_env(),
            stdout=self.log,
            stderr=self.log,
            extra_arguments=["--HistoryManager.hist_file=:memory:"],
        )
        self.kc = self.km.client()

    async def warm_up(self) -> None:
        """Wait for the kernel, ask for its language (for the notebook), run the warm-up.

        The client's channels (and its heartbeat thread) start here, not in :meth:`start`:
        a build refused while the kernel starts then never has a heartbeat thread racing
        the teardown of its sockets.
        """
        self.kc.start_channels()
        await self.kc.wait_for_ready(timeout=KERNEL_START_TIMEOUT_S)
        reply = await self.kc.kernel_info(reply=True, timeout=KERNEL_START_TIMEOUT_S)
        self.language_info = reply["content"].get("language_info", {})
        await self._silent(_IN_KERNEL + "_kernel_warm_up()", KERNEL_START_TIMEOUT_S)
        self.healthy = True

    async def reset(self, folder: Path) -> None:
        """Put the kernel back to its warmed-up state, working in *folder* (raises if it cannot)."""
        try:
            await self._silent(_IN_KERNEL + f"_kernel_reset({str(folder)!r})", KERNEL_START_TIMEOUT_S)
        except BuildError as exc:
            raise _ResetError(exc.what, where=exc.where, do=exc.do) from None

    async def _silent(self, code: str, timeout: float) -> None:
        """Run code of the build's own (no output, no history, no execution count)."""
        import queue

        try:
            reply = await self.kc.execute(code, silent=True, store_history=False, reply=True, timeout=timeout)
        except (TimeoutError, queue.Empty):
            self.healthy = False
            raise BuildError(
                f"the kernel did not answer within {timeout:g} s",
                where="kernel python3",
                do="Check that ipykernel works in this environment: python -m ipykernel_launcher --help",
            ) from None
        content = reply["content"]
        if content.get("status") != "ok":
            self.healthy = False
            raise BuildError(
                f"{content.get('ename', 'error')}: {content.get('evalue', '')}".strip(),
                where="kernel python3",
                do="Check that calckit imports in this environment: python -c 'import calckit'",
            )

    async def run(self, notebook: Any, timeout: int) -> None:
        """Run every cell of *notebook* as nbclient's ``execute`` does, in this kernel."""
        from nbclient import NotebookClient

        self.cases += 1
        self.healthy = False  # until the notebook has run to its end
        client = NotebookClient(
            notebook,
            timeout=timeout,
            kernel_name="python3",
            km=self.km,
            allow_errors=False,
            record_timing=False,
        )
        client.kc = self.kc
        client.reset_execution_trackers()
        notebook.metadata["language_info"] = self.language_info
        for index, cell in enumerate(notebook.cells):
            await client.async_execute_cell(cell, index, execution_count=client.code_cells_executed + 1)
        client.set_widgets_metadata()
        self.healthy = True

    def last_words(self) -> str:
        self.log.flush()
        text = (self.folder / "kernel.log").read_text(encoding="utf-8", errors="replace").strip()
        return text.splitlines()[-1].strip() if text else "no message"

    async def aclose(self) -> None:
        """Kill the kernel (what it wrote is written: its replies came) and free its sockets and files."""
        if self.km is not None:
            with contextlib.suppress(Exception):  # closing must not hide the build's own outcome
                if self.kc is not None:
                    self.kc.stop_channels()
                await self.km.shutdown_kernel(now=True)
        self.close()

    def close(self) -> None:
        """:meth:`aclose` without an event loop (at exit): kill the process, remove the files."""
        self.healthy = False
        try:
            if self.kc is not None:
                self.kc.stop_channels()
                if getattr(self.kc, "_created_context", False) and not self.kc.context.closed:
                    self.kc.context.destroy(linger=0)
            process = getattr(getattr(self.km, "provisioner", None), "process", None)
            if process is not None and process.poll() is None:
                process.kill()
                process.wait(timeout=10)
            if self.km is not None:
                self.km.cleanup_connection_file()
                if getattr(self.km, "_created_context", False):
                    self.km.context.destroy(linger=0)
        except Exception:  # noqa: S110 (closing must not hide the build's own outcome)
            pass
        finally:
            self.kc = self.km = None
            if not self.log.closed:
                self.log.close()
            shutil.rmtree(self.folder, ignore_errors=True)


@contextlib.contextmanager
def _quiet_clients():
    with warnings.catch_warnings():
        # the Jupyter client libraries warn about their own internals (event loops,
        # sockets closed at exit, dates without time zones); none of it concerns the sheet
        for category in (DeprecationWarning, ResourceWarning, RuntimeWarning, UserWarning):
            warnings.filterwarnings(
                "ignore", category=category, module=r"(jupyter_client|jupyter_core|nbclient|zmq|traitlets)"
            )
        warnings.filterwarnings("ignore", category=ResourceWarning)
        yield


_LOCAL = threading.local()
_KEPT: list[_Kernel] = []  # kernels kept by batch workers, killed when the process exits


@atexit.register
def _close_kept() -> None:
    while _KEPT:
        _KEPT.pop().close()


def _loop() -> asyncio.AbstractEventLoop:
    """This thread's event loop, kept for the thread's life (a kept kernel's sockets live on it)."""
    loop = getattr(_LOCAL, "loop", None)
    if loop is None or loop.is_closed():
        loop = _LOCAL.loop = asyncio.new_event_loop()
    return loop


def _loop_running() -> bool:
    try:
        asyncio.get_running_loop()
    except RuntimeError:
        return False
    return True


def _run_sync(make: Callable[[], Any]) -> Any:
    """Run the coroutine ``make()`` to its end, also from a thread where an event loop runs (Jupyter)."""
    if not _loop_running():
        with _quiet_clients():
            return _loop().run_until_complete(make())

    def run_apart() -> Any:  # a notebook's own loop runs here: run ours in a thread, then close it
        loop = asyncio.new_event_loop()
        try:
            with _quiet_clients():
                return loop.run_until_complete(make())
        finally:
            loop.close()

    with cf.ThreadPoolExecutor(1) as pool:
        return pool.submit(run_apart).result()


async def _start_kernel() -> _Kernel:
    kernel = _Kernel()
    try:
        await kernel.start()
    except BaseException:
        await kernel.aclose()
        raise
    return kernel


def _dead_kernel(kernel: _Kernel, template: Template) -> BuildError:
    return BuildError(
        f"the kernel died while running the template (its last words: {kernel.last_words()})",
        where=str(template.path),
        do="Check the template for a crash or a memory blow-up",
    )


_ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")
_CELL_LINE = re.compile(r"Cell In\[\d*\],? line (\d+)")
_PLACE = re.compile(r"^([A-Za-z_][A-Za-z0-9_]*): (.*)$", re.DOTALL)


def _cell_error(
    template: Template, executed: Any, wheres: Mapping[str, str], failure: Exception
) -> CellError:
    """One readable error from a failed execution: cell, line, source, type and message."""
    ename = getattr(failure, "ename", type(failure).__name__)
    evalue = str(getattr(failure, "evalue", failure)).strip()
    index, output = None, None
    for i, cell in enumerate(executed.cells):
        for out in cell.get("outputs", []):
            if out.get("output_type") == "error":
                index, output = i, out
    user_error = ename in _CALCKIT_ERRORS
    if index is None:
        return CellError(f"{ename}: {evalue}", where=template.name, ename=ename, user_error=user_error)
    cell = executed.cells[index]
    if SAVE_TAG in _tags(cell):
        return CellError(
            f"saving the sheet failed: {ename}: {evalue}",
            where=str(template.path),
            ename=ename,
            user_error=user_error,
        )
    # count the template's cells only: the injected inputs cell sits after the parameters cell
    number = index + 1 - (1 if index > template.parameters_cell else 0)
    traceback = _ANSI.sub("", "\n".join(output.get("traceback", [])))
    found = _CELL_LINE.search(traceback)
    line = int(found.group(1)) if found else None
    lines = _source(cell).splitlines()
    snippet = lines[line - 1].strip() if line and 0 < line <= len(lines) else ""
    place = f"{template.path.name}, cell {number}" + (f", line {line}" if line else "")
    placed = _PLACE.match(evalue)
    if user_error and placed and placed.group(1) in wheres:
        text = placed.group(2)
        return CellError(
            f"{text} (found by {place})",
            where=wheres[placed.group(1)],
            ename=ename,
            cell=number,
            line=line,
            user_error=True,
        )
    shown = f" {snippet!r}" if snippet else ""
    return CellError(
        f"{ename}: {evalue}" if evalue else ename,
        where=place + shown,
        ename=ename,
        cell=number,
        line=line,
        user_error=user_error,
    )


def _file_mode() -> int:
    """Permissions of a new file under the process's umask."""
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def _check_out_folder(out: Path) -> None:
    if out.exists() and not out.is_dir():
        raise BuildError(
            "the output path is a file, not a folder",
            where=str(out),
            do="Give a folder for --out (it is created if missing)",
        )


def _check_not_template(out: Path, template: Path) -> None:
    target = out / f"{template.stem}.ipynb"
    if target.exists() and target.resolve() == template.resolve():
        raise BuildError(
            "the output folder is the template's own folder: the executed notebook would replace the template",
            where=str(target),
            do="Give another folder for --out",
        )


def _held_fingerprint(out: Path, stem: str) -> tuple[bool, str | None]:
    """Whether the folder holds files of a sheet called *stem*, and their fingerprint."""
    present = [out / f"{stem}{suffix}" for suffix in _SHEET_SUFFIXES if (out / f"{stem}{suffix}").exists()]
    if not present:
        return False, None
    from calckit.sheet.sheet import existing_fingerprint

    for suffix in (".json", ".html"):
        found = existing_fingerprint(out / f"{stem}{suffix}")
        if found:
            return True, found
    return True, None


def _refuse(out: Path, stem: str, held: str | None) -> OverwriteError:
    what = (
        f"a sheet with fingerprint {held[:12]}"
        if held
        else "files of a sheet whose fingerprint cannot be read"
    )
    return OverwriteError(
        f"the output folder already holds {what}, built from other inputs",
        where=str(out / f"{stem}.json"),
        do="Build into another folder, or pass overwrite=True (--overwrite) to replace it",
    )


def _refuse_changed(out: Path, names: Sequence[str]) -> OverwriteError:
    one = len(names) == 1
    return OverwriteError(
        f"the output folder holds this sheet (same fingerprint), but {', '.join(names)} "
        f"{'differs' if one else 'differ'} from what this build writes (edited since it was built?)",
        where=str(out),
        do=f"Keep a copy elsewhere, build into another folder, or pass overwrite=True (--overwrite) "
        f"to replace {'it' if one else 'them'}",
    )


_PDF_DATES = re.compile(rb"/(CreationDate|ModDate) ?\(D:[0-9Z+'-]*\)")


def _same_file(held: Path, written: Path) -> bool:
    """Whether a file in the output folder holds what the build wrote: the same bytes (a PDF's dates aside)."""
    try:
        old, new = held.read_bytes(), written.read_bytes()
    except OSError:
        return False
    if old == new:
        return True
    if written.suffix == ".pdf":  # Chromium stamps each print with its time
        return _PDF_DATES.sub(rb"/\1 ()", old) == _PDF_DATES.sub(rb"/\1 ()", new)
    return False


async def _build_in(
    kernel: _Kernel,
    template: Template,
    assignments: Mapping[str, Any],
    wheres: Mapping[str, str],
    inputs_label: str,
    out: Path,
    held: tuple[bool, str | None],
    *,
    pdf: bool,
    overwrite: bool,
    timeout: int,
    started: float,
    sources: Mapping[str, str] | None = None,
) -> BuildResult:
    """Build one sheet in *kernel* (warmed up), which is reset first.

    *sources* (input name -> source, from the inputs file) go to the template
    as ``input_sources``; the built sheet must show each of them.
    """
    import copy

    import nbformat

    stem = template.name
    _check_not_template(out, template.path)
    held_any, held_print = held
    if held_any and held_print is None and not overwrite:
        raise _refuse(out, stem, held_print)

    notebook = copy.deepcopy(template.notebook)
    injected = nbformat.v4.new_code_cell(
        _inputs_cell_source(assignments, inputs_label, template.digest, sources)
    )
    injected.metadata["tags"] = [INPUTS_TAG]
    if "id" in injected and INPUTS_TAG not in {cell.get("id") for cell in notebook.cells}:
        injected.id = INPUTS_TAG  # not a random one: the same inputs give the same notebook
    notebook.cells.insert(template.parameters_cell + 1, injected)

    out.parent.mkdir(parents=True, exist_ok=True)
    work = Path(tempfile.mkdtemp(prefix=f".calckit-build-{stem}-", dir=out.parent)).resolve()
    try:
        saver = nbformat.v4.new_code_cell(
            "# calckit build: save the sheet\n"
            "from calckit.workflow.build import save_built_sheet\n\n"
            f"save_built_sheet(globals().get('sheet'), {str(work)!r}, {stem!r}, pdf={pdf!r})\n"
        )
        saver.metadata["tags"] = [SAVE_TAG]
        notebook.cells.append(saver)
        await kernel.reset(work)
        try:
            await kernel.run(notebook, timeout)
        except CalcError:
            raise
        except Exception as exc:
            from nbclient.exceptions import CellExecutionError, CellTimeoutError, DeadKernelError

            if isinstance(exc, CellExecutionError):
                kernel.healthy = True  # a cell that fails leaves a kernel the reset can clean
                raise _cell_error(template, notebook, wheres, exc) from None
            if isinstance(exc, CellTimeoutError):
                raise BuildError(
                    f"a cell ran longer than {timeout} s",
                    where=str(template.path),
                    do="Check the template for a loop that does not end",
                ) from None
            if isinstance(exc, DeadKernelError):
                raise _dead_kernel(kernel, template) from None
            raise
        notebook.cells.pop()  # the save cell is the build's, not the template's
        nbformat.write(notebook, work / f"{stem}.ipynb")
        record_path = work / f"{stem}.json"
        record = json.loads(record_path.read_text(encoding="utf-8"))
        if sources:
            _check_sources(template, record, sources, wheres)
        fingerprint = record["fingerprint"]
        if held_any and not overwrite and held_print != fingerprint:
            raise _refuse(out, stem, held_print)
        produced = [s for s in (".ipynb", ".pdf", ".html", ".json") if (work / f"{stem}{s}").exists()]
        if not overwrite:  # the same fingerprint: replace only files that hold what this build wrote
            changed = [
                f"{stem}{s}"
                for s in produced
                if (out / f"{stem}{s}").exists() and not _same_file(out / f"{stem}{s}", work / f"{stem}{s}")
            ]
            if changed:
                raise _refuse_changed(out, changed)
        out.mkdir(parents=True, exist_ok=True)
        if overwrite:  # stale files of the replaced sheet (a PDF not asked for now)
            for suffix in _SHEET_SUFFIXES:
                if suffix not in produced:
                    (out / f"{stem}{suffix}").unlink(missing_ok=True)
        mode = _file_mode()
        for suffix in produced:  # the JSON record last: it marks the sheet complete
            os.chmod(work / f"{stem}{suffix}", mode)  # temporary files are private; sheets are not
            os.replace(work / f"{stem}{suffix}", out / f"{stem}{suffix}")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return BuildResult(
        out=out,
        notebook=out / f"{stem}.ipynb",
        html=out / f"{stem}.html",
        json=out / f"{stem}.json",
        pdf=out / f"{stem}.pdf" if pdf else None,
        fingerprint=fingerprint,
        record=record,
        seconds=time.monotonic() - started,
    )


def _prepare_build(
    path: Path, inputs: str | os.PathLike, out: Path
) -> tuple[Template, dict[str, Any], dict[str, str], str, tuple[bool, str | None], dict[str, str]]:
    """The parent's share of a build: read the template and the inputs, check them, look at the output folder."""
    from calckit.workflow.inputs import check_keys, read_inputs

    tmpl = load_template(path)
    file = read_inputs(inputs)
    check_keys(file, tmpl.parameters, path=file.path)
    wheres = {name: file.where(name) for name in tmpl.parameters}
    held = _held_fingerprint(out, tmpl.name)
    return tmpl, _prepared(tmpl, file), wheres, file.path.name, held, dict(file.sources)


async def _build_alone(
    path: Path,
    inputs: str | os.PathLike,
    out: Path,
    *,
    pdf: bool,
    overwrite: bool,
    timeout: int,
    started: float,
) -> BuildResult:
    """Start a kernel first; read and check the inputs while it starts and imports; then build."""
    kernel = await _start_kernel()
    warm = asyncio.ensure_future(kernel.warm_up())
    try:
        prepare = asyncio.get_running_loop().run_in_executor(None, _prepare_build, path, inputs, out)
        await asyncio.wait({prepare, warm}, return_when=asyncio.FIRST_EXCEPTION)
        if prepare.done() and prepare.exception() is not None:
            warm.cancel()  # bad inputs: no need to wait for the kernel
        template, assignments, wheres, label, held, sources = await prepare
        await warm
        return await _build_in(
            kernel, template, assignments, wheres, label, out, held,
            pdf=pdf, overwrite=overwrite, timeout=timeout, started=started, sources=sources,
        )  # fmt: skip
    finally:
        if not warm.done():
            warm.cancel()
            # let the cancelled warm-up unwind (its channels started) before the kernel closes
            with contextlib.suppress(asyncio.CancelledError, Exception):
                await warm
        elif not warm.cancelled():
            warm.exception()  # seen: the error raised is the inputs' (asyncio would log this one)
        await kernel.aclose()


def _prepared(
    template: Template, inputs: InputsFile | None, overrides: Mapping[str, Any] | None = None
) -> dict[str, Any]:
    values: dict[str, Any] = {}
    if inputs is not None:
        values.update(inputs.assignments(template.parameters))
    if overrides:
        values.update(overrides)
    return values


def build_sheet(
    template: str | os.PathLike,
    inputs: str | os.PathLike,
    out: str | os.PathLike,
    *,
    pdf: bool = False,
    overwrite: bool = False,
    timeout: int = CELL_TIMEOUT_S,
) -> BuildResult:
    """Build one calculation sheet from a template notebook and an inputs file.

    Reads and checks the inputs, puts them into the template after its
    parameters cell, runs the notebook in a fresh kernel and writes the
    executed notebook, the sheet as HTML and its JSON record (and a PDF on
    request) into the output folder, all or nothing.

    Parameters
    ----------
    template : str or path
        A template notebook, or the name of a bundled template.
    inputs : str or path
        The inputs file (TOML): one value for each of the template's parameters.
    out : str or path
        The output folder; created if missing.
    pdf : bool
        Also print the sheet to PDF (needs Chromium).
    overwrite : bool
        Replace the sheet's files in the output folder when they differ from
        what this build writes: a sheet built from other inputs, or files
        changed since they were built (an annotated notebook).
    timeout : int
        Seconds one cell may run.

    Returns
    -------
    BuildResult

    Raises
    ------
    InputsError, UnitsError
        The inputs file cannot be read, or gives unknown names or misses some.
    CellError
        A cell of the template failed (bad input values among them).
    OverwriteError
        The output folder holds a sheet built from other inputs, or files of
        this sheet that differ from what the build writes.
    BuildError
        No such template, the output folder is the template's own, or the
        kernel could not run it.
    """
    started = time.monotonic()
    path = _find_template(template)
    out = Path(out)
    _check_out_folder(out)
    _check_not_template(out, path)
    return _run_sync(
        lambda: _build_alone(
            path, inputs, out, pdf=pdf, overwrite=overwrite, timeout=timeout, started=started
        )
    )


# ---------------------------------------------------------------------------
# Batches


@dataclass(frozen=True)
class Case:
    """One case of a batch: its name, the inputs it overrides, and where they are written.

    Attributes
    ----------
    name : str
        Also the name of the case's sub-folder.
    values : Mapping[str, object]
        Inputs that replace the base inputs.
    wheres : Mapping[str, str]
        For each overridden input, where it is written (file, line, case).
    """

    name: str
    values: Mapping[str, Any]
    wheres: Mapping[str, str]


@dataclass(frozen=True)
class CaseResult:
    """How one case went.

    Attributes
    ----------
    name : str
    ok : bool
        The sheet was built.
    folder : str
        The case's output folder.
    message : str
        The error, for a failed case.
    record : dict or None
        The sheet's JSON record, for a built case.
    seconds : float
    """

    name: str
    ok: bool
    folder: str
    message: str = ""
    record: dict | None = field(default=None, repr=False)
    seconds: float = 0.0

    @property
    def status(self) -> str:
        """``"built"`` or ``"failed"``."""
        return "built" if self.ok else "failed"


@dataclass(frozen=True)
class BatchResult:
    """What :func:`run_batch` did: one result per case, in the table's order, and the summaries."""

    out: Path
    cases: tuple[CaseResult, ...]
    summary_csv: Path
    summary_html: Path

    @property
    def failed(self) -> list[CaseResult]:
        return [case for case in self.cases if not case.ok]


_CASE_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,79}$")


def _case_value(text: str, default: Any, where: str) -> Any:
    """A CSV cell as the type of the template's default for that input."""
    text = text.strip()
    if isinstance(default, bool):
        if text.lower() in ("true", "false"):
            return text.lower() == "true"
        raise InputsError(f"expected true or false, got {text!r}", where=where, do="Write true or false")
    if isinstance(default, int | float):
        try:
            number = int(text) if re.fullmatch(r"[+-]?\d+", text) else float(text)
        except ValueError:
            raise InputsError(
                f"expected a number, got {text!r}", where=where, do="Write a plain number, for example 0.05"
            ) from None
        if isinstance(number, float) and not math.isfinite(number):
            raise InputsError(
                f"the value {text} is not a finite number", where=where, do="Give a finite number"
            )
        return number
    return text


def _check_case_name(name: Any, where: str, seen: set[str]) -> str:
    if not isinstance(name, str) or not _CASE_NAME.match(name) or name in (".", ".."):
        raise InputsError(
            f"the case name {name!r} cannot name a folder",
            where=where,
            do="Use letters, digits, '.', '-' and '_' (up to 80), starting with a letter or digit",
        )
    if name in seen:
        raise InputsError(f'the case "{name}" is given twice', where=where, do="Give each case its own name")
    seen.add(name)
    return name


def read_cases(path: str | os.PathLike, template: Template) -> tuple[Case, ...]:
    """Read a table of cases from CSV or TOML.

    CSV: a header row with ``case`` and input names, then one row a case; an
    empty cell keeps the base input. Values are read as the type of the
    template's default (a number where the default is a number, else text).
    TOML: one ``[[case]]`` table a case, with ``name`` and the inputs it
    changes. Title-block fields (``revision`` ...) may be changed too.

    Raises
    ------
    InputsError
        Unreadable file, no cases, a bad or repeated case name, a name that is
        not one of the template's parameters.
    """
    from calckit.workflow.inputs import TITLE_FIELDS

    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputsError("the cases file does not exist", where=str(path), do="Check the path") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputsError(
            f"cannot read the cases file ({exc})", where=str(path), do="Check the path"
        ) from None
    known = {**{name: "" for name in TITLE_FIELDS}, **template.parameters}
    cases: list[Case] = []
    seen: set[str] = set()
    if path.suffix.lower() == ".csv":
        rows = list(csv.reader(io.StringIO(text)))
        rows = [row for row in rows if any(cell.strip() for cell in row)]
        if not rows or [c.strip() for c in rows[0]][:1] != ["case"]:
            raise InputsError(
                'the first row must be a header starting with "case"',
                where=f"{path}, line 1",
                do="Write case,<input>,<input>... then one row a case",
            )
        header = [c.strip() for c in rows[0]]
        _check_names(header[1:], known, path, lambda name: 1)
        for number, row in enumerate(csv.reader(io.StringIO(text)), start=1):
            if number == 1 or not any(cell.strip() for cell in row):
                continue
            where = f"{path}, line {number}"
            if len(row) != len(header):
                raise InputsError(
                    f"the row has {len(row)} cells but the header has {len(header)}",
                    where=where,
                    do="Give every row one cell per column (leave a cell empty to keep the base input)",
                )
            name = _check_case_name(row[0].strip(), where, seen)
            values, wheres = {}, {}
            for key, cell in zip(header[1:], row[1:], strict=True):
                if cell.strip():
                    place = f"{path}, line {number} (case {name}), {key}"
                    values[key] = _case_value(cell, known[key], place)
                    wheres[key] = place
            cases.append(Case(name, values, wheres))
    elif path.suffix.lower() == ".toml":
        try:
            data = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise InputsError(
                f"the cases file is not valid TOML: {exc}", where=str(path), do="Check the line named"
            ) from None
        tables = data.get("case")
        if set(data) - {"case"} or not isinstance(tables, list):
            raise InputsError(
                "expected only [[case]] tables",
                where=str(path),
                do='Write one [[case]] table a case, with name = "..." and the inputs it changes',
            )
        lines = text.splitlines()
        starts = [n for n, line in enumerate(lines, start=1) if line.strip().startswith("[[case]]")]
        for index, table in enumerate(tables):
            start = starts[index] if index < len(starts) else None
            where = f"{path}, line {start}" if start else str(path)
            name = _check_case_name(table.get("name"), where, seen)
            keys = [key for key in table if key != "name"]
            _check_names(keys, known, path, lambda key, s=start: _line_after(lines, s, key))
            values, wheres = {}, {}
            for key in keys:
                value = table[key]
                line = _line_after(lines, start, key)
                place = (
                    f"{path}, line {line} (case {name}), {key}" if line else f"{path} (case {name}), {key}"
                )
                if isinstance(value, float) and not math.isfinite(value):
                    raise InputsError(
                        f"the value {value} is not a finite number", where=place, do="Give a finite number"
                    )
                if not isinstance(value, str | int | float | bool):
                    raise InputsError(
                        f"a {type(value).__name__} value cannot be an input",
                        where=place,
                        do='Give text with a unit ("250 kg"), a number or true/false',
                    )
                values[key], wheres[key] = value, place
            cases.append(Case(name, values, wheres))
    else:
        raise InputsError(
            f"cannot read cases from a {path.suffix or 'file without extension'}",
            where=str(path),
            do="Give a .csv or a .toml table of cases",
        )
    if not cases:
        raise InputsError(
            "the cases file holds no cases", where=str(path), do="Add one row or [[case]] a case"
        )
    return tuple(cases)


def _line_after(lines: Sequence[str], start: int | None, key: str) -> int | None:
    if not start:
        return None
    pattern = re.compile(r"\s*" + re.escape(key) + r"\s*=")
    for number in range(start, len(lines) + 1):
        line = lines[number - 1]
        if number > start and line.strip().startswith("["):
            return None
        if pattern.match(line):
            return number
    return None


def _check_names(names: Sequence[str], known: Mapping[str, Any], path: Path, line_of: Callable) -> None:
    import difflib

    from calckit.workflow.inputs import OPTIONAL_TITLE_FIELDS

    for name in names:
        if name not in known:
            close = difflib.get_close_matches(name, list(known), n=1)
            hint = f'Did you mean "{close[0]}"? ' if close else ""
            line = line_of(name)
            raise InputsError(
                f'unknown input "{name}"',
                where=f"{path}, line {line}" if line else str(path),
                do=f"{hint}The template's inputs are {', '.join(n for n in known if n not in OPTIONAL_TITLE_FIELDS)}",
            )


def default_workers() -> int:
    """The number of cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


async def _build_kept(template: Template, *args: Any, **kwargs: Any) -> BuildResult:
    """Build in this worker's kept kernel: started and warmed up on the first case, then reset each case.

    A kernel that the reset cannot bring back to its warmed-up state, that
    timed out, died or failed in a way other than a cell's error, is killed
    and replaced by a new one.
    """
    if kwargs.pop("once", False):  # no kernel kept: start one, use it, kill it
        kernel = await _start_kernel()
        try:
            await kernel.warm_up()
            return await _build_in(kernel, template, *args, **kwargs)
        finally:
            await kernel.aclose()
    kernel = getattr(_LOCAL, "kernel", None)
    for attempt in (1, 2):
        if kernel is None or not kernel.healthy:
            if kernel is not None:
                await _forget(kernel)
            kernel = await _start_kernel()
            _LOCAL.kernel = kernel
            _KEPT.append(kernel)
            await kernel.warm_up()
        try:
            return await _build_in(kernel, template, *args, **kwargs)
        except _ResetError:
            kernel.healthy = False
            if attempt == 2 or kernel.cases == 0:  # a new kernel that cannot be reset: give up
                raise
            # an earlier case changed what a reset cannot undo: the case runs in a new kernel
        finally:
            if not kernel.healthy:
                await _forget(kernel)
                _LOCAL.kernel = None
    raise AssertionError("unreachable")


async def _forget(kernel: _Kernel) -> None:
    if kernel in _KEPT:
        _KEPT.remove(kernel)
    await kernel.aclose()


def _run_case(
    template_path: str,
    assignments: dict[str, Any],
    wheres: dict[str, str],
    inputs_label: str,
    folder: str,
    name: str,
    pdf: bool,
    overwrite: bool,
    sources: dict[str, str] | None = None,
) -> CaseResult:
    """Build one case; never raises for a case that fails (runs in a worker)."""
    started = time.monotonic()
    try:
        template = load_template(template_path)
        out = Path(folder)
        _check_out_folder(out)
        held = _held_fingerprint(out, template.name)
        options = {"pdf": pdf, "overwrite": overwrite, "timeout": CELL_TIMEOUT_S, "started": started}
        options["sources"] = sources
        options["once"] = _loop_running()  # a kept kernel lives on this thread's own loop; here it cannot
        result = _run_sync(
            lambda: _build_kept(template, assignments, wheres, inputs_label, out, held, **options)
        )
    except CalcError as exc:
        return CaseResult(name, False, folder, str(exc), None, time.monotonic() - started)
    except Exception as exc:  # a bug must not stop the other cases
        return CaseResult(
            name,
            False,
            folder,
            f"internal error: {type(exc).__name__}: {exc}",
            None,
            time.monotonic() - started,
        )
    return CaseResult(name, True, folder, "", result.record, result.seconds)


def run_batch(
    template: str | os.PathLike,
    cases: str | os.PathLike,
    out: str | os.PathLike,
    *,
    inputs: str | os.PathLike | None = None,
    executor: cf.Executor | None = None,
    workers: int | None = None,
    pdf: bool = False,
    overwrite: bool = False,
    progress: Callable[[int, int, CaseResult], None] | None = None,
) -> BatchResult:
    """Build one sheet per case of a table, in parallel, and a summary of them.

    Each case's inputs are the base inputs file's with the case's values put
    over them. Each sheet goes to ``<out>/<case>/``; ``<out>/summary.csv`` and
    ``<out>/summary.html`` list every case with its key results and check
    verdicts. A failing case is reported in the summary and does not stop the
    others.

    Parameters
    ----------
    template : str or path
        A template notebook, or the name of a bundled template.
    cases : str or path
        The table of cases: CSV (a ``case`` column, then input columns) or TOML
        (``[[case]]`` tables with ``name``).
    out : str or path
        The output folder; created if missing.
    inputs : str or path, optional
        The base inputs file the cases change; without it, the template's own values.
    executor : concurrent.futures.Executor, optional
        Where the cases run. By default a process pool of ``workers``
        processes; a Dask client's ``get_executor()`` also works.
    workers : int, optional
        Processes of the default pool; by default one per available core.
    pdf : bool
        Also print each sheet to PDF.
    overwrite : bool
        Replace a summary already in the output folder, and sheets in the
        cases' folders that differ from what the batch writes (see
        :func:`build_sheet`).
    progress : callable, optional
        Called as ``progress(done, total, case_result)`` after each case.

    Returns
    -------
    BatchResult

    Raises
    ------
    InputsError
        The base inputs or the cases cannot be read, or name inputs the
        template does not have (checked before any case runs).
    OverwriteError
        The output folder holds a summary already (checked before any case
        runs).
    """
    from calckit.workflow.inputs import check_keys, read_inputs

    tmpl = load_template(template)
    base = read_inputs(inputs) if inputs is not None else None
    table = read_cases(cases, tmpl)
    out = Path(out)
    _check_out_folder(out)
    if workers is not None and workers < 1:
        raise InputsError(f"{workers} workers cannot run anything", where="workers", do="Give 1 or more")
    _check_summaries(out, overwrite)
    base_values = _prepared(tmpl, base) if base is not None else dict(tmpl.parameters)
    base_wheres = {name: base.where(name) for name in tmpl.parameters} if base is not None else {}
    base_sources = dict(base.sources) if base is not None else {}
    if base is not None:  # unknown names only: a case may give what the base leaves out
        check_keys(base, tmpl.parameters, path=base.path, optional=tmpl.parameters)
    cases_label = Path(cases).name
    jobs = []
    for case in table:
        values = {**base_values, **case.values}
        missing = [name for name in tmpl.inputs if name not in values]
        if missing:
            raise InputsError(
                f"case {case.name} gives no value for {', '.join(missing)}",
                where=str(cases),
                do="Give it in the base inputs file (--inputs) or in the case",
            )
        wheres = {**base_wheres, **case.wheres}
        label = (
            f"{base.path.name} with case {case.name} of {cases_label}"
            if base
            else f"case {case.name} of {cases_label}"
        )
        # a source of the base file stays with its value: an input the case changes has none
        sources = {n: s for n, s in base_sources.items() if n not in case.values}
        jobs.append(
            (str(tmpl.path), values, wheres, label, str(out / case.name), case.name, pdf, overwrite, sources)
        )

    own = executor is None
    if own:
        count = min(workers or default_workers(), len(jobs))
        executor = cf.ProcessPoolExecutor(max_workers=count, mp_context=multiprocessing.get_context("spawn"))
    results: dict[str, CaseResult] = {}
    try:
        futures = {executor.submit(_run_case, *job): job for job in jobs}
        for done, future in enumerate(cf.as_completed(futures), start=1):
            job = futures[future]
            try:
                result = future.result()
            except Exception as exc:  # the worker itself broke (killed, unpicklable ...)
                result = CaseResult(job[5], False, job[4], f"the worker failed: {type(exc).__name__}: {exc}")
            results[result.name] = result
            if progress is not None:
                progress(done, len(jobs), result)
    finally:
        if own:
            executor.shutdown(wait=True, cancel_futures=True)
    ordered = tuple(results[case.name] for case in table)
    csv_path, html_path = _write_summary(out, tmpl, ordered, overwrite=overwrite)
    return BatchResult(out, ordered, csv_path, html_path)


# ---------------------------------------------------------------------------
# The summary of a batch


def _summary_columns(results: Sequence[CaseResult]) -> tuple[list[str], list[tuple[str, str]]]:
    checks: list[str] = []
    quantities: list[tuple[str, str]] = []
    for result in results:
        if not result.record:
            continue
        for check in result.record.get("checks", []):
            if check["name"] not in checks:
                checks.append(check["name"])
        for item in result.record.get("results", []):
            key = (item["name"], item.get("unit", ""))
            if item.get("value") is not None and key not in quantities:
                quantities.append(key)
    return checks, quantities


def _summary_rows(results: Sequence[CaseResult]) -> tuple[list[str], list[list[Any]]]:
    checks, quantities = _summary_columns(results)
    header = ["case", "status", "checks met"]
    for name in checks:
        header += [f"{name}: verdict", f"{name}: margin %"]
    header += [f"{name} [{unit}]" if unit else name for name, unit in quantities]
    header += ["message"]
    rows = []
    for result in results:
        record = result.record or {}
        by_check = {c["name"]: c for c in record.get("checks", [])}
        by_result = {(r["name"], r.get("unit", "")): r for r in record.get("results", [])}
        summary = record.get("summary")
        row: list[Any] = [
            result.name,
            result.status,
            f"{summary['met']} of {summary['checks']}" if summary else "",
        ]
        for name in checks:
            check = by_check.get(name)
            row += [check["verdict"], check["margin_percent"]] if check else ["", ""]
        for key in quantities:
            item = by_result.get(key)
            row.append(item["value"] if item else "")
        row.append(result.message)
        rows.append(row)
    return header, rows


_SUMMARIES = ("summary.csv", "summary.html")


def _check_summaries(out: Path, overwrite: bool) -> None:
    """Refuse a batch whose summary would replace one in the folder (before any case runs)."""
    for name in _SUMMARIES:
        if (out / name).is_dir():
            raise BuildError(
                "a folder stands where the batch writes its summary",
                where=str(out / name),
                do="Batch into another folder",
            )
    held = [name for name in _SUMMARIES if (out / name).exists()]
    if held and not overwrite:
        raise OverwriteError(
            f"the output folder already holds a batch summary ({', '.join(held)})",
            where=str(out / held[0]),
            do="Batch into another folder, or pass overwrite=True (--overwrite) to replace it; "
            "no case was run",
        )


def write_text_file(path: str | os.PathLike, text: str, *, overwrite: bool = False) -> Path:
    """Write *text* to *path* whole (a temporary file, then a rename); an existing file only with *overwrite*.

    Without *overwrite* the file is created only if the name is still free
    when the rename happens (a hard link where the file system has them), so
    that a file that appeared meanwhile is not replaced either.

    Raises
    ------
    OverwriteError
        The file exists and *overwrite* is false; nothing is written.
    """
    return _write_file(Path(path), text.encode("utf-8"), overwrite=overwrite)


def _write_file(path: Path, data: bytes, *, overwrite: bool) -> Path:
    refused = OverwriteError(
        "the file exists already",
        where=str(path),
        do="Choose another name, or pass overwrite=True (--overwrite) to replace it; nothing was written",
    )
    if not overwrite and path.exists():
        raise refused
    fd, tmp = tempfile.mkstemp(prefix=".calckit-", suffix=path.suffix, dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        os.chmod(tmp, _file_mode())  # temporary files are private; what is written is not
        if overwrite:
            os.replace(tmp, path)
            return path
        try:
            os.link(tmp, path)
        except FileExistsError:
            raise refused from None
        except OSError:  # no hard links here: the check above has to do
            if path.exists():
                raise refused from None
            os.replace(tmp, path)
    finally:
        Path(tmp).unlink(missing_ok=True)
    return path


def _write_summary(
    out: Path, template: Template, results: Sequence[CaseResult], *, overwrite: bool = False
) -> tuple[Path, Path]:
    from calckit.core.units import fmt_number
    from calckit.render.page import Html, escape, html_page, table

    out.mkdir(parents=True, exist_ok=True)
    header, rows = _summary_rows(results)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows([[repr(c) if isinstance(c, float) else c for c in row] for row in rows])
    csv_path = write_text_file(out / "summary.csv", buffer.getvalue(), overwrite=overwrite)

    def shown(column: str, cell: Any) -> Any:
        if isinstance(cell, float):
            return f"{cell:+.1f}" if column.endswith("margin %") else fmt_number(cell, 4)
        if cell == "not met":
            return Html('<strong class="verdict verdict-not-met">NOT MET</strong>')
        if cell == "failed":
            return Html("<strong>failed</strong>")
        if column == "case" and isinstance(cell, str):
            return Html(f'<a href="{escape(cell)}/{escape(template.name)}.html">{escape(cell)}</a>')
        return cell

    html_rows = [[shown(h, c) for h, c in zip(header, row, strict=True)] for row in rows]
    built = sum(r.ok for r in results)
    body = (
        f"<h1>Batch of {_count(len(results), 'case')}: {escape(template.name)}</h1>"
        f"<p>{built} built, {len(results) - built} failed. Each case's sheet is in its own folder; "
        "margins are in percent of the limit (in percentage points where the checked value is "
        "itself a percentage), positive when the check is met.</p>" + table(header, html_rows, cls="checks")
    )
    page = html_page(f"Batch summary: {template.name}", body, footer_left=template.name)
    html_path = write_text_file(out / "summary.html", page, overwrite=overwrite)
    return csv_path, html_path


def _count(number: int, noun: str) -> str:
    """``"1 case"``, ``"3 cases"``."""
    return f"{number} {noun}" if number == 1 else f"{number} {noun}s"


# ---------------------------------------------------------------------------
# Starting a calculation, and the demonstration


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    return json.dumps(value, ensure_ascii=False)


def inputs_text(template: Template) -> str:
    """An inputs file (TOML) holding the template's own values, to start from."""
    from calckit.workflow.inputs import TITLE_FIELDS

    lines = [f"# Inputs for {template.path.name}: change the values, keep the names.", ""]
    lines += [
        f"{name} = {_toml_value(value)}"
        for name, value in template.parameters.items()
        if name not in TITLE_FIELDS
    ]
    title = [(name, value) for name, value in template.parameters.items() if name in TITLE_FIELDS]
    if title:
        lines += ["", "[sheet]"] + [f"{name} = {_toml_value(value)}" for name, value in title]
    return "\n".join(lines) + "\n"


def new_calculation(template: str, dest: str | os.PathLike) -> tuple[Path, Path]:
    """Copy a bundled template to start a new calculation, with an inputs file of its values.

    Writes ``DEST`` (a notebook; a folder gets ``<template>.ipynb`` inside) and
    an inputs file of the same name ending in ``.toml``. Refuses to replace
    either.

    Parameters
    ----------
    template : str
        A bundled template's name, or a template notebook's path.
    dest : str or path
        The new notebook, or a folder to put it in.

    Returns
    -------
    (Path, Path)
        The notebook and the inputs file written.

    Raises
    ------
    OverwriteError
        Either file exists already.
    """
    tmpl = load_template(template)
    dest = Path(dest)
    if dest.is_dir() or str(dest).endswith(("/", os.sep)):
        dest = dest / tmpl.path.name
    elif dest.suffix != ".ipynb":
        dest = dest.with_name(dest.name + ".ipynb")
    inputs = dest.with_suffix(".toml")
    for path in (dest, inputs):
        if path.exists():
            raise OverwriteError(
                "the file exists already", where=str(path), do="Choose another name; nothing was written"
            )
    dest.parent.mkdir(parents=True, exist_ok=True)
    _write_file(dest, tmpl.path.read_bytes(), overwrite=False)
    _write_file(inputs, inputs_text(tmpl).encode("utf-8"), overwrite=False)
    return dest, inputs


@dataclasses.dataclass(frozen=True)
class Demo:
    """One demonstration sheet: sub-folder name, bundled template, bundled inputs file."""

    name: str
    template: str
    inputs: Path


def demos() -> tuple[Demo, ...]:
    """The demonstration sheets listed in the bundled ``examples/demos.toml``."""
    folder = _examples_folder()
    data = tomllib.loads((folder / "demos.toml").read_text(encoding="utf-8"))
    return tuple(Demo(d["name"], d["template"], folder / d["inputs"]) for d in data.get("demo", []))


def run_demo(
    out: str | os.PathLike, *, pdf: bool = False, overwrite: bool = False
) -> list[tuple[Demo, BuildResult]]:
    """Build the bundled example sheets into sub-folders of an output folder.

    The examples are an invented scenario, the Harrow Creek water-treatment
    works; each is a bundled template built from a bundled inputs file.

    Parameters
    ----------
    out : str or path
        The output folder; each example goes to its own sub-folder.
    pdf : bool
        Also print each sheet to PDF (needs Chromium).
    overwrite : bool
        Replace sheets built from other inputs.
    """
    out = Path(out)
    return [
        (demo, build_sheet(demo.template, demo.inputs, out / demo.name, pdf=pdf, overwrite=overwrite))
        for demo in demos()
    ]
