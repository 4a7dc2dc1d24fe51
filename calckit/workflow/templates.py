"""Templates: what a template notebook holds, reading one, and what its cells mean to a build.

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
   the template uses these values. A parameter whose line ends in a comment
   starting ``# file`` (``record_file = "../examples/b402.csv"  # file: the record``)
   names a data file: the build reads the inputs file's value as a path relative to
   the inputs file's folder, refuses a file that is not there (at its line), and
   hands the template the absolute path; the template's own value is a path from
   the templates folder, for runs by hand.
2. **The sheet.** The rest of the notebook builds a :class:`calckit.Sheet`
   named ``sheet``, with ``template=template_text`` so that the sheet's
   fingerprint covers the template, with ``sources=input_sources``,
   ``tolerances=input_tolerances``, ``sampling=input_sampling`` and
   ``inputs_file=inputs_file``. A cell *before* the parameters cell sets the
   defaults ``template_text = ""``, ``inputs_file = "..."`` (used as the inputs'
   source), ``input_sources = {}``, ``input_tolerances = {}`` and
   ``input_sampling = {}``, so that the template also runs by hand.
   The template imports only ``calckit`` (``import calckit as ck``) and general
   libraries. Inputs go on the sheet under their parameter names
   (``sheet.given("mass", mass, "m", "Moving mass", "mass")``), so that an error
   about an input is reported at its line in the inputs file, and so that a
   source the inputs file gives for an
   input (``mass = { value = "1850 kg", source = "Vendor drawing ..." }``, see
   :mod:`calckit.workflow.inputs`) takes the place of ``inputs_file`` in the sheet's
   Source column.
3. **The build** (:func:`calckit.workflow.build.build_sheet`, ``calckit build``) reads and checks the
   inputs file against the parameters (unknown names with the closest known
   one, missing names), then puts a new code cell tagged ``inputs-from-file``
   right after the parameters cell. That cell assigns every input (the value
   alone, also for an input written with a source), the title-block fields the
   template declares, ``inputs_file`` (the inputs file's name),
   ``template_text`` (a SHA-256 of the template's cell sources, so that
   metadata Jupyter rewrites on save does not count) and, when the inputs file
   gives sources, ``input_sources`` (input name -> source, for those inputs
   only), and when it gives tolerance bands, ``input_tolerances`` (input name ->
   the band as written), and when it has a ``[sampling]`` table, ``input_sampling``
   (the sampled study asked for, :mod:`calckit.workflow.sampling_table`). A source
   given for an input that the built sheet does not show, or not shown as its source
   (a template that does not pass ``input_sources`` to its sheet), stops the build
   before anything is written: no source is dropped without a word; nor is a band
   (``input_tolerances``), nor a sampled study (``input_sampling``). The notebook runs in
   a new ``python3`` kernel of the interpreter calckit runs in (see
   :mod:`calckit.workflow.kernels`), with a temporary folder as its working folder. The kernel is started
   first; the template and the inputs are read and checked while it starts and
   imports calckit, and a bad input still stops the build before any cell
   runs. The template itself saves nothing:
   after its last cell the build runs one more cell, tagged ``save-sheet``,
   that calls :func:`~calckit.workflow.build.save_built_sheet` on ``sheet`` to write ``<stem>.json``,
   ``<stem>.html`` and, with ``pdf=True``, ``<stem>.pdf`` into the temporary
   folder. The executed notebook (without that last cell) is written beside them
   as ``<stem>.ipynb``. Only when everything has been written are the files moved
   into the output folder, the JSON record last; a failed build leaves no sheet
   behind.

A cell that fails stops the build with a :class:`~calckit.errors.CellError`
naming the template's cell (counted from 1 over all cells of the template), the
line and its source, the error's type and its message. A calckit error whose
place is an input's name (``mass: must be greater than zero ...``) is reported
at that input's file and line instead. A calckit error counts as the user's
(``CellError.user_error``), except an :class:`~calckit.errors.InternalError`,
which is a defect of calckit.

This module holds the tags, :class:`Template` and :func:`load_template`, the
bundled templates, the cell the build injects after the parameters cell
(:func:`inputs_cell_source`), and the reading of a failed cell as a
:class:`~calckit.errors.CellError` (:func:`cell_error`). The build itself is
:mod:`calckit.workflow.build`.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import warnings
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from calckit import errors
from calckit.core.characters import lookalike
from calckit.errors import BuildError, CellError, InputsError

__all__ = [
    "PARAMETERS_TAG",
    "INPUTS_TAG",
    "SAVE_TAG",
    "USER_ERRORS",
    "Template",
    "resource_folder",
    "bundled_templates",
    "find_template",
    "cell_source",
    "cell_tags",
    "load_template",
    "inputs_cell_source",
    "cell_error",
]

#: Tag of the template's parameters cell.
PARAMETERS_TAG = "parameters"
#: Tag of the cell the build puts after the parameters cell.
INPUTS_TAG = "inputs-from-file"
#: Tag of the cell the build runs last to save the sheet.
SAVE_TAG = "save-sheet"
#: Names of the errors that, raised in a template's cell, are the user's (bad input, a model
#: calckit refuses): all of calckit's own but :class:`~calckit.errors.InternalError`, a defect of calckit.
USER_ERRORS = frozenset(errors.__all__) - {"InternalError"}


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
    optional: frozenset[str] = frozenset()
    files: frozenset[str] = frozenset()

    @property
    def inputs(self) -> list[str]:
        """Parameter names an inputs file must give (all but the optional ones)."""
        return [name for name in self.parameters if name not in self.optional_inputs]

    @property
    def optional_inputs(self) -> frozenset[str]:
        """Names an inputs file may leave out: the optional title-block fields, and the
        parameters whose line in the parameters cell ends in a comment starting
        ``# optional`` (they keep the template's value; e.g. a forcing parameter that
        the forcing of a given inputs file does not use)."""
        from calckit.workflow.inputs import OPTIONAL_TITLE_FIELDS

        return frozenset(OPTIONAL_TITLE_FIELDS) | self.optional


def resource_folder(package: str, fallback: str) -> Path:
    """Folder of a bundled resource package (``calckit.templates``), from an install or the source tree.

    *fallback* is the folder's name in the repository, used when the package
    cannot be imported.
    """
    try:
        from importlib.resources import files

        return Path(str(files(package)))
    except ModuleNotFoundError:
        return Path(__file__).resolve().parents[2] / fallback  # the repository


def bundled_templates() -> dict[str, Path]:
    """The templates that come with calckit, by name (the file's stem).

    Examples
    --------
    >>> "single_mass_harmonic" in bundled_templates()
    True
    """
    return {p.stem: p for p in sorted(resource_folder("calckit.templates", "templates").glob("*.ipynb"))}


def find_template(spec: str | os.PathLike) -> Path:
    """The notebook file of a template given as a path or as a bundled template's name.

    Raises
    ------
    BuildError
        Neither a file nor a bundled template; the message lists the bundled ones.
    """
    path = Path(spec)
    if path.is_file():
        return path
    bundled = bundled_templates()
    name = path.name[: -len(".ipynb")] if path.name.endswith(".ipynb") else path.name
    if str(spec) in (name, f"{name}.ipynb") and name in bundled:
        return bundled[name]
    known = ", ".join(bundled) or "none"
    found = lookalike(str(spec))
    raise BuildError(
        "no such template: it is neither a notebook file nor a bundled template"
        + (f" ({found})" if found else ""),
        where=str(spec),
        do=f"Give the path of a .ipynb file or a bundled template's name ({known})",
    )


def _digest(notebook: Any) -> str:
    cells = [[cell.get("cell_type", ""), cell_source(cell)] for cell in notebook.cells]
    return hashlib.sha256(json.dumps(cells, ensure_ascii=True).encode()).hexdigest()


def cell_source(cell: Any) -> str:
    """A notebook cell's source as one string (nbformat keeps it as a string or a list of lines)."""
    source = cell.get("source", "")
    return "".join(source) if isinstance(source, list) else source


def cell_tags(cell: Any) -> list[str]:
    """A notebook cell's tags."""
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

    path = find_template(template)
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
    tagged = [i for i, cell in enumerate(notebook.cells) if PARAMETERS_TAG in cell_tags(cell)]
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
        parameters = parameters_from_source(cell_source(cell))
    except InputsError as exc:
        raise InputsError(exc.what, where=f"{path}, cell {tagged[0] + 1}, {exc.where}", do=exc.do) from None
    optional = frozenset(
        match.group(1) for match in _OPTIONAL_LINE.finditer(cell_source(cell)) if match.group(1) in parameters
    )
    files = frozenset(
        match.group(1) for match in _FILE_LINE.finditer(cell_source(cell)) if match.group(1) in parameters
    )
    return Template(path, path.stem, notebook, parameters, tagged[0], _digest(notebook), optional, files)


#: A parameter line marked optional: ``name = value  # optional: why``
_OPTIONAL_LINE = re.compile(r"^([A-Za-z_]\w*)\s*=[^#\n]*#\s*optional\b", re.M)
#: A parameter line naming a data file: ``name = "record.csv"  # file: what it holds``
_FILE_LINE = re.compile(r"^([A-Za-z_]\w*)\s*=[^#\n]*#\s*file\b", re.M)


def inputs_cell_source(
    assignments: Mapping[str, Any],
    inputs_label: str,
    digest: str,
    sources: Mapping[str, str] | None = None,
    tolerances: Mapping[str, Mapping[str, str]] | None = None,
    sampling: Mapping[str, Any] | None = None,
) -> str:
    """The source of the cell the build puts after the parameters cell (tagged ``inputs-from-file``).

    It assigns every input (*assignments*, the value alone), ``inputs_file``
    (*inputs_label*), ``template_text`` (the template's *digest*) and, when
    given, ``input_sources`` (input name -> source), ``input_tolerances`` (input
    name -> its band as written, ``{"tolerance": "15 %"}``) and ``input_sampling``
    (the ``[sampling]`` table as read, ``{"samples": 100000, "distribution": "uniform",
    "seed": 2026}``).

    Raises
    ------
    InputsError
        A source or its name is not text.

    Examples
    --------
    >>> print(inputs_cell_source({"mass": "250 kg"}, "p101.toml", "ab12"), end="")
    # Inputs set by calckit build from p101.toml
    mass = '250 kg'
    inputs_file = 'p101.toml'
    template_text = 'calckit template sha256 ab12'
    """
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
    if tolerances:  # left out when there are none: the template's default input_tolerances = {} holds
        bands = {str(n): {str(k): str(v) for k, v in band.items()} for n, band in tolerances.items()}
        text += "input_tolerances = {\n" + "".join(f"    {n!r}: {b!r},\n" for n, b in bands.items()) + "}\n"
    if sampling:  # left out when none is asked for: the template's default input_sampling = {} holds
        text += f"input_sampling = {_sampling_literal(sampling)}\n"
    return text


def _sampling_literal(sampling: Mapping[str, Any]) -> str:
    """``{'samples': 100000, 'distribution': 'uniform', 'seed': 2026}``: the request as a literal, keys in order.

    Raises
    ------
    InputsError
        A value that is not a whole number, a finite float or text (the reader gives no other).
    """
    import math

    for key, value in sampling.items():
        if (
            not isinstance(key, str)
            or isinstance(value, bool)
            or not isinstance(value, int | float | str)
            or (isinstance(value, float) and not math.isfinite(value))
        ):
            raise InputsError(
                f"the sampling's {key!r} is {value!r}, not a number or text",
                where="input sampling",
                do="Give the [sampling] table as the inputs file reads it",
            )
    order = ("samples", "distribution", "seed", "k")
    ordered = sorted(sampling.items(), key=lambda kv: order.index(kv[0]) if kv[0] in order else len(order))
    return "{" + ", ".join(f"{k!r}: {v!r}" for k, v in ordered) + "}"


_ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")
_CELL_LINE = re.compile(r"Cell In\[\d*\],? line (\d+)")
_PLACE = re.compile(r"^([A-Za-z_][A-Za-z0-9_]*): (.*)$", re.DOTALL)


def cell_error(template: Template, executed: Any, wheres: Mapping[str, str], failure: Exception) -> CellError:
    """One readable error from a failed execution: cell, line, source, type and message.

    *executed* is the notebook as run (the injected inputs cell and the save
    cell in it), *wheres* says where each input is written, *failure* is
    nbclient's error. The cell is counted from 1 over the template's own cells.
    The error is the user's (``user_error``) when its type is one of
    :data:`USER_ERRORS`; an :class:`~calckit.errors.InternalError` raised in
    the kernel, or any other type, is not.
    """
    ename = getattr(failure, "ename", type(failure).__name__)
    evalue = str(getattr(failure, "evalue", failure)).strip()
    index, output = None, None
    for i, cell in enumerate(executed.cells):
        for out in cell.get("outputs", []):
            if out.get("output_type") == "error":
                index, output = i, out
    user_error = ename in USER_ERRORS
    if index is None:
        return CellError(f"{ename}: {evalue}", where=template.name, ename=ename, user_error=user_error)
    cell = executed.cells[index]
    if SAVE_TAG in cell_tags(cell):
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
    lines = cell_source(cell).splitlines()
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
