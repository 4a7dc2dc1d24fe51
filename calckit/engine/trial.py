"""The linear-form algebra of trial forms.

A trial form ``e^{at} sum_j t^j (c_j cos bt + s_j sin bt)`` whose coefficients
are linear in the unknowns is a :class:`LinearForm`; it is differentiated by
the real-form rules (``D e^{at} cos bt = e^{at}(a cos bt - b sin bt)``, ...)
without sympy's ``diff``, and operators act on it as weighted sums. Scalar and
vector strategies build their trial forms, derivatives and left sides from it.
"""

from __future__ import annotations

from collections import defaultdict

import sympy as sp

from calckit.engine.forcing import COS, SIN

__all__ = ["LETTER_PAIRS", "LinearForm", "basis_function", "unknown_letters"]

#: pairs of letters for the cosine and sine unknowns, the first not used by the user is taken
LETTER_PAIRS = (("A", "B"), ("C", "D"), ("P", "Q"), ("U", "V"), ("G", "H"), ("K", "L"))


def unknown_letters(taken: set[str], pairs: tuple[tuple[str, str], ...] = LETTER_PAIRS) -> tuple[str, str]:
    """The first pair of letters for unknown coefficients not used by the user.

    Examples
    --------
    >>> unknown_letters({"A", "omega"})
    ('C', 'D')
    """
    for pair in pairs:
        if not any(name == letter or name.startswith(letter + "_") for name in taken for letter in pair):
            return pair
    return ("alpha", "beta")


def basis_function(group, kind: str, j: int, t: sp.Symbol) -> sp.Expr:
    """``t^j e^{at} cos|sin(bt)`` (or ``t^j e^{at}``) of an exponent group (scalar or vector)."""
    trig = 1 if not group.harmonic else (sp.cos if kind == COS else sp.sin)(group.frequency * t)
    return t**j * sp.exp(group.decay * t) * trig


class LinearForm:
    """``e^{at} sum_j t^j (c_j cos bt + s_j sin bt)`` with linear-form coefficients.

    Examples
    --------
    >>> A, t = sp.symbols("A t")
    >>> LinearForm(-1, 0, {("cos", 0): {A: 1}}).derivative().expr(t)
    -A*exp(-t)

    ``terms[(kind, j)]`` maps each unknown (or 1 for a known part) to its factor.
    """

    __slots__ = ("a", "b", "terms")

    def __init__(self, a, b, terms):
        self.a, self.b, self.terms = a, b, terms

    def derivative(self) -> LinearForm:
        a, b = self.a, self.b
        out: dict = defaultdict(lambda: defaultdict(lambda: sp.S.Zero))
        for (kind, j), lin in self.terms.items():
            for u, coef in lin.items():
                out[(kind, j)][u] += a * coef
                if j:
                    out[(kind, j - 1)][u] += j * coef
                if b != 0:
                    if kind == COS:
                        out[(SIN, j)][u] += -b * coef
                    else:
                        out[(COS, j)][u] += b * coef
        return LinearForm(a, b, out)

    def scaled_sum(self, others: list[tuple[sp.Expr, LinearForm]]) -> LinearForm:
        out: dict = defaultdict(lambda: defaultdict(lambda: sp.S.Zero))
        for weight, form in others:
            for key, lin in form.terms.items():
                for u, coef in lin.items():
                    out[key][u] += weight * coef
        return LinearForm(self.a, self.b, out)

    def expr(self, t: sp.Symbol) -> sp.Expr:
        parts = []
        for (kind, j), lin in sorted(self.terms.items(), key=lambda kv: (kv[0][1], kv[0][0])):
            # one term per unknown: collected by construction
            coef = sp.Add(*((c if c.is_number else sp.expand(c)) * u for u, c in lin.items()))
            if coef == 0:
                continue
            trig = 1 if self.b == 0 else (sp.cos if kind == COS else sp.sin)(self.b * t)
            parts.append(coef * t**j * trig)
        return sp.exp(self.a * t) * sp.Add(*parts)
