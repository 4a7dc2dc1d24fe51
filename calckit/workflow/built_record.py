"""What a build's kernel wrote, read back and held against the inputs file.

:func:`read_built_record` reads the sheet's JSON record through the one definition of a
record; :func:`check_sources` and :func:`check_tolerances` refuse a built sheet that does
not show a source, or carry a band, that the inputs file gives (the template did not pass
``input_sources`` or ``input_tolerances`` to its sheet), and :func:`check_sampling` one
that does not show the sampled study its ``[sampling]`` table asks for (``input_sampling``).
:mod:`calckit.workflow.build` runs them before anything is moved into the output folder.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import TYPE_CHECKING, Any

from calckit.errors import BuildError, InputsError

if TYPE_CHECKING:
    from calckit.workflow.templates import Template

__all__ = ["read_built_record", "check_sources", "check_tolerances", "check_sampling"]


def check_sources(
    template: Template, record: Mapping[str, Any], sources: Mapping[str, str], wheres: Mapping[str, str]
) -> None:
    """Refuse a built sheet that does not show a source the inputs file gives, where it gives it."""
    shown = {item.get("name"): item.get("source") for item in record.get("inputs", [])}
    for name, source in sources.items():
        # a group of inputs (e.g. forcing_parameters = "P = 12 kN; td = 8 ms") is shown through its
        # members: inputs whose description ends "(name)", each with the group's source
        members = {
            item.get("source")
            for item in record.get("inputs", [])
            if str(item.get("description", "")).endswith(f"({name})")
        }
        if name not in shown and members:
            shown[name] = source if members == {source} else next(iter(members - {source}))
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


def check_tolerances(
    template: Template, record: Mapping[str, Any], tolerances: Mapping[str, Any], wheres: Mapping[str, str]
) -> None:
    """Refuse a built sheet that does not carry a band the inputs file gives on its input."""
    shown = {item.get("name"): item.get("tolerance") for item in record.get("inputs", [])}
    for name in tolerances:
        if name not in shown:
            raise InputsError(
                f'the template puts no input "{name}" on the sheet, so its tolerance would not be shown',
                where=wheres.get(name, name),
                do=f"Write {name} = value without a tolerance; nothing was written",
            )
        if not shown[name]:
            raise BuildError(
                f'the sheet shows "{name}" without the tolerance the inputs file gives it: the template does '
                "not pass input_tolerances to its sheet",
                where=str(template.path),
                do="Set input_tolerances = {} in the cell before the parameters cell and create the sheet "
                "with ck.Sheet(..., tolerances=input_tolerances); nothing was written",
            )


def check_sampling(template: Template, record: Mapping[str, Any], sampling: Mapping[str, Any]) -> None:
    """Refuse a built sheet whose record does not show the sampled study *sampling* (an inputs file's ``[sampling]``).

    The record's tolerance study names the samples it drew (``tolerances.samples``:
    ``n``, ``distribution``, ``seed``, ``k``); they must be the ones asked for.

    Raises
    ------
    BuildError
        The sheet shows no sampled study (the template does not pass ``input_sampling``
        to its sheet), or another one (the template asks for its own afterwards).
    """
    asked = {
        "n": sampling["samples"],
        "distribution": sampling["distribution"],
        "seed": sampling["seed"],
        "k": float(sampling.get("k", 3.0)),
    }
    shown = (record.get("tolerances") or {}).get("samples")
    do = (
        "Set input_sampling = {} in the cell before the parameters cell and create the sheet with "
        "ck.Sheet(..., sampling=input_sampling); nothing was written"
    )
    if not shown:
        raise BuildError(
            "the sheet shows no sampled study, though the inputs file's [sampling] table asks for one: the "
            "template does not pass input_sampling to its sheet",
            where=str(template.path),
            do=do,
        )
    if dict(shown) != asked:
        from calckit.workflow.diff_text import samples_text  # pint: only when it is said

        raise BuildError(
            f"the sheet's sampled study is {samples_text(shown)}, not the {samples_text(asked)} the inputs "
            "file's [sampling] table asks for",
            where=str(template.path),
            do=do + " (and leave sheet.sample_study to runs by hand)",
        )


def read_built_record(path: Path) -> dict:
    """The JSON record the build's kernel wrote, read through the one definition of a record.

    :func:`calckit.sheet.read_record` checks its version and its fields; the build and the
    batch summary use its dictionary form, the one :meth:`calckit.Sheet.record` gives.
    """
    from calckit.sheet import read_record

    return read_record(path).to_dict()
