"""Building one sheet: a template and an inputs file in, the sheet's files out, all or nothing.

What a template holds and how the build fills it in is said in
:mod:`calckit.workflow.templates`; the kernel it runs in, in
:mod:`calckit.workflow.kernels`. This module runs the steps (:func:`build_sheet`),
saves the sheet inside the kernel (:func:`save_built_sheet`) and refuses what
would lose a user's work.

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

Every file lands through :func:`calckit.core.files.write_file` (whole, with the
permissions of a new file under the umask); a file of the sheet that appears in
the output folder while the build runs is refused, not replaced.

Examples
--------
>>> result = build_sheet("single_mass_harmonic", "p101.toml", "built/p101")  # doctest: +SKIP
>>> result.html.name  # doctest: +SKIP
'single_mass_harmonic.html'
"""

from __future__ import annotations

import asyncio
import contextlib
import os
import shutil
import time
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from calckit.core.files import write_text
from calckit.errors import BuildError, CalcError, InputsError
from calckit.workflow.built_record import check_sampling, check_sources, check_tolerances, read_built_record
from calckit.workflow.held import (
    SHEET_SUFFIXES,
    check_not_template,
    check_out_folder,
    held_fingerprint,
    refuse_changed,
    refuse_other_sheet,
    same_file,
)
from calckit.workflow.kernels import Kernel, loop_running, run_in_kept_kernel, run_sync, start_kernel
from calckit.workflow.outfolder import FolderLock, move_in, stage_folder
from calckit.workflow.templates import (
    INPUTS_TAG,
    SAVE_TAG,
    Template,
    cell_error,
    find_template,
    inputs_cell_source,
    load_template,
)

if TYPE_CHECKING:  # the real imports are inside the functions: sympy and pint stay out of the CLI's start
    from calckit.workflow.inputs import InputsFile

__all__ = [
    "CELL_TIMEOUT_S",
    "CASE_TIME_LIMIT_S",
    "SHEET_SUFFIXES",
    "BuildResult",
    "save_built_sheet",
    "check_out_folder",
    "held_fingerprint",
    "same_file",
    "prepared_values",
    "build_in_kernel",
    "build_sheet",
    "check_time_limit",
    "place_sheet",
]

#: Seconds one cell may run before the build gives up.
CELL_TIMEOUT_S = 600
#: Seconds the template's cells (and the save) may run in all, for one sheet: a build or a batch case.
CASE_TIME_LIMIT_S = 300
#: The files of a built sheet, by suffix.


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


def save_built_sheet(
    sheet: Any, folder: str, stem: str, *, pdf: bool = False, units: Mapping[str, Any] | None = None
) -> None:
    """Save *sheet* as ``<stem>.json``, ``<stem>.html`` (and ``.pdf``) in *folder*.

    The build runs this in the kernel, in the cell tagged ``save-sheet``, after
    the template's last cell. *units* is the inputs file's ``[units]`` table
    (:meth:`calckit.workflow.units_table.UnitsTable.payload`): the sheet shows its
    results in them (:func:`calckit.sheet.apply_units`).

    Raises
    ------
    BuildError
        The template made no :class:`calckit.Sheet` named ``sheet``.
    """
    from calckit.sheet import Sheet

    if not isinstance(sheet, Sheet):
        got = "nothing" if sheet is None else f"a {type(sheet).__name__}"
        raise BuildError(
            f"the template left {got} in the name sheet, not a calculation sheet",
            where="template",
            do="Build a calckit.Sheet named sheet in the template",
        )
    if units:
        from calckit.sheet import OutputUnits, apply_units

        apply_units(sheet, OutputUnits.of(units.get("system"), units.get("results"), units.get("wheres")))
    base = Path(folder) / stem
    sheet.save(base.with_suffix(".json"), overwrite=True)
    sheet.save(base.with_suffix(".html"), overwrite=True)
    if pdf:
        sheet.save(base.with_suffix(".pdf"), overwrite=True)


def _dead_kernel(kernel: Kernel, template: Template) -> BuildError:
    return BuildError(
        f"the kernel died while running the template (its last words: {kernel.last_words()})",
        where=str(template.path),
        do="Check the template for a crash or a memory blow-up",
    )


