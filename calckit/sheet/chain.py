"""The chain of a sheet's formula steps, composed back to its inputs.

Each :meth:`~calckit.Sheet.calc` step keeps its sympy formula in symbols that stand for
inputs, earlier results or values passed in. :func:`step_links` records, when the step
is made, what each symbol of the formula stands for (a :class:`Link`): an input (with
the factor from the input's SI value to the value put in, e.g. ``1/(2 pi)`` when a speed
in rpm enters as turns per minute), an earlier result, or a fixed number (a constant
such as standard gravity, or a value the sheet cannot trace). :func:`composed` then
substitutes step into step, back to the inputs, and gives the result in SI base units as
one sympy expression of the inputs' SI values, for the tolerance study
(:mod:`calckit.sheet.tolerance_study`).

The composition is of the unrounded chain: a value carried as shown
(:meth:`~calckit.Sheet.carried`) stands for the result it shows, so the composed result
at the nominal inputs differs from the printed one by the rounding of carried values
only (the study checks this, and refuses a chain that does not give the printed result).
A result obtained otherwise than by a formula (a derivation's peak, a procedure) ends
the chain: :func:`composed` says which, in words (:class:`Untraced`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy as sp

__all__ = ["Link", "Untraced", "composed", "input_symbol", "origin_of", "si_float", "step_links"]

_KIND_WORDS = {
    "derivation": "a derivation",
    "procedure": "a numerical procedure",
    "input": "a value taken as given",
    "table": "a table",
}


@dataclass(frozen=True)
class Link:
    """What one symbol of a step's formula stands for.

    ``kind`` is ``"input"`` (``name`` an input; the value put in is ``factor`` times the
    input's SI value), ``"result"`` (``name`` an earlier result) or ``"fixed"`` (``value``,
    a number in SI base units).
    """

    kind: str
    name: str = ""
    factor: float = 1.0
    value: float = 0.0


class Untraced(Exception):
    """A result whose chain does not come back to the inputs through formulas; ``reason`` says why, in words."""

    def __init__(self, reason: str):
        super().__init__(reason)
        self.reason = reason


def si_float(value: Any) -> float | None:
    """*value* in SI base units as a float; None when it is not a real number."""
    try:
        if hasattr(value, "units"):
            return float(value.to_base_units().magnitude)
        return float(value)
    except (TypeError, ValueError):
        return None


def input_symbol(name: str) -> sp.Symbol:
    """The symbol that stands for the input *name*'s SI value in a composed result."""
    return sp.Symbol(f"_in_{name}", real=True)


def origin_of(sheet: Any, value: Any) -> str | None:
    """The name of the result or input *value* is, as returned by the sheet (by identity); None if none."""
    for name, result in sheet.results.items():
        if result is value:
            return name
    found = sheet._carried.get(id(value))
    if found is not None and found[1] is value:
        return found[0]
    for name, rec in sheet.inputs.items():
        if rec.value is value:
            return name
    return None


def _link_to(sheet: Any, origin: str | None, raw: Any) -> Link:
    if origin is not None and origin in sheet.results:
        return Link("result", origin)
    if origin is not None and origin in sheet.inputs:
        own, put = si_float(sheet.inputs[origin].value), si_float(raw)
        if own and put is not None:
            return Link("input", origin, factor=put / own)
    fixed = si_float(raw)
    return Link("fixed", value=0.0 if fixed is None else fixed)


def step_links(
    sheet: Any, raw: dict, put: dict, values: dict | None, origins: dict | None
) -> dict[str, Link]:
    """What each symbol of a step stands for: *raw* the values found for its symbols, *put* the values put in.

    A symbol given in *values* is traced by identity (the object :meth:`~calckit.Sheet.given`,
    :meth:`~calckit.Sheet.calc` or :meth:`~calckit.Sheet.carried` returned), or by *origins*
    (symbol -> result or input name, for the sheet's own steps); a symbol found by its name
    is that result or input. A speed put in as its step in rad/s is that step's result.
    """
    values, origins = values or {}, origins or {}
    links = {}
    for key, value in raw.items():
        if put[key] is not value:  # a speed or frequency converted to rad/s in a step of its own
            links[key] = Link("result", origin_of(sheet, put[key]) or "")
            continue
        if key in origins:
            origin = origins[key]
        elif key in values:
            origin = origin_of(sheet, value)
        else:
            origin = key
        links[key] = _link_to(sheet, origin, value)
    return links


def composed(sheet: Any, name: str, memo: dict | None = None) -> sp.Expr:
    """The result *name* in SI base units as one expression of the inputs' SI values (:func:`input_symbol`).

    Raises
    ------
    Untraced
        The result, or one it is computed from, was not obtained by a formula on the sheet.
    """
    memo = {} if memo is None else memo
    if name in memo:
        return memo[name]
    if name in sheet.inputs and name not in sheet.results:
        return input_symbol(name)
    if name not in sheet.chain:
        working = sheet.working.get(name)
        kind = _KIND_WORDS.get(getattr(working, "kind", ""), "outside the sheet's formula steps")
        raise Untraced(f"{name} is from {kind}")
    step = sheet.chain[name]
    replacements = {}
    for symbol in step.formula.free_symbols:
        link = step.links.get(symbol.name)
        if link is None:
            raise Untraced(f"the symbol {symbol.name} of {name}'s formula stands for nothing on the sheet")
        if link.kind == "result":
            if not link.name:
                raise Untraced(f"a value put into {name} is not traced to the sheet")
            replacements[symbol] = composed(sheet, link.name, memo)
        elif link.kind == "input":
            replacements[symbol] = (
                link.factor * input_symbol(link.name) if link.factor != 1 else input_symbol(link.name)
            )
        else:
            replacements[symbol] = sp.Float(link.value)
    memo[name] = step.formula.xreplace(replacements) * step.si_factor
    return memo[name]


@dataclass(frozen=True)
class ChainStep:
    """A formula step as the chain holds it: the formula, its links, and the factor to its result's SI value.

    ``si_factor`` is 1 for a formula whose value in SI base units is its result's SI value
    (every formula written in consistent units); the study checks it at the nominal inputs.
    """

    formula: sp.Expr
    links: dict
    si_factor: float = 1.0
