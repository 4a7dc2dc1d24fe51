"""Forcing terms: splitting f(t) into quasi-polynomial terms grouped by exponent.

The method of undetermined coefficients applies to forcings that are finite sums
of terms

.. math::

    c \\, t^n e^{a t} \\cos(b t), \\qquad c \\, t^n e^{a t} \\sin(b t), \\qquad c \\, t^n e^{a t}

because the derivatives of such a term stay inside a finite family of the same
shape. This module rewrites a forcing into that form (expanding products and
powers of sines, cosines, exponentials and hyperbolic functions by the
product-to-sum identities) and groups the terms by their complex exponent
``lambda = a +/- i b``. Anything outside the class is refused with a
:class:`~calckit.errors.ForcingError` that names the term and says why.

The expansion works on a small real-form algebra (a dictionary keyed by
``(a, b, kind, n)``) rather than on complex exponentials, so that symbolic
parameters need no assumption about being real.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass
from fractions import Fraction

import sympy as sp

from calckit.core.exact import exact
from calckit.errors import CalcError, ForcingError

__all__ = [
    "ForcingTerm",
    "Exponent",
    "ExponentGroup",
    "ForcingSplit",
    "split_forcing",
    "quasi_polynomial",
    "resolve_time",
    "add_into",
    "COS",
    "SIN",
]

# kind of the harmonic factor of a term
COS, SIN = "cos", "sin"


@dataclass(frozen=True)
class ForcingTerm:
    """One term ``coefficient * t**power * exp(decay*t) * cos|sin(frequency*t)``.

    ``kind`` is ``"cos"`` or ``"sin"``; a term with ``frequency == 0`` is always
    of kind ``"cos"`` (the factor is 1).
    """

    coefficient: sp.Expr
    power: int
    decay: sp.Expr
    frequency: sp.Expr
    kind: str

    def expr(self, t: sp.Symbol) -> sp.Expr:
        """The term as a sympy expression in *t*."""
        out = self.coefficient * t**self.power * sp.exp(self.decay * t)
        if self.frequency != 0:
            out *= (sp.cos if self.kind == COS else sp.sin)(self.frequency * t)
        return out


class Exponent:
    """What a group of forcing terms with one exponent ``lambda = decay +/- i frequency`` tells.

    Shared by a scalar :class:`ExponentGroup` and a vector group (the rows of F pooled);
    the subclass gives ``decay`` and ``frequency``.
    """

    decay: sp.Expr
    frequency: sp.Expr

    @property
    def exponent(self) -> sp.Expr:
        """The complex exponent ``a + i b`` (b >= 0 by convention)."""
        return self.decay + sp.I * self.frequency

    @property
    def harmonic(self) -> bool:
        """True when the group oscillates (``b != 0``)."""
        return self.frequency != 0


@dataclass(frozen=True)
class ExponentGroup(Exponent):
    """Terms sharing the exponent ``lambda = decay +/- i frequency``."""

    decay: sp.Expr
    frequency: sp.Expr
    terms: tuple[ForcingTerm, ...]

    @property
    def degree(self) -> int:
        """Highest power of t among the terms."""
        return max(term.power for term in self.terms)

    def expr(self, t: sp.Symbol) -> sp.Expr:
        """Sum of the group's terms as a sympy expression in *t*."""
        return sp.Add(*(term.expr(t) for term in self.terms))


@dataclass(frozen=True)
class ForcingSplit:
    """A forcing rewritten as exponent groups of quasi-polynomial terms."""

    forcing: sp.Expr
    t: sp.Symbol
    groups: tuple[ExponentGroup, ...]

    @property
    def terms(self) -> tuple[ForcingTerm, ...]:
        """All terms, group by group."""
        return tuple(term for group in self.groups for term in group.terms)

    def expr(self) -> sp.Expr:
        """The split forcing as one sympy expression (equal to ``forcing``)."""
        return sp.Add(*(group.expr(self.t) for group in self.groups))


