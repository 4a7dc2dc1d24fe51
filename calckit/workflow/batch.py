"""Batches: one sheet per case of a table, run in parallel, and a summary of them all.

:func:`run_batch` builds one sheet per case of a table into ``<out>/<case>/``
and writes ``summary.csv`` and ``summary.html``; a summary already in the
folder (another batch's, or one the user edited) is refused before any case
runs unless ``overwrite=True``.

Each case goes to the executor as self-contained data
(:class:`~calckit.workflow.case_job.CaseJob`: the template's text, the case's
inputs, the bytes of the data files they name, the options), and comes back as
the built files' bytes and the sheet's record; the batch writes them into the
case's folder itself, with a build's refusals and its all-or-nothing move
(:func:`calckit.workflow.build.place_sheet`). So the workers need calckit and
ipykernel, and no file system shared with the batch. By default the cases run
in a process pool (processes started by *spawn*, one per available core, at
most one per case); any executor whose ``submit`` returns futures with
``add_done_callback`` and ``result`` can be passed instead, a
``dask.distributed`` client among them::

    from dask.distributed import Client
    client = Client("tcp://scheduler:8786")
    run_batch("single_mass_harmonic", "cases.csv", "built/", executor=client)

A case that fails is recorded in the summary with its message; the others go
on, also when a worker process dies (:mod:`calckit.workflow.dispatch` says
how the case that killed it is found). Each worker (process, or thread of
one) keeps one kernel for the cases it runs. How it keeps its kernel from case
to case, and why a case cannot see the one before it, is said in
:mod:`calckit.workflow.kernels` and :mod:`calckit.workflow.kernel_state`.
"""

from __future__ import annotations

import csv
import io
import os
import shutil
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from calckit.core.files import write_text
from calckit.errors import BuildError, CalcError, InputsError, OverwriteError
from calckit.workflow.build import CASE_TIME_LIMIT_S, CELL_TIMEOUT_S, check_time_limit, prepared_values
from calckit.workflow.case_job import BuiltCase, CaseJob, data_payload
from calckit.workflow.cases import read_cases
from calckit.workflow.dispatch import run_jobs
from calckit.workflow.held import check_out_folder, held_fingerprint
from calckit.workflow.outfolder import FolderLock
from calckit.workflow.templates import Template, load_template

__all__ = ["CaseResult", "BatchResult", "default_workers", "run_batch", "counted"]


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


