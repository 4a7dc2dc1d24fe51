"""The template's parameters cell: read without running it, and the cell of inputs a build writes.

:func:`parameters_from_source` gives a parameters cell's names and default values
(only literal assignments, nothing run); :func:`injected_source` writes the cell of
assignments a build puts after it, which reads back to the same values. The inputs
files these values come from are read in :mod:`calckit.workflow.inputs`.
"""

from __future__ import annotations

import ast
import keyword
import math
from collections.abc import Mapping
from types import MappingProxyType
from typing import Any

from calckit.errors import InputsError

__all__ = ["parameters_from_source", "injected_source"]


def _literal(node: ast.expr) -> Any:
    """The value of a literal str/int/float/bool (with a sign), or raise ValueError."""
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub | ast.UAdd):
        inner = _literal(node.operand)
        if isinstance(inner, bool) or not isinstance(inner, int | float):
            raise ValueError
        return -inner if isinstance(node.op, ast.USub) else inner
    if isinstance(node, ast.Constant) and isinstance(node.value, str | int | float | bool):
        return node.value
    raise ValueError


def parameters_from_source(cell_source: str) -> Mapping[str, Any]:
    """Names and default values of a template's parameters cell, in order.

    The cell may hold only assignments of literal values to plain names
    (``mass = "250 kg"``, ``zeta = 0.05``, ``flag = True``, ``mass: str = "1 kg"``),
    comments and a docstring. Nothing in it is run.

    Raises
    ------
    InputsError
        Any other statement, a value that is not a literal, a name set twice.

    Examples
    --------
    >>> dict(parameters_from_source('mass = "250 kg"  # P-101\\nzeta = 0.05'))
    {'mass': '250 kg', 'zeta': 0.05}
    """
    try:
        tree = ast.parse(cell_source)
    except SyntaxError as exc:
        raise InputsError(
            f"the parameters cell is not valid Python ({exc.msg})",
            where=f"parameters cell, line {exc.lineno}",
            do='Write one assignment per line, for example mass = "250 kg"',
        ) from exc
    params: dict[str, Any] = {}
    for number, statement in enumerate(tree.body):
        where = f"parameters cell, line {statement.lineno}"
        if number == 0 and isinstance(statement, ast.Expr) and isinstance(statement.value, ast.Constant):
            if isinstance(statement.value.value, str):
                continue  # docstring
        if isinstance(statement, ast.Assign) and len(statement.targets) == 1:
            target, value = statement.targets[0], statement.value
        elif isinstance(statement, ast.AnnAssign) and statement.value is not None:
            target, value = statement.target, statement.value
        else:
            raise InputsError(
                f'"{ast.get_source_segment(cell_source, statement)}" is not a plain assignment',
                where=where,
                do='Keep the parameters cell to lines like mass = "250 kg"; do the work in later cells',
            )
        if not isinstance(target, ast.Name):
            raise InputsError(
                f'"{ast.get_source_segment(cell_source, target)}" is not a plain name',
                where=where,
                do='Assign to a single name, for example mass = "250 kg"',
            )
        try:
            literal = _literal(value)
        except ValueError:
            raise InputsError(
                f'the value of "{target.id}" is not a literal: {ast.get_source_segment(cell_source, value)}',
                where=where,
                do="Give text, a number or True/False; compute derived values in later cells",
            ) from None
        if target.id in params:
            raise InputsError(f'"{target.id}" is set twice', where=where, do="Set each parameter once")
        params[target.id] = literal
    return MappingProxyType(params)


def injected_source(values: Mapping[str, Any]) -> str:
    """Python source of an assignments cell setting *values*.

    Only text, integers, finite floats and True/False are written, each with
    ``repr``, so reading the cell back with :func:`parameters_from_source`
    gives the same values.

    Examples
    --------
    >>> print(injected_source({"mass": "250 kg", "zeta": 0.05}))
    # Inputs set by calckit build
    mass = '250 kg'
    zeta = 0.05
    <BLANKLINE>
    """
    lines = ["# Inputs set by calckit build"]
    for name, value in values.items():
        where = f"input {name}"
        if not isinstance(name, str) or not name.isidentifier() or keyword.iskeyword(name):
            raise InputsError(
                f"{name!r} is not usable as a Python name",
                where="inputs",
                do="Use letters, digits and underscores, starting with a letter",
            )
        if isinstance(value, float) and not math.isfinite(value):
            raise InputsError(
                f"the value {value} is not a finite number", where=where, do="Give a finite number"
            )
        if not isinstance(value, str | int | float | bool):
            raise InputsError(
                f"a {type(value).__name__} value cannot be passed to a template",
                where=where,
                do='Give text ("250 kg"), a number or True/False',
            )
        lines.append(f"{name} = {value!r}")
    return "\n".join(lines) + "\n"