async def build_in_kernel(
    kernel: Kernel,
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
    time_limit: float | None = CASE_TIME_LIMIT_S,
    units: Mapping[str, Any] | None = None,
    tolerances: Mapping[str, Mapping[str, str]] | None = None,
    sampling: Mapping[str, Any] | None = None,
) -> BuildResult:
    """Build one sheet in *kernel* (warmed up), which is reset first; the steps of :func:`build_sheet`.

    The caller holds the lock on *out* (:class:`~calckit.workflow.outfolder.FolderLock`),
    so *out* exists and no other build writes into it; the files are staged in it.

    *assignments* are the inputs (see :func:`prepared_values`), *wheres* where
    each is written, *inputs_label* the inputs' name on the sheet, *held* what
    :func:`held_fingerprint` found in *out* before the kernel ran.

    *sources* (input name -> source, from the inputs file) go to the template
    as ``input_sources``; the built sheet must show each of them. *units* (the inputs
    file's ``[units]`` table, as plain data) go to :func:`save_built_sheet`. *tolerances*
    (input name -> band as written) go to the template as ``input_tolerances``; the built
    sheet must show each of them on its input. *sampling* (the inputs file's ``[sampling]``
    table as read) goes to it as ``input_sampling``; the built sheet must show that study.
    """
    import copy

    import nbformat

    stem = template.name
    check_not_template(out, template.path)
    held_any, held_print = held
    if held_any and held_print is None and not overwrite:
        raise refuse_other_sheet(out, stem, held_print)

    notebook = copy.deepcopy(template.notebook)
    injected = nbformat.v4.new_code_cell(
        inputs_cell_source(assignments, inputs_label, template.digest, sources, tolerances, sampling)
    )
    injected.metadata["tags"] = [INPUTS_TAG]
    if "id" in injected and INPUTS_TAG not in {cell.get("id") for cell in notebook.cells}:
        injected.id = INPUTS_TAG  # not a random one: the same inputs give the same notebook
    notebook.cells.insert(template.parameters_cell + 1, injected)

    work = stage_folder(out, stem)
    try:
        saver = nbformat.v4.new_code_cell(
            "# calckit build: save the sheet\n"
            "from calckit.workflow.build import save_built_sheet\n\n"
            f"save_built_sheet(globals().get('sheet'), {str(work)!r}, {stem!r}, pdf={pdf!r}"
            + (f", units={dict(units)!r}" if units else "")
            + ")\n"
        )
        saver.metadata["tags"] = [SAVE_TAG]
        notebook.cells.append(saver)
        await kernel.reset(work)
        try:
            await kernel.run(notebook, timeout, time_limit)
        except CalcError:
            raise
        except Exception as exc:
            from nbclient.exceptions import CellExecutionError, CellTimeoutError, DeadKernelError

            if isinstance(exc, CellExecutionError):
                kernel.healthy = True  # a cell that fails leaves a kernel the reset can clean
                raise cell_error(template, notebook, wheres, exc) from None
            if isinstance(exc, CellTimeoutError):
                raise _timed_out(kernel, template, notebook, timeout, time_limit) from None
            if isinstance(exc, DeadKernelError):
                raise _dead_kernel(kernel, template) from None
            raise
        notebook.cells.pop()  # the save cell is the build's, not the template's
        text = nbformat.writes(notebook)  # as nbformat.write writes it: the text and a final newline
        write_text(work / f"{stem}.ipynb", text if text.endswith("\n") else text + "\n")
        record_path = work / f"{stem}.json"
        record = read_built_record(record_path)
        if sources:
            check_sources(template, record, sources, wheres)
        if tolerances:
            check_tolerances(template, record, tolerances, wheres)
        if sampling:
            check_sampling(template, record, sampling)
        fingerprint = record["fingerprint"]
        place_sheet(work, out, stem, fingerprint, held, overwrite=overwrite)
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


def place_sheet(
    work: Path, out: Path, stem: str, fingerprint: str, held: tuple[bool, str | None], *, overwrite: bool
) -> None:
    """Move the sheet's files from the staging folder *work* into *out*, with the build's refusals.

    The caller holds the lock on *out*; *held* is what :func:`held_fingerprint` found
    there. Without *overwrite* a sheet of another fingerprint is refused, and so is a
    file of the same sheet that differs from the one in *work*; with it, files of the
    replaced sheet that this build does not write are removed. All or nothing, the JSON
    record last (see :func:`calckit.workflow.outfolder.move_in`). A batch's parent calls
    this with the files its worker sent back, written into a staging folder of *out*.
    """
    held_any, held_print = held
    if held_any and not overwrite and held_print != fingerprint:
        raise refuse_other_sheet(out, stem, held_print)
    produced = [s for s in (".ipynb", ".pdf", ".html", ".json") if (work / f"{stem}{s}").exists()]
    present = {s for s in produced if (out / f"{stem}{s}").exists()}
    if not overwrite:  # the same fingerprint: replace only files that hold what this build wrote
        changed = [
            f"{stem}{s}"
            for s in produced
            if s in present and not same_file(out / f"{stem}{s}", work / f"{stem}{s}")
        ]
        if changed:
            raise refuse_changed(out, changed)
    # stale files of the replaced sheet (a PDF not asked for now) go with the move
    stale = [
        f"{stem}{s}"
        for s in SHEET_SUFFIXES
        if overwrite and s not in produced and (out / f"{stem}{s}").exists()
    ]
    # all or nothing, the JSON record last (it marks the sheet complete); a file that was there is
    # replaced (checked above, or overwrite), one that appeared since is refused
    replace = None if overwrite else {f"{stem}{s}" for s in present}
    move_in(work, out, [f"{stem}{s}" for s in produced], remove=stale, replace=replace)