def default_workers() -> int:
    """The number of cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _place_case(out: Path, stem: str, template_path: Path, built: BuiltCase, overwrite: bool) -> CaseResult:
    """Write a case's files, sent back as bytes by its worker, into its folder: the build's refusals, all or nothing."""
    from calckit.core.files import write_file
    from calckit.workflow.build import place_sheet
    from calckit.workflow.held import check_not_template
    from calckit.workflow.outfolder import stage_folder

    folder = out / built.name
    if not built.ok:
        return CaseResult(built.name, False, str(folder), built.message, None, built.seconds)
    try:
        check_out_folder(folder)
        check_not_template(folder, template_path)
        with FolderLock(folder):
            held = held_fingerprint(folder, stem)
            work = stage_folder(folder, stem)
            try:
                for suffix, data in built.files.items():
                    write_file(work / f"{stem}{suffix}", data)
                place_sheet(work, folder, stem, built.record["fingerprint"], held, overwrite=overwrite)
            finally:
                shutil.rmtree(work, ignore_errors=True)
    except CalcError as exc:
        return CaseResult(built.name, False, str(folder), str(exc), None, built.seconds)
    return CaseResult(built.name, True, str(folder), "", built.record, built.seconds)


def run_batch(
    template: str | os.PathLike,
    cases: str | os.PathLike,
    out: str | os.PathLike,
    *,
    inputs: str | os.PathLike | None = None,
    executor: Any = None,
    workers: int | None = None,
    pdf: bool = False,
    overwrite: bool = False,
    progress: Callable[[int, int, CaseResult], None] | None = None,
    time_limit: float | None = CASE_TIME_LIMIT_S,
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
    executor : concurrent.futures.Executor or dask.distributed.Client, optional
        Where the cases run: any object whose ``submit`` returns futures with
        ``add_done_callback`` and ``result``. By default a process pool of
        ``workers`` processes. The workers need no shared file system.
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
    time_limit : float or None
        Seconds one case's cells may run in all (see :func:`build_sheet`), 300
        by default; a case past it fails with a message naming its cell, its
        kernel is killed and the other cases go on.

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
    check_out_folder(out)
    check_time_limit(time_limit)
    if workers is not None and workers < 1:
        raise InputsError(f"{workers} workers cannot run anything", where="workers", do="Give 1 or more")
    _check_summaries(out, overwrite)
    base_values = prepared_values(tmpl, base) if base is not None else dict(tmpl.parameters)
    base_wheres = {name: base.where(name) for name in tmpl.parameters} if base is not None else {}
    base_sources = dict(base.sources) if base is not None else {}
    units = base.units.payload() if base is not None and base.units.given else None
    sampling = dict(base.sampling) if base is not None and base.sampling is not None else None
    if base is not None:  # unknown names only: a case may give what the base leaves out
        check_keys(base, tmpl.parameters, path=base.path, optional=tmpl.parameters)
        from calckit.workflow.tolerance_table import check_band_names  # pint: not at the CLI's start

        check_band_names(base)
    cases_label = Path(cases).name
    template_text = tmpl.path.read_text(encoding="utf-8")
    jobs: list[CaseJob] = []
    read_files: dict[Path, bytes] = {}  # each data file read once, its bytes shared by the cases
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
        # a band stays with its input whatever value the case gives (one outside a min and max is refused)
        bands = {n: dict(b) for n, b in (base.tolerances if base is not None else {}).items()}
        jobs.append(
            CaseJob(
                name=case.name,
                template_name=tmpl.name,
                template_text=template_text,
                template_label=str(tmpl.path),
                values={n: v for n, v in values.items() if n not in tmpl.files},
                wheres=wheres,
                inputs_label=label,
                sources=sources,
                units=units,
                tolerances=bands,
                sampling=sampling,
                data=data_payload(values, tmpl.files, tmpl.path.parent, wheres, read_files),
                pdf=pdf,
                time_limit=time_limit,
                timeout=CELL_TIMEOUT_S,
            )
        )

    results: dict[str, CaseResult] = {}

    def done(built: BuiltCase) -> None:
        result = _place_case(out, tmpl.name, tmpl.path, built, overwrite)
        results[result.name] = result
        if progress is not None:
            progress(len(results), len(jobs), result)

    count = min(workers or default_workers(), len(jobs))
    run_jobs(jobs, done, executor=executor, workers=count)
    ordered = tuple(results[case.name] for case in table)
    csv_path, html_path = _write_summary(out, tmpl, ordered, overwrite=overwrite)
    return BatchResult(out, ordered, csv_path, html_path)


# ---------------------------------------------------------------------------
# The summary of a batch


@dataclass(frozen=True)
class _Quantity:
    """A result column of the summary: the sheet's label, the unit it shows, the SI unit of the record."""

    name: str
    label: str
    shown_unit: str
    si_unit: str


def _split_shown(shown: str) -> tuple[str, str]:
    """``"5.191 mm"`` as ``("5.191", "mm")``; a value without a unit as ``("7.856", "")``."""
    number, _, unit = str(shown).strip().partition(" ")
    return number, unit.strip()


def _summary_columns(results: Sequence[CaseResult]) -> tuple[list[str], list[_Quantity]]:
    """The checks and the numeric results of the built cases, in the order the sheets give them."""
    from calckit.workflow.diff_text import result_label

    checks: list[str] = []
    quantities: dict[str, _Quantity] = {}
    for result in results:
        if not result.record:
            continue
        for check in result.record.get("checks", []):
            if check["name"] not in checks:
                checks.append(check["name"])
        for item in result.record.get("results", []):
            if item.get("value") is None or item["name"] in quantities:
                continue
            quantities[item["name"]] = _Quantity(
                item["name"],
                result_label(item, None, item["name"]),
                _split_shown(item.get("shown", ""))[1],
                item.get("unit", ""),
            )
    return checks, list(quantities.values())


def _shown_in(item: dict | None, unit: str) -> str:
    """A case's result as its sheet shows it, the number alone when it is in the column's unit."""
    if not item:
        return ""
    number, own = _split_shown(item.get("shown", ""))
    return number if own == unit else f"{number} {own}".strip()


def _summary_rows(results: Sequence[CaseResult]) -> tuple[list[str], list[list[Any]]]:
    """The CSV table: one row a case; results under the sheets' labels in the units they show, then in SI."""
    checks, quantities = _summary_columns(results)
    header = ["case", "status", "checks met"]
    for name in checks:
        header += [f"{name}: verdict", f"{name}: margin %"]
    header += [f"{q.label} [{q.shown_unit}]" if q.shown_unit else q.label for q in quantities]
    header += [f"{q.name} [{q.si_unit}]" if q.si_unit else q.name for q in quantities]  # SI, full precision
    header += ["message"]
    rows = []
    for result in results:
        record = result.record or {}
        by_check = {c["name"]: c for c in record.get("checks", [])}
        by_result = {r["name"]: r for r in record.get("results", [])}
        summary = record.get("summary")
        row: list[Any] = [
            result.name,
            result.status,
            f"{summary['met']} of {summary['checks']}" if summary else "",
        ]
        for name in checks:
            check = by_check.get(name)
            row += [check["verdict"], check["margin_percent"]] if check else ["", ""]
        row += [_shown_in(by_result.get(q.name), q.shown_unit) for q in quantities]
        row += [(by_result.get(q.name) or {}).get("value", "") for q in quantities]
        row.append(result.message)
        rows.append(row)
    return header, rows


