"""One batch case as self-contained data, and its build on a worker that shares no files with the batch.

A :class:`CaseJob` carries everything a worker needs: the template's text (the
notebook's JSON), the case's inputs as the values the build assigns (read and
checked by the batch before any case runs), where each is written (for error
messages), the data files a template's ``# file`` parameters name (their bytes),
and the options. :func:`build_case` runs on the worker: it writes the template
and the data files into a private temporary folder, builds the sheet there in the
worker's kept kernel (:func:`calckit.workflow.kernels.run_in_kept_kernel`) and
hands back a :class:`BuiltCase`: the built files as bytes and the sheet's record.
It never raises for a case that fails; the temporary folder is removed.

So a worker needs calckit and ipykernel, and no shared file system: the batch
(the parent) writes the files into the output folder itself, through the output
folder's staging and all-or-nothing move (:func:`calckit.workflow.build.place_sheet`).
Both are plain data (frozen dataclasses of str, bytes, numbers, dicts), so they
pickle for any executor: a process pool, or a ``dask.distributed`` cluster.
"""

from __future__ import annotations

import shutil
import tempfile
import time
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from calckit.errors import CalcError, InputsError

__all__ = ["CaseJob", "BuiltCase", "build_case", "data_payload"]


@dataclass(frozen=True)
class CaseJob:
    """One case of a batch, as data a worker anywhere can build from.

    Attributes
    ----------
    name : str
        The case's name (its folder's).
    template_name : str
        The template's stem: the built files are called after it.
    template_text : str
        The template notebook's JSON text.
    template_label : str
        Where the template came from, for messages (a path on the batch's machine).
    values, wheres : dict
        The values the build assigns, and where each is written.
    inputs_label : str
        The inputs' name on the sheet.
    sources : dict
        Input name -> source, from the base inputs file.
    units : dict or None
        The base inputs file's ``[units]`` table, as plain data.
    tolerances : dict or None
        Input name -> its band (``{"tolerance": "15 %"}`` or ``{"min": ..., "max": ...}``),
        the base inputs file's, as plain data.
    sampling : dict or None
        The sampled study the base inputs file's ``[sampling]`` table asks for, as plain data.
    data : dict
        Parameter -> (path, bytes) of the data files the template's ``# file``
        parameters name, the path as the batch's machine has it. A worker that sees
        the same bytes at that path (the same machine, or a shared file system) reads
        them there, so the executed notebook names the file as a build would; any other
        worker writes the bytes into its own folder and the notebook names that copy.
    pdf : bool
    time_limit : float or None
    timeout : int
        Seconds one cell may run.
    """

    name: str
    template_name: str
    template_text: str
    template_label: str
    values: Mapping[str, Any]
    wheres: Mapping[str, str]
    inputs_label: str
    sources: Mapping[str, str] = field(default_factory=dict)
    units: Mapping[str, Any] | None = None
    tolerances: Mapping[str, Mapping[str, str]] | None = None
    sampling: Mapping[str, Any] | None = None
    data: Mapping[str, tuple[str, bytes]] = field(default_factory=dict, repr=False)
    pdf: bool = False
    time_limit: float | None = None
    timeout: int = 600


@dataclass(frozen=True)
class BuiltCase:
    """What a worker hands back for one case: the files it built (suffix -> bytes) and the record."""

    name: str
    ok: bool
    message: str = ""
    files: Mapping[str, bytes] = field(default_factory=dict, repr=False)
    record: dict | None = field(default=None, repr=False)
    seconds: float = 0.0


def data_payload(
    values: Mapping[str, Any],
    names: frozenset[str],
    folder: Path,
    wheres: Mapping[str, str],
    read: dict[Path, bytes] | None = None,
) -> dict[str, tuple[str, bytes]]:
    """The data files the parameters *names* point at, read as bytes (a relative path is from *folder*).

    *read* keeps the bytes of the files read so far (path -> bytes): a batch passes one for all
    its cases, so a file that many cases name is read, and held, once.

    Raises
    ------
    InputsError
        A data file is not there or cannot be read.
    """
    payload = {}
    for name in sorted(names & set(values)):
        path = Path(str(values[name]))
        path = path if path.is_absolute() else folder / path
        try:
            path = path.resolve()
            data = read.get(path) if read is not None else None
            if data is None:
                data = path.read_bytes()
                if read is not None:
                    read[path] = data
            payload[name] = (str(path), data)
        except OSError as exc:
            raise InputsError(
                f'the data file "{values[name]}" cannot be read ({exc.strerror or exc})',
                where=wheres.get(name, name),
                do="Give the path of an existing file, relative to the inputs file",
            ) from None
    return payload


def build_case(job: CaseJob) -> BuiltCase:
    """Build one case on this worker, in a private temporary folder; never raises for a case that fails."""
    started = time.monotonic()
    scratch = Path(tempfile.mkdtemp(prefix="calckit-case-")).resolve()
    try:
        files, record, seconds = _build(job, scratch, started)
    except CalcError as exc:
        return BuiltCase(job.name, False, str(exc), seconds=time.monotonic() - started)
    except Exception as exc:  # a bug must not stop the other cases
        return BuiltCase(
            job.name,
            False,
            f"internal error: {type(exc).__name__}: {exc}",
            seconds=time.monotonic() - started,
        )
    finally:
        shutil.rmtree(scratch, ignore_errors=True)
    return BuiltCase(job.name, True, "", files, record, seconds)


def _build(job: CaseJob, scratch: Path, started: float) -> tuple[dict[str, bytes], dict, float]:
    from calckit.workflow.build import build_in_kernel
    from calckit.workflow.kernels import loop_running, run_in_kept_kernel, run_sync
    from calckit.workflow.outfolder import FolderLock
    from calckit.workflow.templates import load_template

    source = scratch / f"{job.template_name}.ipynb"
    source.write_text(job.template_text, encoding="utf-8")
    try:
        template = replace(load_template(source), path=Path(job.template_label))  # messages name the original
    except CalcError as exc:  # the same: the template as the batch's machine has it, not this copy
        raise type(exc)(
            exc.what, where=str(exc.where).replace(str(source), job.template_label), do=exc.do
        ) from None
    values = dict(job.values)
    if job.data:
        folder = scratch / "data"
        for name, (original, data) in job.data.items():
            values[name] = _data_file(Path(original), data, folder)
    out = scratch / "sheet"
    options = {"pdf": job.pdf, "overwrite": False, "timeout": job.timeout, "started": started}
    options.update(sources=dict(job.sources), time_limit=job.time_limit, units=job.units)
    options["tolerances"] = {n: dict(b) for n, b in (job.tolerances or {}).items()}
    options["sampling"] = dict(job.sampling) if job.sampling else None
    once = loop_running()  # a kept kernel lives on this thread's own loop; here it cannot
    with FolderLock(out):

        async def run(kernel):
            return await build_in_kernel(
                kernel, template, values, job.wheres, job.inputs_label, out, (False, None), **options
            )

        result = run_sync(lambda: run_in_kept_kernel(run, once=once))
    files = {path.suffix: path.read_bytes() for path in result.files}
    return files, result.record, result.seconds


def _data_file(original: Path, data: bytes, folder: Path) -> str:
    """The path the kernel reads a data file at: the original if it holds these bytes, else a copy in *folder*."""
    try:
        if original.read_bytes() == data:
            return str(original)
    except OSError:
        pass
    folder.mkdir(exist_ok=True)
    copy = folder / original.name
    copy.write_bytes(data)
    return str(copy)