# --------------------------------------------------------------------------
# The real-form algebra. A quasi-polynomial is a dict
#   (a, b, kind, n) -> coefficient
# meaning  sum coefficient * t**n * exp(a t) * cos|sin(b t), with b canonical.


def _canon_rate(expr: sp.Expr) -> sp.Expr:
    return sp.expand(expr)


def add_into(acc: dict, key: tuple, coef: sp.Expr) -> None:
    """Add ``coef`` to the term ``key = (a, b, kind, n)`` of a real-form table, in canonical form
    (``b >= 0``, no sine at ``b = 0``)."""
    a, b, kind, n = key
    b = _canon_rate(b)
    if b == 0:
        if kind == SIN:
            return
    elif b.could_extract_minus_sign():
        b = -b
        if kind == SIN:
            coef = -coef
    key = (_canon_rate(a), b, kind, n)
    acc[key] = acc.get(key, sp.S.Zero) + coef


def _const(c: sp.Expr) -> dict:
    return {(sp.S.Zero, sp.S.Zero, COS, 0): c}


def _sum(parts: list[dict]) -> dict:
    acc: dict = {}
    for part in parts:
        for key, coef in part.items():
            add_into(acc, key, coef)
    return acc


def _product(p: dict, q: dict) -> dict:
    if len(p) * len(q) > MAX_PRODUCT_PAIRS:  # bounded before the work is done
        raise _TooLarge(
            None,
            f"multiplying it out pairs {len(p)} terms with {len(q)}, more than {MAX_PRODUCT_PAIRS:,}",
            _SMALLER,
        )
    acc: dict = {}
    half = sp.Rational(1, 2)
    for (a1, b1, k1, n1), c1 in p.items():
        for (a2, b2, k2, n2), c2 in q.items():
            a, n, c = a1 + a2, n1 + n2, c1 * c2
            if b1 == 0 and b2 == 0:
                add_into(acc, (a, 0, COS, n), c)
            elif b2 == 0:
                add_into(acc, (a, b1, k1, n), c)
            elif b1 == 0:
                add_into(acc, (a, b2, k2, n), c)
            elif k1 == COS and k2 == COS:  # cos x cos y = [cos(x-y) + cos(x+y)]/2
                add_into(acc, (a, b1 - b2, COS, n), half * c)
                add_into(acc, (a, b1 + b2, COS, n), half * c)
            elif k1 == SIN and k2 == SIN:  # sin x sin y = [cos(x-y) - cos(x+y)]/2
                add_into(acc, (a, b1 - b2, COS, n), half * c)
                add_into(acc, (a, b1 + b2, COS, n), -half * c)
            elif k1 == SIN:  # sin x cos y = [sin(x+y) + sin(x-y)]/2
                add_into(acc, (a, b1 + b2, SIN, n), half * c)
                add_into(acc, (a, b1 - b2, SIN, n), half * c)
            else:  # cos x sin y = [sin(x+y) - sin(x-y)]/2
                add_into(acc, (a, b1 + b2, SIN, n), half * c)
                add_into(acc, (a, b1 - b2, SIN, n), -half * c)
    return acc


def _power(p: dict, n: int) -> dict:
    result = _const(sp.S.One)
    base = p
    while n:
        if n & 1:
            result = _product(result, base)
        n >>= 1
        if n:
            base = _product(base, base)
    return result


class _Refusal(Exception):
    """Internal: carries the offending sub-expression and the reason."""

    def __init__(self, piece: sp.Expr | None, why: str, do: str):
        super().__init__(why)
        self.piece, self.why, self.do = piece, why, do


class _TooLarge(_Refusal):
    """Internal: the forcing is in the class, but expanding it would not finish in reasonable time or memory."""


#: Largest whole power of a sum expanded (the degree of the trial form grows with it).
MAX_POWER = 100
#: Largest number of term pairs one product may multiply out (each gives one or two terms).
MAX_PRODUCT_PAIRS = 250_000

