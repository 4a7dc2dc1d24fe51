"""Amplitude conventions in inputs files: ``{ value = "4.5 mm/s", convention = "rms" }``.

An amplitude written with ``convention`` (peak, peak-to-peak or rms; read by
:func:`calckit.physics.amplitude.amplitude_convention`) is two inputs: the value under its
own name and the convention under ``{name}_convention``. A template that needs to know
which an amplitude is declares that second name among its parameters; an inputs file that
gives the amplitude without it is told how to write it (:func:`missing_conventions`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

__all__ = ["CONVENTION_SUFFIX", "missing_conventions", "with_convention"]

#: The input that holds an amplitude's convention: ``velocity_limit`` -> ``velocity_limit_convention``.
CONVENTION_SUFFIX = "_convention"


def with_convention(table: Mapping[str, Any], place: str) -> tuple[Any, str]:
    """The rest of ``{ value = ..., convention = ... (, source = ...) }`` (the bare value when only it is left)
    and the convention, checked.

    >>> with_convention({"value": "4.5 mm/s", "convention": "RMS"}, "p101.toml, line 3, velocity_limit")
    ('4.5 mm/s', 'rms')
    """
    from calckit.physics.amplitude import amplitude_convention

    convention = amplitude_convention(table["convention"], where=place)
    rest = {inner: item for inner, item in table.items() if inner != "convention"}
    if set(rest) == {"value"}:
        return rest["value"], convention
    return rest, convention


def _toml(value: Any) -> str:
    return (
        '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"' if isinstance(value, str) else repr(value)
    )


def missing_conventions(
    missing: list[str], given: Mapping[str, Any], line_of: Callable[[str], int | None]
) -> tuple[list[str], list[str]]:
    """Split the missing names of a template's inputs into the others and the conventions of amplitudes given.

    Returns the other missing names and one problem sentence for each amplitude given without
    its convention, with the line to write.

    >>> missing_conventions(["velocity_limit_convention"], {"velocity_limit": "1 mm/s"}, lambda name: 7)[1][0]
    'the amplitude "velocity_limit" on line 7 does not say whether it is peak, peak-to-peak or rms: write velocity_limit = { value = "1 mm/s", convention = "rms" } (or "peak", "peak-to-peak")'
    """
    others, problems = [], []
    for name in missing:
        base = name.removesuffix(CONVENTION_SUFFIX)
        if base == name or base not in given:
            others.append(name)
            continue
        line = line_of(base)
        at = f" on line {line}" if line else ""
        problems.append(
            f'the amplitude "{base}"{at} does not say whether it is peak, peak-to-peak or rms: write '
            f'{base} = {{ value = {_toml(given[base])}, convention = "rms" }} (or "peak", "peak-to-peak")'
        )
    return others, problems
