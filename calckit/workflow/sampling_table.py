"""The ``[sampling]`` table of an inputs file: a sampled (Monte Carlo) study over the inputs' bands.

::

    [sampling]
    samples = 100000          # how many: a whole number from 100 to 10,000,000
    distribution = "uniform"  # each input uniform over its band; or "normal", about its value
    seed = 2026               # the seed numpy's generator draws from, so that the study can be drawn again
    k = 3                     # normal only, optional: the half-band as k standard deviations (3 if left out)

The table is read with the inputs file (:func:`calckit.workflow.inputs.read_inputs`,
:attr:`InputsFile.sampling`) and checked here, before a kernel starts, by the rule of the
sheet's own :func:`calckit.sheet.tolerance_study.sample_request` (its limits
:data:`~calckit.sheet.tolerance_study.FEWEST_SAMPLES` and ``MOST_SAMPLES``, its
distributions): a key that is not one of these, a value of the wrong kind, an unknown
distribution, a number of samples out of range, ``k`` with a uniform distribution, or
a table in a file where no input carries a band (there is nothing to sample) is refused
at its line. The build hands the request to the template as ``input_sampling`` (plain
data, the keys above); the template's ``ck.Sheet(..., sampling=input_sampling)`` asks
the sheet for the study, which enters its fingerprint and its record, and the build
refuses a sheet that does not show it (:func:`calckit.workflow.built_record.check_sampling`).
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Callable, Mapping
from typing import Any

from calckit.errors import InputsError

__all__ = ["read_sampling_table", "check_something_to_sample", "table_line"]

_EXAMPLE = '[sampling] with samples = 100000, distribution = "uniform", seed = 2026'


def read_sampling_table(
    table: Mapping[str, Any], path: Any, line_of: Callable[[str], int | None], header: int | None
) -> dict[str, Any]:
    """The ``[sampling]`` table of the inputs file at *path*, checked: ``{"samples", "distribution", "seed"[, "k"]}``.

    *line_of* gives a key's line in the table, *header* the line of the ``[sampling]`` header.

    Raises
    ------
    InputsError
        An unknown key, a key left out, a value of the wrong kind, an unknown distribution,
        a number of samples out of range, a negative seed, ``k`` not above zero or given
        with a uniform distribution.

    Examples
    --------
    >>> read_sampling_table({"samples": 100_000, "distribution": "uniform", "seed": 7}, "p.toml",
    ...                     lambda key: None, 20)
    {'samples': 100000, 'distribution': 'uniform', 'seed': 7}
    >>> read_sampling_table({"samples": 50, "distribution": "uniform", "seed": 7}, "p.toml",
    ...                     lambda key: 21, 20)
    Traceback (most recent call last):
    ...
    calckit.errors.InputsError: p.toml, line 21, sampling.samples: 50 samples are fewer than the 100 a study draws at least. Write a whole number from 100 to 10,000,000, e.g. samples = 100000.
    """
    from calckit.sheet import DISTRIBUTIONS, FEWEST_SAMPLES, MOST_SAMPLES, SAMPLING_KEYS, sample_request

    def place(key: str) -> str:
        return f"{path}, line {line_of(key) or '?'}, sampling.{key}"

    table_place = f"{path}, line {header or '?'}, sampling"
    for key in table:
        if key not in SAMPLING_KEYS:
            close = difflib.get_close_matches(key, SAMPLING_KEYS, n=1)
            hint = f'Did you mean "{close[0]}"? ' if close else ""
            raise InputsError(
                f'unknown key "{key}" in the [sampling] table',
                where=place(key),
                do=f"{hint}The table takes samples, distribution, seed and, for a normal distribution, k",
            )
    missing = [key for key in SAMPLING_KEYS[:3] if key not in table]  # k may be left out
    if missing:
        raise InputsError(
            f"the [sampling] table does not give {' or '.join(missing)}",
            where=table_place,
            do=f"A sampled study states how many samples, from which distribution, with which seed: {_EXAMPLE}",
        )
    samples, distribution, seed = table["samples"], table["distribution"], table["seed"]
    span = f"from {FEWEST_SAMPLES:,} to {MOST_SAMPLES:,}"
    if not _whole(samples):
        raise InputsError(
            f"samples = {_shown(samples)} is not a whole number",
            where=place("samples"),
            do=f"Write a whole number {span} without quotes or a decimal point, e.g. samples = 100000",
        )
    if not FEWEST_SAMPLES <= samples <= MOST_SAMPLES:
        said = (
            f"fewer than the {FEWEST_SAMPLES:,} a study draws at least"
            if samples < FEWEST_SAMPLES
            else f"more than the {MOST_SAMPLES:,} a study draws at most"
        )
        raise InputsError(
            f"{samples:,} samples are {said}",
            where=place("samples"),
            do=f"Write a whole number {span}, e.g. samples = 100000",
        )
    if not isinstance(distribution, str) or distribution not in DISTRIBUTIONS:
        names = " or ".join(f'"{d}"' for d in DISTRIBUTIONS)
        close = (
            difflib.get_close_matches(distribution, DISTRIBUTIONS, n=1)
            if isinstance(distribution, str)
            else []
        )
        hint = f'Did you mean "{close[0]}"? ' if close else ""
        raise InputsError(
            f"distribution = {_shown(distribution)} is not a distribution the study draws from",
            where=place("distribution"),
            do=f'{hint}Write {names}: "uniform" over each band, "normal" about the value with the half-band '
            "as k standard deviations",
        )
    if not _whole(seed) or seed < 0:
        raise InputsError(
            f"seed = {_shown(seed)} is not a whole number of zero or more",
            where=place("seed"),
            do="Write the seed the samples are drawn from, e.g. seed = 2026, so that the study can be drawn again",
        )
    read: dict[str, Any] = {"samples": samples, "distribution": distribution, "seed": seed}
    if "k" in table:
        k = table["k"]
        if distribution != "normal":
            raise InputsError(
                f'k is the half-band in standard deviations of a normal distribution, not of a "{distribution}" one',
                where=place("k"),
                do='Remove k, or write distribution = "normal"',
            )
        if isinstance(k, bool) or not isinstance(k, int | float) or not math.isfinite(k) or k <= 0:
            raise InputsError(
                f"k = {_shown(k)} is not a number of standard deviations above zero",
                where=place("k"),
                do="Write e.g. k = 3 (the half-band as 3 standard deviations)",
            )
        read["k"] = float(k)
    try:  # the sheet's own rule, once more: what passes here, the sheet takes
        sample_request(samples, distribution, seed, read.get("k", 3.0))
    except InputsError as exc:
        raise InputsError(exc.what, where=table_place, do=exc.do) from None
    return read


def check_something_to_sample(
    sampling: Mapping[str, Any] | None, bands: Mapping[str, Any], where: str
) -> None:
    """Refuse a ``[sampling]`` table (*sampling*, as read) in a file whose inputs carry no band (*bands*).

    Raises
    ------
    InputsError
        A sampled study is asked for and no input has a band to draw from.
    """
    if sampling is not None and not bands:
        raise InputsError(
            "the [sampling] table asks for a sampled study, but no input carries a tolerance band to sample",
            where=where,
            do='Give the inputs that vary their bands (stiffness = { value = "720 kN/m", tolerance = "15 %" }, '
            "or a [tolerances] table), or remove the [sampling] table",
        )


def table_line(text: str, name: str) -> int | None:
    """The line (from 1) of the ``[name]`` header in an inputs file's *text*; None if it has none.

    >>> table_line('mass = "1 kg"\\n\\n[sampling]  # asked\\nseed = 1\\n', "sampling")
    3
    """
    header = re.compile(r"\s*\[\s*" + re.escape(name) + r"\s*\]\s*(#.*)?$")
    return next((n for n, line in enumerate(text.splitlines(), start=1) if header.match(line)), None)


def _whole(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _shown(value: Any) -> str:
    """A TOML value as the file writes it: text in quotes, true/false in lower case."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return f'"{value}"'
    return repr(value)