_SMALLER = (
    f"Write the forcing with powers up to {MAX_POWER} and fewer products of long sums; a load that needs "
    "more is better given as a Fourier series (calckit.physics.fourier) or integrated numerically"
)


_SPLIT_PIECES = (
    "Split the time range at the switching points and solve each piece, starting each "
    "from the end state of the one before"
)
_NUMERIC = (
    "Approximate it by a finite Fourier series over the interval of interest "
    "(calckit.physics.fourier) or integrate numerically"
)


def _linear_in_t(arg: sp.Expr, t: sp.Symbol, whole: sp.Expr) -> tuple[sp.Expr, sp.Expr]:
    """Return (rate, offset) with arg == rate*t + offset, or refuse."""
    rate, offset = sp.S.Zero, sp.S.Zero
    for term in sp.Add.make_args(arg):  # fast path: a sum of c*t and t-free terms
        coef, dep = term.as_independent(t, as_Add=False)
        if dep == 1:
            offset += term
        elif dep == t:
            rate += coef
        else:
            break
    else:
        return rate, offset
    try:
        poly = sp.Poly(sp.expand(arg), t)
    except sp.PolynomialError:
        poly = None
    if poly is None or poly.degree() > 1 or any(c.has(t) for c in poly.all_coeffs()):
        raise _Refusal(
            whole,
            f"its argument {arg} is not of the form a*t + b, so its derivatives do not stay in a "
            "finite family and no trial form with finitely many coefficients exists",
            _NUMERIC,
        )
    rate = poly.coeff_monomial(t)
    offset = poly.coeff_monomial(1)
    return rate, offset


def _split_rate(rate: sp.Expr) -> tuple[sp.Expr, sp.Expr]:
    """Split an exponent rate into real and imaginary parts by the explicit I."""
    real, imag = sp.S.Zero, sp.S.Zero
    for term in sp.Add.make_args(sp.expand(rate)):
        coef, rest = term.as_independent(sp.I, as_Add=False)
        if rest == 1:
            real += term
        elif rest == sp.I:
            imag += coef
        else:
            raise _Refusal(
                term, "its exponent mixes I in a way that cannot be split", "Write it with cos and sin"
            )
    return real, imag


def _qp(expr: sp.Expr, t: sp.Symbol) -> dict:
    """Rewrite *expr* as a quasi-polynomial dict, or raise _Refusal."""
    if not expr.has(t):
        return _const(expr)
    if expr == t:
        return {(sp.S.Zero, sp.S.Zero, COS, 1): sp.S.One}
    if expr.is_Add:
        return _sum([_qp(arg, t) for arg in expr.args])
    if expr.is_Mul:
        result = _const(sp.S.One)
        for arg in expr.args:
            try:
                result = _product(result, _qp(arg, t))
            except _TooLarge as big:
                big.piece = expr if big.piece is None else big.piece
                raise
        return result
    if expr.is_Pow:
        base, expo = expr.args
        if expo.has(t):
            if base.has(t):
                raise _Refusal(expr, "both its base and its exponent depend on t", _NUMERIC)
            return _qp(sp.exp(expo * sp.log(base)), t)
        if base == t and expo.is_Integer and expo >= 0:  # t**n is a basis function: nothing to expand
            return {(sp.S.Zero, sp.S.Zero, COS, int(expo)): sp.S.One}
        if expo.is_Integer and expo > MAX_POWER and base.has(t):
            raise _TooLarge(expr, f"it is raised to the power {expo}, more than {MAX_POWER}", _SMALLER)
        if expo.is_Integer and expo >= 0:
            try:
                return _power(_qp(base, t), int(expo))
            except _TooLarge as big:
                big.piece = expr if big.piece is None else big.piece
                raise
        if base == t or base.is_polynomial(t):
            raise _Refusal(
                expr,
                f"t appears raised to the power {expo}; only whole powers t**0, t**1, t**2, ... keep "
                "the trial form finite",
                _NUMERIC,
            )
        raise _Refusal(
            expr,
            f"it is raised to the power {expo}; only whole non-negative powers of sums of "
            "exponential and harmonic terms stay in the class",
            _NUMERIC,
        )
    if isinstance(expr, sp.exp):
        rate, offset = _linear_in_t(expr.args[0], t, expr)
        a, b = _split_rate(rate)
        base = _const(sp.exp(offset))
        if b == 0:
            return _product(base, {(a, sp.S.Zero, COS, 0): sp.S.One})
        return _product(base, {(a, b, COS, 0): sp.S.One, (a, b, SIN, 0): sp.I})
    if isinstance(expr, (sp.cos, sp.sin)):
        rate, offset = _linear_in_t(expr.args[0], t, expr)
        if rate.has(sp.I):
            return _qp(expr.rewrite(sp.exp), t)
        co, so = sp.cos(offset), sp.sin(offset)
        if isinstance(expr, sp.cos):  # cos(bt + p) = cos p cos bt - sin p sin bt
            return _sum([{(0, rate, COS, 0): co}, {(0, rate, SIN, 0): -so}])
        return _sum([{(0, rate, SIN, 0): co}, {(0, rate, COS, 0): so}])
    if isinstance(expr, (sp.cosh, sp.sinh)):
        return _qp(expr.rewrite(sp.exp), t)
    raise _Refusal(expr, _why_not(expr), _do_instead(expr))


