"""Errors raised by calckit.

Every error derives from :class:`CalcError` and from the builtin exception that
fits (a bad value is a ``ValueError``, a wrong dimension a ``TypeError``), so
callers may catch either. Each error stores its fields and builds its message
from them: *what* was wrong, *where* it was found, and what to *do* instead.
"""

from __future__ import annotations

__all__ = [
    "AliasingWarning",
    "CalcError",
    "ForcingError",
    "ModelError",
    "UnitsError",
    "InputsError",
    "SheetError",
    "BuildError",
    "OverwriteError",
    "StorageError",
    "CellError",
    "InternalError",
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


class StorageError(CalcError, OSError):
    """A file could not be written: the disk is full, or the folder is read-only or not the user's.

    Not a defect of calckit nor of the input: the message says which, and where;
    nothing was written and the files there are as they were.
    """


class CellError(BuildError):
    """A cell of a template failed while building a sheet.

    The message names the template, the cell (counted from 1 over all the
    template's cells), the line and its source, the error's type and message.
    ``user_error`` is true when the error is one of calckit's own (bad input, a
    model calckit refuses): a command line exits with 2 then, and with 1 for any
    other error, which points at the template (or, for an :class:`InternalError`
    inside the kernel, at calckit).
    """

    def __init__(
        self,
        what: str,
        *,
        where: str | None = None,
        do: str | None = None,
        ename: str = "",
        cell: int | None = None,
        line: int | None = None,
        user_error: bool = True,
    ):
        super().__init__(what, where=where, do=do)
        self.ename = ename
        self.cell = cell
        self.line = line
        self.user_error = user_error

    def __str__(self) -> str:
        return f"{self.where}: {self.what}" if self.where else self.what

    def __reduce__(self):
        fields = {"ename": self.ename, "cell": self.cell, "line": self.line, "user_error": self.user_error}
        return (_rebuild_cell_error, (type(self), self.what, self.where, self.do, fields))


def _rebuild_cell_error(cls, what, where, do, fields):
    return cls(what, where=where, do=do, **fields)


class InternalError(CalcError, RuntimeError):
    """A defect of calckit, not of the input: an engine self-check failed.

    The message says so and carries a line that reproduces the case, so that
    it can be reported as it is; the command line exits with 1 for it, never
    with 2 ("bad input").

    Parameters
    ----------
    what : str
        What went wrong inside calckit.
    reproduce : str
        Python that reproduces the failure (``import calckit as ck; ...``).
    where : str, optional
        The method or step that failed.
    """

    def __init__(self, what: str, *, reproduce: str = "", where: str | None = None, do: str | None = None):
        self.reproduce = reproduce
        if do is None:
            do = "This is a defect of calckit, not of your input; please report it with this line: " + (
                reproduce or "(no reproducer was recorded)"
            )
        super().__init__(what, where=where, do=do)

    def __reduce__(self):
        return (_rebuild_internal, (type(self), self.what, self.where, self.do, self.reproduce))


def _rebuild_internal(cls, what, where, do, reproduce):
    return cls(what, where=where, do=do, reproduce=reproduce)


class AliasingWarning(UserWarning):
    """Samples too coarse for the load they sample: some harmonics asked for are aliased.

    Not an error (the numbers are still given), so a warning; its fields and message are
    built as a :class:`CalcError`'s: *what*, *where*, *do*.
    """

    def __init__(self, what: str, *, where: str | None = None, do: str | None = None):
        self.what = what
        self.where = where
        self.do = do
        super().__init__(what)

    __str__ = CalcError.__str__

    def __reduce__(self):
        return (_rebuild, (type(self), self.what, self.where, self.do))
