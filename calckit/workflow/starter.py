"""Starting a calculation, and the demonstration: :func:`new_calculation`, :func:`inputs_text`, :func:`run_demo`.

``calckit new`` copies a template with an inputs file of its own values;
``calckit demo`` builds the bundled examples, set in an invented scenario (the
Harrow Creek water-treatment works).
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass
from pathlib import Path

from calckit.core.files import toml_value, write_file, write_text
from calckit.errors import OverwriteError
from calckit.workflow.build import BuildResult, build_sheet
from calckit.workflow.templates import Template, load_template, resource_folder

__all__ = ["inputs_text", "new_calculation", "Demo", "demos", "run_demo"]


def inputs_text(template: Template) -> str:
    """An inputs file (TOML) holding the template's own values, to start from.

    The inputs come first, the title-block fields the template declares in a
    ``[sheet]`` table; each value is written by :func:`calckit.core.files.toml_value`.
    """
    from calckit.workflow.inputs import TITLE_FIELDS

    lines = [f"# Inputs for {template.path.name}: change the values, keep the names.", ""]
    lines += [
        f"{name} = {toml_value(value)}"
        for name, value in template.parameters.items()
        if name not in TITLE_FIELDS
    ]
    title = [(name, value) for name, value in template.parameters.items() if name in TITLE_FIELDS]
    if title:
        lines += ["", "[sheet]"] + [f"{name} = {toml_value(value)}" for name, value in title]
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
    for path in (dest, inputs):  # both checked before either is written
        if path.exists():
            raise OverwriteError(
                "the file exists already", where=str(path), do="Choose another name; nothing was written"
            )
    refuse = "Choose another name; nothing was written"
    write_file(dest, tmpl.path.read_bytes(), refuse=refuse)
    try:
        write_text(inputs, inputs_text(tmpl), refuse=refuse)
    except OverwriteError:  # the inputs file appeared meanwhile: take the notebook back, as said
        dest.unlink(missing_ok=True)
        raise
    return dest, inputs


@dataclass(frozen=True)
class Demo:
    """One demonstration sheet: sub-folder name, bundled template, bundled inputs file."""

    name: str
    template: str
    inputs: Path


def demos() -> tuple[Demo, ...]:
    """The demonstration sheets listed in the bundled ``examples/demos.toml``."""
    folder = resource_folder("calckit.examples", "examples")
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
        (
            demo,
            build_sheet(
                demo.template, demo.inputs, out / demo.name, pdf=pdf, overwrite=overwrite, kept_kernel=True
            ),
        )
        for demo in demos()
    ]