def _why_not(expr: sp.Expr) -> str:
    if isinstance(expr, (sp.Heaviside, sp.Piecewise, sp.sign)):
        return "it switches at a point in time, and the method needs one formula valid for all t"
    if isinstance(expr, sp.Abs):
        return "its derivative jumps where the argument changes sign, so no single trial form fits all t"
    if isinstance(expr, sp.DiracDelta):
        return "an impulse is not a function the trial form can match; it sets initial velocity instead"
    if isinstance(expr, sp.core.function.AppliedUndef):
        return "it is an unknown function, and the method needs the forcing written out in t"
    return (
        f"{type(expr).__name__} is not a polynomial, exponential, sine, cosine, sinh or cosh of t, "
        "so its derivatives do not stay in a finite family and no trial form with finitely many "
        "coefficients exists"
    )


def _do_instead(expr: sp.Expr) -> str:
    if isinstance(expr, (sp.Heaviside, sp.Piecewise, sp.sign, sp.Abs)):
        return _SPLIT_PIECES
    if isinstance(expr, sp.DiracDelta):
        return "Model the impulse I as the initial velocity v0 = I/m and solve with zero forcing"
    if isinstance(expr, sp.core.function.AppliedUndef):
        return "Write the forcing as an explicit expression in t"
    return _NUMERIC


def quasi_polynomial(expr: sp.Expr, t: sp.Symbol) -> dict[tuple, sp.Expr]:
    """Expand *expr* into ``{(a, b, kind, n): coefficient}`` by the product-to-sum identities.

    Raises ForcingError for anything outside the class.
    """
    try:
        return _qp(expr, t)
    except _Refusal as refusal:
        piece = expr if refusal.piece is None else refusal.piece
        raise ForcingError(refusal.why, where=f"term {piece}", do=refusal.do) from None


def resolve_time(expr: sp.Expr, t: sp.Symbol | None, where: str = "forcing") -> sp.Symbol:
    """Return the time symbol: *t* if given, else the one symbol named ``t`` in *expr*."""
    if t is not None:
        if not isinstance(t, sp.Symbol):
            raise ForcingError(
                f"the time variable must be a sympy Symbol, got {type(t).__name__} {t!r}",
                where="t",
                do='Pass t=sympy.Symbol("t", real=True)',
            )
        return t
    named = [s for s in getattr(expr, "free_symbols", ()) if s.name == "t"]
    if len(named) == 1:
        return named[0]
    return sp.Symbol("t", real=True)


