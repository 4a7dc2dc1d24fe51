"""Forcing vectors: each row split into exponent groups, the exponents pooled over the rows.

A forcing vector ``F(t)`` of a multi-mass model is split row by row by
:func:`calckit.engine.forcing.split_forcing`; the groups of equal exponent
``lambda = a +/- i b`` of all rows are pooled into one :class:`VectorGroup`,
which gets one vector trial form.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from numbers import Number

import numpy as np
import sympy as sp

from calckit.engine.forcing import Exponent, ExponentGroup, ForcingSplit, resolve_time, split_forcing
from calckit.errors import ForcingError

__all__ = ["VectorForcing", "VectorGroup", "forcing_entries", "split_forcing_vector"]


@dataclass(frozen=True)
class VectorGroup(Exponent):
    """One exponent ``lambda = decay +/- i frequency`` pooled over the rows of F.

    ``rows[r]`` is row ``r``'s :class:`~calckit.engine.forcing.ExponentGroup` at this
    exponent, or None when that row has no term with it.
    """

    decay: sp.Expr
    frequency: sp.Expr
    rows: tuple[ExponentGroup | None, ...]

    @property
    def degree(self) -> int:
        """Highest power of t in any row."""
        return max(group.degree for group in self.rows if group is not None)

    def expr(self, t: sp.Symbol) -> sp.ImmutableMatrix:
        """The group's part of F(t) as a column."""
        return sp.ImmutableMatrix([sp.S.Zero if g is None else g.expr(t) for g in self.rows])


@dataclass(frozen=True)
class VectorForcing:
    """A forcing vector split row by row, with the exponents pooled over rows.

    This is the ``split`` of a multi-mass :class:`~calckit.engine.derivation.Derivation`.
    """

    forcing: sp.ImmutableMatrix
    t: sp.Symbol
    rows: tuple[ForcingSplit, ...]
    groups: tuple[VectorGroup, ...]

    def expr(self) -> sp.ImmutableMatrix:
        """The split forcing as a column (equal to ``forcing``)."""
        return sp.ImmutableMatrix([row.expr() for row in self.rows])


def forcing_entries(F, size: int) -> list:
    """The entries of a forcing vector (list, numpy array or sympy column) of *size* rows."""
    if isinstance(F, sp.MatrixBase):
        if 1 not in F.shape:
            raise ForcingError(
                f"got a {F.rows} x {F.cols} matrix",
                where="F",
                do="Give a column (or list) of forcing expressions, one per coordinate",
            )
        entries = list(F)
    elif isinstance(F, np.ndarray):
        entries = [e.item() if isinstance(e, np.generic) else e for e in F.ravel().tolist()]
    elif isinstance(F, Sequence) and not isinstance(F, str):
        entries = list(F)
    else:
        raise ForcingError(
            f"expected a list of forcing expressions, got {type(F).__name__} {F!r}",
            where="F",
            do="Give one forcing expression per coordinate, e.g. [F0*sympy.cos(w*t), 0]",
        )
    if len(entries) != size:
        raise ForcingError(
            f"got {len(entries)} forcing {'entry' if len(entries) == 1 else 'entries'} for a model with {size} coordinates",
            where="F",
            do="Give one forcing expression per coordinate, with 0 where no force acts",
        )
    return entries


def split_forcing_vector(F, size: int, t: sp.Symbol | None = None) -> VectorForcing:
    """Split a forcing vector row by row and pool the exponents of all rows.

    Examples
    --------
    >>> t = sp.Symbol("t", real=True)
    >>> [g.exponent for g in split_forcing_vector([sp.cos(2 * t), 3], 2, t).groups]
    [0, 2*I]
    """
    entries = forcing_entries(F, size)
    if t is None:
        named = {s for e in entries for s in getattr(e, "free_symbols", ()) if s.name == "t"}
        t = resolve_time(sp.Add(*named), next(iter(named)) if len(named) == 1 else None)
    else:
        t = resolve_time(sp.S.Zero, t)
    splits = []
    for r, entry in enumerate(entries):
        if isinstance(entry, Number) and not isinstance(entry, (bool, sp.Basic)):
            entry = entry if isinstance(entry, (int, float, Fraction)) else float(entry)
        try:
            splits.append(split_forcing(entry, t))
        except ForcingError as exc:
            where = f"F row {r + 1}" + (f", {exc.where}" if exc.where else "")
            raise ForcingError(exc.what, where=where, do=exc.do) from None
    pooled: dict = {}
    for r, split in enumerate(splits):
        for group in split.groups:
            pooled.setdefault((group.decay, group.frequency), [None] * size)[r] = group
    keys = sorted(pooled, key=lambda k: (sp.default_sort_key(k[0]), sp.default_sort_key(k[1])))
    groups = tuple(VectorGroup(a, b, tuple(pooled[(a, b)])) for a, b in keys)
    forcing = sp.ImmutableMatrix([split.forcing for split in splits])
    return VectorForcing(forcing, t, tuple(splits), groups)
