"""Periodic loads that are not harmonic, as Fourier series.

A periodic load (a press stroke, a reciprocating compressor's gas force, a square
wave from a switching drive) is replaced by its mean plus ``N`` harmonics,

.. math::
    f(t) \\approx a_0 + \\sum_{n=1}^{N} \\left(a_n \\cos n\\omega t + b_n \\sin n\\omega t\\right),
    \\qquad \\omega = \\frac{2\\pi}{T},

each harmonic of which the derivation engine can take on its own (superposition).

Two ways in:

* :func:`fourier_series` for a sympy expression or ``Piecewise`` defined over one
  period ``[0, T)``: closed-form coefficients by ``sympy.integrate``, piece by piece,
  with numeric Gauss-Legendre quadrature (and a note saying so) for pieces sympy
  cannot integrate quickly.
* :func:`fourier_series_from_samples` for equally spaced samples over one period
  (a measured or tabulated load): ``numpy.fft.rfft`` with the scaling that turns the
  discrete transform into ``a_0, a_n, b_n``.

References
----------
E. Kreyszig, *Advanced Engineering Mathematics*, 10th ed., Wiley, 2011, sec. 11.1-11.2
(Euler formulas for the coefficients), from memory.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.errors import AliasingWarning, ForcingError
from calckit.physics.fourier_terms import HARMONIC_NUMBER, FourierSeries, Harmonic, check_count, check_period

__all__ = ["FourierSeries", "Harmonic", "fourier_series", "fourier_series_from_samples"]

# --------------------------------------------------------------------------- closed form


_REWRITE = (sp.Heaviside, sp.Abs, sp.sign, sp.Max, sp.Min)


def _is_quasi_polynomial(expr: sp.Expr, t: sp.Symbol) -> bool:
    """True for sums of c * t**k * exp(linear) * sin/cos/sinh/cosh(linear) (powers allowed):
    the class sympy integrates quickly and in closed form."""

    def linear(arg) -> bool:
        p = sp.Poly(arg, t) if arg.is_polynomial(t) else None
        return p is not None and p.degree() <= 1

    def factor_ok(f) -> bool:
        if not f.has(t):
            return True
        if f == t:
            return True
        if f.is_Pow and f.exp.is_Integer and f.exp > 0:
            return factor_ok(f.base)
        if isinstance(f, sp.exp | sp.sin | sp.cos | sp.sinh | sp.cosh):
            return linear(f.args[0])
        return False

    return all(
        all(factor_ok(f) for f in sp.Mul.make_args(term)) for term in sp.Add.make_args(sp.expand(expr))
    )


def _integrate_exact(integrand: sp.Expr, t: sp.Symbol, lo, hi) -> sp.Expr | None:
    try:
        out = sp.integrate(integrand, (t, lo, hi))
    except (NotImplementedError, ValueError, TypeError):  # pragma: no cover - sympy internals
        return None
    return None if out.has(sp.Integral) else out


def _gauss_legendre(expr: sp.Expr, t: sp.Symbol, lo: float, hi: float, panels: int):
    """Nodes, weights and f(nodes) for composite 16-point Gauss-Legendre on [lo, hi]."""
    x, w = np.polynomial.legendre.leggauss(16)
    edges = np.linspace(lo, hi, panels + 1)
    half = np.diff(edges) / 2
    mid = (edges[:-1] + edges[1:]) / 2
    nodes = (mid[:, None] + half[:, None] * x[None, :]).ravel()
    weights = (half[:, None] * w[None, :]).ravel()
    f = sp.lambdify(t, expr, modules="numpy")
    with np.errstate(all="ignore"):
        values = np.broadcast_to(np.asarray(f(nodes), dtype=float), nodes.shape)
    return nodes, weights, values


def _intervals(pieces_set) -> list[tuple[sp.Expr, sp.Expr]]:
    sets = pieces_set.args if isinstance(pieces_set, sp.Union) else (pieces_set,)
    return [(s.inf, s.sup) for s in sets if isinstance(s, sp.Interval) and s.measure != 0]


def fourier_series(f, t: sp.Symbol, period, n_harmonics: int, *, method: str = "auto") -> FourierSeries:
    r"""Fourier series of a load given over one period ``[0, T)``.

    .. math::
        a_0 = \frac1T\int_0^T f\,dt, \quad
        a_n = \frac2T\int_0^T f \cos n\omega t\,dt, \quad
        b_n = \frac2T\int_0^T f \sin n\omega t\,dt, \quad \omega = \frac{2\pi}{T}

    Parameters
    ----------
    f : sympy expression, ``Piecewise`` or number
        The load over one period; it is repeated with period ``T``. ``Heaviside``,
        ``Abs``, ``sign``, ``Max`` and ``Min`` are rewritten as ``Piecewise``. Floats
        are read as the decimals they show, but write fractions of ``pi`` exactly:
        ``sp.pi * t / 1.5`` reaches calckit as ``0.666666666666667*pi*t`` (sympy
        evaluates it first), so use ``2 * sp.pi * t / 3`` or ``sp.Rational(3, 2)``.
    t : sympy.Symbol
        The time symbol used in *f*.
    period : number or positive sympy expression
        ``T``, s.
    n_harmonics : int
        ``N >= 1``, harmonics kept.
    method : {"auto", "exact", "numeric"}
        ``"auto"``: sympy integrates each piece made of polynomials, exponentials,
        sines and cosines (closed form, fast); any other piece is integrated
        numerically (composite Gauss-Legendre) and a note says so, because sympy can
        take minutes over such integrals. ``"exact"`` tries sympy on every piece
        (falling back to quadrature only if it gives up); ``"numeric"`` uses quadrature
        throughout. Quadrature needs numbers: symbols other than *t* raise.

    Returns
    -------
    FourierSeries

    Raises
    ------
    ForcingError
        Bad period or harmonic count, *f* not defined on all of ``[0, T)``, or
        quadrature asked for an expression with symbols.

    References
    ----------
    Kreyszig, *Advanced Engineering Mathematics*, 10th ed., sec. 11.1, eqs. (6), from memory.

    Examples
    --------
    >>> t = sp.Symbol("t", real=True)
    >>> half_sine = sp.Piecewise((sp.sin(sp.pi * t), t < 1), (0, True))
    >>> s = fourier_series(half_sine, t, 2, 2)
    >>> s.a0, s.coefficients
    (1/pi, ((1, 0, 1/2), (2, -2/(3*pi), 0)))
    """
    where = "fourier_series"
    if not isinstance(t, sp.Symbol):
        raise ForcingError(
            f"expected a sympy Symbol for the time, got {type(t).__name__}",
            where=f"{where}(t)",
            do='Pass t = sympy.Symbol("t", real=True)',
        )
    if method not in ("auto", "exact", "numeric"):
        raise ForcingError(
            f"unknown method {method!r}", where=f"{where}(method)", do='Use "auto", "exact" or "numeric"'
        )
    T = check_period(period, f"{where}(period)")
    N = check_count(n_harmonics, f"{where}(n_harmonics)")
    if isinstance(f, str):  # text is never run: read it with calckit.parse_expression
        raise ForcingError(
            f"got text {f!r}, which is not read here",
            where=f"{where}(f)",
            do="Give a sympy expression in t, or read the text with calckit.parse_expression first",
        )
    try:
        f = exact(f if isinstance(f, sp.Basic) else sp.sympify(f, strict=True), where=f"{where}(f)")
    except sp.SympifyError:
        raise ForcingError(
            f"cannot read {f!r} as a sympy expression", where=f"{where}(f)", do="Give a sympy expression in t"
        ) from None
    if f.has(*_REWRITE):
        f = f.rewrite(sp.Piecewise)
    f = sp.piecewise_fold(f)

    # Split into (expression, lo, hi) pieces when the period is a number.
    if T.is_number:
        if isinstance(f, sp.Piecewise):
            whole = sp.Interval.Ropen(0, T)
            try:
                pairs = f.as_expr_set_pairs(whole)
            except (NotImplementedError, TypeError, ValueError):
                pairs = None
            if pairs is not None:
                covered = sp.Union(*[s for _, s in pairs]) if pairs else sp.EmptySet
                missing = whole - covered
                if missing.measure != 0:
                    raise ForcingError(
                        f"the Piecewise does not define the load on {missing}",
                        where=f"{where}(f)",
                        do="Cover the whole period [0, T), e.g. end with (value, True)",
                    )
                pieces = [(e, lo, hi) for e, s in pairs for lo, hi in _intervals(s)]
            else:
                pieces = [(f, sp.Integer(0), T)]
        else:
            pieces = [(f, sp.Integer(0), T)]
    else:
        pieces = [(f, sp.Integer(0), T)]

    w = 2 * sp.pi / T
    n_sym = (
        HARMONIC_NUMBER
        if "n" not in {str(x) for x in f.free_symbols | T.free_symbols}
        else sp.Dummy("n", integer=True, positive=True)
    )
    notes: list[str] = []
    a0 = sp.Integer(0)
    ms = sp.Integer(0)
    a = [sp.Integer(0)] * N
    b = [sp.Integer(0)] * N
    a_formula: sp.Expr | None = sp.Integer(0)
    b_formula: sp.Expr | None = sp.Integer(0)
    all_exact = True

    for expr, lo, hi in pieces:
        if expr == 0:
            continue
        branches = [e for e, _ in expr.args] if isinstance(expr, sp.Piecewise) else [expr]
        use_exact = method == "exact" or (
            method == "auto" and all(_is_quasi_polynomial(e, t) for e in branches)
        )
        done = False
        if use_exact:
            parts = _exact_piece(expr, t, lo, hi, w, N, n_sym)
            if parts is not None:
                p0, psq, pa, pb, fa, fb, odd_ones = parts
                if odd_ones:
                    notes.append(
                        f"the general formula for {expr} on [{lo}, {hi}) does not hold at n = "
                        f"{', '.join(map(str, odd_ones))}; those coefficients were integrated directly"
                    )
                a0 += p0
                ms += psq
                a = [x + y for x, y in zip(a, pa, strict=True)]
                b = [x + y for x, y in zip(b, pb, strict=True)]
                a_formula = None if (a_formula is None or fa is None) else a_formula + fa
                b_formula = None if (b_formula is None or fb is None) else b_formula + fb
                done = True
            else:
                notes.append(f"sympy could not integrate {expr} on [{lo}, {hi}); numeric quadrature used")
        if not done:
            p0, psq, pa, pb, note = _numeric_piece(expr, t, lo, hi, w, N, where)
            notes.append(note)
            a0 += p0
            ms += psq
            a = [x + y for x, y in zip(a, pa, strict=True)]
            b = [x + y for x, y in zip(b, pb, strict=True)]
            a_formula = b_formula = None
            all_exact = False

    scale = 2 / T
    return FourierSeries(
        period=T,
        omega=w,
        a0=_tidy(a0 / T),
        coefficients=tuple((n + 1, _tidy(scale * a[n]), _tidy(scale * b[n])) for n in range(N)),
        mean_square=_tidy(ms / T),
        is_exact=all_exact,
        a_n_formula=None if a_formula is None else _tidy_formula(scale * a_formula),
        b_n_formula=None if b_formula is None else _tidy_formula(scale * b_formula),
        n_symbol=n_sym,
        notes=tuple(notes),
    )


def _tidy(expr: sp.Expr) -> sp.Expr:
    """Cheap tidying for a coefficient: one fraction, common factors pulled out."""
    expr = sp.sympify(expr)
    if expr.has(sp.Float):
        return expr
    return sp.factor_terms(sp.together(expr))


def _tidy_formula(expr: sp.Expr) -> sp.Expr:
    """Fuller simplification for the two general-n formulas (done once, kept if shorter)."""
    expr = _tidy(expr)
    if sp.count_ops(expr) > 200:
        return expr
    simpler = sp.simplify(expr)
    return simpler if sp.count_ops(simpler) <= sp.count_ops(expr) else expr


def _exact_piece(expr, t, lo, hi, w, N, n_sym):
    """Integrals of expr, expr**2, expr*cos(n w t), expr*sin(n w t) over [lo, hi), or None.

    The trigonometric integrals are done once for a general positive integer n and
    evaluated at n = 1..N; any n where that gives no finite value is integrated on
    its own and reported.
    """
    i0 = _integrate_exact(expr, t, lo, hi)
    isq = _integrate_exact(sp.piecewise_fold(expr**2), t, lo, hi)
    if i0 is None or isq is None:
        return None
    out = []
    odd_ones: set[int] = set()
    for trig in (sp.cos, sp.sin):
        general = _integrate_exact(expr * trig(n_sym * w * t), t, lo, hi)
        values = []
        for k in range(1, N + 1):
            v = None
            if general is not None:
                v = general.subs(n_sym, k)
                if v.has(sp.nan, sp.zoo, sp.oo, -sp.oo, sp.Integral):
                    v = None
                    odd_ones.add(k)
            if v is None:
                v = _integrate_exact(expr * trig(k * w * t), t, lo, hi)
                if v is None:
                    return None
            values.append(v)
        out.append((values, general))
    (pa, fa), (pb, fb) = out
    return i0, isq, pa, pb, fa, fb, sorted(odd_ones)


def _numeric_piece(expr, t, lo, hi, w, N, where):
    others = expr.free_symbols - {t}
    if others or not (sp.sympify(lo).is_number and sp.sympify(hi).is_number):
        names = ", ".join(sorted(str(s) for s in others | sp.sympify(hi - lo).free_symbols))
        raise ForcingError(
            f"the piece {expr} needs numeric quadrature but holds symbols ({names})",
            where=f"{where}(f)",
            do="Substitute numbers for the symbols, or rewrite the piece with polynomials, exponentials, sines and cosines",
        )
    flo, fhi, fT, fw = float(lo), float(hi), 2 * math.pi / float(w), float(w)
    panels = max(4, math.ceil((4 * N + 16) * (fhi - flo) / fT))
    nodes, weights, values = _gauss_legendre(expr, t, flo, fhi, panels)
    if not np.all(np.isfinite(values)):
        raise ForcingError(
            f"the piece {expr} is not finite everywhere on [{lo}, {hi})",
            where=f"{where}(f)",
            do="Give a load that is finite over the whole period",
        )
    wv = weights * values
    n = np.arange(1, N + 1)
    arg = np.multiply.outer(n * fw, nodes)
    pa = [sp.Float(x, 15) for x in np.cos(arg) @ wv]
    pb = [sp.Float(x, 15) for x in np.sin(arg) @ wv]
    note = (
        f"{expr} on [{lo}, {hi}): coefficients by {panels}-panel 16-point Gauss-Legendre quadrature "
        "(floats, not exact)"
    )
    return sp.Float(wv.sum(), 15), sp.Float(np.dot(weights, values**2), 15), pa, pb, note


# --------------------------------------------------------------------------- samples


def fourier_series_from_samples(
    values, period, n_harmonics: int, *, band_limited: bool = False
) -> FourierSeries:
    r"""Fourier series of equally spaced samples over one period.

    Samples ``f_k = f(k T / M)``, ``k = 0 .. M-1`` (do not repeat the sample at ``T``).
    With :math:`F_n = \sum_k f_k e^{-2\pi i n k / M}` (``numpy.fft.rfft``):

    .. math:: a_0 = \frac{F_0}{M}, \quad a_n = \frac{2}{M}\operatorname{Re} F_n, \quad
              b_n = -\frac{2}{M}\operatorname{Im} F_n, \qquad 1 \le n < M/2

    so ``M`` must exceed ``2 N`` (Nyquist). The mean square is the mean of ``f_k^2``.
    Take samples at a jump as the mid-value for the best agreement with the closed form.

    **Aliasing.** The transform gives harmonic ``n`` plus every harmonic ``j M +- n`` the
    samples cannot tell from it. For a load with a jump (harmonics falling as ``1/n``) the
    error at harmonic ``n`` is ``1 - x cot x`` with ``x = pi n / M``: 2 % at ``n = M/13``,
    10 % at ``n = 11`` of 64 samples, 21 % at ``n = M/4``, total near ``M/2``. So:

    * ``N`` above ``M // 4`` is refused (a :class:`~calckit.errors.ForcingError` naming the
      limit) unless ``band_limited=True`` says the load has no harmonic at or above ``M/2``
      (a sum of known tones, a record filtered before sampling); then up to ``(M - 1) // 2``.
    * When the harmonics between ``M/4`` and ``M/2`` reach 1 % of the largest, the samples
      are too coarse for the load: the series carries a note saying so, and a
      :class:`~calckit.errors.AliasingWarning` is issued.

    Parameters
    ----------
    values : 1-D array of floats
        One period of samples.
    period : number
        The period ``T``, s.
    n_harmonics : int
        ``N``, the harmonics wanted.
    band_limited : bool
        True when the load is known to hold no harmonic at or above ``M/2``.

    Examples
    --------
    >>> k = np.arange(8)
    >>> s = fourier_series_from_samples(3 + 2 * np.cos(2 * np.pi * k / 8), 0.5, 2)
    >>> round(s.a0, 12), [(n, round(a, 12), round(b, 12)) for n, a, b in s.coefficients]
    (3.0, [(1, 2.0, 0.0), (2, 0.0, 0.0)])
    """
    where = "fourier_series_from_samples"
    N = check_count(n_harmonics, f"{where}(n_harmonics)")
    T = check_period(period, f"{where}(period)")
    if not T.is_number:
        raise ForcingError(
            f"the period {T} holds symbols",
            where=f"{where}(period)",
            do="Give the period as a number of seconds",
        )
    try:
        f = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ForcingError(
            f"expected an array of numbers, got {type(values).__name__}",
            where=f"{where}(values)",
            do="Give a 1-D array of load values",
        ) from None
    if f.ndim != 1:
        raise ForcingError(
            f"expected a 1-D array of samples, got shape {f.shape}",
            where=f"{where}(values)",
            do="Give one period of samples",
        )
    if not np.all(np.isfinite(f)):
        i = int(np.flatnonzero(~np.isfinite(f))[0])
        raise ForcingError(
            f"sample {i} is not a finite number ({float(f[i])!r})",
            where=f"{where}(values)",
            do="Give finite samples",
        )
    M = f.size
    if M <= 2 * N:
        raise ForcingError(
            f"{M} samples cannot resolve {N} harmonics (Nyquist): at least {2 * N + 1} are needed",
            where=f"{where}(values)",
            do=f"Sample more finely or ask for at most {(M - 1) // 2} harmonics",
        )
    if N > M // 4 and not band_limited:
        raise ForcingError(
            f"harmonics above M/4 = {M // 4} of {M} samples are aliased (harmonic n takes in harmonic {M} - n "
            f"and others the samples cannot tell from it: 21 % error at n = M/4 for a load with a jump)",
            where=f"{where}(n_harmonics)",
            do=f"Ask for at most {M // 4} harmonics, give at least {4 * N} samples, or pass band_limited=True "
            f"if the load holds no harmonic at or above {M // 2}",
        )
    F = np.fft.rfft(f)
    Tf = float(T)
    notes = [f"from {M} equally spaced samples by numpy.fft.rfft"]
    alias = _alias_note(F, M) if not band_limited else None
    if alias is not None:
        notes.append(alias)
        warnings.warn(
            AliasingWarning(alias, where=f"{where}(values)", do=f"Give more than {M} samples a period"),
            stacklevel=2,
        )
    return FourierSeries(
        period=Tf,
        omega=2 * math.pi / Tf,
        a0=float(F[0].real / M),
        coefficients=tuple((n, float(2 * F[n].real / M), float(-2 * F[n].imag / M)) for n in range(1, N + 1)),
        mean_square=float(np.mean(f * f)),
        is_exact=False,
        notes=tuple(notes),
    )


#: Share of the largest harmonic that the harmonics between M/4 and M/2 may reach before the
#: samples are called too coarse (common practice, no source: 1 %).
ALIAS_LEVEL = 0.01


def _alias_note(F: np.ndarray, M: int) -> str | None:
    """A note when the top of the resolved band (M/4 < m < M/2) holds 1 % of the largest harmonic, else None.

    A load whose harmonics are still that large near ``M/2`` has more above it, and those
    fold back onto the harmonics asked for.
    """
    amp = 2 * np.abs(F[1 : (M + 1) // 2]) / M  # harmonics 1 .. below M/2
    if amp.size <= M // 4 or not np.any(amp):
        return None
    top = amp[M // 4 :]  # harmonics above M/4
    m = int(np.argmax(top)) + M // 4 + 1
    share = float(top.max() / amp.max())
    if share < ALIAS_LEVEL:
        return None
    return (
        f"the samples are coarse for this load: harmonic {m} of {M} samples is still {share:.1%} of the largest "
        f"harmonic, so harmonics above it fold back onto those asked for (aliasing; for a load with a jump "
        f"the error at harmonic n is about 1 - x cot x, x = pi n / {M})"
    )