def _sympify_forcing(f) -> sp.Expr:
    if isinstance(f, (int, float, Fraction, sp.Basic)) and not isinstance(f, bool):
        try:
            expr = exact(f, where="forcing")
        except CalcError as exc:  # the same message, as a ForcingError
            raise ForcingError(exc.what, where=exc.where, do=exc.do) from exc
        if expr.has(sp.I):
            raise ForcingError(
                f"the forcing {expr} is complex; a real system needs a real force",
                where="forcing",
                do="Write it with cos and sin (e.g. cos(w*t) instead of exp(I*w*t)), and take the real part",
            )
        return expr
    raise ForcingError(
        f"expected a sympy expression or a number, got {type(f).__name__} {f!r}",
        where="forcing",
        do="Build the forcing with sympy, e.g. F0*sympy.cos(w*t)",
    )


def split_forcing(f, t: sp.Symbol | None = None) -> ForcingSplit:
    """Split forcing *f* into quasi-polynomial terms grouped by exponent.

    Parameters
    ----------
    f : sympy expression, int, float or Fraction
        The forcing f(t). Floats are read as the decimals they display.
    t : sympy.Symbol, optional
        The time variable; by default the symbol named ``t`` in *f*.

    Returns
    -------
    ForcingSplit

    Raises
    ------
    ForcingError
        When a term is outside the class; the message names the term and why.

    Examples
    --------
    >>> t, w = sp.symbols("t omega", positive=True)
    >>> split = split_forcing(sp.cos(w*t)**2, t)
    >>> [(g.decay, g.frequency) for g in split.groups]
    [(0, 0), (0, 2*omega)]
    """
    expr = _sympify_forcing(f)
    t = resolve_time(expr, t)
    for bad in expr.atoms(sp.Derivative, sp.Integral):
        raise ForcingError(
            f"forcing term {bad} is an unevaluated derivative or integral",
            where="forcing",
            do="Evaluate it first (call .doit()) or write the forcing out in t",
        )
    for fn in expr.atoms(sp.core.function.AppliedUndef):
        if not fn.has(t):
            raise ForcingError(
                f"it is a function of {', '.join(map(str, fn.args))}, which is neither the time {t} "
                "nor a parameter",
                where=f"forcing term {fn}",
                do="Use plain symbols for parameters, or write the forcing out in t",
            )
    terms = sp.Add.make_args(expr)
    parts = []
    for term in terms:
        try:
            parts.append(_qp(term, t))
        except _Refusal as refusal:
            piece = term if refusal.piece is None else refusal.piece
            where_text = f"forcing term {term}" if piece == term else f"forcing term {term}, in {piece}"
            what = (
                f"the forcing is too large to expand: {refusal.why}"
                if isinstance(refusal, _TooLarge)
                else f"the method of undetermined coefficients does not apply: {refusal.why}"
            )
            raise ForcingError(
                what,
                where=where_text,
                do=refusal.do,
            ) from None
    acc = _sum(parts)
    degree = max((n for (_a, _b, _kind, n), coef in acc.items() if coef != 0), default=0)
    if degree > MAX_POWER:  # the trial form would need that many coefficients a group
        raise ForcingError(
            f"the forcing is too large to expand: it has degree {degree} in t once multiplied out, "
            f"more than {MAX_POWER}",
            where=f"forcing {expr}" if len(str(expr)) <= 200 else "forcing",
            do=_SMALLER,
        )
    grouped: dict[tuple, list[ForcingTerm]] = defaultdict(list)
    for (a, b, kind, n), coef in acc.items():
        coef = sp.expand(coef)
        if coef == 0:
            continue
        grouped[(a, b)].append(ForcingTerm(coef, n, a, b, kind))
    groups = []
    for (a, b), items in grouped.items():
        items.sort(key=lambda term: (term.power, term.kind != COS))
        groups.append(ExponentGroup(a, b, tuple(items)))
    groups.sort(key=lambda g: (sp.default_sort_key(g.decay), sp.default_sort_key(g.frequency)))
    return ForcingSplit(expr, t, tuple(groups))