#: cases side by side in one table of the HTML summary, so that it fits an A4 or Letter page
CASES_PER_TABLE = 4


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


def _write_summary(
    out: Path, template: Template, results: Sequence[CaseResult], *, overwrite: bool = False
) -> tuple[Path, Path]:
    out.mkdir(parents=True, exist_ok=True)
    header, rows = _summary_rows(results)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows([[repr(c) if isinstance(c, float) else c for c in row] for row in rows])
    csv_path = write_text(out / "summary.csv", buffer.getvalue(), overwrite=overwrite)
    html_path = write_text(out / "summary.html", _summary_page(template, results), overwrite=overwrite)
    return csv_path, html_path


def _summary_page(template: Template, results: Sequence[CaseResult]) -> str:
    """The HTML summary: the cases, then checks and results with the cases side by side, a few a table.

    A table never holds more than :data:`CASES_PER_TABLE` cases, so that it fits the printable
    width of A4 and Letter however many cases the batch has; long labels and messages wrap.
    """
    from calckit.render.page import Html, escape, html_page, table

    def link(result: CaseResult) -> Any:
        if not result.ok:
            return result.name
        return Html(f'<a href="{escape(result.name)}/{escape(template.name)}.html">{escape(result.name)}</a>')

    def verdict(check: dict | None) -> Any:
        if not check:
            return ""
        points = check.get("margin_unit") == "percentage points"
        margin = f"{check['margin_percent']:+.1f} {'points' if points else '%'}"
        if check["verdict"] == "not met":
            return Html(f'<strong class="verdict verdict-not-met">NOT MET</strong><br>{escape(margin)}')
        return Html(f"{escape(check['verdict'])}<br>{escape(margin)}")

    cases_rows = []
    for result in results:
        summary = (result.record or {}).get("summary")
        met = f"{summary['met']} of {summary['checks']}" if summary else ""
        status = Html("<strong>failed</strong>") if not result.ok else result.status
        cases_rows.append([link(result), status, met, result.message])
    parts = [table(["Case", "Status", "Checks met", "Message"], cases_rows, cls="summary-cases")]

    checks, quantities = _summary_columns(results)
    built = [r for r in results if r.ok and r.record]
    for start in range(0, len(built), CASES_PER_TABLE):
        group = built[start : start + CASES_PER_TABLE]
        which = (
            f"case {escape(group[0].name)}"
            if len(group) == 1
            else f"cases {escape(group[0].name)} to {escape(group[-1].name)}"
        )
        names = [link(r) for r in group]
        if checks:
            by = [{c["name"]: c for c in r.record.get("checks", [])} for r in group]
            rows = [[name, *(verdict(b.get(name)) for b in by)] for name in checks]
            parts.append(f'<p class="table-caption">Checks, {which}: verdict and margin.</p>')
            parts.append(table(["Check", *names], rows, cls="summary-wide"))
        if quantities:
            by = [{i["name"]: i for i in r.record.get("results", [])} for r in group]
            rows = [
                [q.label, q.shown_unit, *(_shown_in(b.get(q.name), q.shown_unit) for b in by)]
                for q in quantities
            ]
            parts.append(f'<p class="table-caption">Results, {which}, as the sheets show them.</p>')
            parts.append(table(["Result", "Unit", *names], rows, cls="summary-wide"))

    done = sum(r.ok for r in results)
    body = (
        f"<h1>Batch of {counted(len(results), 'case')}: {escape(template.name)}</h1>"
        f"<p>{done} built, {len(results) - done} failed. Each case's sheet is in its own folder. Results "
        "are under the sheets' own labels in the units the sheets show (summary.csv has them in SI as well); "
        "margins are in percent of the limit (in percentage points where the checked value is itself a "
        "percentage), positive when the check is met.</p>" + "".join(parts)
    )
    return html_page(f"Batch summary: {template.name}", Html(body), footer_left=template.name)


def counted(number: int, noun: str) -> str:
    """A number and its noun, plural when it is not one.

    >>> counted(1, "case"), counted(3, "case")
    ('1 case', '3 cases')
    """
    return f"{number} {noun}" if number == 1 else f"{number} {noun}s"
