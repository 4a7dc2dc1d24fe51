"""Errors raised by calckit.

Every error derives from :class:`CalcError` and from the builtin exception that
fits (a bad value is a ``ValueError``, a wrong dimension a ``TypeError``), so
callers may catch either. Each error stores its fields and builds its message
from them: *what* was wrong, *where* it was found, and what to *do* instead.
"""

from __future__ import annotations

__all__ = [
    "CalcError",
    "ForcingError",
    "ModelError",
    "UnitsError",
    "InputsError",
    "SheetError",
    "BuildError",
    "OverwriteError",
]


class CalcError(Exception):
    """Root of every error calckit raises on purpose.

    Parameters
    ----------
    what : str
        What was wrong, in one sentence without a final full stop.
    where : str, optional
        Where it was found: an argument, a term, a file and key.
    do : str, optional
        What to do instead.
    """

    def __init__(self, what: str, *, where: str | None = None, do: str | None = None):
        self.what = what
        self.where = where
        self.do = do
        super().__init__(what)

    def __str__(self) -> str:
        text = f"{self.where}: {self.what}" if self.where else self.what
        if self.do:
            text += f". {self.do}"
        return text if text.endswith(".") else text + "."

    def __reduce__(self):  # keep fields across pickling (process pools)
        return (_rebuild, (type(self), self.what, self.where, self.do))


def _rebuild(cls, what, where, do):
    return cls(what, where=where, do=do)


class ForcingError(CalcError, ValueError):
    """A forcing term lies outside the class the method of undetermined
    coefficients can handle, or cannot be read."""


class ModelError(CalcError, ValueError):
    """The model (operator coefficients, masses, stiffnesses) is not usable."""


class UnitsError(CalcError, TypeError):
    """A quantity has the wrong dimension or an unknown unit."""


class InputsError(CalcError, ValueError):
    """An inputs file or a value in it is not usable."""


class SheetError(CalcError, ValueError):
    """A calculation sheet was asked for something it cannot hold or write."""


class BuildError(CalcError, RuntimeError):
    """Building a sheet from a template failed."""


class OverwriteError(CalcError, FileExistsError):
    """Writing would replace a file built from other inputs."""