def _timed_out(
    kernel: Kernel, template: Template, notebook: Any, timeout: int, time_limit: float | None
) -> BuildError:
    """The error of a build stopped by its time limit (or a cell's), naming the cell that ran."""
    from calckit.workflow.templates import cell_source

    index = kernel.running
    if index is None or index >= len(notebook.cells):
        place = "the template"
    elif SAVE_TAG in notebook.cells[index].metadata.get("tags", []):
        place = "the save of the sheet (after the template's last cell)"
    elif INPUTS_TAG in notebook.cells[index].metadata.get("tags", []):
        place = "the cell of the inputs"
    else:
        number = index + 1 - (1 if index > template.parameters_cell else 0)
        first = next(
            (line.strip() for line in cell_source(notebook.cells[index]).splitlines() if line.strip()), ""
        )
        place = f"cell {number}" + (f" ({first[:60]!r})" if first else "")
    if kernel.timed_out == "case" and time_limit is not None:
        what = f"the build ran past its time limit of {time_limit:g} s, in {place}; its kernel was stopped"
        do = (
            "Check that cell for a loop that does not end, or give a longer limit (time_limit=, --time-limit)"
        )
    else:
        what = f"{place} ran longer than {timeout} s, the limit of one cell; its kernel was stopped"
        do = "Check that cell for a loop that does not end"
    return BuildError(what, where=str(template.path), do=do + "; nothing was written")


def checked_inputs(tmpl: Template, inputs: str | os.PathLike) -> tuple[Any, dict[str, str], dict[str, Any]]:
    """The inputs file read and checked against *tmpl*: ``(file, wheres, given)``.

    *wheres* says where each parameter is written; *given* is what the file adds to its
    values, as :func:`build_in_kernel`'s keywords: ``sources``, ``units``, ``tolerances``,
    ``sampling``. A build and the watch read their inputs through it.
    """
    from calckit.workflow.inputs import check_keys, read_inputs
    from calckit.workflow.tolerance_table import check_band_names

    file = read_inputs(inputs)
    check_keys(file, tmpl.parameters, path=file.path, optional=tmpl.optional_inputs)
    check_band_names(file)
    wheres = {name: file.where(name) for name in tmpl.parameters}
    given = {
        "sources": dict(file.sources),
        "units": file.units.payload() if file.units.given else None,
        "tolerances": {name: dict(band) for name, band in file.tolerances.items()},
        "sampling": dict(file.sampling) if file.sampling is not None else None,
    }
    return file, wheres, given


def _prepare_build(
    path: Path, inputs: str | os.PathLike, out: Path
) -> tuple[Template, dict[str, Any], dict[str, str], str, tuple[bool, str | None], dict[str, Any]]:
    """The parent's share of a build: read the template and the inputs, check them, look at the output folder.

    The last of what it gives is :func:`checked_inputs`'s *given*.
    """
    tmpl = load_template(path)
    file, wheres, given = checked_inputs(tmpl, inputs)
    held = held_fingerprint(out, tmpl.name)
    return tmpl, prepared_values(tmpl, file), wheres, file.path.name, held, given


async def _build_alone(
    path: Path,
    inputs: str | os.PathLike,
    out: Path,
    *,
    pdf: bool,
    overwrite: bool,
    timeout: int,
    started: float,
    time_limit: float | None,
) -> BuildResult:
    """Start a kernel first; read and check the inputs while it starts and imports; then build."""
    kernel = await start_kernel()
    warm = asyncio.ensure_future(kernel.warm_up())
    try:
        prepare = asyncio.get_running_loop().run_in_executor(None, _prepare_build, path, inputs, out)
        await asyncio.wait({prepare, warm}, return_when=asyncio.FIRST_EXCEPTION)
        if prepare.done() and prepare.exception() is not None:
            warm.cancel()  # bad inputs: no need to wait for the kernel
        template, assignments, wheres, label, held, given = await prepare
        await warm
        return await build_in_kernel(
            kernel, template, assignments, wheres, label, out, held,
            pdf=pdf, overwrite=overwrite, timeout=timeout, started=started, time_limit=time_limit, **given,
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


async def _build_kept(
    path: Path,
    inputs: str | os.PathLike,
    out: Path,
    *,
    pdf: bool,
    overwrite: bool,
    timeout: int,
    started: float,
    time_limit: float | None,
) -> BuildResult:
    """:func:`_build_alone`'s build in this thread's kept kernel (reset before the sheet)."""
    template, assignments, wheres, label, held, given = _prepare_build(path, inputs, out)

    async def job(kernel: Kernel) -> BuildResult:
        return await build_in_kernel(
            kernel, template, assignments, wheres, label, out, held,
            pdf=pdf, overwrite=overwrite, timeout=timeout, started=started, time_limit=time_limit, **given,
        )  # fmt: skip

    return await run_in_kept_kernel(job)


def prepared_values(
    template: Template, inputs: InputsFile | None, overrides: Mapping[str, Any] | None = None
) -> dict[str, Any]:
    """The values the build assigns: the inputs file's for the template's parameters, then *overrides*.

    A parameter the template marks ``# file`` becomes the absolute path of the file it
    names, read relative to the inputs file's folder (see :mod:`calckit.workflow.templates`).

    Raises
    ------
    InputsError
        A file named by a ``# file`` parameter is not there.
    """
    values: dict[str, Any] = {}
    if inputs is not None:
        values.update(inputs.assignments(template.parameters))
    if overrides:
        values.update(overrides)
    if inputs is not None:
        for name in sorted(template.files & set(values)):
            values[name] = _data_file(values[name], inputs, name)
    return values


def _data_file(value: Any, inputs: InputsFile, name: str) -> str:
    """The absolute path of the data file *value* names, relative to the inputs file's folder."""
    if not isinstance(value, str) or not value.strip():
        raise InputsError(
            f"{value!r} is not the name of a file",
            where=inputs.where(name),
            do="Give the file's name as text, relative to the inputs file's folder",
        )
    path = Path(value)
    if not path.is_absolute():
        path = inputs.path.parent / path
    if not path.is_file():
        raise InputsError(
            f'the file "{value}" is not in {inputs.path.parent.resolve()}',
            where=inputs.where(name),
            do="Put the file next to the inputs file, or give its path relative to the inputs file",
        )
    return str(path.resolve())


def build_sheet(
    template: str | os.PathLike,
    inputs: str | os.PathLike,
    out: str | os.PathLike,
    *,
    pdf: bool = False,
    overwrite: bool = False,
    timeout: int = CELL_TIMEOUT_S,
    time_limit: float | None = CASE_TIME_LIMIT_S,
    kept_kernel: bool = False,
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
    time_limit : float or None
        Seconds the template's cells may run in all, the save of the sheet
        included (not the kernel's start), 300 by default; past it the build
        stops with an error naming the cell that ran, and its kernel is
        killed. None: no limit but the cells'.
    kept_kernel : bool
        Build in this thread's kept kernel, reset before the sheet as a batch
        worker's is, instead of a fresh one (``calckit demo`` builds its sheets
        one after another in one kernel).

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
        this sheet that differ from what the build writes, or another build is
        writing into it now.
    StorageError
        The output folder cannot be written in (read-only, not the user's) or
        the disk is full; the files there are as they were.
    BuildError
        No such template, the output folder is the template's own, or the
        kernel could not run it.
    """
    started = time.monotonic()
    path = find_template(template)
    out = Path(out)
    check_out_folder(out)
    check_not_template(out, path)
    check_time_limit(time_limit)
    once = loop_running()  # a kept kernel lives on this thread's own loop; inside a running one it cannot
    build = _build_kept if kept_kernel and not once else _build_alone
    with FolderLock(out):  # the whole build: what the folder holds is read and checked under it
        return run_sync(
            lambda: build(
                path,
                inputs,
                out,
                pdf=pdf,
                overwrite=overwrite,
                timeout=timeout,
                started=started,
                time_limit=time_limit,
            )  # fmt: skip
        )


def check_time_limit(time_limit: float | None) -> None:
    """Refuse a time limit that is not a number of seconds above 0 (None: no limit)."""
    import math

    if time_limit is not None and not (
        isinstance(time_limit, int | float) and math.isfinite(time_limit) and time_limit > 0
    ):
        raise InputsError(
            f"a time limit of {time_limit!r} s lets nothing run",
            where="time_limit",
            do="Give a number of seconds above 0 (or None for no limit)",
        )
